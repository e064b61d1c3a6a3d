//! `platesmith inspect INPUT...`: how an RGB file will print, whether a CMYK
//! file is safe to plate; a text summary, JSON, or a report folder.

use super::options::{CacheArgs, InputArgs, ModelArgs};
use crate::error::{Error, Result};
use crate::inspect::{InspectOptions, rules};
use crate::report::export::{INSPECT_JSON, print};
use crate::report::folder::write_report_dir;
use crate::report::text::TextSummary;
use crate::setup::{JobInput, JobKind};
use clap::Args;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct InspectArgs {
    /// Images to inspect (RGB, gray or CMYK; PNG, TIFF, JPEG).
    #[arg(required = true)]
    pub inputs: Vec<PathBuf>,
    #[command(flatten)]
    pub model: ModelArgs,
    /// Print the report as JSON (an array with several inputs).
    #[arg(long)]
    pub json: bool,
    /// Write the JSON, a CSV of regions, PNG maps and an HTML page for each input into DIR.
    #[arg(long, value_name = "DIR")]
    pub report: Option<PathBuf>,
    /// Fail (exit 1) when RULE holds, e.g. `tac>300`, `over_fraction>0.5%`,
    /// `p95_de>3`, `regions>0`. Repeatable; adds to the ticket's rules.
    /// Without any rule: `tac.over_fraction>0`.
    #[arg(long, value_name = "RULE")]
    pub fail_if: Vec<String>,
    /// ΔE2000 thresholds for the area shares, comma-separated. Default: 2,5.
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub de_thresholds: Option<Vec<f64>>,
    /// ΔE2000 outside the press gamut above which a pixel counts as out of gamut (regions, the share outside), whatever the intent. Default: the largest threshold.
    #[arg(long, value_name = "DE")]
    pub region_de: Option<f64>,
    /// Regions smaller than this are dropped as specks, mm². Default: 0.25.
    #[arg(long, value_name = "MM2")]
    pub min_area: Option<f64>,
    /// Rich black under fine detail: strokes narrower than this, mm. Default: 0.5 (common practice).
    #[arg(long, value_name = "MM")]
    pub rich_black_detail: Option<f64>,
    /// Also list regions of dots below the condition's minimum printable dot.
    #[arg(long)]
    pub dot_regions: bool,
    /// Sheet for the ink estimate, WIDTHxHEIGHT in mm. Default: 700x1000 (common practice).
    #[arg(long, value_name = "WxH")]
    pub sheet: Option<String>,
    /// Copies for the ink estimate. Default: 1000.
    #[arg(long, value_name = "N")]
    pub copies: Option<u64>,
    /// Ink film at 100 % for the estimate, g/m², C,M,Y,K. Default: the condition's.
    #[arg(long, value_name = "C,M,Y,K", value_delimiter = ',')]
    pub ink_film: Option<Vec<f64>>,
    /// Bits per sample of the separation checked (as `separate --bits`). Default: 8.
    #[arg(long, value_parser = clap::builder::PossibleValuesParser::new(["8", "16"]))]
    pub bits: Option<String>,
    /// Replace report files that already exist.
    #[arg(long)]
    pub force: bool,
    #[command(flatten)]
    pub input: InputArgs,
    #[command(flatten)]
    pub cache: CacheArgs,
}

fn positive(name: &str, v: f64) -> Result<f64> {
    if v.is_finite() && v > 0.0 {
        Ok(v)
    } else {
        Err(Error::usage(format!("--{name} {v}: must be a positive number")))
    }
}

/// The sheet size `WxH` in mm.
pub fn parse_sheet(text: &str) -> Result<[f64; 2]> {
    let bad = || Error::usage(format!("--sheet '{text}': expected WIDTHxHEIGHT in mm, e.g. 700x1000"));
    let (a, b) = text.split_once(['x', 'X', '×']).ok_or_else(bad)?;
    let w: f64 = a.trim().parse().map_err(|_| bad())?;
    let h: f64 = b.trim().parse().map_err(|_| bad())?;
    if !(w.is_finite() && h.is_finite() && w > 0.0 && h > 0.0 && w <= 10_000.0 && h <= 10_000.0) {
        return Err(bad());
    }
    Ok([w, h])
}

/// The inspection settings from the flags (rules: the ticket's, then the flags').
pub fn options(args: &InspectArgs, ticket_rules: &[String]) -> Result<InspectOptions> {
    let mut o = InspectOptions::default();
    if let Some(t) = &args.de_thresholds {
        if t.is_empty() {
            return Err(Error::usage("--de-thresholds needs at least one value"));
        }
        let mut t = t.iter().map(|&v| positive("de-thresholds", v)).collect::<Result<Vec<f64>>>()?;
        t.sort_by(f64::total_cmp);
        t.dedup();
        o.de_thresholds = t;
    }
    o.region_de = match args.region_de {
        Some(v) => positive("region-de", v)?,
        None => o.de_thresholds.last().copied().unwrap_or(5.0),
    };
    if let Some(v) = args.min_area {
        if !(v.is_finite() && v >= 0.0) {
            return Err(Error::usage(format!("--min-area {v}: must be 0 or more")));
        }
        o.min_area_mm2 = v;
    }
    if let Some(v) = args.rich_black_detail {
        o.rich_black_detail_mm = positive("rich-black-detail", v)?;
    }
    o.small_dot_regions = args.dot_regions;
    if let Some(s) = &args.sheet {
        o.sheet_mm = parse_sheet(s)?;
        o.sheet_given = true;
    }
    if let Some(n) = args.copies {
        if n == 0 {
            return Err(Error::usage("--copies must be at least 1"));
        }
        o.copies = n;
        o.copies_given = true;
    }
    if let Some(f) = &args.ink_film {
        let ok = f.len() == 4 && f.iter().all(|v| v.is_finite() && (0.0..=10.0).contains(v));
        if !ok {
            return Err(Error::usage("--ink-film takes four numbers C,M,Y,K in g/m² (0–10)"));
        }
        o.ink_film = Some([f[0], f[1], f[2], f[3]]);
    }
    let texts: Vec<&str> = ticket_rules
        .iter()
        .map(String::as_str)
        .chain(args.fail_if.iter().map(String::as_str))
        .collect();
    o.rules = rules::parse_all(&texts)?;
    o.keep_maps = args.report.is_some();
    Ok(o)
}

pub fn run(args: InspectArgs) -> Result<i32> {
    let setup = args.model.resolve_with(&args.cache)?;
    let t = &setup.ticket;
    let opts = options(&args, &t.checks.fail_if)?;
    let input = JobInput {
        out_dir: args.report.clone(),
        bits: super::separate::bits_flag(&args.bits)?,
        overwrite: args.force,
        read: args.input.read(),
        no_cache: args.cache.no_cache,
        ..JobInput::default()
    };
    let job = input.resolve(JobKind::Inspect, setup)?;
    if let Some(dir) = &args.report {
        super::output_names::check_unique(&args.inputs, dir, "reports", crate::report::folder::file_names)?;
    }
    let workshop = job.workshop()?;
    let (mut reports, mut bad, mut failed) = (Vec::new(), 0usize, 0usize);
    // One file on a terminal, without --json: a bar follows its bands
    // (through both passes when the table is built from its own colours).
    let bar = if args.inputs.len() == 1 && !args.json {
        super::separate::progress_bar(0, "bands")
    } else {
        indicatif::ProgressBar::hidden()
    };
    for input in &args.inputs {
        bar.set_message(input.display().to_string());
        let inspected = if bar.is_hidden() {
            crate::inspect::inspect_file(&workshop, input, &opts)
        } else {
            crate::inspect::inspect_file_with_progress(&workshop, input, &opts, &|done, bands| {
                bar.set_length(bands);
                bar.set_position(done);
            })
        };
        bar.finish_and_clear();
        let result = inspected.and_then(|inspection| {
            if let Some(dir) = &args.report {
                write_report_dir(dir, args.force, input, &inspection, &workshop.separator)?;
            }
            Ok(inspection.report)
        });
        match result {
            Ok(report) => {
                for o in report.rules.iter().filter(|o| o.failed) {
                    let value = o.value.map(|v| format!(" (measured {v})")).unwrap_or_default();
                    eprintln!("platesmith: {}: rule '{}' failed{value}", input.display(), o.rule);
                }
                if !report.pass {
                    failed += 1;
                }
                if !args.json {
                    print(&report, &TextSummary)?;
                }
                reports.push(report);
            }
            Err(e) => {
                bad += 1;
                eprintln!("platesmith: {e}");
            }
        }
    }
    if args.json {
        // One input: its report; several: an array of the reports read.
        if args.inputs.len() != 1 {
            print(&reports, &INSPECT_JSON)?;
        } else if let Some(r) = reports.first() {
            print(r, &INSPECT_JSON)?;
        }
    } else {
        crate::error::write_stdout(&format!("{}\n", crate::report::PREDICTION_NOTE))?;
    }
    if args.inputs.len() > 1 {
        eprintln!(
            "{} inspected, {} failed their rules, {} could not be read",
            reports.len(),
            failed,
            bad
        );
    }
    Ok(if bad > 0 {
        2
    } else if failed > 0 {
        1
    } else {
        0
    })
}
