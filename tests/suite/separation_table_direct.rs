//! The separation table against the direct path under random valid settings:
//! every pixel interpolated from the table prints (by the press model) within
//! a small CIEDE2000 of the colour the exact per-colour separation prints.
//! tests/suite/separation_engine.rs measures the same at the condition's defaults;
//! this extends it to the settings space (TAC, GCR, black start, maximum
//! black, shape, UCA, intent, BPC).
//!
//! Outside reference: CIEDE2000 (CIE 142-2001; the implementation is checked
//! against Sharma, Wu & Dalal 2005 in tests/suite/colour_difference.rs). Tolerances
//! are this project's requirement for a 17-node table: mean ΔE2000 ≤ 1 and the
//! 95th percentile ≤ 3 (tetrahedral interpolation between nodes 1/16 apart;
//! common practice puts table errors below 1 ΔE on average).

use platesmith::colour::{EncodedRgb, RgbSpace, ciede2000};
use platesmith::press::builtin::coated_offset;
use platesmith::separation::IntentLab;
use platesmith::separation::{RgbGamut, SeparationSettings, SeparationTable, Separator};
use proptest::prelude::*;

use crate::separation_properties::settings_within;

/// Random settings (TAC 220–400 %, maximum black 60–100 %, UCA 0–30 %; the
/// rest as in `separation_properties`) on a 17-node table.
fn settings() -> impl Strategy<Value = SeparationSettings> {
    settings_within(2.2..=4.0, 0.6..=1.0, 0.0..=0.3).prop_map(|mut s| {
        s.table_grid = 17;
        s
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 12, max_shrink_iters: 8, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn table_matches_the_direct_path_under_random_settings(
        s in settings(),
        rgbs in prop::collection::vec([0.0..=1.0f64, 0.0..=1.0f64, 0.0..=1.0f64], 300),
    ) {
        let sep = Separator::new(coated_offset(), s.clone()).expect("settings in the valid ranges");
        let conv = RgbSpace::Srgb.converter();
        let gamut = RgbGamut(conv);
        let mapping = sep.source_mapping(&gamut);
        let table = SeparationTable::build(&sep, &mapping, &|rgb| IntentLab::new(conv.to_lab(rgb)));
        let mut errors: Vec<f64> = rgbs
            .iter()
            .map(|&rgb| {
                let direct = sep.separate(IntentLab::new(conv.to_lab(EncodedRgb(rgb))), &mapping).cmyk;
                let via_table = table.lookup(EncodedRgb(rgb));
                ciede2000(sep.printed_relative(direct).lab(), sep.printed_relative(via_table).lab())
            })
            .collect();
        prop_assert!(errors.iter().all(|e| e.is_finite()), "NaN in ΔE2000");
        errors.sort_by(f64::total_cmp);
        let mean = errors.iter().sum::<f64>() / errors.len() as f64;
        let p95 = errors[errors.len() * 95 / 100];
        eprintln!("{:?} bpc {} tac {:.0} %: table vs direct mean ΔE2000 {mean:.3}, p95 {p95:.3}, max {:.3}", s.intent, s.bpc, s.tac * 100.0, errors[errors.len() - 1]);
        prop_assert!(mean <= 1.0 && p95 <= 3.0, "mean {mean}, p95 {p95} under {s:?}");
    }
}
