//! The report of a condition held against measured patches (`platesmith
//! compare`): statistics, tolerances exceeded, every patch; as JSON
//! ([`super::export::PRINTED_JSON`]) or text ([`Text`]).

use super::export::Exporter;
use super::fit::{patch_table, residual_report};
use crate::error::Result;
use crate::press::fit::{Residuals, WorstPatch};
use serde::Serialize;
use std::fmt::Write as _;

/// A statistic over its tolerance.
#[derive(Debug, Serialize)]
pub struct Failure {
    pub statistic: &'static str,
    pub value: f64,
    pub tolerance: f64,
}

/// The comparison of a condition's model with measurements.
#[derive(Debug, Serialize)]
pub struct ComparisonReport {
    pub measurements: String,
    pub condition: String,
    pub condition_source: String,
    #[serde(flatten)]
    pub statistics: Residuals,
    pub failures: Vec<Failure>,
    pub passed: bool,
    /// Every patch beside the model's prediction, in the file's order.
    pub patches: Vec<WorstPatch>,
    pub note: &'static str,
}

/// Said under every comparison.
pub const NOTE: &str = "The model's prediction against the measurements: the contract proof and the printer's own specifications decide.";

/// The comparison as text for a terminal: the statistics and the worst
/// patches, every patch when `all`; `tolerances_given` words the verdict when
/// nothing failed.
#[derive(Debug, Clone, Copy)]
pub struct Text {
    pub all: bool,
    pub tolerances_given: bool,
}

impl Exporter<ComparisonReport> for Text {
    fn suffix(&self) -> &'static str {
        "compare.txt"
    }

    fn export(&self, r: &ComparisonReport) -> Result<Option<Vec<u8>>> {
        Ok(Some(self.text(r).into_bytes()))
    }
}

impl Text {
    fn text(&self, r: &ComparisonReport) -> String {
        let mut s = String::new();
        let _ = writeln!(s, "{} measured patches from {}", r.statistics.count, r.measurements);
        let _ = write!(s, "against {}", r.condition);
        if !r.condition_source.is_empty() {
            let _ = write!(s, " (characterized from {})", r.condition_source);
        }
        let _ = writeln!(s, "\n\nΔE2000, model against measurement");
        s += &residual_report(&r.statistics);
        if self.all {
            let _ = writeln!(s, "\nEvery patch");
            s += &patch_table(&r.patches);
        }
        let _ = writeln!(s);
        if r.failures.is_empty() {
            let _ = writeln!(
                s,
                "{}",
                if self.tolerances_given {
                    "Within every tolerance given."
                } else {
                    "No tolerance given."
                }
            );
        } else {
            for f in &r.failures {
                let _ = writeln!(s, "OVER TOLERANCE: {} ΔE2000 {:.2} > {:.2}", f.statistic, f.value, f.tolerance);
            }
        }
        let _ = writeln!(s, "{}", r.note);
        s
    }
}
