//! `platesmith compare MEASUREMENTS [--condition C] [--max-mean DE] [--max-p95 DE] [--max DE] [--json]`:
//! how far a condition's model is from measured patches, patch by patch. A
//! print shop measures a chart off the press and checks that the press still
//! prints what its reference condition says; exit 1 when a tolerance is
//! exceeded.

use crate::compare::{Tolerances, compare};
use crate::error::{Error, Result};
use crate::press::builtin;
use crate::report::comparison::{ComparisonReport, Text};
use crate::report::export::{Exporter, PRINTED_JSON, print};
use clap::Args;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct CompareArgs {
    /// Measured patches in CGATS.17 text: CMYK_C/M/Y/K with LAB_L/A/B or XYZ_X/Y/Z.
    pub measurements: PathBuf,
    /// The condition to hold against them: a built-in name, a condition file
    /// (.toml), a CMYK .icc profile or another measurement file (fitted on load).
    #[arg(long, value_name = "NAME|FILE", default_value = builtin::DEFAULT)]
    pub condition: String,
    /// Fail (exit 1) when the mean ΔE2000 is above this.
    #[arg(long, value_name = "DE")]
    pub max_mean: Option<f64>,
    /// Fail (exit 1) when the 95th percentile ΔE2000 is above this.
    #[arg(long, value_name = "DE")]
    pub max_p95: Option<f64>,
    /// Fail (exit 1) when any patch's ΔE2000 is above this.
    #[arg(long, value_name = "DE")]
    pub max: Option<f64>,
    /// List every patch, not only the worst.
    #[arg(long)]
    pub all: bool,
    /// Print JSON (every patch included) instead of text.
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: CompareArgs) -> Result<i32> {
    for (flag, v) in [("--max-mean", args.max_mean), ("--max-p95", args.max_p95), ("--max", args.max)] {
        if let Some(v) = v
            && !(v.is_finite() && v > 0.0)
        {
            return Err(Error::usage(format!("{flag} {v}: a tolerance is a ΔE2000 above 0")));
        }
    }
    let tolerances = Tolerances {
        mean: args.max_mean,
        p95: args.max_p95,
        max: args.max,
    };
    let report = compare(&args.measurements, &args.condition, tolerances)?;
    let text = Text {
        all: args.all,
        tolerances_given: tolerances.any(),
    };
    let exporter: &dyn Exporter<ComparisonReport> = if args.json { &PRINTED_JSON } else { &text };
    print(&report, exporter)?;
    Ok(if report.passed { 0 } else { 1 })
}
