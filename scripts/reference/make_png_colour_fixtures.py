"""PNG fixtures for the colour chunks (iCCP, sRGB, gAMA, cHRM), written by
Pillow (an independent PNG writer), with the CIELAB D50 each stored pixel
means computed by colour-science (an independent colorimetry library).

    python3 -m venv .venv && .venv/bin/pip install -r scripts/reference/requirements.txt
    .venv/bin/python scripts/reference/make_png_colour_fixtures.py

Writes testdata/inputs/png-colour/*.png and reference.csv (see the README there).
The picture is a 6 x 6 x 6 lattice of RGB values made here, one pixel each.
"""

import csv
import io
import struct
from pathlib import Path

import colour
import numpy as np
from PIL import Image, ImageCms, PngImagePlugin

OUT = Path(__file__).resolve().parents[2] / "testdata" / "inputs" / "png-colour"
LEVELS = [0.0, 0.04, 0.2, 0.45, 0.75, 1.0]
W, H = 24, 9  # 216 pixels

# ICC.1 PCS illuminant, the white every profile is adapted to (ICC.1:2022 §7.2.16).
ICC_D50_XYZ = np.array([0.9642, 1.0, 0.8249])
ICC_D50_XY = colour.XYZ_to_xy(ICC_D50_XYZ)

SRGB_CHRM = dict(white=(0.3127, 0.3290), red=(0.64, 0.33), green=(0.30, 0.60), blue=(0.15, 0.06))
# A wide set of our own choosing (near opRGB's primaries, D65 white), stored in cHRM.
WIDE_CHRM = dict(white=(0.3127, 0.3290), red=(0.68, 0.31), green=(0.20, 0.72), blue=(0.15, 0.05))


def lattice():
    """Encoded RGB 0..1, row-major, W x H."""
    rgb = np.array([[r, g, b] for r in LEVELS for g in LEVELS for b in LEVELS])
    return rgb.reshape(H, W, 3)


def chrm(c):
    vals = [*c["white"], *c["red"], *c["green"], *c["blue"]]
    return b"cHRM", struct.pack(">8I", *[round(v * 100000) for v in vals])


def gama(g):
    return b"gAMA", struct.pack(">I", round(g * 100000))


def srgb_chunk(intent=0):
    return b"sRGB", bytes([intent])


def save8(path, rgb, chunks=(), icc=None):
    """An 8-bit RGB PNG written by Pillow with the given chunks before IDAT."""
    info = PngImagePlugin.PngInfo()
    for cid, data in chunks:
        info.add(cid, data)
    im = Image.fromarray(np.round(np.clip(rgb, 0, 1) * 255).astype(np.uint8), "RGB")
    kwargs = {"pnginfo": info}
    if icc is not None:
        kwargs["icc_profile"] = icc
    im.save(path, **kwargs)
    # Read back with Pillow: the stored samples and the chunks as written.
    back = Image.open(path)
    return np.asarray(back.convert("RGB")).astype(float) / 255.0, back.info


def lab_d50(encoded, chrm_set, gamma):
    """CIELAB D50 (ICC PCS, media-relative) of encoded RGB in the space given by
    the chromaticities and gAMA (decoding exponent 1/gamma; None = the sRGB
    function), adapted from the space's white to D50 by Bradford."""
    cctf = (lambda v: np.power(np.clip(v, 0, None), 1.0 / gamma)) if gamma else colour.models.eotf_sRGB
    space = colour.RGB_Colourspace(
        "fixture",
        np.array([chrm_set["red"], chrm_set["green"], chrm_set["blue"]]),
        np.array(chrm_set["white"]),
        cctf_decoding=cctf,
        cctf_encoding=lambda v: v,
        use_derived_matrix_RGB_to_XYZ=True,
        use_derived_matrix_XYZ_to_RGB=True,
    )
    xyz = colour.RGB_to_XYZ(encoded, space, illuminant=ICC_D50_XY, chromatic_adaptation_transform="Bradford", apply_cctf_decoding=True)
    return colour.XYZ_to_Lab(xyz, ICC_D50_XY)


def main():
    OUT.mkdir(parents=True, exist_ok=True)
    rgb = lattice()
    srgb_profile = ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes()
    fixtures = [
        # name, chunks, icc, the space the chunks mean (chromaticities, gamma; None = sRGB function)
        ("plain.png", [], None, (SRGB_CHRM, None)),
        ("gama-1.png", [gama(1.0)], None, (SRGB_CHRM, 1.0)),
        ("gama-chrm-wide.png", [gama(1 / 1.8), chrm(WIDE_CHRM)], None, (WIDE_CHRM, 1 / 1.8)),
        ("chrm-only-wide.png", [chrm(WIDE_CHRM)], None, (WIDE_CHRM, None)),
        # sRGB outranks a contradicting gAMA and cHRM.
        ("srgb-over-gama-chrm.png", [srgb_chunk(0), gama(1.0), chrm(WIDE_CHRM)], None, (SRGB_CHRM, None)),
        # iCCP outranks gAMA and cHRM (the specification forbids sRGB beside iCCP, and Pillow drops it).
        ("iccp-over-gama.png", [gama(1.0), chrm(WIDE_CHRM)], srgb_profile, (SRGB_CHRM, None)),
        # Collinear primaries: the cHRM chunk is unusable and is ignored, gAMA stays.
        ("chrm-degenerate.png", [gama(1.0), chrm(dict(white=(0.3127, 0.329), red=(0.6, 0.3), green=(0.4, 0.3), blue=(0.2, 0.3)))], None, (SRGB_CHRM, 1.0)),
    ]
    # The colours of gama-1.png re-encoded as sRGB, untagged: the plain equivalent
    # the end-to-end test separates beside it.
    linear = np.round(rgb * 255) / 255
    fixtures.append(("gama-1-as-srgb.png", [], None, (SRGB_CHRM, None)))
    encoded = {"gama-1-as-srgb.png": colour.models.eotf_inverse_sRGB(linear)}
    rows = []
    for name, chunks, icc, (space, gamma) in fixtures:
        pixels = encoded.get(name, rgb)
        stored, info = save8(OUT / name, pixels, chunks, icc)
        lab = lab_d50(stored.reshape(-1, 3), space, gamma)
        description = ImageCms.getProfileDescription(ImageCms.ImageCmsProfile(io.BytesIO(info["icc_profile"]))).strip() if "icc_profile" in info else ""
        for i, (px, l) in enumerate(zip(stored.reshape(-1, 3), lab)):
            rows.append([name, i % W, i // W, *[int(round(v * 255)) for v in px], *[f"{v:.4f}" for v in l], description])
    with open(OUT / "reference.csv", "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["file", "x", "y", "r", "g", "b", "lab_l", "lab_a", "lab_b", "profile_description"])
        w.writerows(rows)
    print(f"{len(fixtures)} fixtures, {len(rows)} reference rows in {OUT}")


if __name__ == "__main__":
    main()
