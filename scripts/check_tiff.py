#!/usr/bin/env python3
"""Independent check of TIFF files written by platesmith, with the tifffile reader.

Usage: check_tiff.py SPEC.json
Needs: pip install tifffile imagecodecs   (imagecodecs decodes LZW)

SPEC.json lists files and what each must hold:
  {"files": [{"path": "job.cmyk.tif",
              "photometric": 5,            # PhotometricInterpretation
              "samples_per_pixel": 4,
              "bits": 8,                   # BitsPerSample of every sample
              "compression": 1,            # 1 none, 5 LZW, 8 Deflate
              "inkset": 1,                 # optional: InkSet tag value
              "icc_path": "profile.icc",   # optional: tag 34675 must be type 7 and equal these bytes;
                                           # null: the tag must be absent
              "x_ppi": 300.0, "y_ppi": 300.0,
              "bigtiff": true,             # optional: the file must (true) or must not (false) be a BigTIFF
              "samples_path": "expected.raw"}]}  # stored samples, native byte order, row-major, interleaved

Prints one line per file and exits 1 if anything differs. Stored samples are compared
as stored (tifffile does not invert WhiteIsZero data), so for a plate they are ink values.
"""
import json
import sys

import numpy as np
import tifffile

UNDEFINED = 7


def check(entry):
    problems = []
    with tifffile.TiffFile(entry["path"]) as tif:
        if "bigtiff" in entry and tif.is_bigtiff != entry["bigtiff"]:
            problems.append(f"BigTIFF: got {tif.is_bigtiff}, want {entry['bigtiff']}")
        page = tif.pages[0]
        tags = page.tags

        def tag_value(code):
            t = tags.get(code)
            return None if t is None else t.value

        def expect(name, got, want):
            if got != want:
                problems.append(f"{name}: got {got!r}, want {want!r}")

        expect("PhotometricInterpretation", int(tag_value(262)), entry["photometric"])
        expect("SamplesPerPixel", int(tag_value(277)), entry["samples_per_pixel"])
        bits = tag_value(258)
        bits = list(bits) if isinstance(bits, (tuple, list)) else [bits]
        expect("BitsPerSample", bits, [entry["bits"]] * entry["samples_per_pixel"])
        expect("Compression", int(tag_value(259)), entry["compression"])
        if "inkset" in entry:
            expect("InkSet", tag_value(332), entry["inkset"])
        expect("ResolutionUnit", int(tag_value(296)), 2)
        for code, key in ((282, "x_ppi"), (283, "y_ppi")):
            n, d = tag_value(code)
            if abs(n / d - entry[key]) > 1e-3:
                problems.append(f"tag {code}: {n}/{d} ppi, want {entry[key]}")
        if "icc_path" in entry:
            icc = tags.get(34675)
            if entry["icc_path"] is None:
                if icc is not None:
                    problems.append("ICC profile tag present, want none")
            elif icc is None:
                problems.append("ICC profile tag 34675 missing")
            else:
                if icc.dtype != UNDEFINED:
                    problems.append(f"ICC profile tag type {icc.dtype}, want 7 (UNDEFINED)")
                with open(entry["icc_path"], "rb") as f:
                    want = f.read()
                if bytes(icc.value) != want:
                    problems.append("ICC profile bytes differ")
        data = page.asarray()
        dtype = np.uint8 if entry["bits"] == 8 else np.dtype("=u2")
        want = np.fromfile(entry["samples_path"], dtype=dtype)
        got = np.ascontiguousarray(data).reshape(-1)
        if got.shape != want.shape:
            problems.append(f"{got.size} samples, want {want.size}")
        elif not np.array_equal(got, want):
            bad = int(np.count_nonzero(got != want))
            problems.append(f"{bad} of {want.size} samples differ")
    return problems


def main():
    if len(sys.argv) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    with open(sys.argv[1]) as f:
        spec = json.load(f)
    failed = False
    for entry in spec["files"]:
        problems = check(entry)
        if problems:
            failed = True
            print(f"FAIL {entry['path']}: " + "; ".join(problems))
        else:
            print(f"ok   {entry['path']}")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
