//! `platesmith hotfolder DIR`: separate every file that arrives in `DIR/in/`.

use crate::error::{Error, Result};
use crate::hotfolder::Settings;
use clap::Args;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::atomic::AtomicBool;
use std::time::Duration;

#[derive(Debug, Args)]
pub struct HotfolderArgs {
    /// The hot folder: files arrive in DIR/in/; results go to DIR/out/<name>/,
    /// inputs to DIR/done/ or DIR/failed/.
    pub dir: PathBuf,
    /// Job ticket (TOML) with the job's settings. Default: DIR/ticket.toml when it exists.
    #[arg(long, value_name = "FILE")]
    pub ticket: Option<PathBuf>,
    /// Files processed at a time (each job also uses all cores). Default: 1.
    #[arg(long, value_name = "N", default_value_t = 1)]
    pub jobs: usize,
    /// Process the files that are there (once they have settled), then exit;
    /// exit code 1 when any failed.
    #[arg(long)]
    pub once: bool,
    /// Seconds a file must stay unchanged (size and time) before it is taken. Default: 2.
    #[arg(long, value_name = "SECONDS", default_value_t = 2.0)]
    pub settle: f64,
    /// Seconds between looks at the folders when no file system event comes
    /// (network file systems often send none). Default: 5.
    #[arg(long, value_name = "SECONDS", default_value_t = 5.0)]
    pub rescan: f64,
    #[command(flatten)]
    pub cache: super::options::CacheArgs,
}

fn seconds(name: &str, v: f64, lo: f64, hi: f64) -> Result<Duration> {
    if v.is_finite() && (lo..=hi).contains(&v) {
        Ok(Duration::from_secs_f64(v))
    } else {
        Err(Error::usage(format!("--{name} {v}: allowed range is {lo}–{hi} seconds")))
    }
}

pub fn run(args: HotfolderArgs) -> Result<i32> {
    if !(1..=64).contains(&args.jobs) {
        return Err(Error::usage(format!("--jobs {}: allowed range is 1–64", args.jobs)));
    }
    let settings = Settings {
        dir: args.dir,
        ticket: args.ticket,
        jobs: args.jobs,
        once: args.once,
        settle: seconds("settle", args.settle, 0.0, 3600.0)?,
        rescan: seconds("rescan", args.rescan, 0.05, 3600.0)?,
        log_to_stderr: true,
        no_cache: args.cache.no_cache,
    };
    // The first SIGINT/SIGTERM sets `stop` (finish what is in progress); the
    // second exits at once. The shutdown action is registered first, so the
    // first signal finds it unarmed and the second armed.
    let stop = Arc::new(AtomicBool::new(false));
    for (signal, code) in [(signal_hook::consts::SIGINT, 130), (signal_hook::consts::SIGTERM, 143)] {
        signal_hook::flag::register_conditional_shutdown(signal, code, Arc::clone(&stop))
            .map_err(|e| Error::Internal(format!("cannot handle signals: {e}")))?;
        signal_hook::flag::register(signal, Arc::clone(&stop)).map_err(|e| Error::Internal(format!("cannot handle signals: {e}")))?;
    }
    let summary = crate::hotfolder::run(&settings, &stop)?;
    eprintln!("{}", crate::report::PREDICTION_NOTE);
    Ok(if settings.once && summary.failed > 0 { 1 } else { 0 })
}
