//! The analysis of one file: the pixel pass ([`super::pixels`]), then the
//! regions of each kind ([`super::regions`]) with their worst pixel's
//! colours, the figures of the report ([`super::schema`]), the maps, and the
//! verdict of the rules ([`super::rules`]).

use super::delta_e::{DeModel, cmyk_of_key, rgb_of_key};
use super::feed::Feed;
use super::pixels::{BandIn, Cell, Pass, RegionRules, Scan, Scanned, Tally};
use super::regions::Region;
use super::schema::*;
use super::{DE_BIN, InspectOptions, Inspection, KINDS, MapData, Subject, ms, rules};
use crate::colour::{Lab, RgbSpace};
use crate::error::{Error, Result};
use crate::ink::{Cmyk, Ink};
use crate::job::{InkStats, TacSummary, Workshop};
use crate::raster::{Layout, Resolution};
use crate::report::round_to;
use crate::separation::{IntentLab, Separator};
use rayon::prelude::*;
use std::collections::BTreeMap;
use std::path::Path;
use std::time::Instant;

/// Pixels per band when the options name no band height: about four
/// million, so that a band's samples (source RGB, CMYK and what reading
/// holds) stay within a few tens of megabytes whatever the picture's size.
const BAND_PIXELS: usize = 1 << 22;

/// Pixel size and the areas derived from it.
struct Geometry {
    res: Resolution,
    /// Width and height of one pixel, mm.
    mm_x: f64,
    mm_y: f64,
    /// Area of one pixel, mm².
    px_mm2: f64,
    /// Pixels in the image (at least 1, for shares).
    px: f64,
}

impl Geometry {
    fn of(subject: &Subject) -> Geometry {
        let res = subject.resolution.unwrap_or(Resolution::DEFAULT);
        let (mm_x, mm_y) = (25.4 / res.x_ppi, 25.4 / res.y_ppi);
        let (w, h) = (subject.width as usize, subject.height as usize);
        Geometry {
            res,
            mm_x,
            mm_y,
            px_mm2: mm_x * mm_y,
            px: (w * h).max(1) as f64,
        }
    }

    /// A count of pixels as a share of the image, rounded for the report.
    fn share(&self, n: u64) -> f64 {
        round_to(n as f64 / self.px, 6)
    }
}

pub(super) fn analyse(
    workshop: &Workshop,
    path: &Path,
    subject: Subject,
    feed: &mut dyn Feed,
    opts: &InspectOptions,
    started: Instant,
) -> Result<Inspection> {
    let separator = &workshop.separator;
    let geometry = Geometry::of(&subject);
    let pass = Pass::new(subject.width, subject.height, subject.cmyk_bits, separator, opts, true);
    let scanned = scan(&subject, &pass, feed, separator, &geometry, opts)?;
    let t = Instant::now();
    let Scanned {
        mut tally,
        regions,
        cells,
        samples,
    } = scanned.pass;
    let stats = std::mem::take(&mut tally.ink);
    let found = Found::of(regions);
    let region_reports = describe_regions(&found.listed, &subject, separator, &geometry);
    let gamut = scanned.distinct.map(|distinct| gamut_summary(&tally, distinct, opts, &geometry));
    let (tac, plates) = ink_summaries(&stats, &tally, separator, &geometry);
    let ink_use = ink_use(&stats, separator, opts);
    let out_of_gamut_labs = out_of_gamut_sample(&samples, &subject);
    let with_de = gamut.is_some();
    let maps = opts.keep_maps.then(|| map_data(&cells, &pass, separator, with_de));
    let analyse_ms = round_to(scanned.analyse_ms + t.elapsed().as_secs_f64() * 1000.0, 1);
    let mut report = InspectReport {
        file: path.display().to_string(),
        kind: if subject.layout == Layout::Cmyk { "cmyk" } else { "rgb" },
        width: subject.width,
        height: subject.height,
        resolution_ppi: [round_to(geometry.res.x_ppi, 2), round_to(geometry.res.y_ppi, 2)],
        condition: separator.condition().name.clone(),
        source: subject.source_description,
        notes: subject.notes,
        settings: inspect_settings(workshop, subject.compressed_from, opts),
        tac,
        gamut,
        plates,
        ink_use,
        regions: region_reports,
        regions_total: found.total,
        regions_by_kind: found.by_kind,
        rules: Vec::new(),
        pass: true,
        timings: InspectTimings {
            read_ms: feed.read_ms(),
            separate_ms: feed.separate_ms(),
            analyse_ms,
            total_ms: ms(started),
        },
        note: crate::report::PREDICTION_NOTE,
    };
    rules::judge(&mut report, &opts.rules)?;
    Ok(Inspection {
        report,
        maps,
        de_hist: with_de.then(|| std::mem::take(&mut tally.de_hist)),
        tac_hist: stats.tac_hist.clone(),
        out_of_gamut_labs,
    })
}

/// The pass over every band of the feed, and what it took.
struct Scanning {
    pass: Scanned,
    /// RGB and gray input: the distinct 8-bit RGB values (0 for 16-bit).
    distinct: Option<u64>,
    /// Time in the pass itself (reading and separating apart), ms.
    analyse_ms: f64,
}

/// Rows per band of the pass over a picture `width` pixels wide whose map
/// cells are `factor` pixels square: about [`BAND_PIXELS`], whole cells.
fn band_rows(width: usize, factor: usize, opts: &InspectOptions) -> u32 {
    match opts.band_rows {
        Some(n) => n.max(1),
        None => (BAND_PIXELS / width.max(1)).div_ceil(factor).max(1) as u32 * factor as u32,
    }
}

/// Bands the pass takes over a `width` × `height` picture (for a progress bar).
pub(super) fn bands_in_pass(width: u32, height: u32, opts: &InspectOptions) -> u64 {
    let factor = width.max(height).div_ceil(super::MAP_SIDE).max(1) as usize;
    u64::from(height.div_ceil(band_rows(width as usize, factor, opts)))
}

fn scan(
    subject: &Subject,
    pass: &Pass,
    feed: &mut dyn Feed,
    separator: &Separator,
    geometry: &Geometry,
    opts: &InspectOptions,
) -> Result<Scanning> {
    let t = Instant::now();
    let rules = RegionRules {
        min_pixels: ((opts.min_area_mm2 / geometry.px_mm2).ceil() as u64).max(1),
        keep: opts.max_regions,
        detail_side: ((opts.rich_black_detail_mm / geometry.mm_x.min(geometry.mm_y)).round() as u32).max(2),
    };
    let mut model = subject.source.map(|source| DeModel::new(separator, source, subject.rgb_bits));
    let mut scan = Scan::new(pass, &rules);
    let w = subject.width as usize;
    let rows = band_rows(w, pass.factor, opts);
    let mut outside = t.elapsed().as_secs_f64();
    let mut next_row = 0u32;
    loop {
        let t_feed = Instant::now();
        let Some(band) = feed.next(rows)? else { break };
        outside += t_feed.elapsed().as_secs_f64();
        let rgb_len = band.rgb.as_ref().map_or(0, |rgb| rgb.len());
        let rgb_ok = band.rgb.is_none() || rgb_len == band.rows as usize * w * 3;
        if band.y != next_row || band.cmyk.len() != band.rows as usize * w * 4 || !rgb_ok || band.y + band.rows > subject.height {
            return Err(Error::Internal(format!(
                "a band of rows {}..{} does not fit the picture ({} × {}, {} rows checked)",
                band.y,
                band.y + band.rows,
                subject.width,
                subject.height,
                next_row
            )));
        }
        next_row = band.y + band.rows;
        if let (Some(m), Some(rgb)) = (model.as_mut(), band.rgb.as_ref()) {
            m.prepare(rgb, &band.cmyk);
        }
        scan.band(&BandIn {
            y: band.y as usize,
            rows: band.rows as usize,
            cmyk: &band.cmyk,
            rgb: band.rgb.as_ref(),
            model: model.as_ref(),
        });
    }
    if next_row != subject.height {
        return Err(Error::Internal(format!(
            "the picture ended after {next_row} of its {} rows",
            subject.height
        )));
    }
    Ok(Scanning {
        pass: scan.finish(),
        distinct: model.map(|m| if m.dense.is_some() { m.distinct } else { 0 }),
        analyse_ms: (t.elapsed().as_secs_f64() - outside) * 1000.0,
    })
}

/// Regions found, per kind in [`KINDS`] order.
struct Found {
    /// The listed ones (the largest `max_regions` of each kind), with their kind's index.
    listed: Vec<(usize, Region)>,
    total: usize,
    by_kind: BTreeMap<&'static str, usize>,
}

impl Found {
    fn of(regions: [(Vec<Region>, usize); 4]) -> Found {
        let mut found = Found {
            listed: Vec::new(),
            total: 0,
            by_kind: KINDS.iter().map(|&kind| (kind, 0usize)).collect(),
        };
        for (k, (listed, count)) in regions.into_iter().enumerate() {
            *found.by_kind.entry(KINDS[k]).or_insert(0) += count;
            found.total += count;
            found.listed.extend(listed.into_iter().map(|r| (k, r)));
        }
        found
    }
}

/// Each listed region as the report shows it: where, how large, how bad,
/// and the colours of its worst pixel (for out-of-gamut regions, whether the
/// colour is printable under the limits and what keeps it out).
fn describe_regions(listed: &[(usize, Region)], subject: &Subject, separator: &Separator, geometry: &Geometry) -> Vec<RegionReport> {
    let (mm_x, mm_y, px_mm2) = (geometry.mm_x, geometry.mm_y, geometry.px_mm2);
    listed
        .par_iter()
        .map(|(k, r)| {
            let (x, y) = r.max_at;
            let ink = cmyk_of_key(r.tag[0]);
            let printed = separator.printed_in_frame(ink).lab();
            let (source_value, lab) = match subject.source {
                Some(src) => {
                    let max = if subject.rgb_bits == 8 { 255.0 } else { 65535.0 };
                    let v = rgb_of_key(r.tag[1], subject.rgb_bits);
                    (v.iter().map(|c| (c * max).round()).collect(), src.labs_of(&[v])[0])
                }
                None => (ink.to_percent().iter().map(|&v| round_to(v, 1)).collect(), printed),
            };
            let (in_gamut, limited_by) = if *k == 0 {
                let (inside, limits) = separator.gamut_check(separator.to_working(IntentLab::new(lab)));
                (Some(inside), Some(limits.iter().map(|l| l.name()).collect()))
            } else {
                (None, None)
            };
            let sign = if *k == 3 { -1.0 } else { 1.0 };
            let (max, mean) = (sign * r.max as f64, sign * r.mean());
            RegionReport {
                kind: KINDS[*k],
                bbox: [r.x, r.y, r.w, r.h],
                bbox_mm: [
                    round_to(r.x as f64 * mm_x, 2),
                    round_to(r.y as f64 * mm_y, 2),
                    round_to(r.w as f64 * mm_x, 2),
                    round_to(r.h as f64 * mm_y, 2),
                ],
                pixels: r.pixels,
                area_mm2: round_to(r.pixels as f64 * px_mm2, 3),
                max: round_to(max, 2),
                mean: round_to(mean, 2),
                unit: if *k == 0 { "ΔE2000" } else { "%" },
                colour: RegionColour {
                    at: [x, y],
                    source: source_value,
                    lab: lab3(lab),
                    printed_lab: lab3(printed),
                    cmyk: ink.to_percent().map(|v| round_to(v, 1)),
                },
                in_gamut,
                limited_by,
            }
        })
        .collect()
}

/// The ΔE figures and the share outside the gamut (RGB and gray input).
fn gamut_summary(tally: &Tally, distinct: u64, opts: &InspectOptions, geometry: &Geometry) -> GamutSummary {
    let px = geometry.px;
    let frac = |n: u64| geometry.share(n);
    GamutSummary {
        mean_de: round_to(tally.de_sum / px, 2),
        p95_de: round_to(hist_quantile(&tally.de_hist, 0.95, DE_BIN), 2),
        max_de: round_to(tally.de_max as f64, 2),
        over_fraction: frac(tally.region_over),
        threshold: opts.region_de,
        over: opts
            .de_thresholds
            .iter()
            .zip(&tally.de_over)
            .map(|(&t, &n)| ThresholdShare {
                threshold: t,
                fraction: frac(n),
            })
            .collect(),
        outside_fraction: frac(tally.outside_over),
        outside_mean_de: round_to(tally.outside_sum / px, 2),
        outside_max_de: round_to(tally.outside_max as f64, 2),
        distinct_values: distinct,
    }
}

/// Total ink against the limit, and each plate's coverage and small dots.
fn ink_summaries(stats: &InkStats, tally: &Tally, separator: &Separator, geometry: &Geometry) -> (TacSummary, Vec<PlateReport>) {
    let px = geometry.px;
    let tac = TacSummary {
        limit: round_to(crate::settings::Coverage(separator.settings().tac).percent().0, 1),
        max: round_to(stats.tac_max * 100.0, 1),
        p99: stats.tac_quantile(0.99),
        mean: round_to(stats.tac_sum / px * 100.0, 1),
        over_fraction: geometry.share(stats.over),
    };
    let plates = Ink::ALL
        .iter()
        .map(|&ink| PlateReport {
            ink: ink.name(),
            mean_percent: round_to(stats.plate_sum[ink.index()] / px * 100.0, 2),
            inked_fraction: geometry.share(stats.plate_inked[ink.index()]),
            below_min_dot_fraction: geometry.share(tally.small_dots[ink.index()]),
        })
        .collect();
    (tac, plates)
}

/// The a*b* chart's points: distinct out-of-gamut source colours from the
/// sample grid (`keys`: their RGB keys), at most about 1500 (RGB and gray input).
fn out_of_gamut_sample(keys: &[u64], subject: &Subject) -> Vec<Lab> {
    let Some(src) = subject.source else {
        return Vec::new();
    };
    let stride = keys.len().div_ceil(1500).max(1);
    let values: Vec<[f64; 3]> = keys.iter().step_by(stride).map(|&k| rgb_of_key(k, subject.rgb_bits)).collect();
    src.labs_of(&values)
}

/// The reduced maps: the printed colour of each cell's mean ink (sRGB), its
/// largest ΔE and largest total ink.
fn map_data(cells: &[Cell], pass: &Pass, separator: &Separator, with_de: bool) -> MapData {
    let srgb = RgbSpace::Srgb.converter();
    let base = cells
        .par_iter()
        .map(|c| {
            let n = c.n.max(1) as f64;
            let ink = Cmyk::new(c.ink[0] as f64 / n, c.ink[1] as f64 / n, c.ink[2] as f64 / n, c.ink[3] as f64 / n);
            let rgb = srgb.from_lab(separator.printed_relative(ink).lab()).0;
            rgb.map(|v| (v.clamp(0.0, 1.0) * 255.0).round() as u8)
        })
        .collect();
    MapData {
        width: pass.map_w as u32,
        height: pass.map_h() as u32,
        factor: pass.factor as u32,
        base,
        de: with_de.then(|| cells.iter().map(|c| c.de).collect()),
        tac: cells.iter().map(|c| c.tac).collect(),
    }
}

/// The settings echo of an inspection.
fn inspect_settings(
    workshop: &Workshop,
    compressed_from: Option<crate::separation::CompressFrom>,
    opts: &InspectOptions,
) -> InspectSettings {
    let min_dot = workshop.separator.condition().min_dot;
    let rule_texts: Vec<String> = opts.rules.iter().map(|r| r.text.clone()).collect();
    InspectSettings {
        separation: crate::report::SettingsReport {
            compress_from: compressed_from.map(crate::separation::CompressFrom::name),
            ..workshop.settings_report.clone()
        },
        de_thresholds: opts.de_thresholds.clone(),
        region_de: opts.region_de,
        min_area_mm2: opts.min_area_mm2,
        min_dot_percent: round_to(min_dot * 100.0, 2),
        rich_black: RichBlackSettings {
            k_percent: round_to(opts.rich_black_k * 100.0, 1),
            cmy_percent: round_to(opts.rich_black_cmy * 100.0, 1),
            detail_mm: opts.rich_black_detail_mm,
            basis: "common practice",
        },
        fail_if: if rule_texts.is_empty() {
            vec![rules::DEFAULT_RULE.to_string()]
        } else {
            rule_texts
        },
    }
}

/// The ink estimate for a run: the file's mean coverage over the sheet.
fn ink_use(stats: &InkStats, separator: &Separator, opts: &InspectOptions) -> InkUse {
    let px = stats.pixels.max(1) as f64;
    let condition_film = separator.condition().ink_film;
    let (film, film_basis) = match opts.ink_film {
        Some(f) => (f, "given"),
        None if condition_film == crate::press::DEFAULT_INK_FILM => (condition_film, "common practice (sheetfed offset, coated paper)"),
        None => (condition_film, "printing condition"),
    };
    let sheet_m2 = opts.sheet_mm[0] * opts.sheet_mm[1] / 1e6;
    let per_copy: [f64; 4] = std::array::from_fn(|i| stats.plate_sum[i] / px * sheet_m2 * film[i]);
    let run_kg: [f64; 4] = per_copy.map(|g| g * opts.copies as f64 / 1000.0);
    InkUse {
        sheet_mm: opts.sheet_mm,
        sheet_basis: if opts.sheet_given {
            "given"
        } else {
            "common practice (B1-class sheetfed sheet)"
        },
        copies: opts.copies,
        copies_basis: if opts.copies_given { "given" } else { "common practice default" },
        film_g_per_m2: film,
        film_basis,
        per_copy_g: per_copy.map(|v| round_to(v, 3)),
        run_kg: run_kg.map(|v| round_to(v, 3)),
        run_total_kg: round_to(run_kg.iter().sum(), 3),
        assumption: "the file's mean coverage over the whole sheet (the artwork or its copies fill the sheet); no waste or spoilage",
    }
}

fn lab3(l: Lab) -> [f64; 3] {
    [round_to(l.l, 2), round_to(l.a, 2), round_to(l.b, 2)]
}

/// Value at quantile `q` of a histogram with bins of `bin`.
fn hist_quantile(hist: &[u64], q: f64, bin: f64) -> f64 {
    let total: u64 = hist.iter().sum();
    let target = ((total as f64 * q).ceil() as u64).max(1);
    let mut seen = 0;
    for (i, n) in hist.iter().enumerate() {
        seen += n;
        if seen >= target {
            return i as f64 * bin;
        }
    }
    (hist.len().saturating_sub(1)) as f64 * bin
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn histogram_quantile_is_the_first_bin_reaching_the_share() {
        let mut h = vec![0u64; 10];
        h[1] = 90;
        h[7] = 10;
        assert_eq!(hist_quantile(&h, 0.9, 0.5), 0.5);
        assert_eq!(hist_quantile(&h, 0.95, 0.5), 3.5);
    }
}
