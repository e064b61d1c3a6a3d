//! `platesmith fit MEASUREMENTS --out CONDITION.toml`.

use crate::cgats;
use crate::error::{Error, Result};
use crate::press::condition_file::{parse_condition, to_toml, write_file_atomically};
use crate::press::fit::{FitResult, fit_model, patches_from_cgats, starting_point};
use crate::press::{PrintingCondition, builtin};
use clap::Args;
use std::fmt::Write as _;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct FitArgs {
    /// Measured patches in CGATS.17 text: CMYK_C/M/Y/K with LAB_L/A/B or XYZ_X/Y/Z.
    pub measurements: PathBuf,
    /// The condition file to write (.toml).
    #[arg(long)]
    pub out: PathBuf,
    /// Replace --out when it exists.
    #[arg(long)]
    pub force: bool,
    /// Built-in condition that gives the starting point and the job defaults
    /// (ink limit, black generation, smallest dot, ink film).
    #[arg(long, default_value = builtin::DEFAULT)]
    pub base: String,
    /// Name written into the condition file (default: the stem of --out).
    #[arg(long)]
    pub name: Option<String>,
    /// Total ink limit to write, percent (default: the base condition's).
    #[arg(long, value_name = "PERCENT")]
    pub tac: Option<f64>,
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
    if !args.force && args.out.exists() {
        return Err(Error::output(
            &args.out,
            "the file exists; choose another name or add --force to replace it",
        ));
    }
    let base = builtin::by_name(&args.base).ok_or_else(|| {
        Error::usage(format!(
            "--base {}: not a built-in condition ({})",
            args.base,
            builtin::names().join(", ")
        ))
    })?;
    let base_params = base
        .params
        .ok_or_else(|| Error::Internal("built-in condition without parameters".into()))?;
    let tac = match args.tac {
        Some(t) if (100.0..=400.0).contains(&t) => t / 100.0,
        Some(t) => return Err(Error::usage(format!("--tac {t}: allowed 100–400 %"))),
        None => base.tac,
    };

    let file = cgats::read(&args.measurements)?;
    let patches = patches_from_cgats(&file, &args.measurements)?;
    check_solids(&patches, &args.measurements)?;
    let start = starting_point(&patches, &base_params);
    let fit = fit_model(&patches, &start, 200);

    let name = args.name.clone().unwrap_or_else(|| {
        args.out
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "fitted".into())
    });
    let condition = PrintingCondition::from_params(
        name,
        format!("fitted to {}", args.measurements.display()),
        fit.params,
        tac,
        base.black,
        base.min_dot,
    )
    .with_ink_film(base.ink_film);
    let header = vec![
        format!(
            "Printing condition fitted by platesmith to {} measured patches",
            fit.residuals.count
        ),
        format!(
            "ΔE2000 residuals: mean {:.2}, 95th percentile {:.2}, max {:.2}",
            fit.residuals.mean, fit.residuals.p95, fit.residuals.max
        ),
        format!(
            "Job defaults (ink limit, black generation, smallest dot, ink film) from {}",
            base.name
        ),
    ];
    let text = to_toml(&condition, &header)?;
    // The file must load back exactly as written: check before writing.
    parse_condition(&text, &args.out)?;
    write_file_atomically(&args.out, &text, args.force)?;

    if args.json {
        #[derive(serde::Serialize)]
        struct Report<'a> {
            measurements: String,
            out: String,
            #[serde(flatten)]
            fit: &'a FitResult,
        }
        let report = Report {
            measurements: args.measurements.display().to_string(),
            out: args.out.display().to_string(),
            fit: &fit,
        };
        let json = serde_json::to_string_pretty(&report).map_err(|e| Error::Internal(format!("JSON output: {e}")))?;
        crate::error::write_stdout(&(json + "\n"))?;
    } else {
        crate::error::write_stdout(&text_report(&args, &fit))?;
    }
    Ok(0)
}

/// The solids of each ink fix the model's aims: a chart without them (a file
/// of paper patches, a single-ink ramp) would "fit" by keeping the base
/// condition's aims, so it is refused. Characterization charts carry every
/// solid (ISO 12642-2 layouts do; common practice).
fn check_solids(patches: &[crate::press::fit::Patch], path: &std::path::Path) -> Result<()> {
    for (i, name) in ["cyan", "magenta", "yellow", "black"].iter().enumerate() {
        if !patches.iter().any(|p| p.ink.to_array()[i] >= 0.95) {
            return Err(Error::input(
                path,
                format!("no patch with {name} at 95 % or more: a chart must measure each ink's solid to fit the model"),
            ));
        }
    }
    Ok(())
}

fn text_report(args: &FitArgs, fit: &FitResult) -> String {
    let r = &fit.residuals;
    let p = &fit.params;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "Fitted {} patches from {} ({} iterations)",
        r.count,
        args.measurements.display(),
        fit.iterations
    );
    let _ = writeln!(s, "  ΔE2000   mean {:.2}   95th percentile {:.2}   max {:.2}", r.mean, r.p95, r.max);
    let t = p.tvi50.map(|v| v * 100.0);
    let _ = writeln!(
        s,
        "  n-factor {:.3}   TVI at 50 % C {:.1} M {:.1} Y {:.1} K {:.1} %   black overprint surface {:.2} %",
        p.n,
        t[0],
        t[1],
        t[2],
        t[3],
        p.black_surface * 100.0
    );
    let _ = writeln!(s, "\nWorst patches");
    let _ = writeln!(
        s,
        "  {:<10} {:>5}  {:<23} {:<22} {:<22} ΔE00",
        "patch", "line", "C M Y K %", "measured L* a* b*", "model L* a* b*"
    );
    for w in &r.worst {
        let i = w.ink_percent;
        let _ = writeln!(
            s,
            "  {:<10} {:>5}  {:>5.1} {:>5.1} {:>5.1} {:>5.1}  {:>6.2} {:>6.2} {:>7.2}  {:>6.2} {:>6.2} {:>7.2}  {:.2}",
            w.id,
            w.line,
            i[0],
            i[1],
            i[2],
            i[3],
            w.measured.l,
            w.measured.a,
            w.measured.b,
            w.predicted.l,
            w.predicted.a,
            w.predicted.b,
            w.delta_e2000
        );
    }
    let _ = writeln!(s, "\nWrote {}", args.out.display());
    s
}
