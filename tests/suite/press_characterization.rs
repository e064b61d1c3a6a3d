//! The press model against public measurement data: the characterization
//! data sets in testdata/characterization (Debian icc-profiles-free 2.0.1,
//! Zlib licence): FOGRA39L (ISO 12647-2 coated), FOGRA29L (uncoated),
//! FOGRA28L, FOGRA40L, FOGRA30L and CGATS/SNAP TR 002 (newsprint). Colour
//! differences are CIEDE2000 (CIE 142-2001; Sharma, Wu & Dalal 2005).
//!
//! Cross-validation holds each patch out of the fit that predicts it, so the
//! figures measure prediction, not the model's agreement with itself.

use assert_cmd::Command;
use platesmith::cgats;
use platesmith::colour::{Lab, ciede2000};
use platesmith::ink::Cmyk;
use platesmith::press::characterize::{self, lightness_rises};
use platesmith::press::fit::{Patch, mean_at, patches_from_cgats, residuals, starting_point};
use platesmith::press::{PressModel, builtin};
use std::path::{Path, PathBuf};

pub fn data_path(file: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/characterization").join(file)
}

/// The patches of one data set.
pub fn patches(file: &str) -> Vec<Patch> {
    let path = data_path(file);
    let parsed = cgats::read(&path).unwrap();
    patches_from_cgats(&parsed, &path).unwrap()
}

#[test]
fn cross_validated_accuracy_on_fogra39_and_fogra29() {
    // Targets of the model (docs/REFERENCES.md): 10-fold held-out mean ≤ 0.12,
    // 95th percentile ≤ 0.35, max ≤ 2.0 ΔE2000. Measured: FOGRA39L mean 0.11,
    // p95 0.23, max 1.81 (C100 K100 held out); FOGRA29L 0.06, 0.15, 1.25.
    // Before the second differences along black were put on the corrected
    // colour: max 2.02 and 1.63; before the mixed-difference penalty of the
    // lattice: 0.13 / 0.30 / 3.63 and 0.11 / 0.27 / 3.20. The
    // thin-plate-spline reference on the same folds (scripts/reference/
    // tps_crossval.py) is recorded beside them.
    for (file, mean_bound, max_bound) in [("FOGRA39L.ti3", 0.12, 2.0), ("FOGRA29L.ti3", 0.12, 2.0)] {
        let p = patches(file);
        let start = starting_point(&p, &builtin::coated_offset().params.unwrap());
        let fit = characterize::characterize(&p, &start, &characterize::Options::default());
        let cv = fit.cross_validation.as_ref().unwrap();
        let h = &cv.held_out;
        eprintln!(
            "{file}: held-out ΔE00 mean {:.3} p95 {:.3} max {:.3} (physical model alone: mean {:.3}); λ scores {:?}",
            h.mean, h.p95, h.max, cv.physical_mean, cv.lambda_scores
        );
        for r in &h.regions {
            eprintln!(
                "  {:<22} n {:>4} mean {:.3} p95 {:.3} max {:.3}",
                r.region.name(),
                r.count,
                r.mean,
                r.p95,
                r.max
            );
        }
        assert_eq!(h.count, p.len());
        assert!(h.mean <= mean_bound, "{file}: mean {}", h.mean);
        assert!(h.p95 <= 0.35, "{file}: p95 {}", h.p95);
        assert!(h.max <= max_bound, "{file}: max {}", h.max);
        // The correction must earn its place: far better than the physics alone.
        assert!(h.mean < 0.3 * cv.physical_mean, "{file}: {} vs {}", h.mean, cv.physical_mean);
    }
}

#[test]
fn built_ins_reproduce_their_data() {
    // Targets: coated-offset against all of FOGRA39L and uncoated-offset
    // against all of FOGRA29L: mean ≤ 0.15, p95 ≤ 0.4 ΔE2000.
    let sets = [
        ("coated-offset", "FOGRA39L.ti3", 0.15, 0.4),
        ("uncoated-offset", "FOGRA29L.ti3", 0.15, 0.4),
        ("web-offset-lwc", "FOGRA28L.ti3", 0.15, 0.4),
        ("supercalendered", "FOGRA40L.ti3", 0.15, 0.4),
        ("uncoated-yellowish", "FOGRA30L.ti3", 0.15, 0.4),
        // Newsprint is the hardest: 928 patches, coarse and noisy.
        ("newsprint", "TR002.ti3", 0.3, 0.8),
    ];
    for (name, file, mean, p95) in sets {
        let c = builtin::by_name(name).unwrap();
        let r = residuals(c.model.as_ref(), &patches(file));
        eprintln!("{name} against {file}: mean {:.3} p95 {:.3} max {:.3}", r.mean, r.p95, r.max);
        assert!(r.mean <= mean && r.p95 <= p95, "{name}: mean {} p95 {}", r.mean, r.p95);
        assert!(c.source.contains(file), "{name}: source {}", c.source);
    }
}

#[test]
fn paper_solids_and_overprints_are_within_one_unit_of_the_data() {
    // Read from the data files themselves (not the copies in the condition
    // files): paper, the four solids, the three two-colour overprints.
    // The first eight aim builds: paper, the solids, the two-colour overprints.
    let builds = &platesmith::press::AIM_INKS[..8];
    for (name, file) in [
        ("coated-offset", "FOGRA39L.ti3"),
        ("uncoated-offset", "FOGRA29L.ti3"),
        ("newsprint", "TR002.ti3"),
        ("web-offset-lwc", "FOGRA28L.ti3"),
        ("supercalendered", "FOGRA40L.ti3"),
        ("uncoated-yellowish", "FOGRA30L.ti3"),
    ] {
        let p = patches(file);
        let c = builtin::by_name(name).unwrap();
        for &ink in builds {
            let measured = mean_at(&p, ink).unwrap();
            let de = ciede2000(measured, c.model.lab(Cmyk::from_array(ink)));
            assert!(de <= 1.0, "{name} at {ink:?}: ΔE00 {de:.3}");
        }
    }
}

#[test]
fn corrected_models_never_lighten_with_more_ink() {
    // Physical rule: ink only absorbs. 21⁴ builds (5 % steps), each ink raised
    // by 1 %: the corrected L* may not rise beyond floating-point rounding
    // (1e-9). The lattice is held so that inside every cell its slope along
    // an ink stays below the physics' fall there (each edge bounded by the
    // physics' least fall along it less the cell's interpolation defect:
    // press::correction module doc), so this holds between nodes too.
    for c in builtin::all() {
        let (count, worst) = lightness_rises(c.model.as_ref(), 20, 1e-9);
        eprintln!("{}: {count} rises, worst {worst:.2e}", c.name);
        assert_eq!(count, 0, "{}: worst rise {worst}", c.name);
    }
}

/// Largest |second difference| of L*, a*, b* along a ramp sampled at 1 %.
fn ramp_roughness(m: &dyn PressModel, ramp: impl Fn(f64) -> Cmyk) -> f64 {
    let labs: Vec<[f64; 3]> = (0..=100).map(|i| m.lab(ramp(i as f64 / 100.0)).to_array()).collect();
    labs.windows(3)
        .map(|w| (0..3).map(|k| (w[0][k] - 2.0 * w[1][k] + w[2][k]).abs()).fold(0.0, f64::max))
        .fold(0.0, f64::max)
}

#[test]
fn ramps_are_smooth() {
    // Smoothness bound (docs/REFERENCES.md): along single-ink ramps and the
    // C = M = Y ramp, sampled at 1 %, no second difference of L*, a* or b*
    // exceeds 0.5 CIELAB units (measured: 0.16–0.19 on the offset
    // conditions, 0.40 on newsprint). For scale: a straight ramp has 0, the
    // slope of a ramp is about 0.5–1 unit per 1 %, and ripples between
    // patches would show as second differences of the size of the slope.
    for c in builtin::all() {
        let m = c.model.as_ref();
        let mut worst: f64 = 0.0;
        for ink in 0..4 {
            worst = worst.max(ramp_roughness(m, |a| {
                let mut v = [0.0; 4];
                v[ink] = a;
                Cmyk::from_array(v)
            }));
        }
        worst = worst.max(ramp_roughness(m, |a| Cmyk::new(a, a, a, 0.0)));
        eprintln!("{}: largest second difference along the ramps {worst:.3}", c.name);
        assert!(worst <= 0.5, "{}: {worst}", c.name);
    }
}

#[test]
fn gray_balance_of_the_coated_condition_is_near_common_practice() {
    // Common practice: about 50/40/40 C/M/Y prints neutral on coated stock;
    // the FOGRA39L-based model gives 50/39.5/39.7.
    let g = platesmith::press::figures::gray_balance(builtin::coated_offset().model.as_ref(), 0.5);
    eprintln!("coated-offset gray balance: {:?}", g.cmy_percent);
    for v in &g.cmy_percent[1..] {
        assert!((v - 40.0).abs() <= 3.0, "{:?}", g.cmy_percent);
    }
}

fn bin() -> Command {
    Command::cargo_bin("platesmith").unwrap()
}

#[test]
fn compare_passes_the_matching_data_and_fails_another_stock() {
    let f39 = data_path("FOGRA39L.ti3");
    let ok = bin()
        .args([
            "compare",
            "--condition",
            "coated-offset",
            "--max-mean",
            "0.15",
            "--max-p95",
            "0.4",
            "--json",
        ])
        .arg(&f39)
        .output()
        .unwrap();
    assert_eq!(ok.status.code(), Some(0), "{}", String::from_utf8_lossy(&ok.stderr));
    let v: serde_json::Value = serde_json::from_slice(&ok.stdout).unwrap();
    assert_eq!(v["patches"].as_array().unwrap().len(), 1617);
    assert!(v["mean"].as_f64().unwrap() <= 0.15);

    // The coated condition against uncoated measurements: far over tolerance.
    let f29 = data_path("FOGRA29L.ti3");
    let bad = bin()
        .args(["compare", "--condition", "coated-offset", "--max-mean", "1.0"])
        .arg(&f29)
        .output()
        .unwrap();
    assert_eq!(bad.status.code(), Some(1));
    let text = String::from_utf8_lossy(&bad.stdout);
    assert!(text.contains("OVER TOLERANCE: mean") && text.contains("Worst patches"), "{text}");
}

#[test]
fn a_measurement_file_is_a_condition() {
    // Fitted on load: the held-in fit reproduces its own data closely.
    let f40 = data_path("FOGRA40L.ti3");
    let out = bin()
        .args(["compare", "--json", "--condition"])
        .arg(&f40)
        .arg(&f40)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(v["mean"].as_f64().unwrap() < 0.1, "{}", v["mean"]);
    assert!(v["condition_source"].as_str().unwrap().contains("FOGRA40L.ti3"));
}

#[test]
fn fit_reports_held_out_accuracy_and_writes_a_plot() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("house.toml");
    let plot = dir.path().join("house.png");
    let done = bin()
        .arg("fit")
        .arg(data_path("FOGRA29L.ti3"))
        .arg("--out")
        .arg(&out)
        .arg("--plot")
        .arg(&plot)
        .output()
        .unwrap();
    assert!(done.status.success(), "{}", String::from_utf8_lossy(&done.stderr));
    let text = String::from_utf8_lossy(&done.stdout);
    for want in [
        "did not see",
        "10-fold",
        "shadows",
        "solids and overprints",
        "paper and highlights",
        "Worst patches",
    ] {
        assert!(text.contains(want), "{want}: {text}");
    }
    let png = std::fs::read(&plot).unwrap();
    assert_eq!(&png[1..4], b"PNG");
    let c = platesmith::press::load_condition(out.to_str().unwrap()).unwrap();
    assert!(c.correction.is_some() && c.source.contains("FOGRA29L.ti3"));
    let r = residuals(c.model.as_ref(), &patches("FOGRA29L.ti3"));
    assert!(r.mean < 0.1, "{}", r.mean);
}

/// A small valid chart text with one line replaced, for the bad-file checks.
fn chart_with(replace: Option<(&str, &str)>, rows: usize) -> String {
    let mut s = String::from(
        "CGATS.17\nNUMBER_OF_FIELDS 8\nBEGIN_DATA_FORMAT\nSAMPLE_ID CMYK_C CMYK_M CMYK_Y CMYK_K LAB_L LAB_A LAB_B\nEND_DATA_FORMAT\n",
    );
    s += &format!("NUMBER_OF_SETS {rows}\nBEGIN_DATA\n");
    let m = builtin::coated_offset().model;
    for i in 0..rows {
        let ink = [
            (i % 3) as f64 * 50.0,
            (i / 3 % 3) as f64 * 50.0,
            (i / 9 % 3) as f64 * 50.0,
            (i / 27 % 3) as f64 * 50.0,
        ];
        let lab: Lab = m.lab(Cmyk::from_percent(ink));
        s += &format!(
            "{} {} {} {} {} {:.2} {:.2} {:.2}\n",
            i + 1,
            ink[0],
            ink[1],
            ink[2],
            ink[3],
            lab.l,
            lab.a,
            lab.b
        );
    }
    s += "END_DATA\n";
    match replace {
        Some((from, to)) => s.replacen(from, to, 1),
        None => s,
    }
}

#[test]
fn bad_measurement_files_exit_2_naming_file_and_line() {
    let dir = tempfile::tempdir().unwrap();
    // 81 patches (3⁴ levels) make a valid chart; each case breaks one thing.
    let cases: [(&str, String, &[&str]); 5] = [
        (
            "missing-column.txt",
            chart_with(Some(("CMYK_K LAB_L", "INK_K LAB_L")), 81),
            &["CMYK_K"],
        ),
        (
            "nan.txt",
            chart_with(Some(("\n5 50 ", "\n5 NaN ")), 81),
            &["line 12", "not a number"],
        ),
        (
            "duplicate.txt",
            chart_with(Some(("\n7 ", "\n3 ")), 81),
            &["line 14", "`3`", "line 10"],
        ),
        (
            "outside.txt",
            chart_with(Some(("\n2 50 ", "\n2 150 ")), 81),
            &["line 9", "150", "0–100"],
        ),
        ("few.txt", chart_with(None, 20), &["20 patches", "too few"]),
    ];
    for (name, text, wants) in cases {
        let path = dir.path().join(name);
        std::fs::write(&path, &text).unwrap();
        for cmd in ["fit", "compare"] {
            let out_file = dir.path().join(format!("{name}.toml"));
            let mut c = bin();
            c.arg(cmd).arg(&path);
            if cmd == "fit" {
                c.arg("--out").arg(&out_file);
            }
            let out = c.output().unwrap();
            let err = String::from_utf8_lossy(&out.stderr);
            assert_eq!(out.status.code(), Some(2), "{cmd} {name}: {err}");
            assert!(err.contains(name), "{cmd} {name}: {err}");
            for w in wants {
                assert!(err.contains(w), "{cmd} {name}: want {w}: {err}");
            }
            assert!(!out_file.exists(), "{cmd} {name}: wrote output");
            assert_eq!(std::fs::read_to_string(&path).unwrap(), text, "input touched");
        }
    }
}
