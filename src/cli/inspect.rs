//! `platesmith inspect INPUT...`: how an RGB file will print, whether a CMYK
//! file is safe to plate; a text summary, JSON, or a report folder.

use super::options::{InputArgs, ModelArgs};
use crate::error::{Error, Result};
use crate::inspect::{InspectOptions, InspectReport, Inspection, rules};
use crate::raster::OutputSet;
use crate::separation::Separator;
use crate::setup::{JobInput, JobKind};
use clap::Args;
use std::path::{Path, PathBuf};

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

/// Writes the report folder of one file as one set (all files or none).
pub fn write_report_dir(dir: &Path, overwrite: bool, input: &Path, inspection: &Inspection, separator: &Separator) -> Result<Vec<PathBuf>> {
    let r = &inspection.report;
    let stem = super::output_names::output_stem(input).to_string();
    let maps = inspection
        .maps
        .as_ref()
        .ok_or_else(|| Error::Internal("report folder without maps".into()))?;
    // Regions numbered as in the table; outlined on the map of their kind.
    let numbered: Vec<(usize, &crate::inspect::RegionReport)> = r.regions.iter().enumerate().map(|(i, g)| (i + 1, g)).collect();
    // At most MAP_OUTLINES boxes per map (the largest of each kind first), so the map stays legible.
    const MAP_OUTLINES: usize = 40;
    let on = |kinds: &[&str]| {
        numbered
            .iter()
            .filter(|(_, g)| kinds.contains(&g.kind))
            .take(MAP_OUTLINES)
            .map(|(n, g)| (*n, g.bbox))
            .collect::<Vec<_>>()
    };
    let de_png = match maps.de {
        Some(_) => Some(crate::report::maps::de_map_png(
            maps,
            &r.settings.de_thresholds,
            &on(&[crate::inspect::KIND_OUT_OF_GAMUT]),
        )?),
        None => None,
    };
    let ink_png = crate::report::maps::ink_map_png(
        maps,
        r.tac.limit,
        &on(&[
            crate::inspect::KIND_OVER_INK,
            crate::inspect::KIND_RICH_BLACK,
            crate::inspect::KIND_SMALL_DOT,
        ]),
    )?;
    let json = serde_json::to_string_pretty(r).map_err(|e| Error::Internal(e.to_string()))? + "\n";
    let csv = crate::report::region_table::regions_csv(r)?;
    let html = crate::report::html::page(inspection, separator, de_png.as_deref(), &ink_png);
    std::fs::create_dir_all(dir).map_err(|e| Error::output(dir, format!("cannot create the folder: {e}")))?;
    let mut out = OutputSet::new(dir, overwrite)?;
    out.protect([input]);
    let put = |out: &mut OutputSet, name: String, bytes: &[u8]| out.stage(&name, |w| std::io::Write::write_all(w, bytes));
    put(&mut out, format!("{stem}.inspect.json"), json.as_bytes())?;
    put(&mut out, format!("{stem}.regions.csv"), &csv)?;
    if let Some(png) = &de_png {
        put(&mut out, format!("{stem}.de-map.png"), png)?;
    }
    put(&mut out, format!("{stem}.ink-map.png"), &ink_png)?;
    put(&mut out, format!("{stem}.inspect.html"), html.as_bytes())?;
    out.commit()
}

/// The short text summary of one report.
pub fn text_summary(r: &InspectReport) -> String {
    use std::fmt::Write;
    let mut o = String::new();
    let _ = writeln!(
        o,
        "{}: {} {} × {} px at {} ppi, for {} ({})",
        r.file,
        r.kind.to_uppercase(),
        r.width,
        r.height,
        r.resolution_ppi[0],
        r.condition,
        r.settings.separation.intent_phrase()
    );
    if let Some(g) = &r.gamut {
        let shares: Vec<String> = g
            .over
            .iter()
            .map(|s| format!("{:.2} % over {}", s.fraction * 100.0, s.threshold))
            .collect();
        let _ = writeln!(
            o,
            "  ΔE2000      mean {:.2}  p95 {:.2}  max {:.2}  ({})",
            g.mean_de,
            g.p95_de,
            g.max_de,
            shares.join(", ")
        );
        let _ = writeln!(
            o,
            "  gamut       {:.2} % of the image lies more than ΔE {} outside the press gamut (largest {:.2})",
            g.outside_fraction * 100.0,
            g.threshold,
            g.outside_max_de
        );
    }
    let _ = writeln!(
        o,
        "  total ink   max {:.1} %  p99 {:.1} %  mean {:.1} %  (limit {:.0} %; {:.3} % of the image over)",
        r.tac.max,
        r.tac.p99,
        r.tac.mean,
        r.tac.limit,
        r.tac.over_fraction * 100.0
    );
    let plates: Vec<String> = r
        .plates
        .iter()
        .zip(["C", "M", "Y", "K"])
        .map(|(p, letter)| format!("{letter} {:.1}", p.mean_percent))
        .collect();
    let dots = r.plates.iter().map(|p| p.below_min_dot_fraction).fold(0.0, f64::max);
    let _ = writeln!(
        o,
        "  plates      {} % mean; up to {:.2} % of the image with dots below {} %",
        plates.join("  "),
        dots * 100.0,
        r.settings.min_dot_percent
    );
    let _ = writeln!(
        o,
        "  ink         {:.2} kg for {} copies of a {} × {} mm sheet (estimate)",
        r.ink_use.run_total_kg, r.ink_use.copies, r.ink_use.sheet_mm[0], r.ink_use.sheet_mm[1]
    );
    let counts: Vec<String> = r
        .regions_by_kind
        .iter()
        .filter(|(_, n)| **n > 0)
        .map(|(k, n)| format!("{n} {k}"))
        .collect();
    let _ = writeln!(
        o,
        "  regions     {}",
        if counts.is_empty() { "none".to_string() } else { counts.join(", ") }
    );
    // The three largest of each kind, numbered as in the report.
    let mut shown = std::collections::BTreeMap::new();
    for (i, g) in r.regions.iter().enumerate() {
        let n = shown.entry(g.kind).or_insert(0usize);
        *n += 1;
        if *n > 3 {
            continue;
        }
        let limits = g
            .limited_by
            .as_ref()
            .map(|l| {
                if l.is_empty() {
                    " (in gamut; moved by the intent)".to_string()
                } else {
                    format!(" (limited by {})", l.join(", "))
                }
            })
            .unwrap_or_default();
        let _ = writeln!(
            o,
            "    #{} {} at {},{} {}×{} px, {:.2} mm², worst {} {}, mean {}{}",
            i + 1,
            g.kind,
            g.bbox[0],
            g.bbox[1],
            g.bbox[2],
            g.bbox[3],
            g.area_mm2,
            g.max,
            g.unit,
            g.mean,
            limits
        );
    }
    let listed: usize = shown.values().map(|&n| n.min(3)).sum();
    if r.regions_total > listed {
        let _ = writeln!(o, "    … {} more (see --json or --report)", r.regions_total - listed);
    }
    let verdict: Vec<String> = r
        .rules
        .iter()
        .map(|o| format!("{} {}", o.rule, if o.failed { "FAILED" } else { "passed" }))
        .collect();
    let _ = writeln!(o, "  result      {} ({})", if r.pass { "pass" } else { "fail" }, verdict.join("; "));
    o
}

pub fn run(args: InspectArgs) -> Result<i32> {
    let setup = args.model.resolve()?;
    let t = &setup.ticket;
    let opts = options(&args, &t.checks.fail_if)?;
    let input = JobInput {
        out_dir: args.report.clone(),
        bits: super::separate::bits_flag(&args.bits)?,
        overwrite: args.force,
        read: args.input.read(),
        ..JobInput::default()
    };
    let job = input.resolve(JobKind::Inspect, setup)?;
    if let Some(dir) = &args.report {
        super::output_names::check_unique(&args.inputs, dir, "reports", |stem| {
            ["inspect.json", "regions.csv", "de-map.png", "ink-map.png", "inspect.html"]
                .iter()
                .map(|suffix| format!("{stem}.{suffix}"))
                .collect()
        })?;
    }
    let workshop = job.workshop()?;
    let (mut reports, mut bad, mut failed) = (Vec::new(), 0usize, 0usize);
    for input in &args.inputs {
        let result = crate::inspect::inspect_file(&workshop, input, &opts).and_then(|inspection| {
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
                    crate::error::write_stdout(&text_summary(&report))?;
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
        let text = if args.inputs.len() == 1 {
            match reports.first() {
                Some(r) => serde_json::to_string_pretty(r),
                None => Ok(String::new()),
            }
        } else {
            serde_json::to_string_pretty(&reports)
        }
        .map_err(|e| Error::Internal(e.to_string()))?;
        if !text.is_empty() {
            crate::error::write_stdout(&(text + "\n"))?;
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
