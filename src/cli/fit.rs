//! `platesmith fit MEASUREMENTS --out CONDITION.toml`.

use crate::colour::Lab;
use crate::error::{Error, Result};
use crate::press::characterize::{self, Characterization, MeasurementFit};
use crate::press::condition_file::{parse_condition, to_toml};
use crate::press::fit::Residuals;
use crate::press::{PressModel, builtin};
use crate::raster::OutputSet;
use crate::settings::{Origin, Percent, Setting};
use clap::Args;
use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};

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
    if let Some(t) = args.tac {
        base.tac = Percent(Setting::Tac.check(t, Origin::Flag("--tac"))?).coverage().0;
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
    let MeasurementFit { condition, fit, patches } =
        characterize::fit_measurements(&args.measurements, &base, name, args.description.clone(), &options)?;

    let header = vec![
        format!(
            "Printing condition fitted by platesmith to {} measured patches",
            fit.residuals.count
        ),
        format!(
            "ΔE2000 on the fitted patches: mean {:.2}, 95th percentile {:.2}, max {:.2}",
            fit.residuals.mean, fit.residuals.p95, fit.residuals.max
        ),
        match &fit.cross_validation {
            Some(cv) => format!(
                "ΔE2000 on held-out patches ({}-fold cross-validation): mean {:.2}, 95th percentile {:.2}, max {:.2}",
                cv.folds, cv.held_out.mean, cv.held_out.p95, cv.held_out.max
            ),
            None => "No cross-validation was run".to_string(),
        },
        format!(
            "Job defaults (ink limit, black generation, smallest dot, ink film) from {}",
            base.name
        ),
    ];
    let text = to_toml(&condition, &header)?;
    // The file must load back exactly as written: check before writing.
    parse_condition(&text, &args.out)?;
    match &args.plot {
        Some(plot) => {
            let predicted: Vec<Lab> = match &fit.cross_validation {
                Some(cv) => cv.predicted.clone(),
                None => {
                    let model = fit.model();
                    patches.iter().map(|p| model.lab(p.ink)).collect()
                }
            };
            let title = format!(
                "{}: {} ({})",
                args.measurements
                    .file_name()
                    .map(|s| s.to_string_lossy().into_owned())
                    .unwrap_or_default(),
                if fit.cross_validation.is_some() {
                    "held-out patches"
                } else {
                    "fitted patches"
                },
                condition.name
            );
            let png = crate::report::residual_plot::render(&patches, &predicted, &title)?;
            write_outputs(&args.out, &text, Some((plot, png)), args.force)?;
        }
        None => write_outputs(&args.out, &text, None, args.force)?,
    }

    if args.json {
        #[derive(serde::Serialize)]
        struct Report<'a> {
            measurements: String,
            out: String,
            source: &'a str,
            #[serde(flatten)]
            fit: &'a Characterization,
        }
        let report = Report {
            measurements: args.measurements.display().to_string(),
            out: args.out.display().to_string(),
            source: &condition.source,
            fit: &fit,
        };
        let json = serde_json::to_string_pretty(&report).map_err(|e| Error::Internal(format!("JSON output: {e}")))?;
        crate::error::write_stdout(&(json + "\n"))?;
    } else {
        crate::error::write_stdout(&text_report(&args, &fit))?;
    }
    Ok(0)
}

/// Writes the condition file and the plot together through an [`OutputSet`]
/// in the condition file's folder: both or neither.
fn write_outputs(out: &Path, text: &str, plot: Option<(&PathBuf, Vec<u8>)>, force: bool) -> Result<()> {
    let dir = match out.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let file_name = |p: &Path| p.file_name().map(|s| s.to_string_lossy().into_owned()).unwrap_or_default();
    match plot {
        Some((plot, png)) if plot.parent().map(|p| p.as_os_str().is_empty() || p == dir).unwrap_or(true) => {
            let mut set = OutputSet::new(&dir, force)?;
            set.stage(&file_name(out), |w| w.write_all(text.as_bytes()))?;
            set.stage(&file_name(plot), |w| w.write_all(&png))?;
            set.commit()?;
        }
        Some((plot, png)) => {
            let mut set = OutputSet::new(&dir, force)?;
            set.stage(&file_name(out), |w| w.write_all(text.as_bytes()))?;
            let plot_dir = plot.parent().map(Path::to_path_buf).unwrap_or_else(|| PathBuf::from("."));
            let mut plots = OutputSet::new(&plot_dir, force)?;
            plots.stage(&file_name(plot), |w| w.write_all(&png))?;
            plots.commit()?;
            set.commit()?;
        }
        None => {
            let mut set = OutputSet::new(&dir, force)?;
            set.stage(&file_name(out), |w| w.write_all(text.as_bytes()))?;
            set.commit()?;
        }
    }
    Ok(())
}

fn text_report(args: &FitArgs, fit: &Characterization) -> String {
    let p = &fit.params;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "Fitted {} patches from {} ({} iterations of the physical model)",
        fit.residuals.count,
        args.measurements.display(),
        fit.iterations
    );
    let t = p.tvi50.map(|v| v * 100.0);
    let _ = writeln!(
        s,
        "  n-factor {:.3}   TVI at 50 % C {:.1} M {:.1} Y {:.1} K {:.1} %",
        p.n, t[0], t[1], t[2], t[3]
    );
    if fit.correction.is_some() {
        let _ = writeln!(
            s,
            "  lattice correction: smoothness {} (chosen by the cross-validation when run), largest offset {:.2}, {} nodes lowered to keep L* from rising with ink",
            fit.lambda, fit.largest_offset, fit.monotonic_adjusted_nodes
        );
    }
    let _ = writeln!(s, "\nΔE2000 on the fitted patches");
    let _ = writeln!(s, "  physical model alone  {}", stats_line(&fit.physical));
    if fit.correction.is_some() {
        let _ = writeln!(s, "  with the correction   {}", stats_line(&fit.residuals));
    }
    match &fit.cross_validation {
        Some(cv) => {
            let _ = writeln!(
                s,
                "\nΔE2000 on patches the fit did not see ({}-fold cross-validation; the physical model alone: mean {:.2})",
                cv.folds, cv.physical_mean
            );
            s += &residual_report(&cv.held_out);
        }
        None => {
            let _ = writeln!(s, "\nNo cross-validation (--folds 0): the figures below are on the fitted patches");
            s += &residual_report(&fit.residuals);
        }
    }
    let _ = writeln!(s, "\nWrote {}", args.out.display());
    if let Some(plot) = &args.plot {
        let _ = writeln!(s, "Wrote {}", plot.display());
    }
    s
}

/// "mean 0.12   95th percentile 0.30   max 1.80 (1617 patches)".
pub(crate) fn stats_line(r: &Residuals) -> String {
    format!(
        "mean {:.2}   95th percentile {:.2}   max {:.2}   ({} patches)",
        r.mean, r.p95, r.max, r.count
    )
}

/// Overall and per-region statistics, then the worst patches.
pub(crate) fn residual_report(r: &Residuals) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "  {:<24} {}", "all patches", stats_line(r));
    for g in &r.regions {
        if g.count > 0 {
            let _ = writeln!(
                s,
                "  {:<24} mean {:.2}   95th percentile {:.2}   max {:.2}   ({} patches)",
                g.region.name(),
                g.mean,
                g.p95,
                g.max,
                g.count
            );
        }
    }
    let _ = writeln!(s, "\nWorst patches");
    s += &patch_table(
        r.worst
            .iter()
            .map(|w| (w.id.as_str(), w.line, w.ink_percent, w.measured, w.predicted, w.delta_e2000)),
    );
    s
}

/// A table of patches: id, line, CMYK, measured, modelled, ΔE2000.
pub(crate) fn patch_table<'a>(rows: impl Iterator<Item = (&'a str, usize, [f64; 4], Lab, Lab, f64)>) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "  {:<10} {:>5}  {:<23} {:<22} {:<22} ΔE00",
        "patch", "line", "C M Y K %", "measured L* a* b*", "model L* a* b*"
    );
    for (id, line, i, m, p, de) in rows {
        let _ = writeln!(
            s,
            "  {:<10} {:>5}  {:>5.1} {:>5.1} {:>5.1} {:>5.1}  {:>6.2} {:>6.2} {:>7.2}  {:>6.2} {:>6.2} {:>7.2}  {:.2}",
            id, line, i[0], i[1], i[2], i[3], m.l, m.a, m.b, p.l, p.a, p.b, de
        );
    }
    s
}
