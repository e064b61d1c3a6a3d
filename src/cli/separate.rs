//! `platesmith separate INPUT...`: rasters in, composite CMYK TIFF, plates
//! and a summary out.

use super::options::{InputArgs, ModelArgs, ModelSetup};
use crate::error::{Error, Result};
use crate::job::{GrayMode, JobOptions, PlateFormat, Workshop};
use crate::raster::{Compression, Limits};
use crate::report::SettingsReport;
use crate::separation::Separator;
use crate::ticket::{LimitsSection, OutputSection, Ticket};
use clap::Args;
use std::path::{Path, PathBuf};

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum CompressionArg {
    None,
    Lzw,
    Deflate,
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
    pub plates: Option<PlateFormat>,
    /// TIFF compression. Default: lzw.
    #[arg(long, value_enum)]
    pub compression: Option<CompressionArg>,
    /// Grayscale input: separate as neutrals, or on the black plate only. Default: neutral.
    #[arg(long, value_enum)]
    pub gray: Option<GrayMode>,
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
    /// Print the effective ticket (all settings of this job) and exit.
    #[arg(long)]
    pub print_ticket: bool,
}

fn compression_name(c: Compression) -> &'static str {
    match c {
        Compression::None => "none",
        Compression::Lzw => "lzw",
        Compression::Deflate => "deflate",
    }
}

/// The job settings of a `separate` command line: the ticket, then the flags,
/// over the condition's defaults.
struct Resolved {
    setup: ModelSetup,
    out_dir: PathBuf,
    bits: u8,
    plates: PlateFormat,
    compression: Compression,
    gray: GrayMode,
    limits: Limits,
}

/// The gray mode: the flag, else the ticket's, else neutral.
pub(crate) fn gray_mode(flag: Option<GrayMode>, t: &Ticket) -> GrayMode {
    flag.unwrap_or(match t.model.gray.as_deref() {
        Some("black-only") => GrayMode::BlackOnly,
        _ => GrayMode::Neutral,
    })
}

fn resolve(args: &SeparateArgs) -> Result<Resolved> {
    let setup = args.model.resolve()?;
    let t = &setup.ticket;
    let out_dir = args
        .out_dir
        .clone()
        .or_else(|| t.output.out_dir.clone())
        .unwrap_or_else(|| PathBuf::from("separated"));
    let bits: u8 = match &args.bits {
        Some(b) => b.parse().map_err(|_| Error::usage("--bits takes 8 or 16"))?,
        None => t.output.bits.unwrap_or(8),
    };
    let plates = args.plates.unwrap_or(match t.output.plates.as_deref() {
        Some("png") => PlateFormat::Png,
        Some("none") => PlateFormat::None,
        _ => PlateFormat::Tiff,
    });
    let compression = match args.compression {
        Some(CompressionArg::None) => Compression::None,
        Some(CompressionArg::Lzw) => Compression::Lzw,
        Some(CompressionArg::Deflate) => Compression::Deflate,
        None => match t.output.compression.as_deref() {
            Some("none") => Compression::None,
            Some("deflate") => Compression::Deflate,
            _ => Compression::Lzw,
        },
    };
    let gray = gray_mode(args.gray, t);
    let limits = args.input.limits(t)?;
    Ok(Resolved {
        setup,
        out_dir,
        bits,
        plates,
        compression,
        gray,
        limits,
    })
}

/// The [`Workshop`] of `platesmith separate --ticket FILE` (no other flags), or
/// of the built-in defaults when there is no ticket; the ticket as read is
/// returned beside it (its `[checks]` rules, for callers that check).
pub fn ticket_workshop(ticket: Option<&Path>) -> Result<(Workshop, Ticket)> {
    let args = SeparateArgs {
        inputs: Vec::new(),
        out_dir: None,
        model: ModelArgs {
            ticket: ticket.map(Path::to_path_buf),
            ..ModelArgs::default()
        },
        bits: None,
        plates: None,
        compression: None,
        gray: None,
        source_condition: None,
        reseparate_pure_black: false,
        force: false,
        input: InputArgs::default(),
        print_ticket: false,
    };
    let resolved = resolve(&args)?;
    let ticket = resolved.setup.ticket.clone();
    Ok((build_workshop(&args, resolved)?, ticket))
}

fn build_workshop(args: &SeparateArgs, r: Resolved) -> Result<Workshop> {
    let Resolved {
        setup,
        out_dir,
        bits,
        plates,
        compression,
        gray,
        limits,
    } = r;
    let t = &setup.ticket;
    let report = SettingsReport::new(&setup.condition, &setup.settings, setup.source_space);
    let separator = Separator::new(setup.condition.clone(), setup.settings.clone())?;
    let source_condition = match args.source_condition.as_deref().or(t.model.source_condition.as_deref()) {
        Some(spec) => crate::press::load_condition(spec)?,
        None => setup.condition.clone(),
    };
    let options = JobOptions {
        out_dir,
        bits,
        plates,
        compression,
        overwrite: args.force,
        limits,
        accept_damaged: args.input.accept_damaged(t),
        page: args.input.page,
        gray,
        ignore_bad_profile: args.input.ignore_bad_profile,
        source_space: setup.source_space,
        source_condition,
        keep_pure_black_cmyk: !args.reseparate_pure_black,
    };
    Ok(Workshop::new(separator, report, options))
}

pub fn run(args: SeparateArgs) -> Result<i32> {
    let r = resolve(&args)?;
    let (setup, out_dir, bits, plates, compression, gray, limits) =
        (&r.setup, &r.out_dir, r.bits, r.plates, r.compression, r.gray, &r.limits);
    let t = &setup.ticket;
    if args.print_ticket {
        let mut model = setup.model_section();
        if args.source_condition.is_some() {
            model.source_condition = args.source_condition.clone();
        }
        model.gray = Some(match gray {
            GrayMode::Neutral => "neutral".into(),
            GrayMode::BlackOnly => "black-only".into(),
        });
        let ticket = Ticket {
            model,
            output: OutputSection {
                out_dir: Some(out_dir.clone()),
                bits: Some(bits),
                plates: Some(format!("{plates:?}").to_lowercase()),
                compression: Some(compression_name(compression).into()),
            },
            limits: LimitsSection {
                max_side: Some(limits.max_width),
                max_memory_mib: Some(limits.max_bytes >> 20),
                accept_damaged: args.input.accept_damaged(t).then_some(true),
            },
            checks: t.checks.clone(),
            source: None,
        };
        crate::error::write_stdout(&ticket.to_toml()?)?;
        return Ok(0);
    }
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
    let workshop = build_workshop(&args, r)?;
    let progress = progress_bar(args.inputs.len() as u64);
    let (mut done, mut failed) = (0usize, 0usize);
    for input in &args.inputs {
        progress.set_message(input.display().to_string());
        match workshop.run(input) {
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
        progress.inc(1);
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

fn progress_bar(len: u64) -> indicatif::ProgressBar {
    use std::io::IsTerminal;
    if !std::io::stderr().is_terminal() {
        return indicatif::ProgressBar::hidden();
    }
    let bar = indicatif::ProgressBar::new(len);
    if let Ok(style) = indicatif::ProgressStyle::with_template("{pos}/{len} [{bar:30}] {wide_msg}") {
        bar.set_style(style.progress_chars("=> "));
    }
    bar
}
