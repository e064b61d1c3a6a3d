//! A printing condition held against measured patches: the model's
//! prediction at each patch's build, ΔE2000, the statistics and the
//! tolerances exceeded. A print shop measures a chart off the press and
//! checks that the press still prints what its reference condition says.
//! Reported by `report::comparison`.

use crate::cgats;
use crate::colour::{Lab, ciede2000};
use crate::error::Result;
use crate::press::fit::{WorstPatch, patches_from_cgats, summarize};
use crate::report::comparison::{ComparisonReport, Failure, NOTE};
use std::path::Path;

/// The ΔE2000 tolerances; `None`: not checked.
#[derive(Debug, Clone, Copy, Default)]
pub struct Tolerances {
    pub mean: Option<f64>,
    pub p95: Option<f64>,
    pub max: Option<f64>,
}

impl Tolerances {
    /// Whether any tolerance is given.
    pub fn any(&self) -> bool {
        [self.mean, self.p95, self.max].iter().any(Option::is_some)
    }
}

/// Compares the condition `condition` (a built-in name or a file) with the
/// CGATS measurements in `measurements`.
pub fn compare(measurements: &Path, condition: &str, tolerances: Tolerances) -> Result<ComparisonReport> {
    let file = cgats::read(measurements)?;
    let patches = patches_from_cgats(&file, measurements)?;
    let loaded = crate::condition_fit::load_condition(condition, true)?;
    let predicted: Vec<Lab> = patches.iter().map(|p| loaded.model.lab(p.ink)).collect();
    let statistics = summarize(&patches, &predicted);
    let mut failures = Vec::new();
    for (statistic, value, tolerance) in [
        ("mean", statistics.mean, tolerances.mean),
        ("95th percentile", statistics.p95, tolerances.p95),
        ("max", statistics.max, tolerances.max),
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
    let rows: Vec<WorstPatch> = patches
        .iter()
        .zip(&predicted)
        .map(|(p, q)| WorstPatch {
            id: p.id.clone(),
            line: p.line,
            ink_percent: p.ink.to_percent(),
            measured: p.lab,
            predicted: *q,
            delta_e2000: ciede2000(p.lab, *q),
        })
        .collect();
    Ok(ComparisonReport {
        measurements: measurements.display().to_string(),
        condition: condition.to_string(),
        condition_source: loaded.source.clone(),
        passed: failures.is_empty(),
        statistics,
        failures,
        patches: rows,
        note: NOTE,
    })
}
