//! `platesmith proof INPUT --out FILE.png`: how the separation prints, on screen.
//!
//! RGB (and gray) input is separated in memory exactly as `separate` does,
//! CMYK input is taken as it is; either is shown through the condition's
//! output profile (see `crate::proof`).

use super::options::{CacheArgs, InputArgs, ModelArgs};
use super::profile::output_place;
use crate::error::{Error, Result};
use crate::proof::{PROGRESSIVES, Proofer, side_by_side, write_png};
use crate::raster::{Layout, OutputSet};
use crate::setup::{JobInput, JobKind};
use clap::Args;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct ProofArgs {
    /// The image to proof: RGB or gray artwork (separated first) or CMYK (PNG, TIFF, JPEG).
    pub input: PathBuf,
    /// The proof to write (8-bit PNG).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    #[command(flatten)]
    pub model: ModelArgs,
    /// Show the paper's own colour (absolute colorimetric) instead of taking it as the display white.
    #[arg(long)]
    pub paper_white: bool,
    /// RGB profile of the display. Default: sRGB.
    #[arg(long, value_name = "FILE.icc")]
    pub display_profile: Option<PathBuf>,
    /// Write the original and the proof side by side (original | proof).
    #[arg(long)]
    pub side_by_side: bool,
    /// Also write the progressive proofs C, C+M, C+M+Y and C+M+Y+K beside the proof (NAME.1-c.png …).
    #[arg(long)]
    pub progressives: bool,
    #[command(flatten)]
    pub input_args: InputArgs,
    #[command(flatten)]
    pub cache: CacheArgs,
    /// Replace files that exist.
    #[arg(long)]
    pub force: bool,
}

pub fn run(args: ProofArgs) -> Result<i32> {
    let setup = args.model.resolve_with(&args.cache)?;
    let mut job = JobInput {
        overwrite: args.force,
        read: args.input_args.read(),
        no_cache: args.cache.no_cache,
        ..JobInput::default()
    }
    .resolve(JobKind::Proof, setup)?;
    let (dir, name) = output_place(&args.out)?;
    job.out_dir = dir.clone();
    let setup = &job.model;
    let stem = name.strip_suffix(".png").unwrap_or(&name).to_string();
    let mut out = OutputSet::new(&dir, args.force)?;
    out.protect([&args.input]);
    let mut names = vec![name.clone()];
    if args.progressives {
        names.extend(PROGRESSIVES.iter().map(|(suffix, _)| format!("{stem}.{suffix}.png")));
    }
    for n in &names {
        out.check(n)?;
    }
    let display = match &args.display_profile {
        Some(p) => Some((
            p.as_path(),
            std::fs::read(p).map_err(|e| Error::input(p, format!("cannot read: {e}")))?,
        )),
        None => None,
    };
    let workshop = job.workshop()?;
    let raster = crate::raster::read_raster_with(&args.input, &workshop.options.read_options())?;
    // CMYK is proofed as it is; other input is separated as `separate` would.
    let (raster, cmyk) = if raster.layout == Layout::Cmyk {
        let samples = raster.samples.clone();
        (raster, samples)
    } else {
        let separated = workshop.separate_file(&args.input)?;
        (separated.raster, separated.image.samples)
    };
    // The proof shows CMYK through the AToB tables, which the profile that
    // `separate` embeds holds in full.
    let proofer = Proofer::new(workshop.output_profile()?, display, args.paper_white)?;
    let (w, h) = (raster.width as usize, raster.height);
    let proof = proofer.proof(&cmyk, w, [true; 4]);
    let icc = proofer.display_profile();
    let (main, main_width) = if args.side_by_side {
        let original = proofer.original(&raster, setup.source_space, &args.input)?;
        (side_by_side(&original, &proof, w), 2 * raster.width)
    } else {
        (proof, raster.width)
    };
    out.stage(&name, |f| write_png(f, &main, main_width, h, icc))?;
    if args.progressives {
        for (suffix, inks) in PROGRESSIVES {
            let image = proofer.proof(&cmyk, w, inks);
            out.stage(&format!("{stem}.{suffix}.png"), |f| write_png(f, &image, raster.width, h, icc))?;
        }
    }
    let written = out.commit()?;
    for p in &written {
        eprintln!("{}", p.display());
    }
    eprintln!(
        "proof of {} on {}{}",
        args.input.display(),
        setup.condition.name,
        if args.paper_white { " with the paper's colour" } else { "" },
    );
    eprintln!("{}", crate::report::PREDICTION_NOTE);
    Ok(0)
}
