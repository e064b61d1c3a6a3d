//! Input files written by independent software, each read back and compared with its plain
//! equivalent or with what an independent decoder made of it. The files and their
//! references are made by `scripts/reference/make_input_fixtures.py` (tifffile 2025.10.16,
//! Pillow 12.0.0 with its libtiff and libjpeg, imagecodecs with libjpeg-turbo) and committed
//! in `testdata/inputs/` (README there).
//!
//! Bounds: lossless cases within 1 code (rounding of the writer against ours); JPEG cases
//! within [`JPEG_MAX`] codes of libjpeg's decoding and [`JPEG_MEAN`] on average: the IDCT
//! and chroma upsampling of zune-jpeg and libjpeg differ by design (ISO/IEC 10918-1 A.3.3
//! allows any IDCT accurate to ISO/IEC 10918-2's tolerance, and upsampling is not specified).

use platesmith::job::to_rgb;
use platesmith::raster::{Layout, Limits, Raster, ReadOptions, Samples, read_raster, read_raster_with};
use std::path::{Path, PathBuf};

/// Largest difference allowed between our JPEG decoding and libjpeg's, in 8-bit codes.
const JPEG_MAX: u32 = 4;
/// Mean difference allowed between our JPEG decoding and libjpeg's, in 8-bit codes.
const JPEG_MEAN: f64 = 0.5;

fn input(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/inputs").join(name)
}

fn read(name: &str) -> Raster {
    read_raster(&input(name), &Limits::default()).unwrap_or_else(|e| panic!("{e}"))
}

fn read_with(name: &str, f: impl FnOnce(&mut ReadOptions)) -> platesmith::Result<Raster> {
    let mut o = ReadOptions::default();
    f(&mut o);
    read_raster_with(&input(name), &o)
}

fn values(s: &Samples) -> Vec<u32> {
    match s {
        Samples::U8(v) => v.iter().map(|&x| x.into()).collect(),
        Samples::U16(v) => v.iter().map(|&x| x.into()).collect(),
    }
}

/// (largest, mean) absolute difference of two sample lists of one length.
fn difference(a: &[u32], b: &[u32]) -> (u32, f64) {
    assert_eq!(a.len(), b.len(), "sample counts differ");
    let d: Vec<u32> = a.iter().zip(b).map(|(x, y)| x.abs_diff(*y)).collect();
    (
        d.iter().copied().max().unwrap_or(0),
        d.iter().map(|&x| f64::from(x)).sum::<f64>() / d.len().max(1) as f64,
    )
}

fn same_within(name: &str, got: &Raster, want: &Raster, max: u32) {
    assert_eq!((got.width, got.height), (want.width, want.height), "{name}: size");
    let (m, mean) = difference(&values(&got.samples), &values(&want.samples));
    println!("{name}: largest difference {m}, mean {mean:.3}");
    assert!(m <= max, "{name}: largest difference {m} > {max}");
}

fn jpeg_close(name: &str, got: &Raster, want: &Raster) {
    assert_eq!((got.width, got.height), (want.width, want.height), "{name}: size");
    let (m, mean) = difference(&values(&got.samples), &values(&want.samples));
    println!("{name}: largest difference from libjpeg {m}, mean {mean:.3}");
    assert!(m <= JPEG_MAX && mean <= JPEG_MEAN, "{name}: largest {m}, mean {mean:.3}");
}

#[test]
fn planar_tiff_reads_as_its_interleaved_equivalent() {
    let r = read("planar-rgb.tif");
    assert_eq!(r.layout, Layout::Rgb);
    same_within("planar", &r, &read("plain-rgb.tif"), 0);
}

#[test]
fn palette_tiff_expands_as_pillow_expands_it() {
    let r = read("palette.tif");
    assert_eq!(r.layout, Layout::Rgb);
    same_within("palette", &r, &read("palette.expected.png"), 0);
    assert!(r.notes.iter().any(|n| n.contains("palette")), "{:?}", r.notes);
}

#[test]
fn jpeg_in_tiff_matches_the_writers_own_decoding() {
    for name in ["jpeg-ycbcr.tif", "jpeg-rgb.tif"] {
        let r = read(name);
        assert_eq!(r.layout, Layout::Rgb, "{name}");
        jpeg_close(name, &r, &read(&name.replace(".tif", ".expected.png")));
        // And the picture itself, through the loss of JPEG at quality 90.
        let (m, mean) = difference(&values(&r.samples), &values(&read("plain-rgb.tif").samples));
        println!("{name}: against the original picture: largest {m}, mean {mean:.3}");
        assert!(mean < 3.0, "{name}: mean {mean}");
    }
}

#[test]
fn associated_alpha_is_unpremultiplied_before_flattening_on_white() {
    let r = read("rgba-associated.tif");
    assert_eq!(r.layout, Layout::Rgba);
    assert!(r.notes.iter().any(|n| n.contains("un-premultiplied")), "{:?}", r.notes);
    let mut notes = Vec::new();
    let flat = to_rgb(&r, &mut notes).unwrap();
    let want = read("rgba-associated.expected.png");
    // Premultiplied 8-bit colour loses precision where alpha is small; un-premultiplying and
    // flattening again stays within one code of flattening the original (TIFF 6.0 ExtraSamples).
    let (m, mean) = difference(&values(&flat), &values(&want.samples));
    println!("associated alpha: largest difference {m}, mean {mean:.3}");
    assert!(m <= 1, "largest difference {m}");
}

#[test]
fn cmyk_with_alpha_is_flattened_to_no_ink_where_transparent() {
    let r = read("cmyk-alpha.tif");
    assert_eq!(r.layout, Layout::Cmyk);
    same_within("cmyk-alpha", &r, &read("cmyk-alpha.expected.tif"), 1);
}

#[test]
fn float_samples_are_linear_light_encoded_with_the_srgb_curve() {
    let r = read("float32-linear.tif");
    assert_eq!((r.layout, r.bits), (Layout::Rgb, 16));
    assert!(r.notes.iter().any(|n| n.contains("linear light")), "{:?}", r.notes);
    same_within("float32", &r, &read("float32-linear.expected.tif"), 1);
}

#[test]
fn one_bit_line_art_is_read_as_black_and_white_and_marked() {
    let r = read("lineart-1bit.tif");
    assert!(r.line_art);
    assert_eq!(r.layout, Layout::Gray);
    same_within("line art", &r, &read("lineart-1bit.expected.png"), 0);
}

#[test]
fn the_full_resolution_page_is_read_and_the_others_are_noted() {
    let r = read("pages-thumbnail-first.tif");
    same_within("page 2 (first full page)", &r, &read("plain-rgb.tif"), 0);
    assert!(r.notes.iter().any(|n| n.contains("page 2 of 3")), "{:?}", r.notes);
    let thumb = read_with("pages-thumbnail-first.tif", |o| o.page = Some(1)).unwrap();
    assert_eq!((thumb.width, thumb.height), (12, 8));
    let third = read_with("pages-thumbnail-first.tif", |o| o.page = Some(3)).unwrap();
    let inverse: Vec<u32> = values(&read("plain-rgb.tif").samples).iter().map(|v| 255 - v).collect();
    assert_eq!(values(&third.samples), inverse);
    let e = read_with("pages-thumbnail-first.tif", |o| o.page = Some(4))
        .unwrap_err()
        .to_string();
    assert!(e.contains("3 page(s)"), "{e}");
}

#[test]
fn tiff_orientation_turns_the_raster_upright() {
    for name in ["orientation-6.tif", "orientation-8.tif"] {
        let r = read(name);
        same_within(name, &r, &read("plain-rgb.tif"), 0);
        assert!(r.notes.iter().any(|n| n.contains("orientation")), "{name}: {:?}", r.notes);
    }
}

#[test]
fn exif_orientation_turns_the_raster_upright_as_pillow_does() {
    for name in ["exif-orientation-6.jpg", "exif-orientation-3.jpg"] {
        let r = read(name);
        assert_eq!((r.width, r.height), (48, 32), "{name}");
        jpeg_close(name, &r, &read(&name.replace(".jpg", ".expected.png")));
        assert!(r.notes.iter().any(|n| n.contains("EXIF orientation")), "{name}: {:?}", r.notes);
    }
}

#[test]
fn valid_jpeg_codings_pass_the_data_check_and_match_libjpeg() {
    for name in [
        "baseline-420.jpg",
        "baseline-422.jpg",
        "progressive.jpg",
        "progressive-444.jpg",
        "optimized.jpg",
    ] {
        let r = read(name);
        assert!(r.notes.is_empty(), "{name}: {:?}", r.notes);
        jpeg_close(name, &r, &read(&name.replace(".jpg", ".expected.png")));
    }
    for name in ["gray-progressive.jpg", "cmyk-adobe.jpg"] {
        let r = read(name);
        assert!(r.notes.is_empty(), "{name}: {:?}", r.notes);
    }
}

#[test]
fn jpeg_cut_short_with_its_end_marker_is_damaged_unless_accepted() {
    for name in ["cut-baseline.jpg", "cut-progressive.jpg"] {
        let e = read_with(name, |_| {}).unwrap_err().to_string();
        assert!(e.contains("damaged JPEG data") && e.contains("--accept-damaged"), "{name}: {e}");
        let r = read_with(name, |o| o.accept_damaged = true).unwrap();
        assert!(r.notes.iter().any(|n| n.contains("damaged JPEG data")), "{name}: {:?}", r.notes);
    }
}

/// The binary on the independent files: line art on the black plate only, and every reading
/// decision in the summary's notes.
#[test]
fn separate_reports_what_reading_did_and_puts_line_art_on_black_only() {
    let dir = tempfile::tempdir().unwrap();
    let names = [
        "lineart-1bit.tif",
        "orientation-6.tif",
        "float32-linear.tif",
        "pages-thumbnail-first.tif",
        "rgba-associated.tif",
    ];
    let out = assert_cmd::Command::cargo_bin("platesmith")
        .unwrap()
        .arg("separate")
        .args(names.iter().map(|n| input(n)))
        .arg("--out-dir")
        .arg(dir.path())
        .args(["--table-grid", "9", "--plates", "none"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    let summary = |stem: &str| -> serde_json::Value {
        serde_json::from_str(&std::fs::read_to_string(dir.path().join(format!("{stem}.summary.json"))).unwrap()).unwrap()
    };
    let expect = [
        ("lineart-1bit", "1-bit line art: separated onto the black plate only"),
        ("orientation-6", "TIFF orientation 6"),
        ("float32-linear", "linear light in srgb"),
        ("pages-thumbnail-first", "page 2 of 3"),
        ("rgba-associated", "un-premultiplied"),
    ];
    for (stem, note) in expect {
        let s = summary(stem);
        assert!(s["notes"].to_string().contains(note), "{stem}: {}", s["notes"]);
        assert_eq!((s["width"].as_u64(), s["height"].as_u64()), (Some(48), Some(32)), "{stem}");
    }
    // Line art: no cyan, magenta or yellow anywhere; black exactly where the art is black.
    let composite = read_raster(&dir.path().join("lineart-1bit.cmyk.tif"), &Limits::default()).unwrap();
    let art = values(&read("lineart-1bit.expected.png").samples);
    let cmyk = values(&composite.samples);
    for (px, &gray) in cmyk.chunks_exact(4).zip(&art) {
        assert_eq!(&px[..3], &[0, 0, 0]);
        assert_eq!(px[3] > 0, gray == 0, "black where the art is black, none elsewhere");
    }
}

#[test]
fn a_page_asked_of_a_single_page_format_is_refused() {
    let e = read_with("baseline-420.jpg", |o| o.page = Some(2)).unwrap_err().to_string();
    assert!(e.contains("--page 2") && e.contains("one page"), "{e}");
    assert!(read_with("baseline-420.jpg", |o| o.page = Some(1)).is_ok());
}
