//! The report of one colour's recipe (`platesmith recipe`): the build in
//! percent, the asked-for and printed CIELAB D50, ΔE2000, what limits it and
//! the settings; as JSON ([`super::export::PRINTED_JSON`]) or text ([`Text`]).

use super::export::Exporter;
use super::{SettingsReport, lab_rounded, round_to};
use crate::colour::RgbSpace;
use crate::error::Result;
use crate::press::PrintingCondition;
use crate::separation::{CompressFrom, Intent, Separation, SeparationSettings};
use crate::settings::Coverage;
use serde::Serialize;

/// The recipe as reported (percent and CIELAB D50).
#[derive(Debug, Serialize)]
pub struct RecipeReport {
    pub input: String,
    pub target_lab: [f64; 3],
    pub cmyk: [f64; 4],
    pub tac: f64,
    pub tac_limit: f64,
    pub printed_lab: [f64; 3],
    pub printed_lab_absolute: [f64; 3],
    pub delta_e: f64,
    pub in_gamut: bool,
    pub limited_by: Vec<&'static str>,
    pub settings: SettingsReport,
    pub note: &'static str,
}

impl RecipeReport {
    /// The report of `s`, the separation of the colour written as `input`
    /// on `condition` with `settings` from the source space `source`.
    pub fn new(
        input: &str,
        s: &Separation,
        condition: &PrintingCondition,
        settings: &SeparationSettings,
        source: RgbSpace,
    ) -> RecipeReport {
        RecipeReport {
            input: input.to_string(),
            target_lab: lab_rounded(s.target.lab()),
            cmyk: s.cmyk.to_percent().map(|v| round_to(v, 1)),
            tac: round_to(s.cmyk.total_percent(), 1),
            tac_limit: round_to(Coverage(settings.tac).percent().0, 1),
            printed_lab: lab_rounded(s.printed.lab()),
            printed_lab_absolute: lab_rounded(s.printed_absolute.lab()),
            delta_e: round_to(s.delta_e, 2),
            in_gamut: s.in_gamut,
            limited_by: s.limited_by.iter().map(|l| l.name()).collect(),
            // One colour has no picture: perceptual compresses from the whole source space.
            settings: SettingsReport {
                compress_from: (settings.intent == Intent::Perceptual).then_some(CompressFrom::Space.name()),
                ..SettingsReport::new(condition, settings, source)
            },
            note: super::PREDICTION_NOTE,
        }
    }
}

/// The recipe as text for a terminal.
#[derive(Debug, Clone, Copy)]
pub struct Text;

impl Exporter<RecipeReport> for Text {
    fn suffix(&self) -> &'static str {
        "recipe.txt"
    }

    fn export(&self, r: &RecipeReport) -> Result<Option<Vec<u8>>> {
        Ok(Some(text(r).into_bytes()))
    }
}

fn text(r: &RecipeReport) -> String {
    use std::fmt::Write;
    let mut o = String::new();
    let [c, m, y, k] = r.cmyk;
    let _ = writeln!(o, "colour      {}", r.input);
    let _ = writeln!(
        o,
        "build       C {c:.1}  M {m:.1}  Y {y:.1}  K {k:.1}   (total {:.1} % of {:.0} % allowed)",
        r.tac, r.tac_limit
    );
    let f = |l: [f64; 3]| format!("L* {:.2}  a* {:.2}  b* {:.2}", l[0], l[1], l[2]);
    let _ = writeln!(o, "asked for   {}", f(r.target_lab));
    let _ = writeln!(o, "prints as   {}   (ΔE2000 {:.2})", f(r.printed_lab), r.delta_e);
    let _ = writeln!(o, "on paper    {}   (absolute, as measured)", f(r.printed_lab_absolute));
    if r.in_gamut {
        let _ = writeln!(o, "gamut       printable under the limits");
    } else {
        let _ = writeln!(o, "gamut       outside; limited by {}", r.limited_by.join(", "));
    }
    let _ = writeln!(
        o,
        "settings    {} · {} · TAC {:.0} % · GCR {:.0} % · black start {:.0} % · black max {:.0} %",
        r.settings.condition,
        r.settings.intent_phrase(),
        r.settings.tac,
        r.settings.gcr,
        r.settings.black_start,
        r.settings.black_max
    );
    let _ = writeln!(o, "{}", r.note);
    o
}
