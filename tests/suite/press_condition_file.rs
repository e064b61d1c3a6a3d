//! User printing conditions in TOML: loading, validation and error messages
//! (file, key, line and allowed range).

use platesmith::ink::Cmyk;
use platesmith::press::condition_file::{parse_condition, read_condition_file, to_toml};
use platesmith::press::{builtin, load_condition};
use std::path::{Path, PathBuf};

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/press").join(name)
}

/// 1-based line of the first line of `path` containing `needle`.
fn line_with(path: &Path, needle: &str) -> usize {
    let text = std::fs::read_to_string(path).unwrap();
    text.lines().position(|l| l.contains(needle)).expect("needle in fixture") + 1
}

fn error_of(name: &str) -> String {
    read_condition_file(&fixture(name)).expect_err("fixture is invalid").to_string()
}

#[test]
fn example_condition_loads_with_percent_converted_to_fractions() {
    let c = read_condition_file(&fixture("harbour-lane-sheetfed.toml")).unwrap();
    assert_eq!(c.name, "harbour-lane-sheetfed");
    assert!((c.tac - 3.2).abs() < 1e-12);
    assert!((c.min_dot - 0.02).abs() < 1e-12);
    let p = c.params.unwrap();
    assert_eq!(p.tvi50, [0.13, 0.14, 0.12, 0.16]);
    assert!((p.n - 1.9).abs() < 1e-12 && (p.black_surface - 0.011).abs() < 1e-12);
    assert!((c.black.gcr - 0.4).abs() < 1e-12 && (c.black.uca - 0.05).abs() < 1e-12);
    assert_eq!(c.ink_film, [1.0, 1.05, 1.0, 1.25]);
    // The model is built from the file: paper is the paper aim.
    let paper = c.model.lab(Cmyk::ZERO);
    assert!((paper.l - 94.5).abs() < 1e-9 && (paper.b + 3.0).abs() < 1e-9);
}

#[test]
fn load_condition_accepts_names_toml_paths_and_icc_profiles() {
    assert_eq!(load_condition("newsprint").unwrap().name, "newsprint");
    let path = fixture("harbour-lane-sheetfed.toml");
    assert_eq!(load_condition(path.to_str().unwrap()).unwrap().name, "harbour-lane-sheetfed");
    // A .icc path goes to the ICC profile model, which names the missing file.
    let err = load_condition("press.icc").unwrap_err().to_string();
    assert!(err.contains("press.icc"), "{err}");
    let err = load_condition("missing-file.toml").unwrap_err().to_string();
    assert!(err.contains("missing-file.toml") && err.contains("cannot read"), "{err}");
}

#[test]
fn unknown_key_names_file_key_and_line() {
    let path = fixture("bad/unknown-key.toml");
    let err = error_of("bad/unknown-key.toml");
    assert!(err.contains("unknown-key.toml"), "{err}");
    assert!(err.contains("black_limit"), "{err}");
    assert!(err.contains(&format!("line {}", line_with(&path, "black_limit"))), "{err}");
}

#[test]
fn out_of_range_values_name_key_line_and_allowed_range() {
    let path = fixture("bad/tac-out-of-range.toml");
    let err = error_of("bad/tac-out-of-range.toml");
    assert!(
        err.contains("tac-out-of-range.toml") && err.contains("tac = 450: allowed range is 100–400 %"),
        "{err}"
    );
    assert!(err.contains(&format!("line {}", line_with(&path, "tac = 450"))), "{err}");
    assert!(err.contains("100–400"), "{err}");

    let path = fixture("bad/tvi-out-of-range.toml");
    let err = error_of("bad/tvi-out-of-range.toml");
    assert!(err.contains("tvi.yellow = 42: allowed range is 0–30 %"), "{err}");
    assert!(err.contains(&format!("line {}", line_with(&path, "yellow = 42"))), "{err}");
}

#[test]
fn syntax_error_names_the_line() {
    let path = fixture("bad/syntax.toml");
    let err = error_of("bad/syntax.toml");
    assert!(err.contains("syntax.toml"), "{err}");
    assert!(err.contains(&format!("line {}", line_with(&path, "shape = ="))), "{err}");
}

#[test]
fn an_overprint_lighter_than_its_inks_is_refused() {
    let path = fixture("bad/lighter-overprint.toml");
    let err = error_of("bad/lighter-overprint.toml");
    assert!(err.contains("`aims.red`") && err.contains("aims.magenta"), "{err}");
    assert!(err.contains(&format!("line {}", line_with(&path, "red = [49.0"))), "{err}");
}

#[test]
fn missing_and_misplaced_values_are_reported() {
    let text = std::fs::read_to_string(fixture("harbour-lane-sheetfed.toml")).unwrap();
    let without_tac: String = text.lines().filter(|l| !l.starts_with("tac")).map(|l| format!("{l}\n")).collect();
    let err = parse_condition(&without_tac, Path::new("cut.toml")).unwrap_err().to_string();
    assert!(err.contains("cut.toml") && err.contains("tac"), "{err}");
    let wrong_type = text.replace("tac = 320", "tac = \"320\"");
    let err = parse_condition(&wrong_type, Path::new("typed.toml")).unwrap_err().to_string();
    assert!(err.contains("typed.toml") && err.contains("line 4"), "{err}");
    let surface = text.replace("black_surface = 1.1", "black_surface = 5");
    let err = parse_condition(&surface, Path::new("surface.toml")).unwrap_err().to_string();
    assert!(err.contains("`black_surface`") && err.contains("allowed 0–"), "{err}");
}

#[test]
fn written_condition_files_load_back() {
    for c in builtin::all() {
        let text = to_toml(&c, &["written by a test".into()]).unwrap();
        let back = parse_condition(&text, Path::new("round.toml")).unwrap();
        let (a, b) = (c.params.unwrap(), back.params.unwrap());
        assert_eq!(a.aims, b.aims);
        for i in 0..4 {
            assert!((a.tvi50[i] - b.tvi50[i]).abs() < 1e-12);
        }
        assert!((a.n - b.n).abs() < 1e-12 && (a.black_surface - b.black_surface).abs() < 1e-12);
        let ink = Cmyk::new(0.3, 0.6, 0.2, 0.4);
        assert!((c.model.lab(ink).l - back.model.lab(ink).l).abs() < 1e-9);
    }
}
