"""Writes demo-data/incidents-windows.csv: invented incidents with from/to
dates (events known only within a window), for the time line and its tests.

Run: python3 demo-data/make_incidents_windows.py   (standard library only)
Planar metres on an invented 10 km square; no real place.
"""
import datetime
import random

r = random.Random(20250106)
start = datetime.date(2025, 1, 6)  # a Monday
rows = []
for i in range(160):
    if i < 40:
        # The burst: 40 incidents near (7600, 7200) between days 28 and 41.
        x, y, d = r.gauss(7600, 350), r.gauss(7200, 350), r.randint(28, 41)
    else:
        x, y, d = r.uniform(500, 9500), r.uniform(500, 9500), r.randint(0, 69)
    day = start + datetime.timedelta(days=d)
    # About a third are found 1 to 4 days after they may have happened.
    to = (day + datetime.timedelta(days=r.randint(1, 4))).isoformat() if r.random() < 0.35 else ''
    rows.append((day, f"{x:.1f}", f"{y:.1f}", day.isoformat(), to, r.choice(['shed', 'shop', 'house'])))
rows.sort(key=lambda t: t[0])
with open('demo-data/incidents-windows.csv', 'w') as f:
    f.write('incident_id,x,y,date_from,date_to,kind\n')
    for k, (_, x, y, a, b, c) in enumerate(rows):
        f.write(f"IW-{k + 1:03d},{x},{y},{a},{b},{c}\n")
