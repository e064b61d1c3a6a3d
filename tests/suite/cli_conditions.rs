//! `platesmith conditions list` and `conditions show`, driven through the binary.

use assert_cmd::Command;
use std::path::Path;

fn run(args: &[&str]) -> std::process::Output {
    Command::cargo_bin("platesmith").unwrap().args(args).output().unwrap()
}

#[test]
fn list_shows_every_built_in_condition() {
    let out = run(&["conditions", "list"]);
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for name in ["coated-offset", "uncoated-offset", "newsprint"] {
        assert!(text.contains(name), "{text}");
    }
    assert!(text.contains("* coated-offset"), "default is marked: {text}");
    // Without an action, `conditions` lists.
    let bare = run(&["conditions"]);
    assert_eq!(bare.stdout, out.stdout);
}

#[test]
fn list_json_has_figures_for_each_condition() {
    let out = run(&["conditions", "list", "--json"]);
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let list = v.as_array().unwrap();
    assert_eq!(list.len(), 6);
    assert_eq!(list[0]["name"], "coated-offset");
    assert_eq!(list[0]["default"], true);
    for c in list {
        assert!(c["gamut"]["volume"].as_f64().unwrap() > 10_000.0);
        assert!(c["tac_percent"].as_f64().unwrap() >= 200.0);
        // The nine aims and the seven primaries with black, measured in the
        // condition's data set.
        assert_eq!(c["aims"].as_array().unwrap().len(), 16);
        assert!(!c["source"].as_str().unwrap().is_empty());
    }
}

#[test]
fn show_json_reports_parameters_aims_and_computed_figures() {
    let out = run(&["conditions", "show", "uncoated-offset", "--json"]);
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["name"], "uncoated-offset");
    assert!((v["tac_percent"].as_f64().unwrap() - 280.0).abs() < 1e-9);
    // Fitted to FOGRA29L: the black's TVI parameter at 50 % is 22.9 %, and the
    // model meets the measured aims (FOGRA29L patches) within 0.5 ΔE2000.
    assert_eq!(v["model"]["tvi50_percent"][3].as_f64().unwrap().round(), 23.0);
    assert!(v["source"].as_str().unwrap().contains("FOGRA29L.ti3"));
    for aim in v["aims"].as_array().unwrap() {
        assert_eq!(aim["from"], "measured");
        assert!(aim["delta_e2000"].as_f64().unwrap() <= 0.5);
    }
    // Cyan's tone value increase predicted at 50 % (Murray–Davies on X):
    // 16.5 %, within the 15–22 % ISO 12647-2 practice for uncoated stock
    // (from memory).
    let tvi50 = v["predicted_tvi"][0]["tvi_percent"][1].as_f64().unwrap();
    assert!((15.0..=22.0).contains(&tvi50), "{tvi50}");
    let gray = &v["gray_balance"]["cmy_percent"];
    assert!((gray[0].as_f64().unwrap() - 50.0).abs() < 1e-9);
    assert!(v["gamut"]["volume"].as_f64().unwrap() > 0.0);
    let darkest: f64 = v["darkest_within_tac_percent"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .sum();
    assert!(darkest <= 280.0 + 1e-6);
}

#[test]
fn show_text_names_the_sections() {
    let out = run(&["conditions", "show", "coated-offset"]);
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for s in [
        "coated-offset (built in, default)",
        "Aims",
        "gray balance",
        "gamut volume",
        "TVI at 50 %",
        "ink film",
    ] {
        assert!(text.contains(s), "missing {s}: {text}");
    }
}

#[test]
fn show_reads_a_condition_file() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/press/harbour-lane-sheetfed.toml");
    let out = run(&["conditions", "show", path.to_str().unwrap(), "--json"]);
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["name"], "harbour-lane-sheetfed");
    assert_eq!(v["built_in"], false);
}

#[test]
fn unknown_condition_is_a_usage_error_listing_the_names() {
    let out = run(&["conditions", "show", "glossy-card"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("glossy-card") && err.contains("coated-offset"), "{err}");
}

#[test]
fn invalid_condition_file_error_reaches_the_user() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/press/bad/tac-out-of-range.toml");
    let out = run(&["conditions", "show", path.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("tac-out-of-range.toml") && err.contains("line 4: tac = 450: allowed range is 100–400 %"),
        "{err}"
    );
}
