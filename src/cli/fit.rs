//! `platesmith fit MEASUREMENTS --out CONDITION.toml`.

use crate::condition_fit::{FitJob, Fitted, fit_and_write};
use crate::error::{Error, Result};
use crate::press::builtin;
use crate::press::characterize::{self, Characterization};
use crate::report::export::{Exporter, PRINTED_JSON, print};
use crate::report::fit::{FitReport, Text};
use crate::settings::{Origin, Percent, Setting};
use clap::Args;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct FitArgs {
    /// Measured patches in CGATS.17 text: CMYK_C/M/Y/K with LAB_L/A/B or XYZ_X/Y/Z.
    pub measurements: PathBuf,
    /// The condition file to write (.toml).
    #[arg(long)]
    pub out: PathBuf,
    /// Replace --out (and --plot) when they exist.
    #[arg(long)]
    pub force: bool,
    /// Built-in condition that gives the starting point and the job defaults
    /// (ink limit, black generation, smallest dot, ink film).
    #[arg(long, default_value = builtin::DEFAULT)]
    pub base: String,
    /// Name written into the condition file (default: the stem of --out).
    #[arg(long)]
    pub name: Option<String>,
    /// Description written into the condition file (default: "fitted to FILE").
    #[arg(long)]
    pub description: Option<String>,
    /// Also write a PNG of measured against modelled colour (held-out
    /// predictions when cross-validating): residual arrows on the a*b* plane
    /// and along L*.
    #[arg(long, value_name = "PNG")]
    pub plot: Option<PathBuf>,
    /// Total ink limit to write, percent (default: the base condition's).
    #[arg(long, value_name = "PERCENT")]
    pub tac: Option<f64>,
    /// Under colour addition in the deepest shadows to write, percent
    /// (default: the base condition's): black there carries that much less
    /// of what it could replace, which keeps shadow gradations smooth where
    /// the press responds little to any ink but black.
    #[arg(long, value_name = "PERCENT")]
    pub uca: Option<f64>,
    /// Folds of the cross-validation that reports accuracy on patches the fit
    /// did not see (0: none; the smoothness of the correction is then fixed).
    #[arg(long, default_value_t = characterize::DEFAULT_FOLDS, value_name = "N")]
    pub folds: usize,
    /// Fit the physical model only, without the lattice correction.
    #[arg(long)]
    pub physical_only: bool,
    /// Print the fit report as JSON.
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: FitArgs) -> Result<i32> {
    let ext_ok = args.out.extension().is_some_and(|e| e.eq_ignore_ascii_case("toml"));
    if !ext_ok {
        return Err(Error::usage(format!(
            "--out {}: a condition file must end in .toml",
            args.out.display()
        )));
    }
    if let Some(plot) = &args.plot
        && !plot.extension().is_some_and(|e| e.eq_ignore_ascii_case("png"))
    {
        return Err(Error::usage(format!("--plot {}: the plot is a PNG file (.png)", plot.display())));
    }
    for out in std::iter::once(&args.out).chain(args.plot.as_ref()) {
        if !args.force && out.exists() {
            return Err(Error::output(
                out,
                "the file exists; choose another name or add --force to replace it",
            ));
        }
    }
    let mut base = builtin::by_name(&args.base).ok_or_else(|| {
        Error::usage(format!(
            "--base {}: not a built-in condition ({})",
            args.base,
            builtin::names().join(", ")
        ))
    })?;
    let mut given = Vec::new();
    if let Some(t) = args.tac {
        base.tac = Percent(Setting::Tac.check(t, Origin::Flag("--tac"))?).coverage().0;
        given.push(format!("ink limit {t} %"));
    }
    if let Some(u) = args.uca {
        base.black.uca = Percent(Setting::Uca.check(u, Origin::Flag("--uca"))?).coverage().0;
        given.push(format!("UCA {u} %"));
    }
    let options = characterize::Options {
        correction: !args.physical_only,
        folds: args.folds,
        ..characterize::Options::default()
    };
    let name = args
        .name
        .clone()
        .or_else(|| args.out.file_stem().map(|s| s.to_string_lossy().into_owned()));
    let Fitted { condition, fit } = fit_and_write(&FitJob {
        measurements: &args.measurements,
        out: &args.out,
        plot: args.plot.as_deref(),
        force: args.force,
        base: &base,
        given: &given,
        name,
        description: args.description.clone(),
        options,
    })?;
    if args.json {
        let report = FitReport {
            measurements: args.measurements.display().to_string(),
            out: args.out.display().to_string(),
            source: &condition.source,
            fit: &fit,
        };
        print(&report, &PRINTED_JSON)?;
    } else {
        let text = Text {
            measurements: &args.measurements,
            out: &args.out,
            plot: args.plot.as_deref(),
        };
        print(&fit, &text as &dyn Exporter<Characterization>)?;
    }
    Ok(0)
}
