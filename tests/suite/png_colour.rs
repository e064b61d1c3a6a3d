//! PNG colour chunks (iCCP, sRGB, gAMA, cHRM) in the order of precedence of the
//! PNG specification (W3C PNG 3rd edition §11.3.2; ISO/IEC 15948:2004 §11.3.3),
//! on files written by Pillow (an independent PNG writer) with the CIELAB D50
//! each pixel means computed by colour-science: testdata/inputs/png-colour/,
//! made by scripts/reference/make_png_colour_fixtures.py (see the README there).

use assert_cmd::Command;
use platesmith::colour::{Lab, RgbSpace, delta_e76};
use platesmith::raster::{Limits, Raster, Samples, read_raster};
use platesmith::source::RgbSource;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/inputs/png-colour").join(name)
}

struct Row {
    x: u32,
    y: u32,
    rgb: [u8; 3],
    lab: Lab,
}

/// reference.csv by file: the stored samples (as Pillow reads them back) and their CIELAB D50.
fn reference() -> (BTreeMap<String, Vec<Row>>, BTreeMap<String, String>) {
    let mut rows: BTreeMap<String, Vec<Row>> = BTreeMap::new();
    let mut descriptions = BTreeMap::new();
    let text = std::fs::read_to_string(fixture("reference.csv")).unwrap();
    for line in text.lines().skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        let n = |i: usize| f[i].parse::<f64>().unwrap();
        rows.entry(f[0].to_string()).or_default().push(Row {
            x: f[1].parse().unwrap(),
            y: f[2].parse().unwrap(),
            rgb: [f[3].parse().unwrap(), f[4].parse().unwrap(), f[5].parse().unwrap()],
            lab: Lab::new(n(6), n(7), n(8)),
        });
        descriptions.insert(f[0].to_string(), f[9].to_string());
    }
    (rows, descriptions)
}

/// The source the PNG order of precedence gives: iCCP, then sRGB or gAMA/cHRM, then sRGB assumed.
fn source_of(raster: &Raster, path: &Path) -> RgbSource {
    if let Some(icc) = &raster.icc_profile {
        return RgbSource::from_icc(icc, path).unwrap();
    }
    match raster.colour_chunks.as_ref().and_then(|c| c.space.as_ref()) {
        Some(space) => RgbSource::from_chunks(space, path).unwrap().1,
        None => RgbSource::Named(RgbSpace::Srgb),
    }
}

/// Every pixel of every fixture: the CIELAB the program takes from the chunks
/// (lcms2) against colour-science's, from the chromaticities and gAMA alone.
/// Bound ΔE76 0.05: lcms2 stores the primaries as s15Fixed16 colorants.
#[test]
fn chunk_spaces_give_the_colours_colour_science_computes() {
    let (reference, _) = reference();
    assert_eq!(reference.len(), 8, "fixtures in reference.csv");
    for (name, rows) in &reference {
        let path = fixture(name);
        let raster = read_raster(&path, &Limits::default()).unwrap();
        let Samples::U8(samples) = &raster.samples else {
            panic!("{name}: 8-bit expected")
        };
        let source = source_of(&raster, &path);
        let rgb: Vec<[f64; 3]> = rows
            .iter()
            .map(|r| {
                let i = (r.y * raster.width + r.x) as usize * 3;
                assert_eq!(
                    &samples[i..i + 3],
                    &r.rgb,
                    "{name} at {},{}: samples as Pillow reads them",
                    r.x,
                    r.y
                );
                r.rgb.map(|v| v as f64 / 255.0)
            })
            .collect();
        let labs = source.labs_of(&rgb);
        let worst = rows.iter().zip(&labs).map(|(r, &l)| delta_e76(l, r.lab)).fold(0.0, f64::max);
        eprintln!("{name}: {} — ΔE76 against colour-science max {worst:.4}", source.describe());
        assert!(worst < 0.05, "{name}: ΔE76 {worst}");
    }
}

#[test]
fn the_chunks_are_read_in_their_order_of_precedence() {
    let chunks = |name: &str| read_raster(&fixture(name), &Limits::default()).unwrap().colour_chunks;
    assert_eq!(chunks("plain.png"), None);
    let srgb = chunks("srgb-over-gama-chrm.png").unwrap();
    assert_eq!(srgb.present, ["sRGB", "gAMA", "cHRM"]);
    assert_eq!(srgb.space.as_ref().and_then(|s| s.named()), Some(RgbSpace::Srgb));
    let iccp = read_raster(&fixture("iccp-over-gama.png"), &Limits::default()).unwrap();
    assert!(iccp.icc_profile.is_some());
    assert_eq!(
        iccp.colour_chunks.unwrap().outranked_note().unwrap(),
        "PNG gAMA, cHRM not used: the iCCP profile takes precedence"
    );
    let degenerate = chunks("chrm-degenerate.png").unwrap();
    assert!(degenerate.notes[0].contains("cHRM chunk ignored"), "{:?}", degenerate.notes);
}

fn separate(inputs: &[PathBuf], out: &Path, extra: &[&str]) -> assert_cmd::assert::Assert {
    Command::cargo_bin("platesmith")
        .unwrap()
        .arg("separate")
        .args(inputs)
        .arg("--out-dir")
        .arg(out)
        .args(["--table-grid", "17", "--plates", "none", "--intent", "relative"])
        .args(extra)
        .assert()
}

fn summary(out: &Path, stem: &str) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(out.join(format!("{stem}.summary.json"))).unwrap()).unwrap()
}

fn cmyk(out: &Path, stem: &str) -> Vec<u8> {
    match read_raster(&out.join(format!("{stem}.cmyk.tif")), &Limits::default())
        .unwrap()
        .samples
    {
        Samples::U8(v) => v,
        Samples::U16(_) => panic!("8-bit output expected"),
    }
}

/// The linear file (gAMA 1.0) separates as its sRGB re-encoding by colour-science
/// does, and not as the same bytes read as sRGB (what the program did before it
/// read gAMA). Both are separated at the default table grid. The CIELAB of every
/// pixel agrees within ΔE76 0.0001 (above); the plates differ by the table's
/// interpolation, which runs in each file's own encoding: a linear file's nodes
/// lie far apart in the shadows. Measured: max 19 codes, 95th percentile 4,
/// median 1 (8-bit plates, 216 pixels); bound 20 / 4.
#[test]
fn a_linear_file_separates_as_its_srgb_equivalent() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let names = ["gama-1.png", "gama-1-as-srgb.png", "plain.png"];
    Command::cargo_bin("platesmith")
        .unwrap()
        .arg("separate")
        .args(names.map(fixture))
        .arg("--out-dir")
        .arg(&out)
        .args(["--plates", "none", "--intent", "relative"])
        .assert()
        .success();
    let linear = cmyk(&out, "gama-1");
    let equivalent = cmyk(&out, "gama-1-as-srgb");
    let plain = cmyk(&out, "plain");
    // Per pixel, the largest difference over the four plates.
    let diffs = |a: &[u8], b: &[u8]| -> Vec<u8> {
        let mut d: Vec<u8> = a
            .chunks_exact(4)
            .zip(b.chunks_exact(4))
            .map(|(p, q)| p.iter().zip(q).map(|(x, y)| x.abs_diff(*y)).max().unwrap())
            .collect();
        d.sort_unstable();
        d
    };
    let to_equivalent = diffs(&linear, &equivalent);
    let to_plain = diffs(&linear, &plain);
    let p95 = |d: &[u8]| d[d.len() * 95 / 100];
    eprintln!(
        "gAMA 1.0 file against its sRGB equivalent: max {} p95 {} median {} codes; against the same bytes as sRGB: max {} p95 {}",
        to_equivalent[to_equivalent.len() - 1],
        p95(&to_equivalent),
        to_equivalent[to_equivalent.len() / 2],
        to_plain[to_plain.len() - 1],
        p95(&to_plain)
    );
    assert!(to_equivalent[to_equivalent.len() - 1] <= 20 && p95(&to_equivalent) <= 4);
    assert!(to_equivalent[to_equivalent.len() / 2] <= 1);
    assert!(p95(&to_plain) > 40, "the gAMA chunk made no difference");
    let s = summary(&out, "gama-1");
    assert_eq!(
        s["source"],
        "PNG gAMA 1 (decoding exponent 1.000), no cHRM (sRGB primaries and D65 white assumed)"
    );
    let notes = s["notes"].to_string();
    assert!(notes.contains("built with lcms2"), "{notes}");
    assert!(!notes.contains("no embedded profile"), "{notes}");
}

/// sRGB outranks gAMA and cHRM, and the assumed space: the file separates byte
/// for byte as the same samples without chunks read as sRGB.
#[test]
fn the_srgb_chunk_outranks_gama_chrm_and_the_assumed_space() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    separate(&[fixture("srgb-over-gama-chrm.png")], &out, &["--source-space", "display-p3"]).success();
    separate(&[fixture("plain.png")], &out, &["--source-space", "srgb"]).success();
    assert_eq!(cmyk(&out, "srgb-over-gama-chrm"), cmyk(&out, "plain"));
    assert_eq!(
        summary(&out, "srgb-over-gama-chrm")["source"],
        "sRGB (PNG sRGB chunk, perceptual intent)"
    );
}

/// iCCP outranks the rest, and the summary names the profile by its description
/// tag as Pillow reads it (reference.csv).
#[test]
fn the_embedded_profile_outranks_the_chunks_and_is_named_by_its_description() {
    let (_, descriptions) = reference();
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    separate(&[fixture("iccp-over-gama.png"), fixture("plain.png")], &out, &[]).success();
    let s = summary(&out, "iccp-over-gama");
    let description = &descriptions["iccp-over-gama.png"];
    assert!(!description.is_empty());
    assert_eq!(s["source"], format!("embedded ICC profile \"{description}\""));
    assert!(
        s["notes"]
            .to_string()
            .contains("PNG gAMA, cHRM not used: the iCCP profile takes precedence")
    );
    // The profile is sRGB: as the plain file, within the rounding of lcms2's sRGB against the built-in one.
    let diff = cmyk(&out, "iccp-over-gama")
        .iter()
        .zip(cmyk(&out, "plain"))
        .map(|(a, b)| a.abs_diff(b))
        .max()
        .unwrap();
    assert!(diff <= 2, "{diff} codes from the plain sRGB file");
}

/// Gray input in the black-only mode takes its lightness from the gAMA chunk too.
#[test]
fn a_linear_gray_file_puts_more_black_on_the_plate_than_the_same_bytes_as_srgb() {
    let dir = tempfile::tempdir().unwrap();
    let write = |name: &str, gamma: Option<f32>| {
        let path = dir.path().join(name);
        let mut info = png::Info::with_size(16, 1);
        info.color_type = png::ColorType::Grayscale;
        info.bit_depth = png::BitDepth::Eight;
        info.source_gamma = gamma.map(png::ScaledFloat::new);
        let enc = png::Encoder::with_info(std::fs::File::create(&path).unwrap(), info).unwrap();
        let mut w = enc.write_header().unwrap();
        w.write_image_data(&(0..16).map(|i| (i * 17) as u8).collect::<Vec<_>>()).unwrap();
        path
    };
    let linear = write("linear.png", Some(1.0));
    let plain = write("plain.png", None);
    let out = dir.path().join("out");
    separate(&[linear, plain], &out, &["--gray", "black-only"]).success();
    let k = |stem: &str| cmyk(&out, stem).chunks_exact(4).map(|p| p[3]).collect::<Vec<_>>();
    let (lin, srgb) = (k("linear"), k("plain"));
    // A linear mid gray (code 136, Y 0.53) is lighter than sRGB's code 136 (Y 0.25): less black.
    assert!(lin[8] + 20 < srgb[8], "linear {} vs sRGB {}", lin[8], srgb[8]);
    assert!(summary(&out, "linear")["source"].as_str().unwrap().starts_with("PNG gAMA 1"));
}

/// The proof's original (the left half of --side-by-side) reads the chunks as
/// `separate` does: the linear file shows as its sRGB equivalent, within 1 code
/// (re-encoding 8-bit linear values into 8-bit sRGB).
#[test]
fn the_proof_shows_the_original_through_the_chunks() {
    let dir = tempfile::tempdir().unwrap();
    let proof = |name: &str| {
        let out = dir.path().join(name);
        Command::cargo_bin("platesmith")
            .unwrap()
            .args(["proof", "--side-by-side", "--table-grid", "9", "--out"])
            .arg(&out)
            .arg(fixture(name))
            .assert()
            .success();
        let raster = read_raster(&out, &Limits::default()).unwrap();
        let Samples::U8(v) = raster.samples else {
            panic!("8-bit proof expected")
        };
        let row = raster.width as usize * 3;
        // The left half of every row: the original.
        v.chunks_exact(row).flat_map(|r| r[..row / 2].to_vec()).collect::<Vec<u8>>()
    };
    let (linear, equivalent, plain) = (proof("gama-1.png"), proof("gama-1-as-srgb.png"), proof("plain.png"));
    let max = |a: &[u8], b: &[u8]| a.iter().zip(b).map(|(x, y)| x.abs_diff(*y)).max().unwrap();
    assert!(max(&linear, &equivalent) <= 1, "{}", max(&linear, &equivalent));
    assert!(max(&linear, &plain) > 40);
}
