//! The inspection as one self-contained HTML page: the maps (PNG, embedded
//! as base64 data), histograms of ΔE2000 and total ink, an a*b* chart of the
//! press gamut at several lightness levels with the image's out-of-gamut
//! colours, the region table, the rules and the settings. Charts are inline
//! SVG; the page loads nothing from elsewhere.

use super::export::Exporter;
use super::folder::InspectionFiles;
use crate::colour::RgbSpace;
use crate::error::Result;
use crate::inspect::{DE_BIN, InspectReport, Inspection};
use crate::report::maps::de_colour;
use crate::separation::Separator;
use std::fmt::Write;

/// Standard base64 (RFC 4648 §4) with padding.
pub fn base64(data: &[u8]) -> String {
    const ABC: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(data.len().div_ceil(3) * 4);
    for chunk in data.chunks(3) {
        let b = [chunk[0], *chunk.get(1).unwrap_or(&0), *chunk.get(2).unwrap_or(&0)];
        let n = (b[0] as u32) << 16 | (b[1] as u32) << 8 | b[2] as u32;
        for k in 0..4 {
            if k <= chunk.len() {
                out.push(ABC[(n >> (18 - 6 * k) & 63) as usize] as char);
            } else {
                out.push('=');
            }
        }
    }
    out
}

/// Text made safe for HTML content and attributes.
pub fn escape(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c => o.push(c),
        }
    }
    o
}

fn hex(c: [u8; 3]) -> String {
    format!("#{:02x}{:02x}{:02x}", c[0], c[1], c[2])
}

/// Regions shown in the page's table (the CSV and JSON hold every listed one).
const TABLE_ROWS: usize = 100;

const STYLE: &str = "
:root { --ink: #22262b; --soft: #5b6470; --line: #d8d2c4; --paper: #fbf8f1; --accent: #0e5e6f; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink); font: 15px/1.45 'DejaVu Sans', 'Segoe UI', Helvetica, Arial, sans-serif; }
main { max-width: 1180px; margin: 0 auto; padding: 28px 32px 48px; }
h1 { font-size: 24px; margin: 0 0 4px; font-weight: 600; word-break: break-all; }
h2 { font-size: 17px; margin: 34px 0 10px; padding-bottom: 4px; border-bottom: 2px solid var(--accent); font-weight: 600; }
.sub { color: var(--soft); margin: 0 0 16px; }
.verdict { display: inline-block; padding: 4px 14px; border-radius: 3px; font-weight: 700; letter-spacing: .04em; border: 2px solid var(--ink); }
.verdict.pass { background: #e4efe9; }
.verdict.fail { background: #f6e2d3; }
.note { background: #efe9dc; border-left: 4px solid var(--accent); padding: 8px 12px; margin: 14px 0; font-size: 13px; }
.figures { display: grid; grid-template-columns: repeat(auto-fill, minmax(170px, 1fr)); gap: 10px; }
.figure { background: #fff; border: 1px solid var(--line); padding: 8px 12px; }
.figure b { display: block; font-size: 20px; font-weight: 600; }
.figure span { color: var(--soft); font-size: 12px; }
.maps { display: flex; flex-wrap: wrap; gap: 18px; }
.maps figure { margin: 0; flex: 1 1 480px; }
.maps img { max-width: 100%; border: 1px solid var(--line); background: #fff; }
figcaption { color: var(--soft); font-size: 13px; margin-top: 4px; }
.charts { display: flex; flex-wrap: wrap; gap: 18px; }
.charts svg { background: #fff; border: 1px solid var(--line); }
table { border-collapse: collapse; width: 100%; font-size: 13px; background: #fff; }
th, td { border: 1px solid var(--line); padding: 4px 7px; text-align: left; vertical-align: top; }
th { background: #f1ece1; font-weight: 600; }
td.n { text-align: right; font-variant-numeric: tabular-nums; }
.chip { display: inline-block; width: 14px; height: 14px; border: 1px solid #0005; vertical-align: -2px; margin-right: 4px; }
.failed { font-weight: 700; }
";

/// Rebins a histogram: `bins` bars of `step` source bins each.
fn rebin(hist: &[u64], step: usize, bins: usize) -> Vec<u64> {
    (0..bins)
        .map(|b| hist.iter().skip(b * step).take(if b + 1 == bins { usize::MAX } else { step }).sum())
        .collect()
}

/// A bar chart: `bars` as (value, colour), x labels every `label_every` bars
/// from `x_of(i)`, vertical markers at `marks` (bar positions, fractional).
fn bar_chart(
    title: &str,
    bars: &[(u64, String)],
    x_label: &dyn Fn(usize) -> String,
    label_every: usize,
    marks: &[(f64, String)],
) -> String {
    let (w, h, left, bottom, top) = (560.0, 240.0, 52.0, 36.0, 28.0);
    let total: u64 = bars.iter().map(|b| b.0).sum::<u64>().max(1);
    let peak = bars.iter().map(|b| b.0).max().unwrap_or(0).max(1) as f64 / total as f64;
    let plot_w = w - left - 12.0;
    let plot_h = h - bottom - top;
    let bw = plot_w / bars.len().max(1) as f64;
    let mut s = String::new();
    let _ = write!(
        s,
        "<svg xmlns='http://www.w3.org/2000/svg' width='{w}' height='{h}' viewBox='0 0 {w} {h}' role='img' aria-label='{}'>",
        escape(title)
    );
    let _ = write!(
        s,
        "<text x='{left}' y='18' font-size='13' font-weight='600' fill='#22262b'>{}</text>",
        escape(title)
    );
    for k in 0..=4 {
        let v = peak * k as f64 / 4.0;
        let y = top + plot_h - plot_h * k as f64 / 4.0;
        let _ = write!(s, "<line x1='{left}' x2='{}' y1='{y:.1}' y2='{y:.1}' stroke='#ece6d8'/>", w - 12.0);
        let _ = write!(
            s,
            "<text x='{}' y='{:.1}' font-size='10' text-anchor='end' fill='#5b6470'>{:.1} %</text>",
            left - 4.0,
            y + 3.0,
            v * 100.0
        );
    }
    for (i, (n, colour)) in bars.iter().enumerate() {
        let frac = *n as f64 / total as f64;
        let bh = plot_h * frac / peak;
        let x = left + i as f64 * bw;
        if *n > 0 {
            let _ = write!(
                s,
                "<rect x='{x:.2}' y='{:.2}' width='{:.2}' height='{:.2}' fill='{colour}'/>",
                top + plot_h - bh.max(0.8),
                (bw - 0.6).max(0.5),
                bh.max(0.8)
            );
        }
        if i % label_every == 0 {
            let _ = write!(
                s,
                "<text x='{x:.1}' y='{:.1}' font-size='10' text-anchor='middle' fill='#5b6470'>{}</text>",
                top + plot_h + 14.0,
                escape(&x_label(i))
            );
        }
    }
    for (pos, text) in marks {
        let x = left + pos * bw;
        let _ = write!(
            s,
            "<line x1='{x:.1}' x2='{x:.1}' y1='{top}' y2='{:.1}' stroke='#22262b' stroke-dasharray='4 3'/>",
            top + plot_h
        );
        let _ = write!(
            s,
            "<text x='{:.1}' y='{:.1}' font-size='10' fill='#22262b'>{}</text>",
            x + 3.0,
            top + 10.0,
            escape(text)
        );
    }
    let _ = write!(
        s,
        "<line x1='{left}' x2='{}' y1='{:.1}' y2='{:.1}' stroke='#22262b'/>",
        w - 12.0,
        top + plot_h,
        top + plot_h
    );
    s.push_str("</svg>");
    s
}

fn de_histogram(hist: &[u64], thresholds: &[f64], p95: f64) -> String {
    let hi = thresholds.last().copied().unwrap_or(5.0);
    let wanted = (p95 * 1.5).max(hi * 2.0);
    let range = [5.0, 10.0, 20.0, 50.0, 100.0].into_iter().find(|&r| r >= wanted).unwrap_or(100.0);
    let bins = 50usize;
    let step = ((range / DE_BIN) / bins as f64).round() as usize;
    let width = step as f64 * DE_BIN;
    let lo = thresholds.first().copied().unwrap_or(2.0);
    let bars: Vec<(u64, String)> = rebin(hist, step, bins)
        .into_iter()
        .enumerate()
        .map(|(i, n)| {
            let mid = (i as f64 + 0.5) * width;
            (
                n,
                if mid > lo {
                    hex(de_colour(thresholds, mid))
                } else {
                    "#9aa5b1".to_string()
                },
            )
        })
        .collect();
    let marks: Vec<(f64, String)> = thresholds.iter().map(|&t| (t / width, format!("ΔE {t}"))).collect();
    bar_chart(
        "ΔE2000 per pixel (share of the image)",
        &bars,
        &|i| format!("{}", crate::report::round_to(i as f64 * width, 2)),
        10,
        &marks,
    )
}

fn ink_histogram(hist: &[u64], limit: f64) -> String {
    // 0.5 % bins → 5 % bars over 0–400 %.
    let bars: Vec<(u64, String)> = rebin(hist, 10, 80)
        .into_iter()
        .enumerate()
        .map(|(i, n)| {
            let mid = i as f64 * 5.0 + 2.5;
            (
                n,
                if mid > limit {
                    "#f2b134".to_string()
                } else {
                    "#5fa39a".to_string()
                },
            )
        })
        .collect();
    bar_chart(
        "Total ink per pixel (share of the image)",
        &bars,
        &|i| format!("{}", i * 5),
        10,
        &[(limit / 5.0, format!("limit {limit} %"))],
    )
}

/// The a*b* chart: the press gamut's outline at several lightness levels
/// (largest printable chroma per hue) and the out-of-gamut source colours.
fn ab_chart(inspection: &Inspection, separator: &Separator) -> String {
    const LEVELS: [f64; 5] = [25.0, 40.0, 55.0, 70.0, 85.0];
    const SHADES: [&str; 5] = ["#1d2b3a", "#35506b", "#50779a", "#7d9fbf", "#b0c6da"];
    let gamut = separator.gamut();
    let outlines: Vec<Vec<(f64, f64)>> = LEVELS
        .iter()
        .map(|&l| {
            (0..120)
                .map(|k| {
                    let h = k as f64 * 3.0;
                    let c = gamut.max_chroma(l, h);
                    (c * h.to_radians().cos(), c * h.to_radians().sin())
                })
                .collect()
        })
        .collect();
    let reach = outlines
        .iter()
        .flatten()
        .chain(inspection.out_of_gamut_labs.iter().map(|l| (l.a, l.b)).collect::<Vec<_>>().iter())
        .fold(60.0f64, |m, &(a, b)| m.max(a.abs()).max(b.abs()));
    let r = ((reach * 1.05) / 20.0).ceil() * 20.0;
    let size = 460.0;
    let c0 = size / 2.0;
    let scale = (size / 2.0 - 30.0) / r;
    let px = |a: f64, b: f64| (c0 + a * scale, c0 - b * scale);
    let mut s = String::new();
    let _ = write!(
        s,
        "<svg xmlns='http://www.w3.org/2000/svg' width='{}' height='{size}' viewBox='0 0 {} {size}' role='img' aria-label='a*b* chart'>",
        size + 200.0,
        size + 200.0
    );
    let mut g = -r;
    while g <= r + 1e-9 {
        let (x, _) = px(g, 0.0);
        let (_, y) = px(0.0, g);
        let _ = write!(
            s,
            "<line x1='{x:.1}' x2='{x:.1}' y1='30' y2='{:.1}' stroke='#ece6d8'/><line y1='{y:.1}' y2='{y:.1}' x1='30' x2='{:.1}' stroke='#ece6d8'/>",
            size - 30.0,
            size - 30.0
        );
        if g.abs() > 1e-9 {
            let _ = write!(
                s,
                "<text x='{x:.1}' y='{:.1}' font-size='10' text-anchor='middle' fill='#5b6470'>{g:.0}</text>",
                c0 + 13.0
            );
            let _ = write!(
                s,
                "<text x='{:.1}' y='{:.1}' font-size='10' text-anchor='end' fill='#5b6470'>{g:.0}</text>",
                c0 - 4.0,
                y + 3.0
            );
        }
        g += 20.0;
    }
    let _ = write!(
        s,
        "<line x1='30' x2='{:.1}' y1='{c0}' y2='{c0}' stroke='#8a8f96'/><line y1='30' y2='{:.1}' x1='{c0}' x2='{c0}' stroke='#8a8f96'/>",
        size - 30.0,
        size - 30.0
    );
    let _ = write!(
        s,
        "<text x='{:.1}' y='{:.1}' font-size='12' fill='#22262b'>a*</text><text x='{:.1}' y='24' font-size='12' fill='#22262b'>b*</text>",
        size - 26.0,
        c0 + 4.0,
        c0 + 6.0
    );
    let srgb = RgbSpace::Srgb.converter();
    for lab in &inspection.out_of_gamut_labs {
        let (x, y) = px(lab.a, lab.b);
        let c = srgb.from_lab(*lab).0.map(|v| (v.clamp(0.0, 1.0) * 255.0).round() as u8);
        let _ = write!(
            s,
            "<circle cx='{x:.1}' cy='{y:.1}' r='2.6' fill='{}' stroke='#22262b' stroke-width='0.5'/>",
            hex(c)
        );
    }
    for (k, outline) in outlines.iter().enumerate() {
        let pts: Vec<String> = outline
            .iter()
            .map(|&(a, b)| {
                let (x, y) = px(a, b);
                format!("{x:.1},{y:.1}")
            })
            .collect();
        let _ = write!(
            s,
            "<polygon points='{}' fill='none' stroke='{}' stroke-width='1.8'/>",
            pts.join(" "),
            SHADES[k]
        );
    }
    let lx = size + 8.0;
    let _ = write!(
        s,
        "<text x='{lx}' y='44' font-size='12' font-weight='600' fill='#22262b'>press gamut at</text>"
    );
    for (k, l) in LEVELS.iter().enumerate() {
        let y = 62.0 + k as f64 * 20.0;
        let _ = write!(
            s,
            "<line x1='{lx}' x2='{}' y1='{y}' y2='{y}' stroke='{}' stroke-width='3'/><text x='{}' y='{}' font-size='12' fill='#22262b'>L* {l:.0}</text>",
            lx + 26.0,
            SHADES[k],
            lx + 32.0,
            y + 4.0
        );
    }
    let y = 62.0 + LEVELS.len() as f64 * 20.0 + 10.0;
    let _ = write!(
        s,
        "<circle cx='{}' cy='{y}' r='4' fill='#c8642a' stroke='#22262b' stroke-width='0.5'/><text x='{}' y='{}' font-size='12' fill='#22262b'>out-of-gamut</text><text x='{}' y='{}' font-size='12' fill='#22262b'>source colours ({})</text>",
        lx + 13.0,
        lx + 32.0,
        y + 4.0,
        lx + 32.0,
        y + 20.0,
        inspection.out_of_gamut_labs.len()
    );
    s.push_str("</svg>");
    s
}

/// The page. `de_png` and `ink_png` are the maps as PNG bytes.
pub fn page(inspection: &Inspection, separator: &Separator, de_png: Option<&[u8]>, ink_png: &[u8]) -> String {
    let r = &inspection.report;
    let mut h = String::with_capacity(1 << 20);
    header(&mut h, r);
    figures(&mut h, r);
    maps(&mut h, r, de_png, ink_png);
    distributions(&mut h, inspection, separator);
    regions(&mut h, r);
    plates(&mut h, r);
    rules(&mut h, r);
    settings(&mut h, r);
    notes(&mut h, r);
    let _ = writeln!(h, "<p class='note'>{}</p></main></body></html>", escape(r.note));
    h
}

/// The title, the line under it, the verdict and the prediction note.
fn header(h: &mut String, r: &InspectReport) {
    let file_name = std::path::Path::new(&r.file)
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| r.file.clone());
    let _ = write!(
        h,
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><meta name='viewport' content='width=device-width, initial-scale=1'><title>Inspection of {}</title><style>{STYLE}</style></head><body><main>",
        escape(&file_name)
    );
    let _ = write!(h, "<h1>{}</h1>", escape(&file_name));
    let _ = write!(
        h,
        "<p class='sub'>{} · {} × {} px · {} × {} ppi · for {} · {} · source {}</p>",
        if r.kind == "rgb" { "RGB" } else { "CMYK" },
        r.width,
        r.height,
        r.resolution_ppi[0],
        r.resolution_ppi[1],
        escape(&r.condition),
        escape(&r.settings.separation.intent_phrase()),
        escape(&r.source)
    );
    let failed: Vec<&str> = r.rules.iter().filter(|o| o.failed).map(|o| o.rule.as_str()).collect();
    if r.pass {
        let _ = write!(h, "<span class='verdict pass'>PASSES its rules</span>");
    } else {
        let _ = write!(h, "<span class='verdict fail'>FAILS: {}</span>", escape(&failed.join(", ")));
    }
    let _ = write!(h, "<p class='note'>{}</p>", escape(r.note));
}

/// The key figures, one box each.
fn figures(h: &mut String, r: &InspectReport) {
    h.push_str("<h2>Figures</h2><div class='figures'>");
    let fig = |h: &mut String, value: String, what: &str| {
        let _ = write!(
            h,
            "<div class='figure'><b>{}</b><span>{}</span></div>",
            escape(&value),
            escape(what)
        );
    };
    if let Some(g) = &r.gamut {
        fig(h, format!("{:.2}", g.mean_de), "mean ΔE2000");
        fig(h, format!("{:.2}", g.p95_de), "95th percentile ΔE2000");
        fig(h, format!("{:.2}", g.max_de), "largest ΔE2000");
        for o in &g.over {
            fig(
                h,
                format!("{:.2} %", o.fraction * 100.0),
                &format!("of the image over ΔE {}", o.threshold),
            );
        }
        fig(
            h,
            format!("{:.2} %", g.outside_fraction * 100.0),
            &format!("of the image more than ΔE {} outside the press gamut", g.threshold),
        );
    }
    fig(
        h,
        format!("{:.1} %", r.tac.max),
        &format!("largest total ink (limit {} %)", r.tac.limit),
    );
    fig(h, format!("{:.1} %", r.tac.p99), "total ink, 99th percentile");
    fig(h, format!("{:.1} %", r.tac.mean), "mean total ink");
    fig(
        h,
        format!("{:.3} %", r.tac.over_fraction * 100.0),
        "of the image over the ink limit",
    );
    fig(h, format!("{}", r.regions_total), "regions found");
    fig(
        h,
        format!("{:.2} kg", r.ink_use.run_total_kg),
        &format!("ink for {} copies", r.ink_use.copies),
    );
    h.push_str("</div>");
}

/// The ΔE and total ink maps, embedded as PNG.
fn maps(h: &mut String, r: &InspectReport, de_png: Option<&[u8]>, ink_png: &[u8]) {
    h.push_str("<h2>Maps</h2><div class='maps'>");
    if let Some(png) = de_png {
        let _ = write!(
            h,
            "<figure><img alt='ΔE2000 map' src='data:image/png;base64,{}'><figcaption>ΔE2000 between the source colour and its printed colour, over a muted copy of the predicted print. Numbered boxes are the largest regions the press cannot reach (source colours more than the region threshold outside its gamut; up to 40 per map), numbered as in the table below.</figcaption></figure>",
            base64(png)
        );
    }
    let _ = write!(
        h,
        "<figure><img alt='total ink map' src='data:image/png;base64,{}'><figcaption>Total ink (largest in each map pixel); hatched where it is over the limit of {} %. Boxes: over-ink and rich-black-detail regions.</figcaption></figure>",
        base64(ink_png),
        r.tac.limit
    );
    h.push_str("</div>");
}

/// The histograms and, with ΔE, the a*b* chart of the press gamut.
fn distributions(h: &mut String, inspection: &Inspection, separator: &Separator) {
    let r = &inspection.report;
    h.push_str("<h2>Distributions</h2><div class='charts'>");
    if let (Some(hist), Some(g)) = (&inspection.de_hist, &r.gamut) {
        h.push_str(&de_histogram(hist, &r.settings.de_thresholds, g.p95_de));
    }
    h.push_str(&ink_histogram(&inspection.tac_hist, r.tac.limit));
    h.push_str("</div>");
    if r.gamut.is_some() {
        h.push_str("<h2>Press gamut and out-of-gamut colours (CIELAB a*b*)</h2><div class='charts'>");
        h.push_str(&ab_chart(inspection, separator));
        h.push_str("</div>");
    }
}

/// The region table (the first [`TABLE_ROWS`] regions).
fn regions(h: &mut String, r: &InspectReport) {
    let _ = write!(
        h,
        "<h2>Regions</h2><p class='sub'>{} found after dropping specks under {} mm²; {} listed in the JSON and the CSV (the largest of each kind), the first {} here.</p>",
        r.regions_total,
        r.settings.min_area_mm2,
        r.regions.len(),
        r.regions.len().min(TABLE_ROWS)
    );
    if !r.regions.is_empty() {
        h.push_str("<table><tr><th>#</th><th>kind</th><th>box, px (x, y, w, h)</th><th>box, mm</th><th>pixels</th><th>area, mm²</th><th>worst</th><th>mean</th><th>colour (worst pixel)</th><th>CMYK %</th><th>limited by</th></tr>");
        let srgb = RgbSpace::Srgb.converter();
        for (n, reg) in r.regions.iter().enumerate().take(TABLE_ROWS) {
            let c = &reg.colour;
            let chip = |lab: [f64; 3]| {
                hex(srgb
                    .from_lab(crate::colour::Lab::from_array(lab))
                    .0
                    .map(|v| (v.clamp(0.0, 1.0) * 255.0).round() as u8))
            };
            let _ = write!(
                h,
                "<tr><td class='n'>{}</td><td>{}</td><td class='n'>{}</td><td class='n'>{}</td><td class='n'>{}</td><td class='n'>{}</td><td class='n'>{} {}</td><td class='n'>{}</td><td><span class='chip' style='background:{}'></span>source L* {} a* {} b* {}<br><span class='chip' style='background:{}'></span>printed L* {} a* {} b* {}</td><td class='n'>{}</td><td>{}</td></tr>",
                n + 1,
                reg.kind,
                reg.bbox.map(|v| v.to_string()).join(", "),
                reg.bbox_mm.map(|v| format!("{v:.1}")).join(", "),
                reg.pixels,
                reg.area_mm2,
                if reg.unit == "%" {
                    format!("{:.1}", reg.max)
                } else {
                    format!("{:.2}", reg.max)
                },
                escape(reg.unit),
                if reg.unit == "%" {
                    format!("{:.1}", reg.mean)
                } else {
                    format!("{:.2}", reg.mean)
                },
                chip(c.lab),
                c.lab[0],
                c.lab[1],
                c.lab[2],
                chip(c.printed_lab),
                c.printed_lab[0],
                c.printed_lab[1],
                c.printed_lab[2],
                c.cmyk.map(|v| format!("{v:.1}")).join(" / "),
                reg.limited_by
                    .as_ref()
                    .map(|l| if l.is_empty() {
                        "in gamut (moved by the intent)".to_string()
                    } else {
                        l.join(", ")
                    })
                    .unwrap_or_default(),
            );
        }
        h.push_str("</table>");
    }
}

/// Plates and ink, with the assumptions of the ink estimate.
fn plates(h: &mut String, r: &InspectReport) {
    h.push_str("<h2>Plates and ink</h2><table><tr><th>plate</th><th>mean tone value</th><th>area with ≥ 1 %</th><th>area with a dot below the minimum</th><th>ink per copy</th><th>ink for the run</th></tr>");
    for (i, p) in r.plates.iter().enumerate() {
        let _ = write!(
            h,
            "<tr><td>{}</td><td class='n'>{:.2} %</td><td class='n'>{:.2} %</td><td class='n'>{:.2} %</td><td class='n'>{:.2} g</td><td class='n'>{:.3} kg</td></tr>",
            p.ink,
            p.mean_percent,
            p.inked_fraction * 100.0,
            p.below_min_dot_fraction * 100.0,
            r.ink_use.per_copy_g[i],
            r.ink_use.run_kg[i]
        );
    }
    let u = &r.ink_use;
    let _ = write!(
        h,
        "</table><p class='sub'>Ink estimate: sheet {} × {} mm ({}), {} copies ({}), ink film {} g/m² at 100 % ({}); {}.</p>",
        u.sheet_mm[0],
        u.sheet_mm[1],
        u.sheet_basis,
        u.copies,
        u.copies_basis,
        u.film_g_per_m2.map(|v| v.to_string()).join(" / "),
        u.film_basis,
        u.assumption
    );
}

/// The rules and their outcomes.
fn rules(h: &mut String, r: &InspectReport) {
    h.push_str("<h2>Rules</h2><table><tr><th>rule (fails when true)</th><th>measured</th><th>result</th></tr>");
    for o in &r.rules {
        let value = o
            .value
            .map(|v| format!("{v}"))
            .unwrap_or_else(|| "not measured for this input".into());
        let _ = write!(
            h,
            "<tr><td>{}</td><td class='n'>{}</td><td class='{}'>{}</td></tr>",
            escape(&o.rule),
            value,
            if o.failed { "failed" } else { "" },
            if o.failed { "failed" } else { "passed" }
        );
    }
    h.push_str("</table>");
}

/// The settings echo, one row per setting.
fn settings(h: &mut String, r: &InspectReport) {
    h.push_str("<h2>Settings</h2><table>");
    if let Ok(serde_json::Value::Object(map)) = serde_json::to_value(&r.settings) {
        for (k, v) in map {
            let plain = |v: &serde_json::Value| match v {
                serde_json::Value::String(s) => s.clone(),
                other => other.to_string(),
            };
            let text = match &v {
                serde_json::Value::Array(items) => items.iter().map(plain).collect::<Vec<_>>().join(", "),
                serde_json::Value::Object(fields) => fields
                    .iter()
                    .map(|(k, v)| format!("{} {}", k.replace('_', " "), plain(v)))
                    .collect::<Vec<_>>()
                    .join(" · "),
                other => plain(other),
            };
            let _ = write!(h, "<tr><th>{}</th><td>{}</td></tr>", escape(&k.replace('_', " ")), escape(&text));
        }
    }
    h.push_str("</table>");
}

/// What was assumed or done on the way, when anything was.
fn notes(h: &mut String, r: &InspectReport) {
    if !r.notes.is_empty() {
        h.push_str("<h2>Notes</h2><ul>");
        for n in &r.notes {
            let _ = write!(h, "<li>{}</li>", escape(n));
        }
        h.push_str("</ul>");
    }
}

/// The HTML page as a file of the report folder, with the maps embedded.
pub struct Page;

impl Exporter<InspectionFiles<'_>> for Page {
    fn suffix(&self) -> &'static str {
        "inspect.html"
    }

    fn export(&self, files: &InspectionFiles) -> Result<Option<Vec<u8>>> {
        let html = page(files.inspection, files.separator, files.de_png()?, files.ink_png()?);
        Ok(Some(html.into_bytes()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base64_matches_rfc_4648_test_vectors() {
        // RFC 4648 §10.
        for (plain, coded) in [
            ("", ""),
            ("f", "Zg=="),
            ("fo", "Zm8="),
            ("foo", "Zm9v"),
            ("foob", "Zm9vYg=="),
            ("fooba", "Zm9vYmE="),
            ("foobar", "Zm9vYmFy"),
        ] {
            assert_eq!(base64(plain.as_bytes()), coded);
        }
    }

    #[test]
    fn escaping() {
        assert_eq!(escape("<a href='x'>&\"</a>"), "&lt;a href=&#39;x&#39;&gt;&amp;&quot;&lt;/a&gt;");
    }
}
