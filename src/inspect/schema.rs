//! The report schema: what `inspect --json` prints and the report folder's
//! JSON holds, field by field (documented for users in
//! `docs/inspect-report.md`). Fractions are shares of the image (0..1); ink
//! in percent, lengths in mm, colours CIELAB D50.

use super::rules;
use crate::job::TacSummary;
use crate::report::SettingsReport;
use serde::Serialize;
use std::collections::BTreeMap;

/// Settings of an inspection, echoed in the report (percent and mm).
#[derive(Debug, Clone, Serialize)]
pub struct InspectSettings {
    #[serde(flatten)]
    pub separation: SettingsReport,
    pub de_thresholds: Vec<f64>,
    pub region_de: f64,
    pub min_area_mm2: f64,
    pub min_dot_percent: f64,
    pub rich_black: RichBlackSettings,
    pub fail_if: Vec<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct RichBlackSettings {
    pub k_percent: f64,
    pub cmy_percent: f64,
    pub detail_mm: f64,
    pub basis: &'static str,
}

#[derive(Debug, Clone, Serialize)]
pub struct ThresholdShare {
    pub threshold: f64,
    pub fraction: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct GamutSummary {
    pub mean_de: f64,
    pub p95_de: f64,
    pub max_de: f64,
    /// Share of pixels with ΔE over `threshold`.
    pub over_fraction: f64,
    pub threshold: f64,
    /// Share of pixels over each of the configured thresholds.
    pub over: Vec<ThresholdShare>,
    /// Share of pixels whose source colour lies more than `threshold`
    /// outside the press gamut: ΔE2000 from the source colour to the nearest
    /// printable colour (media-relative, as relative colorimetric clips it),
    /// whatever the intent. With the perceptual intent `over_fraction` also
    /// counts printable colours the mapping moved; this does not.
    pub outside_fraction: f64,
    /// Mean (over all pixels; 0 inside the gamut) and largest of that distance.
    pub outside_mean_de: f64,
    pub outside_max_de: f64,
    /// Distinct source values evaluated.
    pub distinct_values: u64,
}

#[derive(Debug, Clone, Serialize)]
pub struct PlateReport {
    pub ink: &'static str,
    /// Mean tone value over the image, percent.
    pub mean_percent: f64,
    /// Share of the image with at least 1 % of this ink.
    pub inked_fraction: f64,
    /// Share of the image with a dot of this ink above 0 and below the minimum printable dot.
    pub below_min_dot_fraction: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct InkUse {
    pub sheet_mm: [f64; 2],
    pub sheet_basis: &'static str,
    pub copies: u64,
    pub copies_basis: &'static str,
    /// Ink film at 100 % per ink, g/m² (C, M, Y, K).
    pub film_g_per_m2: [f64; 4],
    pub film_basis: &'static str,
    /// Ink per copy, g (C, M, Y, K).
    pub per_copy_g: [f64; 4],
    /// Ink for the run, kg (C, M, Y, K).
    pub run_kg: [f64; 4],
    pub run_total_kg: f64,
    pub assumption: &'static str,
}

/// A region's representative colour: its worst pixel.
#[derive(Debug, Clone, Serialize)]
pub struct RegionColour {
    /// Where: column and row, pixels.
    pub at: [u32; 2],
    /// The source value: RGB code values as read (alpha flattened) or CMYK percent.
    pub source: Vec<f64>,
    /// The source colour, CIELAB D50.
    pub lab: [f64; 3],
    /// The printed colour of `cmyk` (in the frame of the intent).
    pub printed_lab: [f64; 3],
    /// The ink build, percent.
    pub cmyk: [f64; 4],
}

#[derive(Debug, Clone, Serialize)]
pub struct RegionReport {
    pub kind: &'static str,
    /// Column, row, width, height in pixels.
    pub bbox: [u32; 4],
    /// The same box in millimetres (from the image resolution).
    pub bbox_mm: [f64; 4],
    pub pixels: u64,
    pub area_mm2: f64,
    /// Worst and mean value: ΔE2000 (out-of-gamut), total ink percent
    /// (over-ink, rich-black-detail), smallest dot percent (below-min-dot).
    pub max: f64,
    pub mean: f64,
    pub unit: &'static str,
    pub colour: RegionColour,
    /// Out-of-gamut only: whether the source colour is printable under the
    /// limits, and what keeps it out.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub in_gamut: Option<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub limited_by: Option<Vec<&'static str>>,
}

#[derive(Debug, Clone, Serialize)]
pub struct InspectTimings {
    pub read_ms: f64,
    pub separate_ms: f64,
    pub analyse_ms: f64,
    pub total_ms: f64,
}

/// The report of one file.
#[derive(Debug, Clone, Serialize)]
pub struct InspectReport {
    pub file: String,
    /// "rgb" (any non-CMYK input: RGB, gray, with or without alpha) or "cmyk".
    pub kind: &'static str,
    pub width: u32,
    pub height: u32,
    pub resolution_ppi: [f64; 2],
    pub condition: String,
    pub source: String,
    pub notes: Vec<String>,
    pub settings: InspectSettings,
    pub tac: TacSummary,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gamut: Option<GamutSummary>,
    pub plates: Vec<PlateReport>,
    pub ink_use: InkUse,
    pub regions: Vec<RegionReport>,
    /// Regions found (after speck removal), listed or not.
    pub regions_total: usize,
    pub regions_by_kind: BTreeMap<&'static str, usize>,
    pub rules: Vec<rules::RuleOutcome>,
    pub pass: bool,
    pub timings: InspectTimings,
    pub note: &'static str,
}
