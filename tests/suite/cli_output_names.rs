//! Output names within one run: `separate` and `inspect --report` refuse, before
//! anything is read or written, inputs that would write the same output names
//! (two inputs with one stem, one input given twice), with or without `--force`.

use assert_cmd::Command;
use predicates::prelude::PredicateBooleanExt;
use predicates::str::contains;
use std::path::Path;

fn write_rgb_png(path: &Path, rgb: [u8; 3]) {
    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
    let mut enc = png::Encoder::new(std::fs::File::create(path).unwrap(), 4, 4);
    enc.set_color(png::ColorType::Rgb);
    let mut w = enc.write_header().unwrap();
    w.write_image_data(&rgb.repeat(16)).unwrap();
}

fn platesmith(dir: &Path, args: &[&str]) -> assert_cmd::assert::Assert {
    Command::cargo_bin("platesmith").unwrap().current_dir(dir).args(args).assert()
}

/// Exit 2 whatever `--force` says, both inputs and the way out named, no output
/// folder made (nothing written), inputs untouched.
#[test]
fn two_inputs_with_one_stem_are_refused_before_anything_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a/x.png"), dir.path().join("b/x.png"));
    write_rgb_png(&a, [200, 30, 40]);
    write_rgb_png(&b, [20, 130, 40]);
    let before = (std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
    for force in [false, true] {
        let mut args = vec!["separate", "a/x.png", "b/x.png", "--out-dir", "out", "--table-grid", "9"];
        if force {
            args.push("--force");
        }
        platesmith(dir.path(), &args)
            .code(2)
            .stderr(contains("a/x.png, b/x.png would all write outputs named x.* into out"))
            .stderr(contains("--out-dir"))
            .stderr(contains("already exists").not());
        assert!(!dir.path().join("out").exists(), "an output folder was made");
    }
    // Same stem, other format: x.tif and x.png write x.cmyk.tif both.
    std::fs::copy(&b, dir.path().join("a/x.tif")).unwrap();
    platesmith(dir.path(), &["separate", "a/x.png", "a/x.tif", "--out-dir", "out"])
        .code(2)
        .stderr(contains("a/x.png, a/x.tif would all write"));
    assert_eq!((std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap()), before);
}

#[test]
fn one_input_given_twice_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    write_rgb_png(&dir.path().join("x.png"), [200, 30, 40]);
    platesmith(dir.path(), &["separate", "x.png", "x.png", "--out-dir", "out", "--force"])
        .code(2)
        .stderr(contains("x.png is given twice; give it once"));
    platesmith(dir.path(), &["separate", "x.png", "./x.png", "--out-dir", "out"])
        .code(2)
        .stderr(contains("x.png and ./x.png are the same file"));
    assert!(!dir.path().join("out").exists());
}

/// An output of one input that is another input of the run (a CMYK file named
/// as the composite of an RGB one, both separated into their own folder).
#[test]
fn an_output_that_is_another_input_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    write_rgb_png(&dir.path().join("p.png"), [200, 30, 40]);
    write_rgb_png(&dir.path().join("p.cmyk.tif"), [20, 130, 40]);
    platesmith(dir.path(), &["separate", "p.png", "p.cmyk.tif", "--out-dir", ".", "--force"])
        .code(2)
        .stderr(contains("p.png would write"))
        .stderr(contains("which is the input p.cmyk.tif"));
}

#[test]
fn inspect_reports_with_one_stem_are_refused_and_distinct_ones_pass() {
    let dir = tempfile::tempdir().unwrap();
    write_rgb_png(&dir.path().join("a/x.png"), [200, 30, 40]);
    write_rgb_png(&dir.path().join("b/x.png"), [20, 130, 40]);
    write_rgb_png(&dir.path().join("b/y.png"), [20, 130, 40]);
    let base = ["inspect", "--table-grid", "9", "--report", "rep", "--force"];
    platesmith(dir.path(), &[&base[..], &["a/x.png", "b/x.png"]].concat())
        .code(2)
        .stderr(contains("a/x.png, b/x.png would all write reports named x.* into rep"));
    assert!(!dir.path().join("rep").exists());
    platesmith(dir.path(), &[&base[..], &["a/x.png", "b/y.png"]].concat()).success();
    assert!(dir.path().join("rep/x.inspect.json").exists() && dir.path().join("rep/y.inspect.json").exists());
}
