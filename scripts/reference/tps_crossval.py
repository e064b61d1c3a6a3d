"""Cross-validated accuracy of a generic interpolant on the public
characterization data, the reference the press model is compared with in
docs/REFERENCES.md.

A thin-plate-spline radial basis function interpolant on raw CMYK (scipy's
RBFInterpolator, kernel thin_plate_spline, smoothing 1e-3), no physics,
10-fold cross-validation on held-out patches, ΔE2000 by colour-science.
Folds are the same as platesmith's (press::characterize::fold_of: a
splitmix64 shuffle with a fixed seed, dealt round-robin), so both methods are
judged on the same held-out patches.

    python3 -m venv .venv && .venv/bin/pip install -r scripts/reference/requirements.txt
    .venv/bin/python scripts/reference/tps_crossval.py > docs/fit/tps-reference.txt
"""

import pathlib

import colour
import numpy as np
from scipy.interpolate import RBFInterpolator

DATA = pathlib.Path(__file__).resolve().parents[2] / "testdata" / "characterization"
FILES = ["FOGRA39L", "FOGRA29L", "FOGRA28L", "FOGRA30L", "FOGRA40L", "TR002"]
MASK = (1 << 64) - 1


def fold_of(count, folds):
    state = 0x5EED0FC01D

    def nxt():
        nonlocal state
        state = (state + 0x9E3779B97F4A7C15) & MASK
        z = state
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & MASK
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & MASK
        return z ^ (z >> 31)

    order = list(range(count))
    for i in range(count - 1, 0, -1):
        j = nxt() % (i + 1)
        order[i], order[j] = order[j], order[i]
    fold = [0] * count
    for rank, i in enumerate(order):
        fold[i] = rank % folds
    return np.array(fold)


def read(name):
    text = (DATA / f"{name}.ti3").read_text(encoding="latin-1")
    fields = text.split("BEGIN_DATA_FORMAT")[1].split("END_DATA_FORMAT")[0].split()
    body = text.split("BEGIN_DATA\n")[1].split("END_DATA")[0].strip().splitlines()
    rows = [line.split() for line in body]
    col = {f: i for i, f in enumerate(fields)}
    cmyk = np.array([[float(r[col[f]]) for f in ("CMYK_C", "CMYK_M", "CMYK_Y", "CMYK_K")] for r in rows])
    lab = np.array([[float(r[col[f]]) for f in ("LAB_L", "LAB_A", "LAB_B")] for r in rows])
    return cmyk / 100.0, lab


def main():
    print("file      patches  mean   p95    max    (ΔE2000, 10-fold held-out, thin-plate spline, smoothing 1e-3)")
    for name in FILES:
        x, y = read(name)
        # Repeated builds (the chart prints some twice) are averaged, as an
        # interpolant needs distinct nodes.
        fold = fold_of(len(x), 10)
        predicted = np.zeros_like(y)
        for f in range(10):
            train = fold != f
            xt, yt = x[train], y[train]
            keys, inverse = np.unique(np.round(xt, 6), axis=0, return_inverse=True)
            ym = np.zeros((len(keys), 3))
            np.add.at(ym, inverse.ravel(), yt)
            ym /= np.bincount(inverse.ravel())[:, None]
            rbf = RBFInterpolator(keys, ym, kernel="thin_plate_spline", smoothing=1e-3)
            predicted[~train] = rbf(x[~train])
        de = colour.delta_E(y, predicted, method="CIE 2000")
        k = max(1, int(np.ceil(0.95 * len(de))))
        p95 = np.sort(de)[k - 1]
        print(f"{name:<9} {len(x):>7}  {de.mean():.3f}  {p95:.3f}  {de.max():.3f}")


if __name__ == "__main__":
    main()
