#!/usr/bin/env python3
"""Write testdata/ipt_reference.csv: CIELAB (D50, the ICC PCS) → IPT
computed with colour-science, for checking src/colour/ipt.rs.

Chain: colour.Lab_to_XYZ relative to the ICC PCS white X 0.9642 Y 1 Z 0.8249;
Bradford adaptation to D65 (x 0.3127, y 0.3290, the white platesmith uses)
with colour.adaptation.matrix_chromatic_adaptation_VonKries (transform
"Bradford"); colour.XYZ_to_IPT, which takes XYZ adapted to D65 and applies
the matrices and the 0.43 exponent of Ebner & Fairchild (1998).

The script first checks that colour-science's IPT matrices are the published
four-decimal ones that platesmith uses.

Colours: the neutral axis, the six RGB-cube-like corners of CIELAB at a few
lightnesses, saturated blues (where CIELAB and IPT hue differ most), dark
colours near the CIELAB linear segment, and pseudo-random colours from a
fixed seed.

Usage: python3 make_ipt.py [OUTPUT.csv]
Versions: see requirements.txt beside this file.
"""

import csv
import pathlib
import sys
import warnings

warnings.filterwarnings("ignore")  # optional SciPy / Matplotlib notices

import colour
import numpy as np
from colour.adaptation import matrix_chromatic_adaptation_VonKries

ICC_D50 = np.array([0.9642, 1.0, 0.8249])
D65 = np.array([0.3127 / 0.3290, 1.0, (1.0 - 0.3127 - 0.3290) / 0.3290])

XYZ_TO_LMS = np.array([[0.4002, 0.7075, -0.0807], [-0.2280, 1.1500, 0.0612], [0.0, 0.0, 0.9184]])
LMS_TO_IPT = np.array([[0.4000, 0.4000, 0.2000], [4.4550, -4.8510, 0.3960], [0.8056, 0.3572, -1.1628]])


def main():
    from colour.models.ipt import MATRIX_IPT_LMS_P_TO_IPT, MATRIX_IPT_XYZ_TO_LMS

    if not (np.array_equal(MATRIX_IPT_XYZ_TO_LMS, XYZ_TO_LMS) and np.array_equal(MATRIX_IPT_LMS_P_TO_IPT, LMS_TO_IPT)):
        sys.exit("colour-science's IPT matrices differ from src/colour/ipt.rs")
    out = pathlib.Path(sys.argv[1]) if len(sys.argv) > 1 else pathlib.Path(__file__).resolve().parents[2] / "testdata" / "ipt_reference.csv"
    labs = []
    for l in (0.0, 1.0, 5.0, 8.0, 20.0, 50.0, 80.0, 100.0):
        labs.append((l, 0.0, 0.0))
    for l in (30.0, 55.0, 80.0):
        for a, b in ((60, 0), (60, 60), (0, 60), (-60, 60), (-60, 0), (-60, -60), (0, -60), (60, -60)):
            labs.append((l, float(a), float(b)))
    for c in (20.0, 50.0, 80.0, 110.0):
        labs.append((30.0, 0.2 * c, -c))
    for l in (2.0, 6.0, 8.5):
        labs.append((l, 10.0, -10.0))
    rng = np.random.default_rng(18)
    for _ in range(120):
        labs.append((float(rng.uniform(0, 100)), float(rng.uniform(-90, 90)), float(rng.uniform(-90, 90))))
    cat = matrix_chromatic_adaptation_VonKries(ICC_D50, D65, transform="Bradford")
    with out.open("w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["L", "a", "b", "I", "P", "T"])
        for lab in labs:
            xyz = colour.Lab_to_XYZ(np.array(lab), colour.XYZ_to_xy(ICC_D50))
            ipt = colour.XYZ_to_IPT(cat @ xyz)
            w.writerow([f"{v:.4f}" for v in lab] + [f"{v:.10f}" for v in ipt])
    print(f"wrote {len(labs)} colours to {out}")


if __name__ == "__main__":
    main()
