#!/usr/bin/env python3
"""Write testdata/ciede2000_sharma2005.csv: the 34 CIEDE2000 test pairs of

    Sharma, G., Wu, W., Dalal, E. N. (2005). The CIEDE2000 color-difference
    formula: implementation notes, supplementary test data, and mathematical
    observations. Color Research & Application 30(1), 21-30.
    doi:10.1002/col.20070  (Table 1)

The pairs and their published 4-decimal differences are extracted from the
test file that colour-science ships in its wheel
(colour/difference/tests/test_delta_e.py, test_delta_E_CIE2000_Sharma2004).
That file keeps pair 14 as commented-out lines (its result depends on the last
bit of atan2 on some platforms); the script restores those lines so all 34
pairs of the published table are present.

Besides the published ΔE00 (column de2000), each row carries values that
colour-science computes for the pair (columns cs_*): its ΔE00, the
intermediate attributes of colour.difference.delta_e.
intermediate_attributes_CIE2000 (S_L, S_C, S_H, ΔL', ΔC', ΔH', R_T), CIE76
ΔE*ab and CIE94 with the graphic-arts weights (first colour the reference).

Usage: python3 make_ciede2000_table.py [OUTPUT.csv]
Versions: see requirements.txt beside this file.
"""

import ast
import csv
import pathlib
import re
import sys

import warnings

warnings.filterwarnings("ignore")  # optional SciPy / Matplotlib notices

import colour
import numpy as np
from colour.difference import delta_E_CIE1976, delta_E_CIE1994, delta_E_CIE2000
from colour.difference.delta_e import intermediate_attributes_CIE2000

PUBLISHED_PAIRS = 34


def extract_arrays():
    tests = pathlib.Path(colour.__file__).parent / "difference" / "tests" / "test_delta_e.py"
    text = tests.read_text(encoding="utf-8")
    start = text.index("def test_delta_E_CIE2000_Sharma2004")
    end = text.index("np.testing.assert_allclose(delta_E_CIE2000(Lab_1, Lab_2)", start)
    body = text[start:end]
    # Restore the commented-out pair 14 (a list row or a number followed by a comma).
    body = re.sub(r"^(\s*)#\s*(\[[-0-9., ]+\],|[-0-9.]+,)\s*$", r"\1\2", body, flags=re.M)

    def array(name):
        m = re.search(name + r"\s*=\s*np\.array\(\s*(\[.*?\])\s*\)\s*\n", body, flags=re.S)
        if m is None:
            raise SystemExit(f"cannot find {name} in {tests}")
        return np.array(ast.literal_eval(m.group(1)), dtype=float)

    return tests, array("Lab_1"), array("Lab_2"), array("d_E")


def main():
    out = pathlib.Path(sys.argv[1]) if len(sys.argv) > 1 else (
        pathlib.Path(__file__).resolve().parents[2] / "testdata" / "ciede2000_sharma2005.csv")
    source, lab1, lab2, de = extract_arrays()
    if not (len(lab1) == len(lab2) == len(de) == PUBLISHED_PAIRS):
        raise SystemExit(f"expected {PUBLISHED_PAIRS} pairs, found {len(lab1)}/{len(lab2)}/{len(de)}")
    # Spot checks against the printed table (pairs 1, 14 and 34).
    assert de[0] == 2.0425 and de[13] == 4.8045 and de[33] == 0.9082
    attrs = intermediate_attributes_CIE2000(lab1, lab2)
    computed = delta_E_CIE2000(lab1, lab2)
    de76 = delta_E_CIE1976(lab1, lab2)
    de94 = delta_E_CIE1994(lab1, lab2)  # graphic arts: kL 1, K1 0.045, K2 0.015; Lab_1 is the reference
    names = ["S_L", "S_C", "S_H", "delta_L_p", "delta_C_p", "delta_H_p", "R_T"]
    with out.open("w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["pair", "l1", "a1", "b1", "l2", "a2", "b2", "de2000", "cs_de2000",
                    "cs_sl", "cs_sc", "cs_sh", "cs_dl", "cs_dc", "cs_dh", "cs_rt", "cs_de76", "cs_de94"])
        for i in range(PUBLISHED_PAIRS):
            row = [i + 1]
            row += [f"{v:.4f}" for v in lab1[i]] + [f"{v:.4f}" for v in lab2[i]]
            row.append(f"{de[i]:.4f}")
            row.append(f"{computed[i]:.12f}")
            row += [f"{float(getattr(attrs, n)[i]):.12f}" for n in names]
            row += [f"{de76[i]:.12f}", f"{de94[i]:.12f}"]
            w.writerow(row)
    print(f"wrote {out} from {source} (colour-science {colour.__version__}, numpy {np.__version__})")


if __name__ == "__main__":
    main()
