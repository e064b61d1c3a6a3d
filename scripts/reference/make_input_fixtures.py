"""Input fixtures written by independent software (tifffile, Pillow/libtiff/libjpeg),
each beside its plain equivalent or the value an independent decoder gives.

Run from the repository root:
    python3 -m venv .venv && .venv/bin/pip install -r scripts/reference/requirements.txt
    .venv/bin/python scripts/reference/make_input_fixtures.py
Writes testdata/inputs/ (small files; testdata/inputs/README.md says what each is).
    .venv/bin/python scripts/reference/make_input_fixtures.py --only strips
writes only the strip and tile layouts that the band reader streams (strips_and_tiles);
    .venv/bin/python scripts/reference/make_input_fixtures.py --only planar
also the planar and palette pages in several strips or tiles (planar_and_palette).
The picture is our own: a smooth colour field drawn by this script.
"""

import io
import pathlib
import sys

import numpy as np
import tifffile
from PIL import Image, ImageOps

OUT = pathlib.Path(__file__).resolve().parents[2] / "testdata" / "inputs"
W, H = 48, 32


def picture():
    """A smooth 8-bit RGB field: hue across, lightness down (no edges, so JPEG stays close)."""
    y, x = np.mgrid[0:H, 0:W].astype(np.float64)
    r = 40 + 180 * x / (W - 1)
    g = 30 + 190 * y / (H - 1)
    b = 200 - 150 * (x + y) / (W + H - 2)
    return np.stack([r, g, b], -1).round().astype(np.uint8)


def srgb_decode(v):
    """IEC 61966-2-1 encoded 0..1 -> linear light."""
    return np.where(v <= 0.04045, v / 12.92, ((v + 0.055) / 1.055) ** 2.4)


def srgb_encode(v):
    """IEC 61966-2-1 linear light -> encoded 0..1."""
    return np.where(v <= 0.0031308, v * 12.92, 1.055 * np.power(v, 1 / 2.4) - 0.055)


def alpha_field():
    y, x = np.mgrid[0:H, 0:W]
    return ((x * 5 + y * 3) % 256).astype(np.uint8)


def save_png(name, a):
    Image.fromarray(a).save(OUT / name, optimize=True)


def strips_and_tiles(p):
    """Strip and tile layouts the band reader streams, each written by tifffile; every one is
    read back whole and in bands (tests/suite/raster_bands.rs), and the lossless ones against
    plain-rgb.tif."""
    a = alpha_field()
    wide = p.astype(np.uint16) * 257  # 8-bit codes widened exactly to 16 bit
    gray = p[..., 1]
    # Tiles 32 wide and 48 long on a 48 x 32 picture: padded to the right and below.
    tifffile.imwrite(OUT / "tiled-rgb-padded.tif", p, photometric="rgb", tile=(48, 32))
    # 16 x 16 tiles, 16-bit, Deflate with the horizontal predictor: two rows of three tiles.
    tifffile.imwrite(OUT / "tiled-rgb16-deflate.tif", wide, photometric="rgb", tile=(16, 16), compression="zlib", predictor=True)
    # Strips of 5 rows (32 = 6 x 5 + 2), 16-bit, Deflate with the horizontal predictor.
    tifffile.imwrite(OUT / "strips5-rgb16-deflate.tif", wide, photometric="rgb", rowsperstrip=5, compression="zlib", predictor=True)
    # Strips of 7 rows, 8-bit, LZW with the horizontal predictor.
    tifffile.imwrite(OUT / "strips7-rgb-lzw.tif", p, photometric="rgb", rowsperstrip=7, compression="lzw", predictor=True)
    # 8-bit gray + unassociated alpha, PackBits, strips of 3 rows.
    tifffile.imwrite(
        OUT / "strips3-graya-packbits.tif", np.dstack([gray, a]), photometric="minisblack", extrasamples=["unassalpha"], rowsperstrip=3, compression="packbits"
    )
    # 16-bit RGB + associated alpha, strips of 4 rows, uncompressed.
    tifffile.imwrite(
        OUT / "strips4-rgba16-associated.tif",
        np.dstack([(wide * (a[..., None] / 255.0)).round().astype(np.uint16), a.astype(np.uint16) * 257]),
        photometric="rgb",
        extrasamples=["assocalpha"],
        rowsperstrip=4,
    )
    # 16-bit CMYK, 16 x 16 tiles, LZW.
    cmyk = np.dstack([255 - p, (p.min(-1) // 2)[..., None]]).astype(np.uint16) * 257
    tifffile.imwrite(OUT / "tiled-cmyk16-lzw.tif", cmyk, photometric="separated", tile=(16, 16), compression="lzw")
    # 8-bit CMYK + unassociated alpha, strips of 6 rows, Deflate.
    tifffile.imwrite(
        OUT / "strips6-cmyka-deflate.tif",
        np.dstack([cmyk // 257, a]).astype(np.uint8),
        photometric="separated",
        extrasamples=["unassalpha"],
        rowsperstrip=6,
        compression="zlib",
    )
    # 32-bit float, strips of 3 rows, with values below 0 and above 1 that reading clips.
    lin = srgb_decode(p / 255.0) * 1.2 - 0.05
    tifffile.imwrite(OUT / "strips3-float32-clipped.tif", lin.astype(np.float32), photometric="rgb", rowsperstrip=3)
    # 1-bit line art, MinIsBlack, strips of 5 rows, uncompressed.
    y, x = np.mgrid[0:H, 0:W]
    art = ((x // 4 + y // 4) % 2 == 0) | (np.abs(x - y) < 2)
    tifffile.imwrite(OUT / "strips5-lineart-1bit.tif", art, photometric="minisblack", rowsperstrip=5)
    # 16-bit big-endian (Motorola byte order), uncompressed, one strip.
    tifffile.imwrite(OUT / "rgb16-bigendian.tif", wide, photometric="rgb", byteorder=">")
    # An Orientation value outside 1-8: noted, read as stored.
    tifffile.imwrite(OUT / "orientation-undefined.tif", p, photometric="rgb", rowsperstrip=8, extratags=[(274, "H", 1, 9, True)])
    # 16-bit gray PNG (Pillow), read a row at a time.
    Image.fromarray(wide[..., 0].astype(np.uint16)).save(OUT / "gray16.png")


def planar_and_palette(p):
    """Planar and palette pages in several strips or tiles, which the band reader streams a
    row of chunks at a time; the planar ones are read back against plain-rgb.tif, the palette
    ones against their own RGB expansion (a PNG written here from the same table)."""
    wide = p.astype(np.uint16) * 257
    planes = np.moveaxis(p, -1, 0)
    # Planar, 16-bit, strips of 5 rows per plane (32 = 6 x 5 + 2), Deflate with the predictor.
    tifffile.imwrite(
        OUT / "planar-strips5-rgb16-deflate.tif", np.moveaxis(wide, -1, 0), photometric="rgb", planarconfig="separate", rowsperstrip=5, compression="zlib", predictor=True
    )
    # Planar, 8-bit, 16 x 16 tiles per plane, LZW.
    tifffile.imwrite(OUT / "planar-tiled-rgb-lzw.tif", planes, photometric="rgb", planarconfig="separate", tile=(16, 16), compression="lzw")
    # Palette of 64 colours (ColorMap v * 257), indices from an 8 x 8 grid over the picture.
    y, x = np.mgrid[0:H, 0:W]
    index = ((y * 8 // H) * 8 + x * 8 // W).astype(np.uint8)
    k = np.arange(256)
    table = np.stack([(k * 37 + 11) % 256, (k * 91 + 200) % 256, (k * 13 + 60) % 256]).astype(np.uint16)
    colormap = table * 257
    tifffile.imwrite(OUT / "palette-strips4-deflate.tif", index, photometric="palette", colormap=colormap, rowsperstrip=4, compression="zlib")
    tifffile.imwrite(OUT / "palette-tiled.tif", index, photometric="palette", colormap=colormap, tile=(16, 16))
    save_png("palette-strips4-deflate.expected.png", np.moveaxis(table[:, index], 0, -1).astype(np.uint8))


def main():
    OUT.mkdir(parents=True, exist_ok=True)
    p = picture()
    strips_and_tiles(p)
    if sys.argv[1:] == ["--only", "strips"]:
        return
    planar_and_palette(p)
    if sys.argv[1:] == ["--only", "planar"]:
        return
    # The plain equivalent of every RGB case: 8-bit RGB, uncompressed, interleaved.
    tifffile.imwrite(OUT / "plain-rgb.tif", p, photometric="rgb")

    # Planar configuration 2 (one plane per sample).
    tifffile.imwrite(OUT / "planar-rgb.tif", np.moveaxis(p, -1, 0), photometric="rgb", planarconfig="separate")

    # Palette: Pillow quantises to 64 colours; the plain equivalent is its own RGB expansion.
    pal = Image.fromarray(p).quantize(64, dither=Image.Dither.NONE)
    pal.save(OUT / "palette.tif")
    save_png("palette.expected.png", np.asarray(pal.convert("RGB")))

    # JPEG-in-TIFF: YCbCr 4:2:0 (tifffile through imagecodecs/libjpeg-turbo) and RGB (libtiff
    # through Pillow), each with the writer's own decoding of it.
    # tifffile stores the samples it is given as YCbCr: they are converted here (JFIF 1.02
    # equations, ITU-R BT.601 full range, the default of TIFF 6.0 §21).
    f = p.astype(np.float64)
    ycc = np.stack(
        [
            0.299 * f[..., 0] + 0.587 * f[..., 1] + 0.114 * f[..., 2],
            128 - 0.168736 * f[..., 0] - 0.331264 * f[..., 1] + 0.5 * f[..., 2],
            128 + 0.5 * f[..., 0] - 0.418688 * f[..., 1] - 0.081312 * f[..., 2],
        ],
        -1,
    )
    ycc = ycc.round().clip(0, 255).astype(np.uint8)
    tifffile.imwrite(OUT / "jpeg-ycbcr.tif", ycc, photometric="ycbcr", subsampling=(2, 2), compression="jpeg", compressionargs={"level": 90})
    save_png("jpeg-ycbcr.expected.png", np.asarray(Image.open(OUT / "jpeg-ycbcr.tif").convert("RGB")))
    Image.fromarray(p).save(OUT / "jpeg-rgb.tif", compression="tiff_jpeg", quality=90)
    save_png("jpeg-rgb.expected.png", np.asarray(Image.open(OUT / "jpeg-rgb.tif").convert("RGB")))

    # Associated (premultiplied) alpha, and the picture flattened on white by this script.
    a = alpha_field().astype(np.float64)
    premult = (p * (a[..., None] / 255.0)).round().astype(np.uint8)
    tifffile.imwrite(
        OUT / "rgba-associated.tif",
        np.dstack([premult, a.astype(np.uint8)]),
        photometric="rgb",
        extrasamples=["assocalpha"],
    )
    flat = (p * (a[..., None] / 255.0) + 255.0 * (1 - a[..., None] / 255.0)).round().astype(np.uint8)
    save_png("rgba-associated.expected.png", flat)

    # CMYK with unassociated alpha; expected: ink scaled by alpha (paper white has no ink).
    cmyk = np.dstack([255 - p, (p.min(-1) // 2)[..., None]]).astype(np.uint8)
    tifffile.imwrite(
        OUT / "cmyk-alpha.tif",
        np.dstack([cmyk, a.astype(np.uint8)]),
        photometric="separated",
        extrasamples=["unassalpha"],
    )
    tifffile.imwrite(
        OUT / "cmyk-alpha.expected.tif",
        (cmyk * (a[..., None] / 255.0)).round().astype(np.uint8),
        photometric="separated",
    )

    # 32-bit float, linear light (sRGB primaries); expected: the sRGB encoding at 16 bit.
    lin = srgb_decode(p / 255.0).astype(np.float32)
    tifffile.imwrite(OUT / "float32-linear.tif", lin, photometric="rgb")
    tifffile.imwrite(
        OUT / "float32-linear.expected.tif",
        (srgb_encode(lin.astype(np.float64)) * 65535).round().astype(np.uint16),
        photometric="rgb",
    )

    # 1-bit line art (MinIsWhite, CCITT G4 through libtiff) and its 8-bit gray equivalent.
    y, x = np.mgrid[0:H, 0:W]
    art = ((x // 4 + y // 4) % 2 == 0) | (np.abs(x - y) < 2)
    Image.fromarray(~art).convert("1").save(OUT / "lineart-1bit.tif", compression="group4")
    save_png("lineart-1bit.expected.png", np.where(art, 0, 255).astype(np.uint8))

    # Pages: a reduced-resolution thumbnail first (NewSubfileType 1), then the picture,
    # then a second full page.
    with tifffile.TiffWriter(OUT / "pages-thumbnail-first.tif") as tw:
        tw.write(p[::4, ::4], photometric="rgb", subfiletype=1)
        tw.write(p, photometric="rgb")
        tw.write(255 - p, photometric="rgb")

    # Orientation tag 6 and 8 (TIFF): stored turned, so that upright is the picture.
    # 6: row 0 on the right, column 0 at the top -> stored = the picture turned anticlockwise.
    tifffile.imwrite(OUT / "orientation-6.tif", np.rot90(p, 1), photometric="rgb", extratags=[(274, "H", 1, 6, True)])
    tifffile.imwrite(OUT / "orientation-8.tif", np.rot90(p, -1), photometric="rgb", extratags=[(274, "H", 1, 8, True)])

    # EXIF orientation in JPEG (Pillow/libjpeg); expected: Pillow's exif_transpose of its decoding.
    for tag, stored in [(6, np.rot90(p, 1)), (3, np.rot90(p, 2))]:
        exif = Image.Exif()
        exif[274] = tag
        name = f"exif-orientation-{tag}.jpg"
        Image.fromarray(np.ascontiguousarray(stored)).save(OUT / name, quality=95, subsampling=0, exif=exif.tobytes())
        save_png(f"exif-orientation-{tag}.expected.png", np.asarray(ImageOps.exif_transpose(Image.open(OUT / name)).convert("RGB")))

    # JPEG variants the entropy-data check must pass, each with libjpeg's decoding.
    variants = {
        "baseline-420.jpg": dict(quality=90, subsampling=2),
        "baseline-422.jpg": dict(quality=90, subsampling=1),
        "progressive.jpg": dict(quality=90, progressive=True),
        "progressive-444.jpg": dict(quality=90, progressive=True, subsampling=0),
        "optimized.jpg": dict(quality=90, optimize=True),
    }
    for name, opts in variants.items():
        Image.fromarray(p).save(OUT / name, **opts)
        save_png(name.replace(".jpg", ".expected.png"), np.asarray(Image.open(OUT / name).convert("RGB")))
    Image.fromarray(p).convert("L").save(OUT / "gray-progressive.jpg", quality=90, progressive=True)
    Image.fromarray(p).convert("CMYK").save(OUT / "cmyk-adobe.jpg", quality=90)

    # Cut short with the end marker appended (an interrupted transfer), baseline and progressive.
    for src, dst in [("baseline-420.jpg", "cut-baseline.jpg"), ("progressive.jpg", "cut-progressive.jpg")]:
        data = (OUT / src).read_bytes()
        # Halfway through the first scan's entropy-coded data.
        sos = data.index(b"\xff\xda")
        end = sos + 2
        while not (data[end] == 0xFF and data[end + 1] not in (0x00, 0xFF) and end > sos + 2 + int.from_bytes(data[sos + 2 : sos + 4], "big")):
            end += 1
        cut = (sos + end) // 2 if src.startswith("progressive") else sos + (len(data) - sos) * 55 // 100
        (OUT / dst).write_bytes(data[:cut] + b"\xff\xd9")


if __name__ == "__main__":
    main()
