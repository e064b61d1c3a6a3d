//! PNG maps of an inspection: ΔE2000 over a muted copy of the image, and
//! total ink as a heat map, each with its regions outlined and numbered
//! and a legend drawn in our small bitmap font ([`crate::report::font`]).
//!
//! Palettes (our own): ΔE runs from straw through apricot and raspberry to
//! ink violet; total ink from paper through sand and sea green to deep blue,
//! with ink over the limit hatched in marigold and near-black stripes.

use super::export::Exporter;
use super::folder::InspectionFiles;
use crate::error::{Error, Result};
use crate::inspect::{InspectReport, KIND_OUT_OF_GAMUT, KIND_OVER_INK, KIND_RICH_BLACK, KIND_SMALL_DOT, MapData};
use crate::report::font;

type Rgb = [u8; 3];

const PAPER: Rgb = [0xFB, 0xF8, 0xF1];
const TEXT: Rgb = [0x22, 0x26, 0x2B];
const OUTLINE: Rgb = [0x0E, 0x5E, 0x6F];
const HATCH_A: Rgb = [0xF2, 0xB1, 0x34];
const HATCH_B: Rgb = [0x1A, 0x1A, 0x1A];

/// ΔE palette stops, as multiples of the thresholds: see [`de_colour`].
const DE_COLOURS: [Rgb; 4] = [[0xF2, 0xD9, 0x8A], [0xE0, 0x8E, 0x45], [0xB2, 0x3A, 0x6E], [0x3B, 0x1F, 0x5C]];
const INK_COLOURS: [Rgb; 4] = [PAPER, [0xD9, 0xCB, 0xA3], [0x5F, 0xA3, 0x9A], [0x1F, 0x4E, 0x79]];

/// An RGB drawing surface.
struct Canvas {
    w: usize,
    h: usize,
    px: Vec<Rgb>,
}

impl Canvas {
    fn new(w: usize, h: usize, fill: Rgb) -> Canvas {
        Canvas {
            w,
            h,
            px: vec![fill; w * h],
        }
    }

    fn set(&mut self, x: i64, y: i64, c: Rgb) {
        if x >= 0 && y >= 0 && (x as usize) < self.w && (y as usize) < self.h {
            self.px[y as usize * self.w + x as usize] = c;
        }
    }

    fn fill(&mut self, x: i64, y: i64, w: i64, h: i64, c: Rgb) {
        for yy in y..y + h {
            for xx in x..x + w {
                self.set(xx, yy, c);
            }
        }
    }

    fn outline(&mut self, x: i64, y: i64, w: i64, h: i64, thick: i64, c: Rgb) {
        self.fill(x - thick, y - thick, w + 2 * thick, thick, c);
        self.fill(x - thick, y + h, w + 2 * thick, thick, c);
        self.fill(x - thick, y, thick, h, c);
        self.fill(x + w, y, thick, h, c);
    }

    /// Text at scale `s` (each font dot s × s pixels); returns the width drawn.
    fn text(&mut self, x: i64, y: i64, s: i64, text: &str, c: Rgb) -> i64 {
        for (col, row) in font::dots(text) {
            self.fill(x + col as i64 * s, y + row as i64 * s, s, s, c);
        }
        text_width(text, s)
    }

    fn png(&self) -> Result<Vec<u8>> {
        let mut out = Vec::new();
        {
            let mut enc = png::Encoder::new(&mut out, self.w as u32, self.h as u32);
            enc.set_color(png::ColorType::Rgb);
            enc.set_depth(png::BitDepth::Eight);
            let mut writer = enc.write_header().map_err(|e| Error::Internal(format!("map PNG: {e}")))?;
            let bytes: Vec<u8> = self.px.iter().flatten().copied().collect();
            writer
                .write_image_data(&bytes)
                .map_err(|e| Error::Internal(format!("map PNG: {e}")))?;
        }
        Ok(out)
    }
}

fn text_width(text: &str, s: i64) -> i64 {
    font::advance(text) as i64 * s
}

fn mix(a: Rgb, b: Rgb, t: f64) -> Rgb {
    let t = t.clamp(0.0, 1.0);
    std::array::from_fn(|i| (a[i] as f64 + (b[i] as f64 - a[i] as f64) * t).round() as u8)
}

/// Piecewise-linear colour between `stops` placed at `at` (ascending).
fn ramp(stops: &[Rgb; 4], at: [f64; 4], v: f64) -> Rgb {
    if v <= at[0] {
        return stops[0];
    }
    for i in 0..3 {
        if v <= at[i + 1] {
            return mix(stops[i], stops[i + 1], (v - at[i]) / (at[i + 1] - at[i]));
        }
    }
    stops[3]
}

/// Where the ΔE palette stops sit: the lower threshold, the upper, twice
/// and four times the upper.
fn de_stops(thresholds: &[f64]) -> [f64; 4] {
    let lo = thresholds.first().copied().unwrap_or(2.0);
    let hi = thresholds.last().copied().unwrap_or(5.0).max(lo + 0.5);
    [lo, hi, 2.0 * hi, 4.0 * hi]
}

/// The colour of a ΔE over the lower threshold.
pub fn de_colour(thresholds: &[f64], de: f64) -> [u8; 3] {
    ramp(&DE_COLOURS, de_stops(thresholds), de)
}

/// A muted copy of a colour: mostly its lightness, lifted towards white.
fn muted(c: Rgb) -> Rgb {
    let y = 0.2126 * c[0] as f64 + 0.7152 * c[1] as f64 + 0.0722 * c[2] as f64;
    let grey = [y.round() as u8; 3];
    let soft = mix(grey, c, 0.25);
    mix(soft, [255; 3], 0.55)
}

fn ink_stops(limit: f64) -> [f64; 4] {
    [0.0, 100.0f64.min(limit / 3.0), 200.0f64.min(limit * 2.0 / 3.0), limit]
}

fn label(v: f64) -> String {
    if (v - v.round()).abs() < 1e-9 {
        format!("{v:.0}")
    } else {
        format!("{v:.1}")
    }
}

/// The page around a map: the map at the top left, a legend strip below
/// (92 px tall at scale 1). Returns the canvas, the margin and the legend's
/// scale, which grows with the map so the legend stays readable when the
/// image is shown smaller.
fn frame(maps: &MapData) -> (Canvas, usize, i64) {
    let pad = 12;
    let w = (maps.width as usize + 2 * pad).max(640);
    let s = ((w as f64 / 600.0).round() as usize).max(1);
    let w = w.max(600 * s + 2 * pad);
    let h = maps.height as usize + 2 * pad + 92 * s;
    (Canvas::new(w, h, PAPER), pad, s as i64)
}

/// Outlines and numbers regions given as (number, bbox in image pixels).
/// Tags go where they overlap no tag already drawn ([`place_tag`]), so the
/// numbers of neighbouring regions stay readable.
fn draw_regions(c: &mut Canvas, maps: &MapData, pad: usize, s: i64, regions: &[(usize, [u32; 4])]) {
    let f = maps.factor as f64;
    let mut boxes = Vec::with_capacity(regions.len());
    for &(_, [x, y, w, h]) in regions {
        let rx = pad as i64 + (x as f64 / f).floor() as i64;
        let ry = pad as i64 + (y as f64 / f).floor() as i64;
        let rw = (((x + w) as f64 / f).ceil() as i64 - (x as f64 / f).floor() as i64).max(1);
        let rh = (((y + h) as f64 / f).ceil() as i64 - (y as f64 / f).floor() as i64).max(1);
        c.outline(rx, ry, rw, rh, 2, [255; 3]);
        c.outline(rx - 2, ry - 2, rw + 4, rh + 4, 1, OUTLINE);
        c.outline(rx, ry, rw, rh, 1, OUTLINE);
        boxes.push([rx, ry, rw, rh]);
    }
    // Tags after all outlines, so no outline cuts through a number.
    let area = [0, 0, c.w as i64, (maps.height as usize + 2 * pad) as i64];
    let mut placed: Vec<[i64; 4]> = Vec::with_capacity(regions.len());
    for (&(n, _), &region) in regions.iter().zip(&boxes) {
        let tag = format!("{n}");
        let size = [text_width(&tag, s) + 3 * s, 11 * s];
        let [tx, ty] = place_tag(region, size, area, &placed);
        c.fill(tx, ty, size[0], size[1], OUTLINE);
        c.text(tx + 2 * s, ty + 2 * s, s, &tag, [255; 3]);
        placed.push([tx, ty, size[0], size[1]]);
    }
}

/// Where the number tag of `region` ([x, y, w, h]) of `size` [w, h] goes:
/// the first spot, in order of nearness, that lies inside `area` and keeps
/// a pixel clear of every tag in `placed`. Spots: above the box at its left
/// edge, below it, at its right edge above and below, then rows stacked
/// further up and down. Where all are taken (a crowd of tiny regions), the
/// first spot inside `area`.
fn place_tag(region: [i64; 4], size: [i64; 2], area: [i64; 4], placed: &[[i64; 4]]) -> [i64; 2] {
    let [rx, ry, rw, rh] = region;
    let [tw, th] = size;
    let (left, right) = (rx - 2, rx + rw + 2 - tw);
    let (above, below) = (ry - th - 2, ry + rh + 3);
    let mut spots = vec![[left, above], [left, below], [right, above], [right, below]];
    for k in 1..=4 {
        for y in [above - k * (th + 1), below + k * (th + 1)] {
            spots.extend([[left, y], [right, y]]);
        }
    }
    let inside = |&[x, y]: &[i64; 2]| x >= area[0] && y >= area[1] && x + tw <= area[0] + area[2] && y + th <= area[1] + area[3];
    let clear = |&[x, y]: &[i64; 2]| {
        placed
            .iter()
            .all(|p| x + tw < p[0] || p[0] + p[2] < x || y + th < p[1] || p[1] + p[3] < y)
    };
    spots
        .iter()
        .find(|spot| inside(spot) && clear(spot))
        .or_else(|| spots.iter().find(|spot| inside(spot)))
        .copied()
        .unwrap_or([
            left.clamp(area[0], (area[0] + area[2] - tw).max(area[0])),
            below.clamp(area[1], (area[1] + area[3] - th).max(area[1])),
        ])
}

/// The ΔE2000 map (RGB input), as PNG bytes.
pub fn de_map_png(maps: &MapData, thresholds: &[f64], regions: &[(usize, [u32; 4])]) -> Result<Vec<u8>> {
    let de = maps
        .de
        .as_ref()
        .ok_or_else(|| Error::Internal("ΔE map of a file without ΔE".into()))?;
    let (mut c, pad, s) = frame(maps);
    let lo = thresholds.first().copied().unwrap_or(2.0);
    for y in 0..maps.height as usize {
        for x in 0..maps.width as usize {
            let i = y * maps.width as usize + x;
            let v = de[i] as f64;
            let colour = if v > lo {
                mix(muted(maps.base[i]), de_colour(thresholds, v), 0.9)
            } else {
                muted(maps.base[i])
            };
            c.set((pad + x) as i64, (pad + y) as i64, colour);
        }
    }
    draw_regions(&mut c, maps, pad, s, regions);
    // Legend: the ramp from the lower threshold to four times the upper.
    let stops = de_stops(thresholds);
    let top = (maps.height as usize + 2 * pad) as i64;
    let x0 = pad as i64;
    c.text(x0, top + 4 * s, 2 * s, "ΔE2000 PRINTED VS SOURCE", TEXT);
    let (bar_x, bar_y, bar_w, bar_h) = (x0 + 110 * s, top + 26 * s, 360 * s, 18 * s);
    let span = stops[3] * 1.1 - stops[0];
    for i in 0..bar_w {
        let v = stops[0] + span * i as f64 / (bar_w - 1) as f64;
        c.fill(bar_x + i, bar_y, 1, bar_h, de_colour(thresholds, v));
    }
    c.fill(x0, bar_y, 90 * s, bar_h, muted([150, 150, 150]));
    c.outline(x0, bar_y, 90 * s, bar_h, 1, TEXT);
    c.outline(bar_x, bar_y, bar_w, bar_h, 1, TEXT);
    c.text(x0, bar_y + bar_h + 8 * s, s, &format!("UP TO {}:", label(lo)), TEXT);
    c.text(x0, bar_y + bar_h + 18 * s, s, "IMAGE MUTED", TEXT);
    for v in stops {
        let x = bar_x + ((v - stops[0]) / span * (bar_w - 1) as f64).round() as i64;
        c.fill(x, bar_y + bar_h, s, 5 * s, TEXT);
        let t = label(v);
        c.text(x - text_width(&t, 2 * s) / 2, bar_y + bar_h + 8 * s, 2 * s, &t, TEXT);
    }
    let note_x = bar_x + bar_w + 16 * s;
    c.text(note_x, bar_y + 2 * s, s, "BOXES: REGIONS", OUTLINE);
    c.text(note_x, bar_y + 14 * s, s, "(NUMBERS AS IN", OUTLINE);
    c.text(note_x, bar_y + 26 * s, s, "THE TABLE)", OUTLINE);
    c.text(
        note_x,
        bar_y + 42 * s,
        s,
        &format!("1 MAP PX = {} X {} PX", maps.factor, maps.factor),
        TEXT,
    );
    c.png()
}

fn hatch(x: i64, y: i64) -> Rgb {
    if (x + y).rem_euclid(8) < 4 { HATCH_A } else { HATCH_B }
}

/// The total ink map, as PNG bytes.
pub fn ink_map_png(maps: &MapData, limit: f64, regions: &[(usize, [u32; 4])]) -> Result<Vec<u8>> {
    let (mut c, pad, s) = frame(maps);
    let stops = ink_stops(limit);
    for y in 0..maps.height as usize {
        for x in 0..maps.width as usize {
            let v = maps.tac[y * maps.width as usize + x] as f64;
            let (px, py) = ((pad + x) as i64, (pad + y) as i64);
            let colour = if v > limit + 0.5 {
                hatch(px, py)
            } else {
                ramp(&INK_COLOURS, stops, v)
            };
            c.set(px, py, colour);
        }
    }
    draw_regions(&mut c, maps, pad, s, regions);
    let top = (maps.height as usize + 2 * pad) as i64;
    let x0 = pad as i64;
    c.text(x0, top + 4 * s, 2 * s, "TOTAL INK %", TEXT);
    let (bar_y, bar_w, bar_h) = (top + 26 * s, 360 * s, 18 * s);
    for i in 0..bar_w {
        let v = limit * i as f64 / (bar_w - 1) as f64;
        c.fill(x0 + i, bar_y, 1, bar_h, ramp(&INK_COLOURS, stops, v));
    }
    c.outline(x0, bar_y, bar_w, bar_h, 1, TEXT);
    for v in stops {
        let x = x0 + (v / limit * (bar_w - 1) as f64).round() as i64;
        c.fill(x, bar_y + bar_h, s, 5 * s, TEXT);
        let t = label(v);
        let tx = (x - text_width(&t, 2 * s) / 2).clamp(x0, x0 + bar_w - text_width(&t, 2 * s));
        c.text(tx, bar_y + bar_h + 8 * s, 2 * s, &t, TEXT);
    }
    let sx = x0 + bar_w + 28 * s;
    for yy in 0..bar_h {
        for xx in 0..48 * s {
            c.set(sx + xx, bar_y + yy, hatch(sx + xx, bar_y + yy));
        }
    }
    c.outline(sx, bar_y, 48 * s, bar_h, 1, TEXT);
    c.text(sx, bar_y + bar_h + 8 * s, 2 * s, &format!("> {}", label(limit)), TEXT);
    c.text(sx + 56 * s, bar_y + 2 * s, s, "OVER THE", TEXT);
    c.text(sx + 56 * s, bar_y + 12 * s, s, "INK LIMIT", TEXT);
    c.text(x0 + 200 * s, top + 8 * s, s, "BOXES: REGIONS (NUMBERS AS IN THE TABLE)", OUTLINE);
    c.png()
}

/// Regions outlined on one map, at most this many (the largest of each kind
/// first), so the map stays legible.
const MAP_OUTLINES: usize = 40;

/// The regions of `kinds`, numbered as in the report's table, to outline on a map.
fn outlines(report: &InspectReport, kinds: &[&str]) -> Vec<(usize, [u32; 4])> {
    report
        .regions
        .iter()
        .enumerate()
        .filter(|(_, g)| kinds.contains(&g.kind))
        .take(MAP_OUTLINES)
        .map(|(i, g)| (i + 1, g.bbox))
        .collect()
}

/// The ΔE map of a report, with its out-of-gamut regions (`None` without ΔE: CMYK input).
pub fn de_map_for(maps: &MapData, report: &InspectReport) -> Result<Option<Vec<u8>>> {
    match maps.de {
        Some(_) => de_map_png(maps, &report.settings.de_thresholds, &outlines(report, &[KIND_OUT_OF_GAMUT])).map(Some),
        None => Ok(None),
    }
}

/// The total ink map of a report, with its over-ink, rich black and small dot regions.
pub fn ink_map_for(maps: &MapData, report: &InspectReport) -> Result<Vec<u8>> {
    ink_map_png(
        maps,
        report.tac.limit,
        &outlines(report, &[KIND_OVER_INK, KIND_RICH_BLACK, KIND_SMALL_DOT]),
    )
}

/// The ΔE map as a PNG file of the report folder.
pub struct DeMap;

impl Exporter<InspectionFiles<'_>> for DeMap {
    fn suffix(&self) -> &'static str {
        "de-map.png"
    }

    fn export(&self, files: &InspectionFiles) -> Result<Option<Vec<u8>>> {
        Ok(files.de_png()?.map(<[u8]>::to_vec))
    }
}

/// The total ink map as a PNG file of the report folder.
pub struct InkMap;

impl Exporter<InspectionFiles<'_>> for InkMap {
    fn suffix(&self) -> &'static str {
        "ink-map.png"
    }

    fn export(&self, files: &InspectionFiles) -> Result<Option<Vec<u8>>> {
        Ok(Some(files.ink_png()?.to_vec()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tiny() -> MapData {
        MapData {
            width: 4,
            height: 2,
            factor: 1,
            base: vec![[200, 100, 50]; 8],
            de: Some(vec![0.0, 1.0, 3.0, 30.0, 0.0, 0.0, 0.0, 0.0]),
            tac: vec![0.0, 100.0, 300.0, 400.0, 0.0, 0.0, 0.0, 0.0],
        }
    }

    #[test]
    fn maps_decode_as_png_of_the_frame_size() {
        for bytes in [
            de_map_png(&tiny(), &[2.0, 5.0], &[(1, [3, 0, 1, 1])]).unwrap(),
            ink_map_png(&tiny(), 300.0, &[]).unwrap(),
        ] {
            let dec = png::Decoder::new(std::io::Cursor::new(bytes));
            let reader = dec.read_info().unwrap();
            let info = reader.info();
            assert_eq!((info.width, info.height), (640, 2 + 24 + 92));
        }
    }

    /// Boxes side by side, narrower than their tags (letters of a title):
    /// every tag finds a spot of its own, inside the map.
    #[test]
    fn tags_of_neighbouring_regions_do_not_overlap() {
        let area = [0, 0, 400, 200];
        let mut placed: Vec<[i64; 4]> = Vec::new();
        for i in 0..8 {
            let region = [20 + i * 14, 80, 12, 20];
            let [x, y] = place_tag(region, [30, 22], area, &placed);
            assert!(
                x >= 0 && y >= 0 && x + 30 <= 400 && y + 22 <= 200,
                "tag {i} at ({x}, {y}) leaves the map"
            );
            for p in &placed {
                let apart = x + 30 < p[0] || p[0] + p[2] < x || y + 22 < p[1] || p[1] + p[3] < y;
                assert!(apart, "tag {i} at ({x}, {y}) overlaps {p:?}");
            }
            placed.push([x, y, 30, 22]);
        }
        // A lone region keeps the first spot: above its box, at its left edge.
        assert_eq!(place_tag([50, 80, 12, 20], [30, 22], area, &[]), [48, 56]);
        // At the top edge the tag goes below the box.
        assert_eq!(place_tag([50, 5, 12, 20], [30, 22], area, &[]), [48, 28]);
    }

    #[test]
    fn palette_follows_the_thresholds() {
        assert_eq!(de_colour(&[2.0, 5.0], 2.0), DE_COLOURS[0]);
        assert_eq!(de_colour(&[2.0, 5.0], 5.0), DE_COLOURS[1]);
        assert_eq!(de_colour(&[2.0, 5.0], 50.0), DE_COLOURS[3]);
    }
}
