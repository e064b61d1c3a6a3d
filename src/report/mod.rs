//! Reports for people and scripts, every format behind one interface
//! ([`export::Exporter`]): JSON ([`export::Json`]: the job summary, the
//! inspection report), the text summary ([`text`]), the CSV region table
//! ([`region_table`]), the PNG maps ([`maps`], drawn in [`font`]) and the HTML
//! page ([`html`]); the inspection's report folder gathers them ([`folder`]).
//! Also the settings echo and the prediction note every report carries.

pub mod comparison;
pub mod condition;
pub mod export;
pub mod fit;
pub mod folder;
pub mod font;
pub mod html;
pub mod maps;
pub mod recipe;
pub mod region_table;
pub mod residual_plot;
pub mod text;

use crate::colour::RgbSpace;
use crate::press::PrintingCondition;
use crate::separation::SeparationSettings;
use serde::Serialize;

/// Said in every report: the figures are a model's prediction.
pub const PREDICTION_NOTE: &str = "These figures are a model's prediction: a contract proof and the printer's own \
specifications decide, and local standards and the print vendor's requirements take precedence.";

/// Rounds to `digits` decimals for reports.
pub fn round_to(v: f64, digits: i32) -> f64 {
    let f = 10f64.powi(digits);
    (v * f).round() / f
}

/// CIELAB rounded to two decimals, as reports give it.
pub fn lab_rounded(l: crate::colour::Lab) -> [f64; 3] {
    [round_to(l.l, 2), round_to(l.a, 2), round_to(l.b, 2)]
}

/// The settings a result was made with, in percent, echoed in every report.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct SettingsReport {
    pub condition: String,
    pub intent: &'static str,
    pub bpc: bool,
    /// What the perceptual intent compressed from: "picture" (the colours of
    /// the picture), "space" (the whole source space); absent for the
    /// colorimetric intents.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub compress_from: Option<&'static str>,
    pub tac: f64,
    pub gcr: f64,
    pub black_start: f64,
    pub black_max: f64,
    pub black_shape: f64,
    pub uca: f64,
    pub keep_pure_black: bool,
    pub table_grid: usize,
    pub source_space: &'static str,
}

impl SettingsReport {
    /// The intent as reports name it: "perceptual intent, compressed from
    /// the picture" (or "from the whole source space"), "relative intent +
    /// BPC", "absolute intent".
    pub fn intent_phrase(&self) -> String {
        let from = match self.compress_from {
            Some("picture") => ", compressed from the picture's colours",
            Some(_) => ", compressed from the whole source space",
            None => "",
        };
        format!("{} intent{}{from}", self.intent, if self.bpc { " + BPC" } else { "" })
    }

    pub fn new(condition: &PrintingCondition, s: &SeparationSettings, source: RgbSpace) -> SettingsReport {
        let e = crate::settings::InkEcho::new(s.tac, &s.black);
        SettingsReport {
            condition: condition.name.clone(),
            intent: s.intent.name(),
            bpc: s.bpc,
            compress_from: (s.intent == crate::separation::Intent::Perceptual).then(|| s.compress_from.name()),
            tac: round_to(e.tac.0, 2),
            gcr: round_to(e.gcr.0, 2),
            black_start: round_to(e.black_start.0, 2),
            black_max: round_to(e.black_max.0, 2),
            black_shape: e.black_shape,
            uca: round_to(e.uca.0, 2),
            keep_pure_black: s.keep_pure_black,
            table_grid: s.table_grid,
            source_space: source.name(),
        }
    }
}
