/* After every change of the loaded data: one snapshot from the engine, then
 * the map layers, the file lines, the summary, the data-quality counts, the
 * rows-not-used table, and every analysis panel's snapshot listener. */

import { $, el, num, fmt, fmtFixed, fmtMetres, fmtDays, fmtTime, plural, errorText } from './dom.js';
import { state } from './state.js';
import { showError } from './status.js';
import { call } from './engine.js';
import { map, renderLegend } from './mapview.js';

export const PAGE_SIZE = 50;

/** Functions fn(snap) run after every change of the loaded data (see panel-api.js). */
export const snapshotListeners = [];

export async function refresh(keepView) {
  let snap;
  try {
    snap = await call('snapshot');
  } catch (err) {
    if (err && err.code === 'engine_stopped') return;
    showError('Could not update the results', err);
    return;
  }
  state.snap = snap;
  const layers = snap.layers;
  if (layers && layers.events && layers.events.length > 0) {
    map.setLayers(layers, keepView);
    $('map-empty').hidden = true;
  } else {
    map.clear();
    $('map-empty').hidden = false;
  }
  renderFileLines(snap.study);
  for (const fn of snapshotListeners) {
    try { fn(snap); } catch (err) { showError('Could not update an analysis panel', err); }
  }
  renderLegend(layers);
  renderSummary(snap);
  renderQuality(snap);
  state.rej.offset = 0;
  if (state.rej.layer === 'controls' && !state.controls) state.rej.layer = 'events';
  await loadRejections();
}

/** The text under a points file's input: its name, the text encoding when
 * it is not plain UTF-8, how many rows are in use, and how many values were
 * left out of rows that are kept. */
export function fileLineText(name, report, used, read) {
  const enc = report && report.encoding && report.encoding !== 'utf8' ? ` (${report.encoding_name})` : '';
  if (!Number.isFinite(num(used))) return `${name}${enc}`;
  const left = report && report.incomplete_count > 0 ? `; ${plural(report.incomplete_count, 'value', 'values')} left out (see Data quality)` : '';
  return `${name}${enc}: ${fmt(used)} of ${plural(read, 'row', 'rows')} used${left}`;
}

/** The line under each file input: file name and how many rows are in use now. */
function renderFileLines(study) {
  const line = (id, kept, report, used, read) => {
    if (!kept) return;
    const u = study && used !== null && used !== undefined ? used : report && report.accepted;
    const r = study && read !== null && read !== undefined ? read : report && report.rows_read;
    $(id).textContent = fileLineText(kept.name, report, u, r);
  };
  line('events-name', state.events, state.reports.events, study && study.events, study && study.events_rows_read);
  line('controls-name', state.controls, state.reports.controls, study && study.controls, study && study.controls_rows_read);
  if (state.area) {
    if (state.areaMode !== 'file') $('area-name').textContent = `${state.area.name} (not in use)`;
    else if (study && Number.isFinite(num(study.area_km2))) $('area-name').textContent = `${state.area.name}: ${fmt(study.area_km2)}\u00a0km²`;
    else $('area-name').textContent = `${state.area.name}: loaded`;
  }
}

/** Text lines for one summary entry. */
function lines(...texts) {
  const frag = document.createDocumentFragment();
  texts.forEach((t, i) => {
    if (i > 0) frag.append(el('br'));
    frag.append(t);
  });
  return frag;
}

function renderSummary(snap) {
  const dl = $('summary');
  dl.replaceChildren();
  const s = snap && snap.summary;
  const study = snap && snap.study;
  const add = (term, value, key) => {
    const dd = el('dd', key ? { 'data-key': key } : null, value);
    dl.append(el('dt', null, term), dd);
  };
  const catTable = $('categories');
  const catBody = catTable.querySelector('tbody');
  catBody.replaceChildren();
  catTable.hidden = true;
  $('categories-title').hidden = true;
  if (!s) {
    add('Events', snap && snap.summary_error ? errorText(snap.summary_error) : 'none loaded');
    return;
  }
  add('Events (n)', fmt(s.n_events), 'n_events');
  if (s.n_controls !== null && s.n_controls !== undefined) add('Controls', fmt(s.n_controls), 'n_controls');
  const areaKm2 = s.window_area_km2 ?? s.area_km2 ?? (study && study.area_km2);
  const origin = s.window_origin ?? (study && study.area_origin);
  const originText = origin === 'convex_hull' ? ' (hull around the events)' : origin === 'bounding_box' ? ' (rectangle around the events)' : '';
  add('Study area', `${fmt(areaKm2)}\u00a0km²${originText}`, 'area_km2');
  add('Events per km²', fmt(s.intensity_per_km2), 'intensity_per_km2');
  const mc = s.mean_centre || {};
  if (Number.isFinite(num(mc.lon)) && Number.isFinite(num(mc.lat))) {
    add('Mean centre', `longitude ${fmtFixed(mc.lon, 5)}°, latitude ${fmtFixed(mc.lat, 5)}°`, 'mean_centre');
  } else {
    const x = mc.x_m ?? mc.x;
    const y = mc.y_m ?? mc.y;
    if (Number.isFinite(num(x))) add('Mean centre', `x ${fmtFixed(x, 1)} m, y ${fmtFixed(y, 1)} m (grid of the file)`, 'mean_centre');
  }
  add('Standard distance', fmtMetres(s.standard_distance_m), 'standard_distance_m');
  const e = s.ellipse;
  if (e) {
    const angle = e.major_axis_angle_deg ?? e.angle_deg;
    add('Deviational ellipse', lines(`${fmtMetres(e.semi_major_m)} by ${fmtMetres(e.semi_minor_m)} (one standard deviation along each axis)`, `long axis ${fmt(angle, 3)}° anticlockwise from east`), 'ellipse');
  }
  const nn = s.nearest_neighbour_m ?? s.nn;
  if (nn) {
    add('Nearest-neighbour distance', lines(`min ${fmtMetres(nn.min)}, median ${fmtMetres(nn.median)}`, `mean ${fmtMetres(nn.mean)}, max ${fmtMetres(nn.max)}`), 'nn');
  }
  const t = s.time_span ?? s.time;
  if (t) {
    const clock = state.reports.events && state.reports.events.time_has_clock;
    const show = (v) => (typeof v === 'string' ? v.replace('T', ' ').replace(/:00Z$|Z$/, '') : fmtTime(v, clock));
    add('Time span', `${show(t.first)} to ${show(t.last)} (${fmtDays(t.span_days)})`, 'time');
    if (num(t.n_windows) > 0) {
      add('Known only within a window', `${fmt(t.n_windows)} events (from–to dates; median window ${fmtDays(t.median_window_days)})`, 'time_windows');
    }
  }
  const co = s.coincident || (study && study.coincident);
  if (co) {
    add('Coincident points', num(co.locations) > 0 ? `${fmt(co.events)} events share ${plural(co.locations, 'location', 'locations')} (at most ${fmt(co.largest)} at one)` : 'none', 'coincident');
  }
  if (Array.isArray(s.categories) && s.categories.length > 0) {
    for (const c of s.categories) catBody.append(el('tr', null, el('td', null, c.name), el('td', { class: 'n' }, fmt(c.count))));
    catTable.hidden = false;
    $('categories-title').hidden = false;
  }
}

function renderQuality(snap) {
  const study = snap && snap.study;
  $('projection-text').textContent = study && study.projection_text ? `Projection: ${study.projection_text}` : '';
  const box = $('quality-counts');
  box.replaceChildren();
  // Counts come from the current study when there is one (it also counts
  // events outside the study area), else from the load report.
  const layerLine = (label, key, report, fromStudy) => {
    if (!report) return;
    const read = fromStudy ? fromStudy.read : report.rows_read;
    const used = fromStudy ? fromStudy.used : report.accepted;
    const rejected = fromStudy ? fromStudy.rejected : report.rejected;
    const p = el('p', { class: 'counts', 'data-layer': key },
      el('strong', null, `${label}: `),
      el('span', { class: 'eq' },
        'rows read ', el('span', { 'data-count': 'read' }, fmt(read)),
        ' = used ', el('span', { 'data-count': 'used' }, fmt(used)),
        ' + not used ', el('span', { 'data-count': 'rejected' }, fmt(rejected))));
    box.append(p);
    const tally = snap.reasons && fromStudy ? snap.reasons[key] : null;
    const reasons = Array.from(tally || report.by_reason || []);
    if (reasons.length > 0) {
      const ul = el('ul', { class: 'reasons' });
      for (const r of reasons) ul.append(el('li', null, `${r.reason_text || r.reason}: ${fmt(r.count)}`));
      box.append(ul);
    }
    // Rows kept with an optional value left out (an unreadable date or weight).
    const incomplete = Array.from(report.incomplete || []);
    if (report.incomplete_count > 0) {
      const list = el('ul', { class: 'reasons', 'data-incomplete': key });
      for (const r of incomplete) {
        const value = r.value === '' || r.value === null || r.value === undefined ? '(empty)' : r.value;
        list.append(el('li', null, `row ${fmt(r.row)}, ${r.column ?? '—'}: ${r.reason_text || r.reason} (${value})`));
      }
      const more = report.incomplete_count > incomplete.length ? ` (first ${fmt(incomplete.length)} listed)` : '';
      box.append(el('details', { class: 'incomplete' },
        el('summary', null, `Kept, with a value left out: ${fmt(report.incomplete_count)}${more}`), list));
    }
  };
  layerLine('Events', 'events', state.reports.events,
    study ? { read: study.events_rows_read, used: study.events, rejected: study.events_rejected } : null);
  if (study && num(study.events_with_window) > 0) {
    box.append(el('p', { class: 'counts', 'data-windows': 'events' },
      `Events known only within a from–to window: ${fmt(study.events_with_window)} (median window ${fmtDays(study.median_window_days)}). The time column is the start of each window.`));
  }
  layerLine('Controls', 'controls', state.reports.controls,
    study && state.controls && study.controls !== null && study.controls !== undefined
      ? { read: study.controls_rows_read, used: study.controls, rejected: study.controls_rejected } : null);
  const ul = $('warnings');
  ul.replaceChildren();
  const warnings = study && Array.isArray(study.warnings) ? study.warnings : [];
  for (const w of warnings) ul.append(el('li', null, w));
  $('rejections').hidden = !state.reports.events;
  $('rej-layer').querySelector('option[value=controls]').disabled = !state.controls;
}

export async function loadRejections() {
  if (!state.reports.events) return;
  const { layer, offset } = state.rej;
  let res;
  try {
    res = await call('rejections', layer, offset, PAGE_SIZE);
  } catch (err) {
    if (err && err.code === 'engine_stopped') return;
    showError('Could not list the rows not used', err);
    return;
  }
  const total = num(res.total);
  state.rej.total = total;
  $('rej-layer').value = layer;
  const body = $('rej-body');
  body.replaceChildren();
  const rows = Array.from(res.rows || []);
  if (rows.length === 0) {
    body.append(el('tr', null, el('td', { colspan: 4, class: 'note' }, total === 0 ? 'Every row was used.' : 'No rows on this page.')));
  }
  for (const r of rows) {
    body.append(el('tr', null,
      el('td', { class: 'n' }, fmt(r.row)),
      el('td', null, r.column ?? '—'),
      el('td', null, r.reason_text || r.reason),
      el('td', null, r.value === '' || r.value === null || r.value === undefined ? '(empty)' : r.value)));
  }
  const from = total === 0 ? 0 : offset + 1;
  const to = Math.min(offset + PAGE_SIZE, total);
  $('rej-range').textContent = total === 0 ? 'none' : `${fmt(from)}–${fmt(to)} of ${fmt(total)}`;
  $('rej-prev').disabled = offset <= 0;
  $('rej-next').disabled = offset + PAGE_SIZE >= total;
}
