//! The bad-input matrix, end to end through the binary: every case is made
//! here by test code (testdata/bad/README.md lists them) and run as a user
//! would. A bad input must give exit code 2, exactly one error line that names
//! the file and the problem (and the line, for text formats), no output file,
//! an untouched input, and no panic. Inputs that look odd but are valid (1 × 1,
//! palette, 16-bit gray with alpha, inverted CMYK JPEG) must separate exactly
//! as their plain equivalents do.
//!
//! Outside references: PNG (ISO/IEC 15948:2004: IHDR §11.2.2, PLTE/tRNS
//! §11.2.3/§11.3.2, alpha §12.4 composited on white), TIFF 6.0 (Separated,
//! InkSet), JPEG (ISO/IEC 10918-1, with the Adobe APP14 marker whose CMYK
//! samples are stored inverted: common practice, as in libjpeg's jdapimin.c
//! notes), ICC.1:2022 §7.2.6 (the header's data colour space field), TOML 1.0
//! and CGATS.17 (ISO 28178) syntax.

use crate::jpeg::without_app14;
use assert_cmd::Command;
use platesmith::raster::{Limits, Samples, read_raster};
use std::path::{Path, PathBuf};

const NOTE: &str = platesmith::report::PREDICTION_NOTE;

fn platesmith() -> Command {
    Command::cargo_bin("platesmith").unwrap()
}

// ---------------------------------------------------------------- fixtures

/// A PNG from raw samples (8-bit unless `sixteen`), with an optional palette
/// (+ tRNS) and an optional embedded ICC profile.
fn png(
    w: u32,
    h: u32,
    color: png::ColorType,
    sixteen: bool,
    data: &[u8],
    palette: Option<(&[u8], &[u8])>,
    icc: Option<Vec<u8>>,
) -> Vec<u8> {
    let mut info = png::Info::with_size(w, h);
    info.color_type = color;
    info.bit_depth = if sixteen { png::BitDepth::Sixteen } else { png::BitDepth::Eight };
    if let Some((plte, trns)) = palette {
        info.palette = Some(std::borrow::Cow::Owned(plte.to_vec()));
        if !trns.is_empty() {
            info.trns = Some(std::borrow::Cow::Owned(trns.to_vec()));
        }
    }
    info.icc_profile = icc.map(std::borrow::Cow::Owned);
    let mut out = Vec::new();
    {
        let enc = png::Encoder::with_info(&mut out, info).unwrap();
        let mut wr = enc.write_header().unwrap();
        wr.write_image_data(data).unwrap();
        wr.finish().unwrap();
    }
    out
}

/// A colourful 8-bit RGB test image: hue across, lightness down.
fn rgb_picture(w: u32, h: u32) -> Vec<u8> {
    let mut v = Vec::new();
    for y in 0..h {
        for x in 0..w {
            let (fx, fy) = (x as f64 / (w.max(2) - 1) as f64, y as f64 / (h.max(2) - 1) as f64);
            v.extend([fx, (1.0 - fx) * fy, 0.25 + 0.5 * fy * fx].map(|c| (c * 255.0).round() as u8));
        }
    }
    v
}

fn rgb_png(w: u32, h: u32) -> Vec<u8> {
    png(w, h, png::ColorType::Rgb, false, &rgb_picture(w, h), None, None)
}

fn cmyk_tiff(w: u32, h: u32, data: &[u8]) -> Vec<u8> {
    let mut c = std::io::Cursor::new(Vec::new());
    tiff::encoder::TiffEncoder::new(&mut c)
        .unwrap()
        .write_image::<tiff::encoder::colortype::CMYK8>(w, h, data)
        .unwrap();
    c.into_inner()
}

fn rgb_tiff(w: u32, h: u32) -> Vec<u8> {
    let mut c = std::io::Cursor::new(Vec::new());
    tiff::encoder::TiffEncoder::new(&mut c)
        .unwrap()
        .write_image::<tiff::encoder::colortype::RGB8>(w, h, &rgb_picture(w, h))
        .unwrap();
    c.into_inner()
}

/// Flat 8 × 8 blocks, so JPEG's loss stays within a level or two (quality 100, 4:4:4).
fn blocks(w: usize, h: usize, channels: usize) -> Vec<u8> {
    let mut out = Vec::new();
    for y in 0..h {
        for x in 0..w {
            let b = (y / 8) * (w / 8 + 1) + x / 8;
            out.extend((0..channels).map(|c| ((b * 53 + c * 97 + 20) % 236) as u8));
        }
    }
    out
}

fn jpeg(w: u16, h: u16, data: &[u8], ct: jpeg_encoder::ColorType) -> Vec<u8> {
    let mut out = Vec::new();
    let mut enc = jpeg_encoder::Encoder::new(&mut out, 100);
    enc.set_sampling_factor(jpeg_encoder::SamplingFactor::R_4_4_4);
    enc.encode(data, w, h, ct).unwrap();
    out
}

/// A PNG whose IHDR claims 100 000 × 100 000 RGB (28 GiB decoded) and holds no image data.
fn huge_png() -> Vec<u8> {
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, 100_000, 100_000);
        enc.set_color(png::ColorType::Rgb);
        let w = enc.write_header().unwrap();
        std::mem::forget(w); // no IDAT/IEND, as a hostile file would be
    }
    out
}

/// A TIFF whose first directory claims 100 000 × 100 000 CMYK and has no strips.
fn huge_tiff() -> Vec<u8> {
    let mut c = std::io::Cursor::new(Vec::new());
    {
        let mut enc = tiff::encoder::TiffEncoder::new(&mut c).unwrap();
        enc.new_image::<tiff::encoder::colortype::CMYK8>(100_000, 100_000)
            .unwrap()
            .finish()
            .unwrap();
    }
    c.into_inner()
}

/// A JPEG cut partway through its entropy-coded data with the end-of-image marker appended,
/// as an interrupted transfer leaves it (ISO/IEC 10918-1 B.2.4: the data follows the SOS header).
fn cut_short_with_end_marker(jpeg: &[u8], percent: usize) -> Vec<u8> {
    let sos = jpeg.windows(2).position(|w| w == [0xFF, 0xDA]).unwrap();
    let data = sos + 2 + usize::from(u16::from_be_bytes([jpeg[sos + 2], jpeg[sos + 3]]));
    let cut = data + (jpeg.len() - 2 - data) * percent / 100;
    [&jpeg[..cut], &[0xFF, 0xD9][..]].concat()
}

/// The JPEG with its SOF0 frame header claiming `side` × `side` px (B.2.2).
fn claiming(jpeg: &[u8], side: u16) -> Vec<u8> {
    let mut b = jpeg.to_vec();
    let sof = b.windows(2).position(|w| w == [0xFF, 0xC0]).unwrap();
    b[sof + 5..sof + 7].copy_from_slice(&side.to_be_bytes());
    b[sof + 7..sof + 9].copy_from_slice(&side.to_be_bytes());
    b
}

/// A little-endian TIFF whose directory claims `side` × `side` 8-bit gray, uncompressed,
/// in one strip that holds only 100 bytes (TIFF 6.0 §2, baseline tags).
fn tiff_claiming(side: u32) -> Vec<u8> {
    let entries: [(u16, u16, u32); 8] = [
        (256, 4, side),               // ImageWidth
        (257, 4, side),               // ImageLength
        (258, 3, 8),                  // BitsPerSample
        (259, 3, 1),                  // Compression: none
        (262, 3, 1),                  // BlackIsZero
        (273, 4, 8 + 2 + 8 * 12 + 4), // StripOffsets: right after the directory
        (278, 4, side),               // RowsPerStrip
        (279, 4, 100),                // StripByteCounts
    ];
    let mut t = b"II*\0".to_vec();
    t.extend_from_slice(&8u32.to_le_bytes());
    t.extend_from_slice(&(entries.len() as u16).to_le_bytes());
    for (tag, ty, v) in entries {
        t.extend_from_slice(&tag.to_le_bytes());
        t.extend_from_slice(&ty.to_le_bytes());
        t.extend_from_slice(&1u32.to_le_bytes());
        if ty == 3 {
            t.extend_from_slice(&(v as u16).to_le_bytes());
            t.extend_from_slice(&[0, 0]);
        } else {
            t.extend_from_slice(&v.to_le_bytes());
        }
    }
    t.extend_from_slice(&0u32.to_le_bytes());
    t.extend_from_slice(&[128; 100]);
    t
}

fn gray_profile() -> Vec<u8> {
    lcms2::Profile::new_gray(lcms2::CIExyY::d50(), &lcms2::ToneCurve::new(2.2))
        .unwrap()
        .icc()
        .unwrap()
}

fn lab_profile() -> Vec<u8> {
    lcms2::Profile::new_lab4_context(lcms2::GlobalContext::new(), lcms2::CIExyY::d50())
        .unwrap()
        .icc()
        .unwrap()
}

/// CGATS.17 text with the given data format line and rows (ISO 28178 layout).
fn cgats(fields: &str, rows: &[&str]) -> String {
    let n = fields.split_whitespace().count();
    let mut s = format!(
        "CGATS.17\nORIGINATOR \"bad-input matrix\"\nNUMBER_OF_FIELDS {n}\nBEGIN_DATA_FORMAT\n{fields}\nEND_DATA_FORMAT\nNUMBER_OF_SETS {}\nBEGIN_DATA\n",
        rows.len()
    );
    for r in rows {
        s.push_str(r);
        s.push('\n');
    }
    s.push_str("END_DATA\n");
    s
}

/// One bad-input fixture: a file name and its bytes.
struct Fixture {
    name: &'static str,
    bytes: Vec<u8>,
}

/// Every file of the matrix, made by code; testdata/bad/README.md describes each.
fn fixtures() -> Vec<Fixture> {
    let good_png = rgb_png(16, 12);
    let good_tiff = rgb_tiff(16, 12);
    let good_jpeg = jpeg(24, 16, &blocks(24, 16, 3), jpeg_encoder::ColorType::Rgb);
    let f = |name, bytes| Fixture { name, bytes };
    vec![
        f("empty.png", Vec::new()),
        f("truncated.png", good_png[..good_png.len() / 2].to_vec()),
        f("truncated.tif", good_tiff[..good_tiff.len() / 2].to_vec()),
        f("truncated.jpg", good_jpeg[..good_jpeg.len() / 2].to_vec()),
        f("truncated-png-named.jpg", good_png[..good_png.len() / 2].to_vec()),
        f("notes.txt", b"Proof notes for the harbour poster: check the cyan.\n".to_vec()),
        f("notes.png", b"Proof notes for the harbour poster: check the cyan.\n".to_vec()),
        f("huge.png", huge_png()),
        f("huge.tif", huge_tiff()),
        f("cut-short-with-end.jpg", cut_short_with_end_marker(&good_jpeg, 60)),
        f("claims-20000.jpg", claiming(&good_jpeg, 20_000)),
        f("claims-30000.tif", tiff_claiming(30_000)),
        f(
            "garbage-icc.png",
            png(4, 4, png::ColorType::Rgb, false, &rgb_picture(4, 4), None, Some(vec![7u8; 300])),
        ),
        f(
            "gray-icc-on-rgb.png",
            png(4, 4, png::ColorType::Rgb, false, &rgb_picture(4, 4), None, Some(gray_profile())),
        ),
        f(
            "lab-icc-on-rgb.png",
            png(4, 4, png::ColorType::Rgb, false, &rgb_picture(4, 4), None, Some(lab_profile())),
        ),
        f("broken.toml", b"[model\ntac = 300\n".to_vec()),
        f("unknown-key.toml", b"[model]\ngcr = 50\nshade = 3\n".to_vec()),
        f("unknown-section.toml", b"[model]\ntac = 300\n\n[colour]\nred = 1\n".to_vec()),
        f("tac-450.toml", b"[model]\nintent = \"relative\"\ntac = 450\n".to_vec()),
        f("gcr-minus-5.toml", b"[model]\n\n\ngcr = -5\n".to_vec()),
        f("not-utf8.toml", b"[model]\ntac = \xff\xfe300\n".to_vec()),
        f("condition-tac-450.toml", condition_text("tac = 320", "tac = 450").into_bytes()),
        f(
            "condition-unknown-key.toml",
            condition_text("black_surface = 1.1", "black_surface = 1.1\nblack_surfce = 2.0").into_bytes(),
        ),
        f("condition-broken.toml", condition_text("[aims]", "[aims").into_bytes()),
        f("garbage.icc", vec![0x5A; 700]),
        f("rgb-as-condition.icc", lcms2::Profile::new_srgb().icc().unwrap()),
        f(
            "missing-column.txt",
            cgats(
                "SAMPLE_ID CMYK_C CMYK_M CMYK_Y LAB_L LAB_A LAB_B",
                &["1 0 0 0 95 0 -2", "2 100 0 0 55 -37 -50"],
            )
            .into_bytes(),
        ),
        f(
            "no-colour-columns.txt",
            cgats("SAMPLE_ID CMYK_C CMYK_M CMYK_Y CMYK_K", &["1 0 0 0 0", "2 100 0 0 0"]).into_bytes(),
        ),
        f(
            "not-a-number.txt",
            cgats(
                "SAMPLE_ID CMYK_C CMYK_M CMYK_Y CMYK_K LAB_L LAB_A LAB_B",
                &["1 0 0 0 0 95 0 -2", "2 100 0 zero 0 55 -37 -50"],
            )
            .into_bytes(),
        ),
        f(
            "short-row.txt",
            cgats(
                "SAMPLE_ID CMYK_C CMYK_M CMYK_Y CMYK_K LAB_L LAB_A LAB_B",
                &["1 0 0 0 0 95 0 -2", "2 100 0 0 55 -37 -50"],
            )
            .into_bytes(),
        ),
        f(
            "no-end-data.txt",
            b"CGATS.17\nBEGIN_DATA_FORMAT\nSAMPLE_ID CMYK_C\nEND_DATA_FORMAT\nBEGIN_DATA\n1 0\n".to_vec(),
        ),
        f("binary.txt", (0..=255u8).cycle().take(600).collect()),
        f(
            "no-solids.txt",
            cgats("CMYK_C CMYK_M CMYK_Y CMYK_K LAB_L LAB_A LAB_B", &NO_SOLIDS).into_bytes(),
        ),
    ]
}

/// Forty patches of paper and light tints: enough rows to fit, but no ink's
/// solid. No SAMPLE_ID column: patches are then named by their row, so none
/// is measured twice.
const NO_SOLIDS: [&str; 40] = {
    const ROW: &str = "0 0 0 0 95 0 -2";
    const TINT: &str = "20 20 20 20 70 0 -1";
    let mut rows = [ROW; 40];
    let mut i = 1;
    while i < 40 {
        rows[i] = TINT;
        i += 2;
    }
    rows
};

/// The example condition file of testdata/press with one line replaced.
fn condition_text(find: &str, replace: &str) -> String {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/press/harbour-lane-sheetfed.toml");
    let text = std::fs::read_to_string(path).unwrap();
    assert!(text.contains(find), "the example condition has `{find}`");
    text.replacen(find, replace, 1)
}

/// 1-based line of the first line of `text` containing `needle`.
fn line_with(text: &[u8], needle: &str) -> usize {
    String::from_utf8_lossy(text)
        .lines()
        .position(|l| l.contains(needle))
        .expect("needle in fixture")
        + 1
}

struct Matrix {
    dir: tempfile::TempDir,
}

impl Matrix {
    fn new() -> Matrix {
        let dir = tempfile::tempdir().unwrap();
        for f in fixtures() {
            std::fs::write(dir.path().join(f.name), &f.bytes).unwrap();
        }
        Matrix { dir }
    }
    fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }
    fn bytes(&self, name: &str) -> Vec<u8> {
        std::fs::read(self.path(name)).unwrap()
    }
}

// ---------------------------------------------------------------- checks

/// Every file under `dir` (recursively), hidden temporary names included.
fn files_under(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    if let Ok(entries) = std::fs::read_dir(dir) {
        for e in entries.flatten() {
            let p = e.path();
            if p.is_dir() {
                out.extend(files_under(&p));
            } else {
                out.push(p);
            }
        }
    }
    out
}

/// Runs the command and checks the rules for a bad input: exit 2, one error
/// line naming `file` and containing every `fragment`, nothing else on
/// standard error but the prediction note and the count line, no panic, the
/// `inputs` unchanged and no file under `out` afterwards. Returns the error line.
fn refused(cmd: &mut Command, file: &str, fragments: &[&str], inputs: &[&Path], out: Option<&Path>) -> String {
    let before: Vec<Option<Vec<u8>>> = inputs.iter().map(|p| std::fs::read(p).ok()).collect();
    let o = cmd.output().unwrap();
    let stderr = String::from_utf8_lossy(&o.stderr).into_owned();
    assert_eq!(o.status.code(), Some(2), "{file}: exit code; stderr:\n{stderr}");
    assert!(
        !stderr.contains("panicked") && !stderr.contains("internal error"),
        "{file}: {stderr}"
    );
    let errors: Vec<&str> = stderr.lines().filter(|l| l.starts_with("platesmith: ")).collect();
    assert_eq!(errors.len(), 1, "{file}: one error line expected:\n{stderr}");
    for line in stderr.lines() {
        let known = line.starts_with("platesmith: ") || line == NOTE || line.ends_with(" failed");
        assert!(known, "{file}: the error continues on another line: {line:?} in\n{stderr}");
    }
    let line = errors[0].to_string();
    eprintln!("{line}");
    assert!(line.contains(file), "{file}: the error line does not name the file: {line}");
    for f in fragments {
        assert!(line.contains(f), "{file}: `{f}` missing from: {line}");
    }
    for (p, b) in inputs.iter().zip(before) {
        assert_eq!(std::fs::read(p).ok(), b, "{}: input changed", p.display());
    }
    if let Some(out) = out {
        let left = files_under(out);
        assert!(left.is_empty(), "{file}: output left behind: {left:?}");
    }
    line
}

fn separate(input: &Path, out: &Path) -> Command {
    let mut c = platesmith();
    c.arg("separate").arg(input).arg("--out-dir").arg(out).args(["--table-grid", "9"]);
    c
}

fn cmyk_samples(path: &Path) -> Vec<u32> {
    match read_raster(path, &Limits::default()).unwrap().samples {
        Samples::U8(v) => v.into_iter().map(u32::from).collect(),
        Samples::U16(v) => v.into_iter().map(u32::from).collect(),
    }
}

// ---------------------------------------------------------------- images

#[test]
fn bad_images_are_refused_with_one_line_naming_the_file() {
    let m = Matrix::new();
    let out = m.path("out");
    let cases: &[(&str, &[&str])] = &[
        ("empty.png", &["empty file", "0 bytes"]),
        ("truncated.png", &["PNG"]),
        ("truncated.tif", &["TIFF"]),
        ("truncated.jpg", &["truncated JPEG"]),
        // Content decides the format; the extension only adds to the message.
        ("truncated-png-named.jpg", &["PNG", "despite the extension"]),
        ("notes.txt", &["not a PNG, TIFF or JPEG", "text file"]),
        ("notes.png", &["not a PNG, TIFF or JPEG", "text file"]),
        ("huge.png", &["100000 × 100000", "limits"]),
        ("huge.tif", &["100000 × 100000", "limits"]),
        // Within the limits, but more than the data can hold (ISO/IEC 10918-1 C.2: a Huffman
        // code is at least one bit, one per block; TIFF 6.0: an uncompressed strip holds its bytes).
        ("cut-short-with-end.jpg", &["damaged JPEG data", "--accept-damaged"]),
        ("claims-20000.jpg", &["20000 × 20000", "refused as corrupt or hostile"]),
        ("claims-30000.tif", &["30000 × 30000", "refused as corrupt or hostile"]),
        ("garbage-icc.png", &["embedded ICC profile", "--ignore-bad-profile"]),
        // ICC.1 §7.2.6: the data colour space field says what the profile describes.
        ("gray-icc-on-rgb.png", &["embedded ICC profile", "not RGB", "--ignore-bad-profile"]),
        ("lab-icc-on-rgb.png", &["embedded ICC profile", "not RGB"]),
    ];
    for (name, fragments) in cases {
        let input = m.path(name);
        let line = refused(&mut separate(&input, &out), name, fragments, &[&input], Some(&out));
        if name.starts_with("truncated") {
            assert!(line.contains("truncated") || line.contains("corrupt"), "{line}");
        }
    }
}

#[test]
fn missing_folder_and_unreadable_inputs_are_refused() {
    let m = Matrix::new();
    let out = m.path("out");
    refused(
        &mut separate(&m.path("absent.png"), &out),
        "absent.png",
        &["no such file"],
        &[],
        Some(&out),
    );
    let folder = m.path("art.png");
    std::fs::create_dir(&folder).unwrap();
    refused(&mut separate(&folder, &out), "art.png", &["is a folder"], &[], Some(&out));
    // Unreadable whoever runs the test: a symbolic link that points at itself, and one
    // whose target is gone.
    let looped = m.path("loop.png");
    std::os::unix::fs::symlink(&looped, &looped).unwrap();
    refused(&mut separate(&looped, &out), "loop.png", &["cannot open"], &[], Some(&out));
    let dangling = m.path("dangling.png");
    std::os::unix::fs::symlink(m.path("gone.png"), &dangling).unwrap();
    refused(&mut separate(&dangling, &out), "dangling.png", &["no such file"], &[], Some(&out));
    // Permission bits: the superuser reads through them, so the case only holds for other users.
    let locked = m.path("locked.png");
    std::fs::write(&locked, rgb_png(4, 4)).unwrap();
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o000)).unwrap();
    if std::fs::read(&locked).is_ok() {
        eprintln!("skipped the unreadable-file case: this user reads files whatever their permissions (root)");
    } else {
        refused(&mut separate(&locked, &out), "locked.png", &["permission denied"], &[], Some(&out));
    }
}

#[test]
fn a_separate_run_over_the_matrix_fails_each_file_alone() {
    // Many bad files in one run: each gets its own line, the good one is written.
    let m = Matrix::new();
    let out = m.path("out");
    std::fs::write(m.path("good.png"), rgb_png(8, 8)).unwrap();
    let bad = ["empty.png", "truncated.tif", "notes.txt", "huge.png"];
    let o = platesmith()
        .arg("separate")
        .args(bad.iter().map(|n| m.path(n)))
        .arg(m.path("good.png"))
        .arg("--out-dir")
        .arg(&out)
        .args(["--table-grid", "9"])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("1 separated, 4 failed"), "{stderr}");
    for n in bad {
        assert_eq!(
            stderr.lines().filter(|l| l.starts_with("platesmith: ") && l.contains(n)).count(),
            1,
            "{n}: {stderr}"
        );
    }
    let mut written: Vec<String> = files_under(&out)
        .iter()
        .map(|p| p.file_name().unwrap().to_string_lossy().into_owned())
        .collect();
    written.sort();
    assert_eq!(
        written,
        [
            "good.C.tif",
            "good.K.tif",
            "good.M.tif",
            "good.Y.tif",
            "good.cmyk.tif",
            "good.summary.json"
        ]
    );
}

// ---------------------------------------------------------------- valid but unusual

#[test]
fn one_by_one_separates_like_a_larger_flat_image() {
    let m = Matrix::new();
    let out = m.path("out");
    for (i, px) in [[200u8, 30, 60], [10, 10, 10], [255, 255, 255], [30, 160, 220]].iter().enumerate() {
        let one = m.path(&format!("one-{i}.png"));
        let flat = m.path(&format!("flat-{i}.png"));
        std::fs::write(&one, png(1, 1, png::ColorType::Rgb, false, px, None, None)).unwrap();
        std::fs::write(&flat, png(5, 3, png::ColorType::Rgb, false, &px.repeat(15), None, None)).unwrap();
        separate(&one, &out).assert().success();
        separate(&flat, &out).assert().success();
        let a = cmyk_samples(&out.join(format!("one-{i}.cmyk.tif")));
        let b = cmyk_samples(&out.join(format!("flat-{i}.cmyk.tif")));
        assert_eq!(a.len(), 4);
        assert!(
            b.chunks_exact(4).all(|p| p == &a[..]),
            "{px:?}: 1 × 1 gave {a:?}, the flat image {:?}",
            &b[..4]
        );
        if *px == [255, 255, 255] {
            assert_eq!(a, [0, 0, 0, 0], "paper white prints no ink");
        }
    }
}

#[test]
fn palette_png_separates_as_the_same_image_in_rgb() {
    let m = Matrix::new();
    let out = m.path("out");
    // ISO/IEC 15948 §11.2.3: indices into PLTE; §11.3.2.1: tRNS gives palette entries alpha.
    let plte: Vec<u8> = [[200u8, 30, 60], [20, 120, 200], [250, 240, 30], [15, 15, 15], [255, 255, 255]].concat();
    let (w, h) = (10u32, 6u32);
    let idx: Vec<u8> = (0..w * h).map(|i| (i * 7 % 5) as u8).collect();
    let rgb: Vec<u8> = idx
        .iter()
        .flat_map(|&i| plte[i as usize * 3..i as usize * 3 + 3].to_vec())
        .collect();
    std::fs::write(
        m.path("palette.png"),
        png(w, h, png::ColorType::Indexed, false, &idx, Some((&plte, &[])), None),
    )
    .unwrap();
    std::fs::write(m.path("rgb.png"), png(w, h, png::ColorType::Rgb, false, &rgb, None, None)).unwrap();
    separate(&m.path("palette.png"), &out).assert().success();
    separate(&m.path("rgb.png"), &out).assert().success();
    assert_eq!(cmyk_samples(&out.join("palette.cmyk.tif")), cmyk_samples(&out.join("rgb.cmyk.tif")));

    // With tRNS, transparent entries (alpha 0) print as paper and opaque ones as in RGB.
    std::fs::write(
        m.path("palette-trns.png"),
        png(
            w,
            h,
            png::ColorType::Indexed,
            false,
            &idx,
            Some((&plte, &[255, 0, 255, 255, 255])),
            None,
        ),
    )
    .unwrap();
    separate(&m.path("palette-trns.png"), &out).assert().success();
    let t = cmyk_samples(&out.join("palette-trns.cmyk.tif"));
    let r = cmyk_samples(&out.join("rgb.cmyk.tif"));
    for (k, &i) in idx.iter().enumerate() {
        let want: &[u32] = if i == 1 { &[0, 0, 0, 0] } else { &r[k * 4..k * 4 + 4] };
        assert_eq!(&t[k * 4..k * 4 + 4], want, "pixel {k} (index {i})");
    }
}

#[test]
fn sixteen_bit_gray_with_alpha_separates_as_gray_composited_on_white() {
    let m = Matrix::new();
    let out = m.path("out");
    let (w, h) = (12u32, 4u32);
    // Gray ramp; alpha opaque, except every third pixel fully transparent.
    let mut ga = Vec::new();
    let mut flat = Vec::new();
    for i in 0..w * h {
        let g = (i * 65535 / (w * h - 1)) as u16;
        let a = if i % 3 == 0 { 0 } else { 65535u16 };
        ga.extend(g.to_be_bytes());
        ga.extend(a.to_be_bytes());
        // ISO/IEC 15948 §12.4: output = alpha·foreground + (1 − alpha)·background, on white.
        let c = if a == 0 { 65535u16 } else { g };
        flat.extend(c.to_be_bytes());
    }
    std::fs::write(
        m.path("graya16.png"),
        png(w, h, png::ColorType::GrayscaleAlpha, true, &ga, None, None),
    )
    .unwrap();
    std::fs::write(m.path("gray16.png"), png(w, h, png::ColorType::Grayscale, true, &flat, None, None)).unwrap();
    for bits in ["8", "16"] {
        let o = out.join(bits);
        separate(&m.path("graya16.png"), &o).args(["--bits", bits]).assert().success();
        separate(&m.path("gray16.png"), &o).args(["--bits", bits]).assert().success();
        let a = cmyk_samples(&o.join("graya16.cmyk.tif"));
        assert_eq!(a, cmyk_samples(&o.join("gray16.cmyk.tif")), "{bits}-bit output");
        assert!(
            a.chunks_exact(4).step_by(3).all(|p| p == [0, 0, 0, 0]),
            "transparent pixels print as paper"
        );
        assert!(a.chunks_exact(4).nth(1).unwrap().iter().sum::<u32>() > 0, "dark gray prints ink");
    }
}

#[test]
fn inverted_and_plain_cmyk_jpegs_are_read_the_right_way_round() {
    let m = Matrix::new();
    let out = m.path("out");
    let (w, h) = (32u16, 16u16);
    let ink = blocks(w.into(), h.into(), 4);
    let inverted: Vec<u8> = ink.iter().map(|v| 255 - v).collect();
    // jpeg-encoder writes CMYK the Adobe way: an APP14 marker and inverted samples.
    let adobe = jpeg(w, h, &ink, jpeg_encoder::ColorType::Cmyk);
    assert!(adobe.windows(2).any(|s| s == [0xFF, 0xEE]), "APP14 present");
    std::fs::write(m.path("adobe.jpg"), &adobe).unwrap();
    // Without APP14 the stored (inverted) samples are taken as they are.
    std::fs::write(m.path("plain.jpg"), without_app14(&adobe)).unwrap();
    std::fs::write(m.path("ink.tif"), cmyk_tiff(w.into(), h.into(), &ink)).unwrap();
    std::fs::write(m.path("inverted.tif"), cmyk_tiff(w.into(), h.into(), &inverted)).unwrap();
    for name in ["adobe.jpg", "plain.jpg", "ink.tif", "inverted.tif"] {
        separate(&m.path(name), &out)
            .args(["--source-condition", "coated-offset"])
            .assert()
            .success();
    }
    let close = |a: &str, b: &str| {
        let (x, y) = (cmyk_samples(&out.join(a)), cmyk_samples(&out.join(b)));
        assert_eq!(x.len(), y.len());
        x.iter().zip(&y).map(|(p, q)| p.abs_diff(*q)).max().unwrap()
    };
    let far = |a: &str, b: &str| {
        let (x, y) = (cmyk_samples(&out.join(a)), cmyk_samples(&out.join(b)));
        x.iter().zip(&y).map(|(p, q)| p.abs_diff(*q) as u64).sum::<u64>() as f64 / x.len() as f64
    };
    // JPEG at quality 100 on flat blocks differs from the exact inks by a level or two.
    let d = close("adobe.cmyk.tif", "ink.cmyk.tif");
    assert!(d <= 6, "Adobe CMYK JPEG vs the same inks in TIFF: {d} levels");
    let d = close("plain.cmyk.tif", "inverted.cmyk.tif");
    assert!(d <= 6, "plain CMYK JPEG vs the inverted inks in TIFF: {d} levels");
    // And the two polarities really differ.
    assert!(far("adobe.cmyk.tif", "plain.cmyk.tif") > 20.0);
}

#[test]
fn a_wrong_extension_does_not_change_the_separation() {
    let m = Matrix::new();
    let out = m.path("out");
    let bytes = rgb_png(8, 6);
    std::fs::write(m.path("right.png"), &bytes).unwrap();
    std::fs::write(m.path("wrong.jpg"), &bytes).unwrap();
    std::fs::write(m.path("wrong-tiff.tif"), &bytes).unwrap();
    for n in ["right.png", "wrong.jpg", "wrong-tiff.tif"] {
        separate(&m.path(n), &out).assert().success();
    }
    let a = cmyk_samples(&out.join("right.cmyk.tif"));
    assert_eq!(a, cmyk_samples(&out.join("wrong.cmyk.tif")));
    assert_eq!(a, cmyk_samples(&out.join("wrong-tiff.cmyk.tif")));
    // The input of the same stem is not overwritten by its outputs.
    assert_eq!(std::fs::read(m.path("wrong-tiff.tif")).unwrap(), bytes);
}

// ---------------------------------------------------------------- outputs

#[test]
fn an_output_folder_that_cannot_be_made_is_refused() {
    let m = Matrix::new();
    let input = m.path("in.png");
    std::fs::write(&input, rgb_png(4, 4)).unwrap();
    std::fs::write(m.path("plain-file"), b"x").unwrap();
    let out = m.path("plain-file").join("out");
    refused(
        &mut separate(&input, &out),
        "plain-file/out",
        &["cannot create the output folder"],
        &[&input, &m.path("plain-file")],
        None,
    );
    // A folder that does not exist yet is made, nested too.
    let nested = m.path("a").join("b").join("c");
    separate(&input, &nested).assert().success();
    assert!(nested.join("in.cmyk.tif").exists());
}

/// Runs `mount` with the arguments; false when this machine does not allow it.
fn mount(args: &[&str]) -> bool {
    std::process::Command::new("mount")
        .args(args)
        .stderr(std::process::Stdio::null())
        .status()
        .map(|s| s.success())
        .unwrap_or(false)
}

fn umount(dir: &Path) {
    let _ = std::process::Command::new("umount").arg(dir).status();
}

/// Unmounts when dropped, so a failed assertion does not leave a mount behind.
struct Mounted<'a>(&'a Path);

impl Drop for Mounted<'_> {
    fn drop(&mut self) {
        umount(self.0);
    }
}

#[test]
fn a_read_only_output_folder_is_refused() {
    let m = Matrix::new();
    let input = m.path("in.png");
    std::fs::write(&input, rgb_png(4, 4)).unwrap();
    let out = m.path("ro");
    std::fs::create_dir(&out).unwrap();
    let o = out.to_str().unwrap();
    // Permission bits do not stop the superuser: a read-only bind mount does.
    if !(mount(&["--bind", o, o]) && mount(&["-o", "remount,ro,bind", o])) {
        umount(&out);
        eprintln!("skipped: cannot make a read-only bind mount here (needs root and mount)");
        return;
    }
    let mounted = Mounted(&out);
    let line = refused(&mut separate(&input, &out), "ro", &["cannot write"], &[&input], Some(&out));
    drop(mounted);
    assert!(line.to_lowercase().contains("read-only"), "{line}");
}

#[test]
fn a_full_disk_leaves_no_partial_file() {
    let m = Matrix::new();
    let input = m.path("noise.png");
    // 160 × 160 px of noise: the uncompressed composite alone is 100 KiB, over the 64 KiB disk.
    let mut x = 0x2545_F491_4F6C_DD1Du64;
    let px: Vec<u8> = (0..160 * 160 * 3)
        .map(|_| {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x as u8
        })
        .collect();
    std::fs::write(&input, png(160, 160, png::ColorType::Rgb, false, &px, None, None)).unwrap();
    let out = m.path("small-disk");
    std::fs::create_dir(&out).unwrap();
    if mount(&["-t", "tmpfs", "-o", "size=64k", "tmpfs", out.to_str().unwrap()]) {
        let mounted = Mounted(&out);
        let line = refused(
            separate(&input, &out).args(["--compression", "none"]),
            "small-disk",
            &["cannot write"],
            &[&input],
            Some(&out),
        );
        drop(mounted);
        assert!(line.contains("space") || line.contains("full"), "{line}");
    } else {
        eprintln!("skipped the tmpfs case: cannot mount a small tmpfs here; the injected write error below stands in");
    }
    // The injected writer error (debug and test builds) fails the same way everywhere.
    if cfg!(debug_assertions) {
        let out = m.path("injected");
        let mut cmd = separate(&input, &out);
        cmd.env(platesmith::raster::FAIL_AFTER_ENV, "5000").args(["--compression", "none"]);
        refused(&mut cmd, "injected", &["cannot write"], &[&input], Some(&out));
    }
}

// ---------------------------------------------------------------- tickets and conditions

#[test]
fn bad_tickets_name_file_line_and_problem() {
    let m = Matrix::new();
    let out = m.path("out");
    let input = m.path("in.png");
    std::fs::write(&input, rgb_png(4, 4)).unwrap();
    let cases: &[(&str, &[&str], Option<&str>)] = &[
        ("broken.toml", &[], Some("[model")),
        ("unknown-key.toml", &["shade"], Some("shade")),
        ("unknown-section.toml", &["colour"], Some("[colour]")),
        ("tac-450.toml", &["model.tac", "100–400"], Some("tac = 450")),
        ("gcr-minus-5.toml", &["model.gcr", "0–100"], Some("gcr = -5")),
        ("not-utf8.toml", &["UTF-8"], None),
        ("absent.toml", &["cannot read the ticket"], None),
    ];
    for (name, fragments, line_of) in cases {
        let ticket = m.path(name);
        let mut cmd = separate(&input, &out);
        cmd.arg("--ticket").arg(&ticket);
        let line = refused(&mut cmd, name, fragments, &[&input, &ticket], Some(&out));
        if let Some(needle) = line_of {
            let n = line_with(&m.bytes(name), needle);
            assert!(line.contains(&format!("line {n}")), "{name}: line {n} expected in: {line}");
        }
    }
}

#[test]
fn out_of_range_flags_name_the_flag_and_the_range() {
    for (flag, value, range) in [
        ("--tac", "450", "100–400"),
        ("--gcr", "-5", "0–100"),
        ("--black-max", "101", "0–100"),
        ("--tac", "NaN", "100–400"),
    ] {
        let o = platesmith()
            .args(["recipe", "#336699", &format!("{flag}={value}")])
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{flag} {value}: {stderr}");
        let lines: Vec<&str> = stderr.lines().collect();
        assert_eq!(lines.len(), 1, "{stderr}");
        assert!(lines[0].contains(flag) && lines[0].contains(range), "{stderr}");
    }
}

#[test]
fn bad_condition_files_name_file_line_and_key() {
    let m = Matrix::new();
    let cases: &[(&str, &[&str], Option<&str>)] = &[
        ("condition-tac-450.toml", &["tac", "100–400"], Some("tac = 450")),
        ("condition-unknown-key.toml", &["black_surfce"], Some("black_surfce")),
        ("condition-broken.toml", &[], Some("[aims")),
        ("garbage.icc", &["ICC"], None),
        ("rgb-as-condition.icc", &["CMYK"], None),
    ];
    for (name, fragments, line_of) in cases {
        let cond = m.path(name);
        for command in ["recipe", "conditions"] {
            let mut cmd = platesmith();
            if command == "recipe" {
                cmd.args(["recipe", "#336699", "--condition"]).arg(&cond);
            } else {
                cmd.args(["conditions", "show"]).arg(&cond);
            }
            let line = refused(&mut cmd, name, fragments, &[&cond], None);
            if let Some(needle) = line_of {
                let n = line_with(&m.bytes(name), needle);
                assert!(line.contains(&format!("line {n}")), "{name}: line {n} expected in: {line}");
            }
        }
    }
}

// ---------------------------------------------------------------- measurements (CGATS)

#[test]
fn bad_measurement_files_name_file_line_and_problem() {
    let m = Matrix::new();
    let cases: &[(&str, &[&str], Option<&str>)] = &[
        ("missing-column.txt", &["CMYK_K"], None),
        ("no-colour-columns.txt", &["LAB_L"], None),
        ("not-a-number.txt", &["zero", "not a number", "CMYK_Y"], Some("zero")),
        ("short-row.txt", &["7 values", "8 fields"], Some("2 100 0 0 55")),
        ("no-end-data.txt", &["END_DATA"], Some("BEGIN_DATA\n")),
        ("binary.txt", &[], None),
        ("no-solids.txt", &["no patch with cyan", "solid"], None),
        ("absent.txt", &["cannot read"], None),
    ];
    for (name, fragments, line_of) in cases {
        let file = m.path(name);
        let out = m.path("fitted").join(format!("{name}.toml"));
        std::fs::create_dir_all(out.parent().unwrap()).unwrap();
        let mut cmd = platesmith();
        cmd.arg("fit").arg(&file).arg("--out").arg(&out);
        let line = refused(&mut cmd, name, fragments, &[&file], Some(&m.path("fitted")));
        if let Some(needle) = line_of {
            let text = String::from_utf8_lossy(&m.bytes(name)).into_owned();
            let n = match needle.strip_suffix('\n') {
                Some(exact) => text.lines().position(|l| l == exact).unwrap() + 1,
                None => line_with(text.as_bytes(), needle),
            };
            assert!(line.contains(&format!("line {n}")), "{name}: line {n} expected in: {line}");
        }
    }
}

// ---------------------------------------------------------------- the list of cases

#[test]
fn the_readme_describes_every_fixture() {
    let readme = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/bad/README.md")).unwrap();
    for f in fixtures() {
        assert!(
            readme.contains(&format!("`{}`", f.name)),
            "testdata/bad/README.md does not describe {}",
            f.name
        );
    }
    // Fixtures stay tiny: they are remade by this file on every run, never committed.
    assert!(fixtures().iter().all(|f| f.bytes.len() < 4096));
}

// ---------------------------------------------------------------- a bug

#[test]
fn a_panic_is_one_line_asking_for_the_input_and_exit_3() {
    // The hook that forces a panic is read by builds with debug assertions only (the test profile).
    if !cfg!(debug_assertions) {
        eprintln!("skipped: release build, the forced-panic hook is off");
        return;
    }
    let o = platesmith()
        .env("PLATESMITH_FORCE_PANIC", "1")
        .args(["recipe", "#336699"])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(3), "{stderr}");
    let lines: Vec<&str> = stderr.lines().collect();
    assert_eq!(lines.len(), 1, "{stderr}");
    assert!(
        lines[0].starts_with("platesmith: internal error") && lines[0].contains("please report this with the input"),
        "{stderr}"
    );
    assert!(!stderr.contains("panicked") && !stderr.contains("backtrace"), "{stderr}");
}

// ---------------------------------------------------------------- decoding from memory

#[test]
fn decoding_from_memory_matches_reading_the_file() {
    // read_raster_bytes (the fuzz target's entry) must take the same path as read_raster.
    let m = Matrix::new();
    let limits = Limits::default();
    let valid = [
        ("rgb.png", rgb_png(9, 7)),
        ("rgb.tif", rgb_tiff(9, 7)),
        ("cmyk.jpg", jpeg(16, 8, &blocks(16, 8, 4), jpeg_encoder::ColorType::Cmyk)),
    ];
    for (name, bytes) in valid {
        let path = m.path(name);
        std::fs::write(&path, &bytes).unwrap();
        let from_file = read_raster(&path, &limits).unwrap();
        let from_memory = platesmith::raster::read_raster_bytes(&bytes, Path::new(name), &limits).unwrap();
        assert_eq!(from_file, from_memory, "{name}");
    }
    for f in fixtures()
        .iter()
        .filter(|f| f.name.ends_with(".png") || f.name.ends_with(".tif") || f.name.ends_with(".jpg"))
    {
        let from_file = read_raster(&m.path(f.name), &limits).map(|_| ());
        let from_memory = platesmith::raster::read_raster_bytes(&f.bytes, Path::new(f.name), &limits).map(|_| ());
        match (from_file, from_memory) {
            (Err(a), Err(b)) => assert_eq!(
                a.to_string().replace(&format!("{}/", m.dir.path().display()), ""),
                b.to_string(),
                "{}",
                f.name
            ),
            (Ok(()), Ok(())) => {}
            (a, b) => panic!("{}: file {a:?}, memory {b:?}", f.name),
        }
    }
}

/// Limits that cannot mean anything are refused before any work: a zero
/// side, a zero memory budget, a budget whose bytes overflow.
#[test]
fn meaningless_limits_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    for (flag, value, fragment) in [
        ("--max-side", "0", "--max-side is 0"),
        ("--max-memory", "0", "--max-memory is 0"),
        ("--max-memory", "18446744073709551615", "--max-memory is 18446744073709551615"),
    ] {
        let o = Command::cargo_bin("platesmith")
            .unwrap()
            .args(["separate", "missing.png", flag, value, "--out-dir"])
            .arg(&out)
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{flag} {value}: {stderr}");
        assert!(stderr.contains(fragment), "{flag} {value}: {stderr}");
        assert!(!out.exists(), "{flag} {value}: the output folder was made");
    }
}

/// A run whose every input fails leaves no empty output folder behind.
#[test]
fn a_run_that_writes_nothing_makes_no_folder() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let o = Command::cargo_bin("platesmith")
        .unwrap()
        .args(["separate", "missing.png", "--out-dir"])
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(!out.exists(), "the output folder was made");
}
