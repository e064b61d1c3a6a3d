//! `platesmith profile --out FILE.icc`: the separation of a condition and its
//! settings as an ICC output profile.

use super::options::ModelArgs;
use crate::error::{Error, Result};
use crate::icc::{IccVersion, ProfileOptions, profile_for};
use crate::raster::OutputSet;
use crate::settings::InkEcho;
use clap::Args;
use std::path::{Path, PathBuf};
use std::time::Instant;

#[derive(Debug, Args)]
pub struct ProfileArgs {
    /// The profile to write (.icc).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    #[command(flatten)]
    pub model: ModelArgs,
    /// ICC version: 4 (ICC.1:2022, version 4.4) or 2 (version 2.4, for older software). Default: 4.
    #[arg(long, value_name = "4|2", value_parser = clap::builder::PossibleValuesParser::new(["4", "2"]))]
    pub icc_version: Option<String>,
    /// Profile description. Default: the condition and the ink settings.
    #[arg(long, value_name = "TEXT")]
    pub description: Option<String>,
    /// Leave out the floating-point BToD tables (version 4; about 4.4 MB of
    /// the 6 MB profile). CMMs then separate through the 16-bit BToA tables,
    /// which follow the separation less closely (docs/REFERENCES.md).
    #[arg(long)]
    pub no_float_tables: bool,
    /// Replace the file if it exists.
    #[arg(long)]
    pub force: bool,
}

/// Splits an output file path into its folder and file name, for an [`OutputSet`].
pub(crate) fn output_place(path: &Path) -> Result<(PathBuf, String)> {
    let name = path
        .file_name()
        .and_then(|n| n.to_str())
        .filter(|n| !n.is_empty() && *n != "." && *n != "..")
        .ok_or_else(|| Error::usage(format!("--out {}: give a file name", path.display())))?;
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    Ok((dir, name.to_string()))
}

pub fn run(args: ProfileArgs) -> Result<i32> {
    let setup = args.model.resolve()?;
    let version = match args.icc_version.as_deref() {
        Some("2") => IccVersion::V2,
        _ => IccVersion::V4,
    };
    let (dir, name) = output_place(&args.out)?;
    let mut out = OutputSet::new(&dir, args.force)?;
    // Fail on an existing file before the tables are solved.
    out.check(&name)?;
    let started = Instant::now();
    let float_tables = !args.no_float_tables && version == IccVersion::V4;
    let options = ProfileOptions {
        version,
        description: args.description.clone(),
        float_tables,
        ..ProfileOptions::default()
    };
    let bytes = profile_for(&setup.condition, &setup.settings, &options)?;
    let path = out.stage(&name, |w| std::io::Write::write_all(w, &bytes))?;
    out.commit()?;
    let s = &setup.settings;
    let e = InkEcho::new(s.tac, &s.black);
    eprintln!(
        "{}: ICC {:.1} output profile{} for {} (TAC {:.0} %, GCR {:.0} %, maximum black {:.0} %), {} KiB, {:.1} s",
        path.display(),
        version.number(),
        if float_tables { " with floating-point BToD tables" } else { "" },
        setup.condition.name,
        e.tac.0,
        e.gcr.0,
        e.black_max.0,
        bytes.len().div_ceil(1024),
        started.elapsed().as_secs_f64()
    );
    eprintln!("{}", crate::report::PREDICTION_NOTE);
    Ok(0)
}
