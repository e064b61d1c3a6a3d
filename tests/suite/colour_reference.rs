//! RGB → CIELAB D50 in all four RGB spaces against reference values computed
//! by colour-science 0.4.7 (testdata/rgb_lab_reference.csv, made by
//! scripts/reference/make_rgb_lab.py; provenance in testdata/README.md), and
//! RGB → Lab → RGB round trips.

use std::collections::BTreeMap;

use platesmith::colour::{D50, EncodedRgb, Lab, RgbSpace, Xyz, ciede2000, from_code, to_code};

const REFERENCE_CSV: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/testdata/rgb_lab_reference.csv");

/// Largest ΔE00 accepted between our RGB → Lab and colour-science's.
const REFERENCE_TOLERANCE: f64 = 0.02;
/// Largest error accepted on an RGB → Lab → RGB round trip in float.
const ROUND_TRIP_TOLERANCE: f64 = 1e-6;

#[derive(Debug, serde::Deserialize)]
struct Row {
    space: String,
    r: f64,
    g: f64,
    b: f64,
    x: f64,
    y: f64,
    z: f64,
    l: f64,
    a_star: f64,
    b_star: f64,
}

impl Row {
    fn space(&self) -> RgbSpace {
        RgbSpace::from_name(&self.space).unwrap_or_else(|| panic!("unknown space {:?} in the reference CSV", self.space))
    }

    fn lab(&self) -> Lab {
        Lab::new(self.l, self.a_star, self.b_star)
    }
}

fn reference_rows() -> Vec<Row> {
    let mut reader = csv::Reader::from_path(REFERENCE_CSV).expect("testdata/rgb_lab_reference.csv is readable");
    let rows: Vec<Row> = reader.deserialize().collect::<Result<_, _>>().expect("the CSV parses");
    for space in RgbSpace::ALL {
        let n = rows.iter().filter(|r| r.space() == space).count();
        assert!(n >= 300, "{}: only {n} reference colours", space.name());
    }
    rows
}

#[test]
fn rgb_to_lab_matches_colour_science_in_every_space() {
    let mut worst: BTreeMap<&'static str, (f64, f64, [f64; 3])> = BTreeMap::new();
    for row in reference_rows() {
        let space = row.space();
        let c = space.converter();
        let rgb = EncodedRgb([row.r, row.g, row.b]);
        let xyz = c.linear_to_xyz(c.decode(rgb));
        let lab = c.to_lab(rgb);
        let de = ciede2000(lab, row.lab());
        let dxyz = (xyz.x - row.x).abs().max((xyz.y - row.y).abs()).max((xyz.z - row.z).abs());
        assert!(
            de <= REFERENCE_TOLERANCE,
            "{}: {rgb:?} → ours {lab:?}, colour-science {:?}: ΔE00 {de}",
            row.space,
            row.lab()
        );
        let w = worst.entry(space.name()).or_insert((0.0, 0.0, [0.0; 3]));
        if de > w.0 {
            *w = (de, w.1, rgb.0);
        }
        w.1 = w.1.max(dxyz);
    }
    for (name, (de, dxyz, at)) in worst {
        eprintln!("{name} → Lab D50 vs colour-science 0.4.7: max ΔE00 = {de:.2e} at {at:?}, max |ΔXYZ| = {dxyz:.2e}");
    }
}

#[test]
fn lab_from_xyz_matches_colour_science_including_near_black() {
    // colour.XYZ_to_Lab (CIE 15:2004 / ISO/CIE 11664-4 with ε = 216/24389, κ = 24389/27)
    // on the XYZ columns of the reference file; many rows lie in the linear segment.
    let epsilon = 216.0 / 24389.0;
    let (mut worst, mut linear_rows, mut worst_linear) = (0.0_f64, 0, 0.0_f64);
    for row in reference_rows() {
        let lab = Lab::from_xyz(Xyz::new(row.x, row.y, row.z));
        let want = row.lab();
        let d = (lab.l - want.l).abs().max((lab.a - want.a).abs()).max((lab.b - want.b).abs());
        assert!(d < 1e-8, "XYZ {:?}: ours {lab:?}, colour-science {want:?}", [row.x, row.y, row.z]);
        worst = worst.max(d);
        if row.x / D50.xyz.x <= epsilon || row.y <= epsilon || row.z / D50.xyz.z <= epsilon {
            linear_rows += 1;
            worst_linear = worst_linear.max(d);
        }
    }
    assert!(linear_rows >= 100, "only {linear_rows} rows exercise the linear segment");
    eprintln!(
        "XYZ → Lab vs colour-science 0.4.7: max |ΔLab| = {worst:.2e}; {linear_rows} rows in the linear segment, max there {worst_linear:.2e}"
    );
}

use crate::rng::SplitMix64;

#[test]
fn rgb_lab_rgb_round_trips_in_float_in_every_space() {
    let mut rng = SplitMix64(0x0726_0D71);
    for space in RgbSpace::ALL {
        let c = space.converter();
        let mut samples: Vec<[f64; 3]> = (0..5000).map(|_| [rng.next_f64(), rng.next_f64(), rng.next_f64()]).collect();
        // Cube corners, edges near black (both transfer segments) and the reference colours.
        for corner in 0..8 {
            samples.push([(corner & 1) as f64, ((corner >> 1) & 1) as f64, ((corner >> 2) & 1) as f64]);
        }
        for v in [1e-6, 1e-4, 0.001, 0.01, 0.03, 0.04045, 0.05] {
            samples.push([v, v, v]);
            samples.push([v, 0.0, 1.0]);
        }
        let mut worst = 0.0_f64;
        for rgb in samples {
            let back = c.from_lab(c.to_lab(EncodedRgb(rgb)));
            for (b, o) in back.0.iter().zip(rgb) {
                worst = worst.max((b - o).abs());
            }
        }
        eprintln!("{} RGB → Lab → RGB (float): max error = {worst:.2e}", space.name());
        assert!(worst <= ROUND_TRIP_TOLERANCE, "{}: round trip error {worst}", space.name());
    }
}

#[test]
fn code_values_survive_lab_round_trips_at_8_and_16_bits() {
    let mut rng = SplitMix64(0x00C0_DE16);
    for space in RgbSpace::ALL {
        let c = space.converter();
        for bits in [8, 16] {
            let max = ((1u32 << bits) - 1) as f64;
            for _ in 0..2000 {
                let code = [0; 3].map(|_: u16| (rng.next_f64() * (max + 1.0)).floor().min(max) as u16);
                let lab = c.to_lab(EncodedRgb(code.map(|v| from_code(v, bits))));
                let back = c.from_lab(lab).0.map(|v| to_code(v, bits));
                assert_eq!(back, code, "{} {bits}-bit via {lab:?}", space.name());
            }
        }
    }
}

const IPT_CSV: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/testdata/ipt_reference.csv");

#[derive(Debug, serde::Deserialize)]
#[serde(rename_all = "UPPERCASE")]
struct IptRow {
    l: f64,
    #[serde(rename = "a")]
    a_star: f64,
    #[serde(rename = "b")]
    b_star: f64,
    i: f64,
    p: f64,
    t: f64,
}

/// CIELAB (D50) → IPT (Ebner & Fairchild 1998, through Bradford to D65)
/// against colour-science 0.4.7 (testdata/ipt_reference.csv, made by
/// scripts/reference/make_ipt.py): within 2e-5 on each coordinate (IPT runs
/// 0..1; measured up to 5.5e-6, on an imaginary blue far outside every RGB
/// space, from the Bradford matrix and the PCS white taken through xy on
/// the reference side), and the way back.
#[test]
fn lab_to_ipt_matches_colour_science() {
    use platesmith::colour::Ipt;
    let mut reader = csv::Reader::from_path(IPT_CSV).expect("testdata/ipt_reference.csv is readable");
    let rows: Vec<IptRow> = reader.deserialize().collect::<Result<_, _>>().expect("the CSV parses");
    assert!(rows.len() >= 150, "only {} reference colours", rows.len());
    let mut worst = 0.0f64;
    for row in &rows {
        let lab = Lab::new(row.l, row.a_star, row.b_star);
        let ipt = Ipt::from_lab(lab);
        let err = (ipt.i - row.i).abs().max((ipt.p - row.p).abs()).max((ipt.t - row.t).abs());
        worst = worst.max(err);
        assert!(err < 2e-5, "{lab:?}: ours {ipt:?}, colour-science {} {} {}", row.i, row.p, row.t);
        let back = Ipt::new(row.i, row.p, row.t).to_lab();
        assert!(ciede2000(back, lab) < 1e-4, "{lab:?} back as {back:?}");
    }
    eprintln!(
        "IPT against colour-science: largest coordinate difference {worst:.2e} over {} colours",
        rows.len()
    );
}
