//! Reports and outputs are deterministic: the same input and settings give
//! byte-identical TIFFs and the same summary (timings aside), run after run
//! and whatever the number of worker threads (RAYON_NUM_THREADS). The same
//! holds for `recipe --json`.
//!
//! The requirement is the project's own (reproducible jobs: a ticket repeats a
//! job exactly); the checks compare the program with itself across runs and
//! thread counts, so they need no outside reference beyond the TIFF 6.0 and
//! PNG (ISO/IEC 15948) encoders that make the inputs.

use assert_cmd::Command;
use proptest::prelude::*;
use std::path::Path;

fn platesmith() -> Command {
    Command::cargo_bin("platesmith").unwrap()
}

/// A PNG of pseudo-random RGB pixels (splitmix64, so a failure reproduces).
fn noise_png(path: &Path, w: u32, h: u32, seed: u64) {
    let mut s = seed;
    let mut next = || {
        s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = s;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        (z ^ (z >> 31)) as u8
    };
    let data: Vec<u8> = (0..w * h * 3).map(|_| next()).collect();
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, w, h);
        enc.set_color(png::ColorType::Rgb);
        let mut wr = enc.write_header().unwrap();
        wr.write_image_data(&data).unwrap();
        wr.finish().unwrap();
    }
    std::fs::write(path, out).unwrap();
}

/// Every output of one run: file name → bytes, with the summary's timings removed.
fn run_separate(input: &Path, out: &Path, threads: usize, extra: &[&str]) -> Vec<(String, Vec<u8>)> {
    if out.exists() {
        std::fs::remove_dir_all(out).unwrap();
    }
    platesmith()
        .env("RAYON_NUM_THREADS", threads.to_string())
        .arg("separate")
        .arg(input)
        .arg("--out-dir")
        .arg(out)
        .args(extra)
        .assert()
        .success();
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(out)
        .unwrap()
        .map(|e| {
            let p = e.unwrap().path();
            let name = p.file_name().unwrap().to_string_lossy().into_owned();
            let mut bytes = std::fs::read(&p).unwrap();
            if name.ends_with(".summary.json") {
                let mut v: serde_json::Value = serde_json::from_slice(&bytes).unwrap();
                let timings = v.as_object_mut().unwrap().remove("timings");
                assert!(timings.is_some(), "the summary has timings");
                bytes = serde_json::to_vec_pretty(&v).unwrap();
            }
            (name, bytes)
        })
        .collect();
    files.sort();
    files
}

fn assert_same(a: &[(String, Vec<u8>)], b: &[(String, Vec<u8>)], what: &str) {
    let names = |v: &[(String, Vec<u8>)]| v.iter().map(|(n, _)| n.clone()).collect::<Vec<_>>();
    assert_eq!(names(a), names(b), "{what}: different files");
    for ((n, x), (_, y)) in a.iter().zip(b) {
        assert!(x == y, "{what}: {n} differs");
    }
}

#[test]
fn separate_is_identical_across_runs_and_thread_counts() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("noise.png");
    // Taller than one parallel chunk of rows, so threads really split the work.
    noise_png(&input, 61, 150, 7);
    let out = dir.path().join("out");
    for extra in [
        &["--table-grid", "17"][..],
        &["--table-grid", "9", "--bits", "16", "--intent", "relative", "--bpc", "--gcr", "80"],
    ] {
        let first = run_separate(&input, &out, 1, extra);
        assert_eq!(first.len(), 6, "composite, four plates, summary");
        assert_same(&first, &run_separate(&input, &out, 1, extra), "second run, 1 thread");
        assert_same(&first, &run_separate(&input, &out, 2, extra), "2 threads");
        assert_same(&first, &run_separate(&input, &out, 5, extra), "5 threads");
    }
}

#[test]
fn cmyk_reseparation_is_identical_across_thread_counts() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("noise.png");
    noise_png(&input, 40, 90, 11);
    let first = dir.path().join("first");
    let cmyk = run_separate(&input, &first, 2, &["--table-grid", "9"]);
    assert!(cmyk.iter().any(|(n, _)| n == "noise.cmyk.tif"));
    let cmyk_in = first.join("noise.cmyk.tif");
    let out = dir.path().join("second");
    let args = ["--condition", "newsprint", "--source-condition", "coated-offset", "--plates", "png"];
    let a = run_separate(&cmyk_in, &out, 1, &args);
    assert_same(&a, &run_separate(&cmyk_in, &out, 3, &args), "re-separation, 3 threads");
}

fn recipe_json(colour: &str, threads: usize) -> Vec<u8> {
    let o = platesmith()
        .env("RAYON_NUM_THREADS", threads.to_string())
        .args(["recipe", colour, "--json", "--gcr", "40"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    o.stdout
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 8, failure_persistence: None, ..ProptestConfig::default() })]

    /// `recipe --json` prints the same bytes run after run and with any thread count.
    #[test]
    fn recipe_json_is_deterministic(r in 0u8..=255, g in 0u8..=255, b in 0u8..=255) {
        let colour = format!("#{r:02x}{g:02x}{b:02x}");
        let first = recipe_json(&colour, 1);
        let v: serde_json::Value = serde_json::from_slice(&first).unwrap();
        prop_assert!(v["cmyk"].is_array());
        prop_assert_eq!(&first, &recipe_json(&colour, 1));
        prop_assert_eq!(&first, &recipe_json(&colour, 4));
    }
}
