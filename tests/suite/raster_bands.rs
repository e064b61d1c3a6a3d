//! Reading a band of rows at a time (`open_bands`) against reading whole
//! (`read_raster_with`), on files written by independent software: the input fixtures
//! of `scripts/reference/make_input_fixtures.py` (tifffile 2025.10.16 and Pillow with
//! its libtiff and libjpeg; `testdata/inputs/README.md`) and the demo image. The
//! whole read is itself held against those writers' own decodings in
//! `raster_inputs.rs`; here the lossless strip and tile layouts are also held against
//! the picture the script wrote (`plain-rgb.tif`), and the bands against the whole read
//! sample for sample, info and notes included.

use platesmith::raster::{BandSource, Limits, Raster, ReadOptions, Samples, open_bands, read_raster_with};
use std::path::{Path, PathBuf};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn input(name: &str) -> PathBuf {
    root().join("testdata/inputs").join(name)
}

/// Every committed input picture and the demo image.
fn all_inputs() -> Vec<PathBuf> {
    let mut files = Vec::new();
    for dir in ["testdata/inputs", "testdata/inputs/png-colour"] {
        for entry in std::fs::read_dir(root().join(dir)).unwrap() {
            let path = entry.unwrap().path();
            let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("");
            if matches!(ext, "tif" | "png" | "jpg") {
                files.push(path);
            }
        }
    }
    files.push(root().join("examples/harbour-lights.png"));
    files.sort();
    files
}

/// All bands of `source` of at most `rows` rows, joined, checking their order.
fn joined(source: &mut dyn BandSource, rows: u32) -> platesmith::Result<Samples> {
    let info = source.info().clone();
    let mut out = if info.bits == 16 {
        Samples::U16(vec![])
    } else {
        Samples::U8(vec![])
    };
    let mut next_y = 0;
    while let Some(band) = source.next_band(rows)? {
        assert_eq!(band.y, next_y);
        assert!(band.rows >= 1 && band.rows <= rows.max(1));
        assert_eq!(band.samples.len(), band.rows as usize * info.row_len());
        next_y += band.rows;
        match (&mut out, band.samples) {
            (Samples::U8(o), Samples::U8(s)) => o.extend(s),
            (Samples::U16(o), Samples::U16(s)) => o.extend(s),
            _ => panic!("a band of another depth than the info says"),
        }
    }
    assert_eq!(next_y, info.height, "the bands cover the picture");
    assert!(source.next_band(rows)?.is_none(), "nothing after the last band");
    Ok(out)
}

fn check_against_whole(path: &Path, options: &ReadOptions) -> bool {
    let name = path.display();
    let whole = match read_raster_with(path, options) {
        Ok(r) => r,
        Err(e) => {
            let streamed = open_bands(path, options).err().map(|e| e.to_string());
            assert_eq!(streamed, Some(e.to_string()), "{name}: the same error");
            return false;
        }
    };
    let (info, samples) = whole.into_parts();
    for rows in [1, 7, 64, info.height] {
        let mut source = open_bands(path, options).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(source.info(), &info, "{name}: info");
        let first = joined(source.as_mut(), rows).unwrap_or_else(|e| panic!("{e}"));
        assert!(first == samples, "{name}: bands of {rows} rows differ from the whole read");
        source.rewind().unwrap_or_else(|e| panic!("{e}"));
        let second = joined(source.as_mut(), rows).unwrap_or_else(|e| panic!("{e}"));
        assert!(second == samples, "{name}: second pass, bands of {rows} rows");
        assert_eq!(source.info(), &info, "{name}: info after rewinding");
    }
    open_bands(path, options).unwrap().streamed()
}

#[test]
fn bands_join_to_the_whole_read_for_every_input_at_every_band_height() {
    let mut streamed = Vec::new();
    for path in all_inputs() {
        if check_against_whole(&path, &ReadOptions::default()) {
            streamed.push(path.file_name().unwrap().to_string_lossy().into_owned());
        }
    }
    println!("streamed: {streamed:?}");
    // What must stream (the strip and tile layouts, non-interlaced PNG), by name.
    for name in [
        "plain-rgb.tif",
        "tiled-rgb-padded.tif",
        "tiled-rgb16-deflate.tif",
        "strips5-rgb16-deflate.tif",
        "strips7-rgb-lzw.tif",
        "strips3-graya-packbits.tif",
        "strips4-rgba16-associated.tif",
        "tiled-cmyk16-lzw.tif",
        "strips6-cmyka-deflate.tif",
        "strips3-float32-clipped.tif",
        "float32-linear.tif",
        "strips5-lineart-1bit.tif",
        "lineart-1bit.tif",
        "rgba-associated.tif",
        "cmyk-alpha.tif",
        "jpeg-rgb.tif",
        "jpeg-ycbcr.tif",
        "pages-thumbnail-first.tif",
        "orientation-undefined.tif",
        "rgb16-bigendian.tif",
        "planar-rgb.tif",
        "planar-strips5-rgb16-deflate.tif",
        "planar-tiled-rgb-lzw.tif",
        "palette.tif",
        "palette-strips4-deflate.tif",
        "palette-tiled.tif",
        "gray16.png",
        "harbour-lights.png",
    ] {
        assert!(streamed.iter().any(|s| s == name), "{name} is not streamed");
    }
    // What is read whole (the module docs and README list these).
    for name in ["orientation-6.tif", "orientation-8.tif", "progressive.jpg"] {
        assert!(!streamed.iter().any(|s| s == name), "{name} should be read whole");
    }
}

#[test]
fn every_page_and_the_float_curve_stream_as_they_read_whole() {
    for page in 1..=3 {
        let options = ReadOptions {
            page: Some(page),
            ..ReadOptions::default()
        };
        assert!(check_against_whole(&input("pages-thumbnail-first.tif"), &options), "page {page}");
    }
    let options = ReadOptions {
        float_space: platesmith::colour::RgbSpace::DisplayP3,
        ..ReadOptions::default()
    };
    assert!(check_against_whole(&input("strips3-float32-clipped.tif"), &options));
    let notes = open_bands(&input("strips3-float32-clipped.tif"), &options)
        .unwrap()
        .info()
        .notes
        .clone();
    assert!(notes.iter().any(|n| n.contains("samples outside 0–1 clipped")), "{notes:?}");
}

fn values(s: &Samples) -> Vec<u16> {
    match s {
        Samples::U8(v) => v.iter().map(|&x| u16::from(x) * 257).collect(),
        Samples::U16(v) => v.clone(),
    }
}

fn streamed_whole(path: &Path) -> Raster {
    let mut source = open_bands(path, &ReadOptions::default()).unwrap();
    assert!(source.streamed(), "{}", path.display());
    let info = source.info().clone();
    let samples = joined(source.as_mut(), 5).unwrap();
    Raster::from_parts(info, samples)
}

/// tifffile wrote each layout from the same picture as `plain-rgb.tif` (16-bit ones widened
/// by 257): streamed, every one reads back as that picture exactly.
#[test]
fn lossless_strip_and_tile_layouts_stream_back_the_picture_tifffile_wrote() {
    let plain = values(&read_raster_with(&input("plain-rgb.tif"), &ReadOptions::default()).unwrap().samples);
    for name in [
        "tiled-rgb-padded.tif",
        "tiled-rgb16-deflate.tif",
        "strips5-rgb16-deflate.tif",
        "strips7-rgb-lzw.tif",
        "orientation-undefined.tif",
        "rgb16-bigendian.tif",
        "planar-rgb.tif",
        "planar-strips5-rgb16-deflate.tif",
        "planar-tiled-rgb-lzw.tif",
    ] {
        let r = streamed_whole(&input(name));
        assert_eq!((r.width, r.height), (48, 32), "{name}");
        assert!(values(&r.samples) == plain, "{name}: differs from plain-rgb.tif");
    }
    // CMYK 16-bit tiles: C, M, Y = 255 − R, G, B and K = min(R, G, B) / 2 (the script's formula), widened.
    let cmyk = values(&streamed_whole(&input("tiled-cmyk16-lzw.tif")).samples);
    for (px, rgb) in cmyk.chunks_exact(4).zip(plain.chunks_exact(3)) {
        let [r, g, b] = [rgb[0] / 257, rgb[1] / 257, rgb[2] / 257];
        assert_eq!(px, [255 - r, 255 - g, 255 - b, r.min(g).min(b) / 2].map(|v| v * 257));
    }
}

/// Palette pages in strips (Deflate) and tiles, written by tifffile with a ColorMap of
/// v · 257, stream back the expansion of the same indices through the same table that the
/// script wrote as a PNG (the whole read patches its copy of the file; the streamed read shows
/// the decoder the same two bytes).
#[test]
fn palette_pages_in_strips_and_tiles_stream_back_their_expansion() {
    let expected = values(
        &read_raster_with(&input("palette-strips4-deflate.expected.png"), &ReadOptions::default())
            .unwrap()
            .samples,
    );
    for name in ["palette-strips4-deflate.tif", "palette-tiled.tif"] {
        let r = streamed_whole(&input(name));
        assert_eq!((r.width, r.height), (48, 32), "{name}");
        assert!(values(&r.samples) == expected, "{name}: differs from its expansion");
        assert!(r.notes.iter().any(|n| n.contains("palette")), "{name}: {:?}", r.notes);
    }
}

/// A band source reading `name` with every band of `rows` rows, stopping at the first error:
/// the bands read before it and the error.
fn read_until_error(path: &Path, rows: u32) -> (u32, String) {
    let mut source = open_bands(path, &ReadOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let mut good = 0;
    loop {
        match source.next_band(rows) {
            Ok(Some(band)) => good += band.rows,
            Ok(None) => panic!("{}: read to the end without an error", path.display()),
            Err(e) => return (good, e.to_string()),
        }
    }
}

#[test]
fn a_png_cut_short_fails_in_the_band_where_its_data_ends_naming_the_file() {
    let dir = tempfile::tempdir().unwrap();
    // The demo image (1800 × 1200, one IDAT chunk) cut at 60 % of its bytes.
    let bytes = std::fs::read(root().join("examples/harbour-lights.png")).unwrap();
    let cut = dir.path().join("cut.png");
    std::fs::write(&cut, &bytes[..bytes.len() * 6 / 10]).unwrap();
    let whole = read_raster_with(&cut, &ReadOptions::default()).unwrap_err().to_string();
    let (good, error) = read_until_error(&cut, 64);
    println!("{good} rows read, then: {error}");
    assert!((64..1200).contains(&good), "{good} rows before the error");
    assert!(error.contains("cut.png") && error.contains("truncated PNG"), "{error}");
    assert!(whole.contains("cut.png") && whole.contains("truncated PNG"), "{whole}");
}

/// Offsets of the strips of a little-endian classic TIFF's first directory.
fn strip_offsets(bytes: &[u8]) -> Vec<(u64, u64)> {
    let u16_at = |o: usize| u64::from(u16::from_le_bytes([bytes[o], bytes[o + 1]]));
    let u32_at = |o: usize| u64::from(u32::from_le_bytes([bytes[o], bytes[o + 1], bytes[o + 2], bytes[o + 3]]));
    assert_eq!(&bytes[..4], b"II*\0");
    let ifd = u32_at(4) as usize;
    let (mut offsets, mut counts) = (vec![], vec![]);
    for k in 0..u16_at(ifd) as usize {
        let e = ifd + 2 + 12 * k;
        let (tag, kind, n) = (u16_at(e), u16_at(e + 2), u32_at(e + 4) as usize);
        let value = |i: usize| {
            let base = if n * if kind == 3 { 2 } else { 4 } <= 4 {
                e + 8
            } else {
                u32_at(e + 8) as usize
            };
            if kind == 3 { u16_at(base + 2 * i) } else { u32_at(base + 4 * i) }
        };
        match tag {
            273 => offsets = (0..n).map(value).collect(),
            279 => counts = (0..n).map(value).collect(),
            _ => {}
        }
    }
    offsets.into_iter().zip(counts).collect()
}

#[test]
fn a_damaged_strip_fails_in_its_own_band_naming_the_file() {
    // strips5-rgb16-deflate.tif: seven Deflate strips of 5 rows (the last of 2). The
    // sixth strip (rows 25–29) gets its zlib stream cut after its header: reading whole
    // fails, reading in bands of 5 rows fails on the sixth band.
    let dir = tempfile::tempdir().unwrap();
    let mut bytes = std::fs::read(input("strips5-rgb16-deflate.tif")).unwrap();
    let strips = strip_offsets(&bytes);
    assert_eq!(strips.len(), 7);
    let (offset, count) = strips[5];
    for b in &mut bytes[offset as usize + 2..(offset + count) as usize] {
        *b = 0xFF;
    }
    let damaged = dir.path().join("damaged.tif");
    std::fs::write(&damaged, &bytes).unwrap();
    let whole = read_raster_with(&damaged, &ReadOptions::default()).unwrap_err().to_string();
    let (good, error) = read_until_error(&damaged, 5);
    println!("whole: {whole}\nbands: {good} rows, then {error}");
    assert_eq!(good, 25);
    assert!(error.contains("damaged.tif") && error.contains("TIFF"), "{error}");
    assert!(whole.contains("damaged.tif"), "{whole}");
}

#[test]
fn a_tiff_cut_short_is_refused_on_opening_as_the_whole_read_refuses_it() {
    let dir = tempfile::tempdir().unwrap();
    let bytes = std::fs::read(input("strips7-rgb-lzw.tif")).unwrap();
    let (offset, _) = strip_offsets(&bytes)[3];
    let cut = dir.path().join("cut.tif");
    std::fs::write(&cut, &bytes[..offset as usize + 10]).unwrap();
    let whole = read_raster_with(&cut, &ReadOptions::default()).unwrap_err().to_string();
    let streamed = open_bands(&cut, &ReadOptions::default()).err().map(|e| e.to_string());
    assert_eq!(streamed.as_deref(), Some(whole.as_str()));
    assert!(whole.contains("cut.tif") && whole.contains("truncated TIFF"), "{whole}");
}

fn limited(limits: Limits) -> ReadOptions {
    ReadOptions {
        limits,
        ..ReadOptions::default()
    }
}

#[test]
fn the_byte_limit_bounds_what_is_held_not_the_streamed_picture() {
    // 48 × 32 RGB, 4.5 KiB decoded; strips7-rgb-lzw.tif holds 7 rows (1008 bytes) at a time.
    let options = limited(Limits {
        max_bytes: 2000,
        ..Limits::default()
    });
    let refused = read_raster_with(&input("strips7-rgb-lzw.tif"), &options).unwrap_err().to_string();
    assert!(refused.contains("limits setting"), "{refused}");
    let mut source = open_bands(&input("strips7-rgb-lzw.tif"), &options).unwrap();
    assert!(source.streamed());
    joined(source.as_mut(), 3).unwrap();
    // Under 1008 bytes, a strip of strips7-rgb-lzw.tif is over the limit.
    let tighter = limited(Limits {
        max_bytes: 1000,
        ..Limits::default()
    });
    let held = open_bands(&input("strips7-rgb-lzw.tif"), &tighter).err().unwrap().to_string();
    assert!(
        held.contains("strips7-rgb-lzw.tif") && held.contains("strips or tiles") && held.contains("limits setting"),
        "{held}"
    );
    // plain-rgb.tif is one uncompressed strip: its rows are read straight into each band.
    let mut direct = open_bands(&input("plain-rgb.tif"), &options).unwrap();
    assert!(direct.streamed());
    joined(direct.as_mut(), 5).unwrap();
    // Read whole: the byte limit is the whole picture's, with the whole read's message.
    let turned = open_bands(&input("orientation-6.tif"), &options).err().unwrap().to_string();
    assert_eq!(
        turned,
        read_raster_with(&input("orientation-6.tif"), &options).unwrap_err().to_string()
    );
    // PNG: a row at a time.
    let mut png = open_bands(&input("gray16.png"), &options).unwrap();
    assert!(png.streamed());
    joined(png.as_mut(), 64).unwrap();
    // The side limits hold for a streamed picture.
    let narrow = limited(Limits {
        max_width: 40,
        ..Limits::default()
    });
    let refused = open_bands(&input("strips7-rgb-lzw.tif"), &narrow).err().unwrap().to_string();
    assert_eq!(
        refused,
        read_raster_with(&input("strips7-rgb-lzw.tif"), &narrow).unwrap_err().to_string()
    );
}
