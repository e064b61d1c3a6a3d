//! `platesmith compare MEASUREMENTS [--condition C] [--max-mean DE] [--max-p95 DE] [--max DE] [--json]`:
//! how far a condition's model is from measured patches, patch by patch. A
//! print shop measures a chart off the press and checks that the press still
//! prints what its reference condition says; exit 1 when a tolerance is
//! exceeded.

use crate::cgats;
use crate::colour::Lab;
use crate::error::{Error, Result};
use crate::press::fit::{Residuals, patches_from_cgats, summarize};
use crate::press::{builtin, load_condition};
use clap::Args;
use serde::Serialize;
use std::fmt::Write as _;
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

#[derive(Debug, Serialize)]
struct PatchRow {
    id: String,
    line: usize,
    ink_percent: [f64; 4],
    measured: Lab,
    predicted: Lab,
    delta_e2000: f64,
}

#[derive(Debug, Serialize)]
struct Failure {
    statistic: &'static str,
    value: f64,
    tolerance: f64,
}

#[derive(Debug, Serialize)]
struct Report {
    measurements: String,
    condition: String,
    condition_source: String,
    #[serde(flatten)]
    statistics: Residuals,
    failures: Vec<Failure>,
    passed: bool,
    patches: Vec<PatchRow>,
    note: &'static str,
}

const NOTE: &str = "The model's prediction against the measurements: the contract proof and the printer's own specifications decide.";

pub fn run(args: CompareArgs) -> Result<i32> {
    for (flag, v) in [("--max-mean", args.max_mean), ("--max-p95", args.max_p95), ("--max", args.max)] {
        if let Some(v) = v
            && !(v.is_finite() && v > 0.0)
        {
            return Err(Error::usage(format!("{flag} {v}: a tolerance is a ΔE2000 above 0")));
        }
    }
    let file = cgats::read(&args.measurements)?;
    let patches = patches_from_cgats(&file, &args.measurements)?;
    let condition = load_condition(&args.condition)?;
    let predicted: Vec<Lab> = patches.iter().map(|p| condition.model.lab(p.ink)).collect();
    let statistics = summarize(&patches, &predicted);
    let mut failures = Vec::new();
    for (statistic, value, tolerance) in [
        ("mean", statistics.mean, args.max_mean),
        ("95th percentile", statistics.p95, args.max_p95),
        ("max", statistics.max, args.max),
    ] {
        if let Some(t) = tolerance
            && value > t
        {
            failures.push(Failure {
                statistic,
                value,
                tolerance: t,
            });
        }
    }
    let rows: Vec<PatchRow> = patches
        .iter()
        .zip(&predicted)
        .map(|(p, q)| PatchRow {
            id: p.id.clone(),
            line: p.line,
            ink_percent: p.ink.to_percent(),
            measured: p.lab,
            predicted: *q,
            delta_e2000: crate::colour::ciede2000(p.lab, *q),
        })
        .collect();
    let report = Report {
        measurements: args.measurements.display().to_string(),
        condition: args.condition.clone(),
        condition_source: condition.source.clone(),
        passed: failures.is_empty(),
        statistics,
        failures,
        patches: rows,
        note: NOTE,
    };
    if args.json {
        let json = serde_json::to_string_pretty(&report).map_err(|e| Error::Internal(format!("JSON output: {e}")))?;
        crate::error::write_stdout(&(json + "\n"))?;
    } else {
        crate::error::write_stdout(&text(&args, &report))?;
    }
    Ok(if report.passed { 0 } else { 1 })
}

fn text(args: &CompareArgs, r: &Report) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{} measured patches from {}", r.statistics.count, r.measurements);
    let _ = write!(s, "against {}", r.condition);
    if !r.condition_source.is_empty() {
        let _ = write!(s, " (characterized from {})", r.condition_source);
    }
    let _ = writeln!(s, "\n\nΔE2000, model against measurement");
    s += &super::fit::residual_report(&r.statistics);
    if args.all {
        let _ = writeln!(s, "\nEvery patch");
        s += &super::fit::patch_table(
            r.patches
                .iter()
                .map(|p| (p.id.as_str(), p.line, p.ink_percent, p.measured, p.predicted, p.delta_e2000)),
        );
    }
    let _ = writeln!(s);
    if r.failures.is_empty() {
        let given = [args.max_mean, args.max_p95, args.max].iter().any(Option::is_some);
        let _ = writeln!(
            s,
            "{}",
            if given {
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
    let _ = writeln!(s, "{NOTE}");
    s
}
