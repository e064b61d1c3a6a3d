//! Colour difference formulas against published test data and colour-science.
//!
//! - CIEDE2000: the 34 pairs of Sharma, Wu & Dalal (2005), "The CIEDE2000
//!   color-difference formula: implementation notes, supplementary test data,
//!   and mathematical observations", Color Res. Appl. 30, 21–30, Table 1,
//!   committed as testdata/ciede2000_sharma2005.csv (provenance in
//!   testdata/README.md). Published values have 4 decimals.
//! - Intermediate CIEDE2000 terms, CIE76 and CIE94 (graphic arts): values
//!   computed by colour-science 0.4.7 for the same pairs (columns cs_* of that
//!   file, made by scripts/reference/make_ciede2000_table.py), and the literal
//!   values of colour-science's own unit tests (colour/difference/tests/test_delta_e.py).

use platesmith::colour::{De2000Weights, Lab, ciede2000, ciede2000_terms, ciede2000_with, delta_e76, delta_e94};

const SHARMA_CSV: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/testdata/ciede2000_sharma2005.csv");

/// Half a unit in the fourth decimal: the precision of the published table.
const PUBLISHED_TOLERANCE: f64 = 5e-5;
/// colour-science values are written with 12 decimals; both implementations are f64.
const COLOUR_SCIENCE_TOLERANCE: f64 = 1e-9;

#[derive(Debug, serde::Deserialize)]
struct SharmaRow {
    pair: u32,
    l1: f64,
    a1: f64,
    b1: f64,
    l2: f64,
    a2: f64,
    b2: f64,
    de2000: f64,
    cs_de2000: f64,
    cs_sl: f64,
    cs_sc: f64,
    cs_sh: f64,
    cs_dl: f64,
    cs_dc: f64,
    cs_dh: f64,
    cs_rt: f64,
    cs_de76: f64,
    cs_de94: f64,
}

impl SharmaRow {
    fn labs(&self) -> (Lab, Lab) {
        (Lab::new(self.l1, self.a1, self.b1), Lab::new(self.l2, self.a2, self.b2))
    }
}

fn sharma_rows() -> Vec<SharmaRow> {
    let mut reader = csv::Reader::from_path(SHARMA_CSV).expect("testdata/ciede2000_sharma2005.csv is readable");
    let rows: Vec<SharmaRow> = reader.deserialize().collect::<Result<_, _>>().expect("the CSV parses");
    assert_eq!(rows.len(), 34, "Sharma et al. (2005) Table 1 has 34 pairs");
    for (i, row) in rows.iter().enumerate() {
        assert_eq!(row.pair as usize, i + 1, "pairs are in table order");
    }
    rows
}

#[test]
fn ciede2000_matches_all_34_sharma_pairs_to_four_decimals() {
    let mut worst = (0.0_f64, 0);
    for row in sharma_rows() {
        let (a, b) = row.labs();
        let d = ciede2000(a, b);
        let err = (d - row.de2000).abs();
        assert!(
            err <= PUBLISHED_TOLERANCE,
            "pair {}: ours {d:.6}, published {:.4}",
            row.pair,
            row.de2000
        );
        // The formula is symmetric; the table relies on it (pairs 7 and 8).
        assert!((ciede2000(b, a) - d).abs() < 1e-12, "pair {} is not symmetric", row.pair);
        if err > worst.0 {
            worst = (err, row.pair);
        }
    }
    eprintln!(
        "CIEDE2000 vs Sharma et al. (2005), 34 pairs: max |ΔE00 - published| = {:.2e} (pair {})",
        worst.0, worst.1
    );
}

#[test]
fn sharma_pair_14_opposite_hues_take_the_published_branch() {
    // Pair 14: h'1 and h'2 differ by exactly 180° in exact arithmetic; the mean
    // hue must be 180.0345° and ΔE00 4.8045 (Sharma et al. 2005, Table 1),
    // whatever the last bit of atan2.
    let t = ciede2000_terms(
        Lab::new(50.0, -0.0010, 2.4900),
        Lab::new(50.0, 0.0010, -2.4900),
        De2000Weights::default(),
    );
    assert!((t.h_mean - 180.0345).abs() < 5e-5, "mean hue {}", t.h_mean);
    assert!((t.delta_e - 4.8045).abs() < PUBLISHED_TOLERANCE, "{}", t.delta_e);
}

#[test]
fn ciede2000_terms_match_colour_science() {
    let mut worst = 0.0_f64;
    for row in sharma_rows() {
        let (a, b) = row.labs();
        let t = ciede2000_terms(a, b, De2000Weights::default());
        let checks = [
            ("ΔE00", t.delta_e, row.cs_de2000),
            ("S_L", t.sl, row.cs_sl),
            ("S_C", t.sc, row.cs_sc),
            ("S_H", t.sh, row.cs_sh),
            ("ΔL'", t.dl, row.cs_dl),
            ("ΔC'", t.dc, row.cs_dc),
            ("ΔH'", t.dh, row.cs_dh),
            ("R_T", t.rt, row.cs_rt),
        ];
        for (name, ours, theirs) in checks {
            let err = (ours - theirs).abs();
            assert!(
                err <= COLOUR_SCIENCE_TOLERANCE,
                "pair {}: {name} ours {ours:.12}, colour-science {theirs:.12}",
                row.pair
            );
            worst = worst.max(err);
        }
    }
    eprintln!("CIEDE2000 terms vs colour-science 0.4.7, 34 pairs: max deviation = {worst:.2e}");
}

#[test]
fn cie76_and_cie94_match_colour_science_on_the_sharma_pairs() {
    let (mut worst76, mut worst94) = (0.0_f64, 0.0_f64);
    for row in sharma_rows() {
        let (a, b) = row.labs();
        let e76 = (delta_e76(a, b) - row.cs_de76).abs();
        let e94 = (delta_e94(a, b) - row.cs_de94).abs();
        assert!(
            e76 <= COLOUR_SCIENCE_TOLERANCE,
            "pair {}: CIE76 {} vs {}",
            row.pair,
            delta_e76(a, b),
            row.cs_de76
        );
        assert!(
            e94 <= COLOUR_SCIENCE_TOLERANCE,
            "pair {}: CIE94 {} vs {}",
            row.pair,
            delta_e94(a, b),
            row.cs_de94
        );
        worst76 = worst76.max(e76);
        worst94 = worst94.max(e94);
    }
    eprintln!("CIE76 vs colour-science 0.4.7, 34 pairs: max deviation = {worst76:.2e}");
    eprintln!("CIE94 (graphic arts) vs colour-science 0.4.7, 34 pairs: max deviation = {worst94:.2e}");
}

/// Literal values of colour-science's unit tests (colour-science 0.4.7,
/// colour/difference/tests/test_delta_e.py): very high chroma, far outside
/// any real surface colour, which stresses the weighting functions.
#[test]
#[allow(clippy::excessive_precision)] // the values are copied digit for digit
fn colour_science_unit_test_values() {
    let p1 = Lab::new(48.99183622, -0.10561667, 400.65619925);
    let p2 = Lab::new(50.65907324, -0.11671910, 402.82235718);
    let q1 = Lab::new(100.0, 21.57210357, 272.22819350);
    let q2 = Lab::new(100.0, 426.67945353, 72.39590835);
    let q3 = Lab::new(100.0, 74.05216981, 276.45318193);
    let r2 = Lab::new(50.0, 426.67945353, 72.39590835);
    let r3 = Lab::new(50.0, 74.05216981, 276.45318193);
    let r4 = Lab::new(50.0, 8.32281957, -73.58297716);
    let textiles = De2000Weights { kl: 2.0, kc: 1.0, kh: 1.0 };
    let cases: [(&str, f64, f64, f64); 9] = [
        ("CIE94 p1 p2", delta_e94(p1, p2), 1.671119130541200, 1e-12),
        ("CIE94 q1 q2", delta_e94(q1, q2), 83.779225500887094, 1e-12),
        ("CIE94 q1 q3", delta_e94(q1, q3), 10.053931954553839, 1e-12),
        // colour-science prints these CIEDE2000 values to 8 decimals.
        ("CIEDE2000 p1 p2", ciede2000(p1, p2), 1.670930327213592, 1e-8),
        ("CIEDE2000 q1 q2", ciede2000(q1, q2), 94.03564903, 1e-8),
        ("CIEDE2000 q1 q3", ciede2000(q1, q3), 14.87906419, 1e-8),
        ("CIEDE2000 kL=2 q1 r2", ciede2000_with(q1, r2, textiles), 95.79205352, 1e-8),
        ("CIEDE2000 kL=2 q1 r3", ciede2000_with(q1, r3, textiles), 23.55420943, 1e-8),
        ("CIEDE2000 kL=2 q1 r4", ciede2000_with(q1, r4, textiles), 70.63213819, 1e-8),
    ];
    let mut worst = 0.0_f64;
    for (name, ours, want, tol) in cases {
        assert!((ours - want).abs() <= tol, "{name}: ours {ours:.12}, colour-science {want:.12}");
        worst = worst.max((ours - want).abs());
    }
    eprintln!("CIE94 / CIEDE2000 vs colour-science unit-test values, 9 cases: max deviation = {worst:.2e}");
}

#[test]
fn cie76_is_euclidean_distance() {
    // CIE 15:2004 eq. 8.9 on a 3-4-12 right-angled triple (distance 13).
    assert_eq!(delta_e76(Lab::new(50.0, 10.0, -5.0), Lab::new(53.0, 14.0, 7.0)), 13.0);
}
