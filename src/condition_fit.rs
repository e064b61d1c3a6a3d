//! A printing condition fitted to measured patches, written as a condition
//! file: the fit (`press::characterize`), the file's header and text (checked
//! to load back exactly as written), the optional residual plot
//! (`report::residual_plot`), both files written together (both or neither);
//! and a measurement file loaded as a condition, its fit kept in the cache
//! folder ([`load_condition`]).

use crate::colour::Lab;
use crate::error::{Error, Result};
use crate::press::characterize::{self, Characterization, MeasurementFit};
use crate::press::condition_file::{parse_condition, to_toml};
use crate::press::{PressModel, PrintingCondition};
use crate::raster::OutputSet;
use std::io::Write as _;
use std::path::{Path, PathBuf};

/// What to fit and where to write it.
#[derive(Debug)]
pub struct FitJob<'a> {
    pub measurements: &'a Path,
    /// The condition file to write (.toml).
    pub out: &'a Path,
    /// The residual plot to write (.png), if any.
    pub plot: Option<&'a Path>,
    /// Replace `out` and `plot` when they exist.
    pub force: bool,
    /// The starting point and the job defaults.
    pub base: &'a PrintingCondition,
    /// The job defaults given on the command line in place of the base's,
    /// as the header names them (e.g. "ink limit 300 %").
    pub given: &'a [String],
    pub name: Option<String>,
    pub description: Option<String>,
    pub options: characterize::Options,
}

/// The fitted condition and its figures.
#[derive(Debug)]
pub struct Fitted {
    pub condition: PrintingCondition,
    pub fit: Characterization,
}

/// Fits, writes the condition file (and the plot) and returns the fit.
pub fn fit_and_write(job: &FitJob) -> Result<Fitted> {
    let MeasurementFit { condition, fit, patches } =
        characterize::fit_measurements(job.measurements, job.base, job.name.clone(), job.description.clone(), &job.options)?;
    let text = to_toml(&condition, &header(&fit, job.base, job.given))?;
    // The file must load back exactly as written: check before writing.
    parse_condition(&text, job.out)?;
    match job.plot {
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
                job.measurements
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
            write_outputs(job.out, &text, Some((plot, png)), job.force)?;
        }
        None => write_outputs(job.out, &text, None, job.force)?,
    }
    Ok(Fitted { condition, fit })
}

/// The condition file's header: what it was fitted to, how well, and where its job defaults come from.
fn header(fit: &Characterization, base: &PrintingCondition, given: &[String]) -> Vec<String> {
    vec![
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
            "Job defaults (ink limit, black generation, smallest dot, ink film) from {}{}",
            base.name,
            match given {
                [] => String::new(),
                _ => format!(", with {} given to fit", given.join(", ")),
            }
        ),
    ]
}

/// Writes the condition file and the plot together through an [`OutputSet`]
/// in the condition file's folder: both or neither.
fn write_outputs(out: &Path, text: &str, plot: Option<(&Path, Vec<u8>)>, force: bool) -> Result<()> {
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

/// A printing condition as [`crate::press::load_condition`] gives it, with
/// a measurement file's fit kept in the cache folder when `use_cache`
/// (keyed by the file's bytes, its path as given, and what it is fitted
/// with); a note about the folder goes to standard error.
pub fn load_condition(spec: &str, use_cache: bool) -> Result<PrintingCondition> {
    use crate::press::condition_file::{fit_on_load_inputs, fitted_on_load, is_measurement_file};
    if !is_measurement_file(spec) {
        return crate::press::load_condition(spec);
    }
    let path = Path::new(spec);
    let bytes = std::fs::read(path).map_err(|e| Error::input(path, format!("cannot read: {e}")))?;
    let (defaults, options) = fit_on_load_inputs()?;
    let defaults_text = to_toml(&defaults, &[])?;
    let options_text = format!("{options:?}");
    let key_parts: [(&str, &[u8]); 4] = [
        ("measurements", &bytes),
        ("path as given", spec.as_bytes()),
        ("defaults", defaults_text.as_bytes()),
        ("options", options_text.as_bytes()),
    ];
    let (text, notes) = crate::cache::fitted_condition(use_cache, &key_parts, || fitted_on_load(path))?;
    for note in notes {
        eprintln!("platesmith: {spec}: {note}");
    }
    parse_condition(&text, path)
}
