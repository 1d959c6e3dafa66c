"""Writes tests/e2e/fixtures/cvd-matrices.json: the colour-vision-deficiency
simulation matrices of Machado, Oliveira & Fernandes (2009), "A
Physiologically-based Model for Simulation of Color Vision Deficiency",
IEEE Transactions on Visualization and Computer Graphics 15(6):1291-1298,
doi:10.1109/TVCG.2009.113, at full severity (dichromacy), as tabulated by the
PyPI package colorspacious (1.1.2). They act on linear-light sRGB.

The browser test tests/e2e/palette.test.mjs uses them to check that the map's
category colours stay apart for protanopia, deuteranopia and tritanopia.

Run: pip install colorspacious==1.1.2 && python3 tools/cvd_matrices.py
"""

import json
import pathlib

from colorspacious.cvd import machado_et_al_2009_matrix

OUT = pathlib.Path(__file__).resolve().parent.parent / "tests" / "e2e" / "fixtures" / "cvd-matrices.json"

matrices = {
    name: machado_et_al_2009_matrix(kind, 100).tolist()
    for name, kind in [("protanopia", "protanomaly"), ("deuteranopia", "deuteranomaly"), ("tritanopia", "tritanomaly")]
}
OUT.write_text(
    json.dumps(
        {
            "source": "Machado, Oliveira & Fernandes (2009), doi:10.1109/TVCG.2009.113, severity 1.0, via colorspacious 1.1.2",
            "space": "linear sRGB",
            "matrices": matrices,
        },
        indent=1,
    )
    + "\n"
)
print(f"wrote {OUT}")
