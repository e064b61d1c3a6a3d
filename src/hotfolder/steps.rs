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
use crate::job::{OutputPlace, SeparatedFile, Workshop};
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
    /// The separation, once the separate step has run (later steps check
    /// exactly the CMYK that was written).
    pub separated: Option<SeparatedFile>,
}

/// A step of the pipeline.
pub trait Step: Send + Sync {
    /// Its name in logs and error texts.
    fn name(&self) -> &'static str;
    fn run(&self, job: &mut JobFile) -> Result<Verdict>;
}

/// Separates the file and writes the composite, the plates and the summary
/// (as `separate --ticket` would, through one [`crate::raster::OutputSet`]).
pub struct SeparateStep {
    pub workshop: Arc<Workshop>,
}

impl Step for SeparateStep {
    fn name(&self) -> &'static str {
        "separate"
    }

    fn run(&self, job: &mut JobFile) -> Result<Verdict> {
        let separated = self.workshop.separate_file(job.input)?;
        let place = OutputPlace { dir: job.staging, listed_dir: Path::new(""), input_shown: Path::new(job.name) };
        self.workshop.write_outputs_in(job.input, &separated, job.started, &place)?;
        job.separated = Some(separated);
        Ok(Verdict::Pass)
    }
}

/// The steps for a ticket: separate, then the inspect step where there is one.
pub fn pipeline(workshop: Arc<Workshop>, ticket: &Ticket) -> Result<Vec<Box<dyn Step>>> {
    let mut steps: Vec<Box<dyn Step>> = vec![Box::new(SeparateStep { workshop: workshop.clone() })];
    steps.extend(inspect_step(&workshop, ticket)?);
    Ok(steps)
}

/// **Where the inspect step plugs in.** Returns the step that checks the
/// separated file (`job.separated`, exactly the CMYK written) against the
/// ticket's `[checks] fail_if` rules, writes its report into `job.staging`
/// (through an [`crate::raster::OutputSet`] on that folder) and returns
/// [`Verdict::Fail`] with one reason per failed rule, naming the rule, so the
/// input goes to `failed/` and the rule appears in its `.error.txt`.
///
/// The inspect command is not part of this build: a ticket with `fail_if`
/// rules is refused rather than run without its checks.
pub fn inspect_step(_workshop: &Arc<Workshop>, ticket: &Ticket) -> Result<Option<Box<dyn Step>>> {
    if ticket.checks.fail_if.is_empty() {
        return Ok(None);
    }
    let message = "sets [checks] fail_if rules, which this build of the hot folder cannot evaluate; remove them to separate without checks";
    Err(match &ticket.source {
        Some((path, _)) => Error::input(path, message),
        None => Error::usage(format!("the ticket {message}")),
    })
}
