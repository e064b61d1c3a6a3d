//! The text summary of an inspection, as `inspect` prints it on a terminal:
//! the figures on a few lines, the three largest regions of each kind
//! (numbered as in the report folder) and the verdict of the rules.

use super::export::Exporter;
use crate::error::Result;
use crate::inspect::InspectReport;
use std::fmt::Write;

/// The text summary (printed on standard output; as a file, `<stem>.inspect.txt`).
pub struct TextSummary;

impl Exporter<InspectReport> for TextSummary {
    fn suffix(&self) -> &'static str {
        "inspect.txt"
    }

    fn export(&self, report: &InspectReport) -> Result<Option<Vec<u8>>> {
        Ok(Some(text_summary(report).into_bytes()))
    }
}

/// The short text summary of one report.
pub fn text_summary(r: &InspectReport) -> String {
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
