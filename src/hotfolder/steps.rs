//! The per-file pipeline: a list of steps run in order on a claimed file,
//! each writing into the job's staging folder (renamed to `out/<stem>/` when
//! the pipeline is through).
//!
//! A step returns `Err` when the job cannot be done (the file cannot be read
//! or separated): the staging folder is dropped and the input goes to
//! `failed/`. It returns [`Verdict::Fail`] when the job was done but a check
//! failed: the outputs (with the check's report) are kept in `out/<stem>/` and
//! the input goes to `failed/` with the reasons in its `.error.txt`.

use crate::error::{Error, Result};
use crate::inspect::rules::parse_all;
use crate::inspect::{InspectOptions, Inspection, inspect_job};
use crate::job::{OutputPlace, Workshop};
use crate::report::folder::write_report_dir;
use crate::ticket::Ticket;
use std::path::Path;
use std::sync::Arc;
use std::time::Instant;

/// What a step found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Verdict {
    Pass,
    /// The job was done, but checks failed; one reason per failed rule, naming it.
    Fail(Vec<String>),
}

/// One claimed file on its way through the pipeline.
pub struct JobFile<'a> {
    /// The claimed file (in this instance's work folder).
    pub input: &'a Path,
    /// Its name as it arrived in `in/`.
    pub name: &'a str,
    /// The folder the outputs are written into; renamed to `out/<stem>/` when
    /// the pipeline is through. Reports list their files relative to it.
    pub staging: &'a Path,
    pub started: Instant,
    /// What reading the file noted (damaged data accepted, assumptions…),
    /// once the separate step has run.
    pub read_notes: Vec<String>,
    /// The inspection of exactly the CMYK that was written, made by the
    /// separate step in its pass over the bands when an inspect step follows.
    pub inspection: Option<Inspection>,
}

/// A step of the pipeline.
pub trait Step: Send + Sync {
    /// Its name in logs and error texts.
    fn name(&self) -> &'static str;
    fn run(&self, job: &mut JobFile) -> Result<Verdict>;
}

/// Separates the file and writes the composite, the plates and the summary
/// (as `separate --ticket` would, through one [`crate::raster::OutputSet`]),
/// streamed: a band of rows at a time is read, separated and written
/// ([`Workshop::stream_job`]), so memory is bounded whatever the picture's
/// size. With `inspect`, each band is also checked as it is written
/// ([`inspect_job`]): the picture is read once, and the inspection is left in
/// [`JobFile::inspection`] for the inspect step. The outputs are committed as
/// a set only after the last band; an error before leaves none.
pub struct SeparateStep {
    pub workshop: Arc<Workshop>,
    pub inspect: Option<InspectOptions>,
}

impl Step for SeparateStep {
    fn name(&self) -> &'static str {
        "separate"
    }

    fn run(&self, job: &mut JobFile) -> Result<Verdict> {
        let place = OutputPlace {
            dir: job.staging,
            listed_dir: Path::new(""),
            input_shown: Path::new(job.name),
        };
        let mut streamed = self.workshop.stream_job(job.input, place, job.started)?;
        job.read_notes = streamed.info().notes.clone();
        if let Some(options) = &self.inspect {
            let mut inspection = inspect_job(&self.workshop, job.input, &mut streamed, options, Instant::now())?;
            inspection.report.file = job.name.to_string();
            job.inspection = Some(inspection);
        } else {
            while streamed.next_band(streamed.band_rows())?.is_some() {}
        }
        streamed.finish()?;
        Ok(Verdict::Pass)
    }
}

/// The steps for a ticket: separate (inspecting as it goes), then the
/// inspect step that writes the report and judges it.
pub fn pipeline(workshop: Arc<Workshop>, ticket: &Ticket) -> Result<Vec<Box<dyn Step>>> {
    let options = inspect_options(ticket)?;
    let steps: Vec<Box<dyn Step>> = vec![
        Box::new(SeparateStep {
            workshop: workshop.clone(),
            inspect: Some(options),
        }),
        Box::new(InspectStep { workshop }),
    ];
    Ok(steps)
}

/// Writes the inspection report (JSON, CSV of regions, maps, HTML page)
/// beside the plates, through one [`crate::raster::OutputSet`] on the staging
/// folder. The ticket's `[checks] fail_if` rules judged it (with none, the
/// inspect default: no pixel over the ink limit); a failed rule gives
/// [`Verdict::Fail`] naming it, so the input goes to `failed/` with the rule in
/// its `.error.txt`.
///
/// It reports the inspection the separate step made of the bands it wrote
/// (not read or separated again): RGB and gray input with the ΔE of every
/// pixel; CMYK input as re-separated, since that is what gets plated.
pub struct InspectStep {
    pub workshop: Arc<Workshop>,
}

impl Step for InspectStep {
    fn name(&self) -> &'static str {
        "inspect"
    }

    fn run(&self, job: &mut JobFile) -> Result<Verdict> {
        let inspection = job
            .inspection
            .as_ref()
            .ok_or_else(|| Error::Internal("the inspect step runs after the separate step that inspects".into()))?;
        write_report_dir(job.staging, false, job.input, inspection, &self.workshop.separator)?;
        let failed: Vec<String> = inspection
            .report
            .rules
            .iter()
            .filter(|o| o.failed)
            .map(|o| match o.value {
                Some(v) => format!("rule '{}' failed (measured {})", o.rule, crate::report::round_to(v, 3)),
                None => format!("rule '{}' failed", o.rule),
            })
            .collect();
        Ok(if failed.is_empty() { Verdict::Pass } else { Verdict::Fail(failed) })
    }
}

/// The inspection settings for a ticket: its `[checks] fail_if` rules (checked
/// when the ticket was read; a bad rule names the ticket's file and line there).
pub fn inspect_options(ticket: &Ticket) -> Result<InspectOptions> {
    let rules = parse_all(&ticket.checks.fail_if).map_err(|e| match &ticket.source {
        Some((path, _)) => Error::input(path, e.to_string()),
        None => e,
    })?;
    Ok(InspectOptions {
        rules,
        keep_maps: true,
        ..InspectOptions::default()
    })
}
