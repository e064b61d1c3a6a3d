#!/usr/bin/env python3
"""Write testdata/rgb_lab_reference.csv: encoded RGB → XYZ (D50) → CIELAB (D50)
computed with colour-science for the four RGB spaces platesmith knows.

For each space the script takes colour-science's own definition (primaries,
white point, transfer function) and first checks that it is the definition
platesmith uses (src/colour/rgb.rs), so that the comparison tests the
implementation, not a difference of definitions:

    platesmith    colour-science name   white                 transfer
    srgb          "sRGB"                D65 x 0.3127 y 0.3290  IEC 61966-2-1 curve
    display-p3    "Display P3"          D65 x 0.3127 y 0.3290  sRGB curve
    oprgb         "Adobe RGB (1998)"    D65 x 0.3127 y 0.3290  power 563/256
    romm          "ROMM RGB"            ICC D50 (see below)    ISO 22028-2 curve

opRGB (IEC 61966-2-5) has the primaries, white and 563/256 power of Adobe RGB
(1998), which is the name colour-science files it under.

ROMM RGB: colour-science lists its white as the rounded chromaticity
0.3457, 0.3585, but its ROMM matrix (the published 4-decimal one) has rows
summing to the ICC PCS white 0.9642, 1, 0.8249, and platesmith uses that
white; the script checks the row sums and uses the ICC D50 chromaticity.

Chain: colour-science's cctf_decoding of the space; the normalised primary
matrix from the primaries and white (colour.normalised_primary_matrix, RGB →
XYZ in the space's white: the published 4-decimal matrices are rounded, so
they are checked separately in the Rust tests); Bradford adaptation
(colour.adaptation.matrix_chromatic_adaptation_VonKries, transform "Bradford")
from the space's white to the ICC PCS white X 0.9642 Y 1 Z 0.8249; and
colour.XYZ_to_Lab relative to that same white.

Colours per space: the 8 cube corners, a grey ramp, values just above and
below the transfer breakpoints, near-black values, and pseudo-random colours
from a fixed seed. All values are in 0..1 (in range).

Usage: python3 make_rgb_lab.py [OUTPUT.csv]
Versions: see requirements.txt beside this file.
"""

import csv
import itertools
import pathlib
import sys
import warnings

warnings.filterwarnings("ignore")  # optional SciPy / Matplotlib notices

import colour
import numpy as np
from colour.adaptation import matrix_chromatic_adaptation_VonKries

# ICC.1 PCS illuminant (D50 as used by ICC profiles and by platesmith).
ICC_D50 = np.array([0.9642, 1.0, 0.8249])

# (platesmith name, colour-science name, primaries, white) exactly as in src/colour/rgb.rs.
SPACES = [
    ("srgb", "sRGB", [(0.64, 0.33), (0.30, 0.60), (0.15, 0.06)], (0.3127, 0.3290)),
    ("display-p3", "Display P3", [(0.680, 0.320), (0.265, 0.690), (0.150, 0.060)], (0.3127, 0.3290)),
    ("oprgb", "Adobe RGB (1998)", [(0.64, 0.33), (0.21, 0.71), (0.15, 0.06)], (0.3127, 0.3290)),
    ("romm", "ROMM RGB", [(0.7347, 0.2653), (0.1596, 0.8404), (0.0366, 0.0001)], (0.9642 / 2.7891, 1.0 / 2.7891)),
]

RANDOM_PER_SPACE = 260
SEED = 20051


def samples(rng):
    rows = [list(c) for c in itertools.product([0.0, 1.0], repeat=3)]  # cube corners
    rows += [[v, v, v] for v in np.linspace(0.0, 1.0, 17)[1:-1]]  # grey ramp
    # Near black and around the breakpoints of the sRGB (0.04045) and ROMM (1/32) curves.
    for v in [1 / 65535, 1 / 4095, 1 / 255, 0.002, 0.005, 0.01, 0.02, 0.03, 0.031, 0.0315, 0.04, 0.0404,
              0.0405, 0.041, 0.05, 0.08]:
        rows.append([v, v, v])
        rows.append([v, 0.0, 0.0])
        rows.append([0.0, v, 2 * v])
    rows += rng.random((RANDOM_PER_SPACE, 3)).tolist()
    rows += (rng.random((20, 3)) * 0.06).tolist()  # dark random colours
    return np.array(rows)


def main():
    out = pathlib.Path(sys.argv[1]) if len(sys.argv) > 1 else (
        pathlib.Path(__file__).resolve().parents[2] / "testdata" / "rgb_lab_reference.csv")
    rng = np.random.default_rng(SEED)
    # Round first so that the values written are exactly the values converted.
    rgb = np.round(samples(rng), 9)
    pcs_xy = colour.XYZ_to_xy(ICC_D50)
    count = 0
    with out.open("w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["space", "r", "g", "b", "x", "y", "z", "l", "a_star", "b_star"])
        for name, cs_name, primaries, white in SPACES:
            space = colour.RGB_COLOURSPACES[cs_name]
            if not np.array_equal(space.primaries, np.array(primaries)):
                raise SystemExit(f"{cs_name}: colour-science's primaries differ from platesmith's")
            if name == "romm":
                if not np.allclose(space.matrix_RGB_to_XYZ.sum(axis=1), ICC_D50, rtol=0, atol=1e-12):
                    raise SystemExit("ROMM RGB: colour-science's matrix is not normalised to the ICC D50 white")
                white_xy = colour.XYZ_to_xy(ICC_D50)
            elif np.array_equal(space.whitepoint, np.array(white)):
                white_xy = space.whitepoint
            else:
                raise SystemExit(f"{cs_name}: colour-science's white differs from platesmith's")
            native = colour.normalised_primary_matrix(space.primaries, white_xy)
            white_xyz = colour.xy_to_XYZ(white_xy)
            adapt = matrix_chromatic_adaptation_VonKries(white_xyz, ICC_D50, transform="Bradford")
            linear = space.cctf_decoding(rgb)
            xyz = np.einsum("ij,nj->ni", adapt @ native, linear)
            lab = colour.XYZ_to_Lab(xyz, illuminant=pcs_xy)
            for c, x, l in zip(rgb, xyz, lab):
                w.writerow([name] + [f"{v:.9f}" for v in c] + [f"{v:.12f}" for v in x] + [f"{v:.10f}" for v in l])
                count += 1
    print(f"wrote {count} rows to {out} (colour-science {colour.__version__}, numpy {np.__version__})")


if __name__ == "__main__":
    main()
