//! `platesmith separate INPUT...`: rasters in, composite CMYK TIFF, plates
//! and a summary out.

use super::options::{CacheArgs, InputArgs, ModelArgs};
use crate::error::{Error, Result};
use crate::job::{GrayMode, PlateFormat};
use crate::raster::Compression;
use crate::setup::{JobInput, JobKind, JobSetup};
use clap::Args;
use std::path::PathBuf;

/// TIFF strip compression, as typed on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum CompressionArg {
    /// Uncompressed: the fastest to write and read, the largest files.
    None,
    /// LZW: read by every TIFF reader, old RIPs included; slow to write, larger than deflate.
    Lzw,
    /// Deflate (zlib): the smallest files and fast to write; read by current software, not by some old RIPs.
    Deflate,
}

impl From<CompressionArg> for Compression {
    fn from(c: CompressionArg) -> Compression {
        match c {
            CompressionArg::None => Compression::None,
            CompressionArg::Lzw => Compression::Lzw,
            CompressionArg::Deflate => Compression::Deflate,
        }
    }
}

/// What to do with the plates, as typed on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PlateFormatArg {
    /// One single-ink TIFF per plate (WhiteIsZero: the sample is the ink value).
    Tiff,
    /// One 8-bit PNG preview per plate, ink dark on white.
    Png,
    /// No plate files, the composite only.
    None,
}

impl From<PlateFormatArg> for PlateFormat {
    fn from(p: PlateFormatArg) -> PlateFormat {
        match p {
            PlateFormatArg::Tiff => PlateFormat::Tiff,
            PlateFormatArg::Png => PlateFormat::Png,
            PlateFormatArg::None => PlateFormat::None,
        }
    }
}

/// How grayscale input is separated, as typed on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum GrayModeArg {
    /// As neutral RGB through the full separation.
    Neutral,
    /// On the black plate only, matching lightness.
    BlackOnly,
}

impl From<GrayModeArg> for GrayMode {
    fn from(g: GrayModeArg) -> GrayMode {
        match g {
            GrayModeArg::Neutral => GrayMode::Neutral,
            GrayModeArg::BlackOnly => GrayMode::BlackOnly,
        }
    }
}

/// `--bits` as a number (the parser admits 8 and 16 only).
pub(crate) fn bits_flag(bits: &Option<String>) -> Result<Option<u8>> {
    bits.as_deref()
        .map(|b| b.parse().map_err(|_| Error::usage("--bits takes 8 or 16")))
        .transpose()
}

#[derive(Debug, Args)]
pub struct SeparateArgs {
    /// Images to separate (PNG, TIFF, JPEG; RGB, RGBA, gray; CMYK TIFF/JPEG are re-separated).
    #[arg(required_unless_present = "print_ticket")]
    pub inputs: Vec<PathBuf>,
    /// Folder for the outputs. Default: ./separated
    #[arg(long, value_name = "DIR")]
    pub out_dir: Option<PathBuf>,
    #[command(flatten)]
    pub model: ModelArgs,
    /// Bits per sample of the outputs. Default: 8.
    #[arg(long, value_parser = clap::builder::PossibleValuesParser::new(["8", "16"]))]
    pub bits: Option<String>,
    /// Plate files to write. Default: tiff.
    #[arg(long, value_enum)]
    pub plates: Option<PlateFormatArg>,
    /// TIFF compression: deflate (smallest, fast), lzw (most widely read, slow), none
    /// (largest, fastest). Default: deflate.
    #[arg(long, value_enum)]
    pub compression: Option<CompressionArg>,
    /// Grayscale input: separate as neutrals, or on the black plate only. Default: neutral.
    #[arg(long, value_enum)]
    pub gray: Option<GrayModeArg>,
    /// CMYK input: the printing condition it was separated for (a name or a
    /// file). Default: the target condition.
    #[arg(long, value_name = "NAME|FILE")]
    pub source_condition: Option<String>,
    /// CMYK input: re-separate black-only pixels too (by default they stay black only).
    #[arg(long)]
    pub reseparate_pure_black: bool,
    /// Replace outputs that already exist.
    #[arg(long)]
    pub force: bool,
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub cache: CacheArgs,
    /// Print the effective ticket (all settings of this job) and exit.
    #[arg(long)]
    pub print_ticket: bool,
}

/// The job settings of a `separate` command line: the ticket, then the flags,
/// over the condition's defaults.
fn resolve(args: &SeparateArgs) -> Result<JobSetup> {
    let model = args.model.resolve_with(&args.cache)?;
    let input = JobInput {
        out_dir: args.out_dir.clone(),
        bits: bits_flag(&args.bits)?,
        plates: args.plates.map(PlateFormat::from),
        compression: args.compression.map(Compression::from),
        gray: args.gray.map(GrayMode::from),
        source_condition: args.source_condition.clone(),
        reseparate_pure_black: args.reseparate_pure_black,
        overwrite: args.force,
        read: args.input.read(),
        no_cache: args.cache.no_cache,
    };
    input.resolve(JobKind::Separate, model)
}

pub fn run(args: SeparateArgs) -> Result<i32> {
    let job = resolve(&args)?;
    if args.print_ticket {
        crate::error::write_stdout(&job.effective_ticket().to_toml()?)?;
        return Ok(0);
    }
    let (out_dir, plates) = (&job.out_dir, job.plates);
    super::output_names::check_unique(&args.inputs, out_dir, "outputs", |stem| {
        let plates: &[&str] = match plates {
            PlateFormat::Tiff => &["c.tif", "m.tif", "y.tif", "k.tif"],
            PlateFormat::Png => &["c.png", "m.png", "y.png", "k.png"],
            PlateFormat::None => &[],
        };
        ["cmyk.tif", "summary.json"]
            .iter()
            .chain(plates)
            .map(|suffix| format!("{stem}.{suffix}"))
            .collect()
    })?;
    let workshop = job.workshop()?;
    // One file: the bar follows its bands (through both passes when the
    // table is built from the picture's colours); several: it counts files.
    let single = args.inputs.len() == 1;
    let progress = progress_bar(args.inputs.len() as u64, if single { "bands" } else { "files" });
    let (mut done, mut failed) = (0usize, 0usize);
    for input in &args.inputs {
        progress.set_message(input.display().to_string());
        let result = if single && !progress.is_hidden() {
            workshop.run_with_progress(input, &|bands_done, bands| {
                progress.set_length(bands);
                progress.set_position(bands_done);
            })
        } else {
            workshop.run(input)
        };
        match result {
            Ok(s) => {
                done += 1;
                let [c, m, y, k] = [0, 1, 2, 3].map(|i| s.plates[i].mean_percent);
                say(
                    &progress,
                    format!(
                        "{}: {} × {} px → {}  (C {c:.1} M {m:.1} Y {y:.1} K {k:.1} % mean; TAC max {:.1} % of {:.0} %; {:.0} ms)",
                        input.display(),
                        s.width,
                        s.height,
                        s.outputs.first().map(String::as_str).unwrap_or(""),
                        s.tac.max,
                        s.tac.limit,
                        s.timings.total_ms
                    ),
                );
            }
            Err(e) => {
                failed += 1;
                say(&progress, format!("platesmith: {e}"));
            }
        }
        if !single {
            progress.inc(1);
        }
    }
    progress.finish_and_clear();
    if args.inputs.len() > 1 {
        eprintln!("{done} separated, {failed} failed");
    }
    eprintln!("{}", crate::report::PREDICTION_NOTE);
    Ok(if failed > 0 { 2 } else { 0 })
}

/// A progress bar on an interactive terminal, nothing otherwise; never coloured.
/// Prints a line above the progress bar, or plainly when there is none.
fn say(bar: &indicatif::ProgressBar, line: String) {
    if bar.is_hidden() {
        eprintln!("{line}");
    } else {
        bar.println(line);
    }
}

pub(super) fn progress_bar(len: u64, unit: &str) -> indicatif::ProgressBar {
    use std::io::IsTerminal;
    if !std::io::stderr().is_terminal() {
        return indicatif::ProgressBar::hidden();
    }
    let bar = indicatif::ProgressBar::new(len);
    if let Ok(style) = indicatif::ProgressStyle::with_template(&format!("{{pos}}/{{len}} {unit} [{{bar:30}}] {{wide_msg}}")) {
        bar.set_style(style.progress_chars("=> "));
    }
    bar
}
