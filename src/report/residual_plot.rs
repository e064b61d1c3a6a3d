//! A picture of how a model meets its measurements, for people: on the left
//! the a*b* plane with an arrow per patch from the measured colour to the
//! modelled one (lengthened five times so that tenths of a unit show), on the
//! right each patch's ΔE2000 against its measured L*, coloured by region of
//! the ink space. Drawn with the report font; written as PNG.

use super::font;
use crate::colour::{Lab, ciede2000};
use crate::error::{Error, Result};
use crate::press::fit::{Patch, Region};

const WIDTH: usize = 1400;
const HEIGHT: usize = 720;
const PANEL: usize = 600;
const TOP: usize = 70;
const LEFT_X: usize = 60;
const RIGHT_X: usize = 760;
/// How much longer than life the a*b* arrows are drawn.
pub const ARROW_SCALE: f64 = 5.0;

struct Canvas {
    rgb: Vec<u8>,
}

impl Canvas {
    fn new() -> Canvas {
        Canvas {
            rgb: vec![255; WIDTH * HEIGHT * 3],
        }
    }

    fn dot(&mut self, x: i64, y: i64, c: [u8; 3]) {
        if x >= 0 && y >= 0 && (x as usize) < WIDTH && (y as usize) < HEIGHT {
            let i = (y as usize * WIDTH + x as usize) * 3;
            self.rgb[i..i + 3].copy_from_slice(&c);
        }
    }

    fn square(&mut self, x: f64, y: f64, r: i64, c: [u8; 3]) {
        let (x, y) = (x.round() as i64, y.round() as i64);
        for dy in -r..=r {
            for dx in -r..=r {
                self.dot(x + dx, y + dy, c);
            }
        }
    }

    fn line(&mut self, x0: f64, y0: f64, x1: f64, y1: f64, c: [u8; 3]) {
        let steps = ((x1 - x0).abs().max((y1 - y0).abs()).ceil() as usize).max(1);
        for i in 0..=steps {
            let t = i as f64 / steps as f64;
            self.dot((x0 + t * (x1 - x0)).round() as i64, (y0 + t * (y1 - y0)).round() as i64, c);
        }
    }

    fn text(&mut self, x: usize, y: usize, text: &str, scale: usize, c: [u8; 3]) {
        for (dx, dy) in font::dots(text) {
            for sy in 0..scale {
                for sx in 0..scale {
                    self.dot((x + dx * scale + sx) as i64, (y + dy * scale + sy) as i64, c);
                }
            }
        }
    }

    fn frame(&mut self, x: usize, y: usize, w: usize, h: usize) {
        let g = [120, 120, 120];
        let (x0, y0, x1, y1) = (x as f64, y as f64, (x + w) as f64, (y + h) as f64);
        self.line(x0, y0, x1, y0, g);
        self.line(x0, y1, x1, y1, g);
        self.line(x0, y0, x0, y1, g);
        self.line(x1, y0, x1, y1, g);
    }
}

fn region_colour(r: Region) -> [u8; 3] {
    match r {
        Region::PaperAndHighlights => [60, 150, 220],
        Region::Midtones => [90, 170, 90],
        Region::Shadows => [120, 60, 160],
        Region::SolidsAndOverprints => [220, 90, 40],
    }
}

/// Renders the plot as PNG bytes.
pub fn render(patches: &[Patch], predicted: &[Lab], title: &str) -> Result<Vec<u8>> {
    let mut c = Canvas::new();
    let black = [20, 20, 20];
    c.text(LEFT_X, 16, title, 2, black);
    c.text(
        LEFT_X,
        44,
        &format!("CIELAB A, B: MEASURED (DOT) TO MODEL (LINE END), DIFFERENCE DRAWN X{ARROW_SCALE:.0}"),
        1,
        black,
    );
    c.text(RIGHT_X, 44, "DE2000 OF EACH PATCH AGAINST MEASURED CIELAB L", 1, black);

    // Left panel: a* and b* from -90 to 110.
    let (lo, hi) = (-90.0, 110.0);
    let px = |v: f64| LEFT_X as f64 + (v - lo) / (hi - lo) * PANEL as f64;
    let py = |v: f64| (TOP + PANEL) as f64 - (v - lo) / (hi - lo) * PANEL as f64;
    c.frame(LEFT_X, TOP, PANEL, PANEL);
    let grid = [225, 225, 225];
    for v in [-50.0, 0.0, 50.0, 100.0] {
        c.line(px(v), py(lo), px(v), py(hi), grid);
        c.line(px(lo), py(v), px(hi), py(v), grid);
        c.text(px(v) as usize + 2, TOP + PANEL + 4, &format!("{v:.0}"), 1, black);
        c.text(LEFT_X - 30, py(v) as usize, &format!("{v:.0}"), 1, black);
    }
    c.text(LEFT_X + PANEL - 30, TOP + PANEL + 16, "A", 2, black);
    c.text(LEFT_X + 6, TOP + 6, "B", 2, black);
    for (p, q) in patches.iter().zip(predicted) {
        let col = region_colour(Region::of(p.ink));
        let (x0, y0) = (px(p.lab.a), py(p.lab.b));
        let (x1, y1) = (
            px(p.lab.a + ARROW_SCALE * (q.a - p.lab.a)),
            py(p.lab.b + ARROW_SCALE * (q.b - p.lab.b)),
        );
        c.dot(x0.round() as i64, y0.round() as i64, black);
        c.line(x0, y0, x1, y1, col);
    }

    // Right panel: L* 0..100 across, ΔE2000 up to the worst (at least 1).
    let des: Vec<f64> = patches.iter().zip(predicted).map(|(p, q)| ciede2000(p.lab, *q)).collect();
    let top = des.iter().copied().fold(1.0_f64, f64::max).ceil();
    if !top.is_finite() {
        return Err(Error::Internal("plot of non-finite differences".into()));
    }
    let rx = |l: f64| RIGHT_X as f64 + l / 100.0 * PANEL as f64;
    let ry = |d: f64| (TOP + PANEL) as f64 - d / top * PANEL as f64;
    c.frame(RIGHT_X, TOP, PANEL, PANEL);
    for l in [0.0, 25.0, 50.0, 75.0, 100.0] {
        c.line(rx(l), ry(0.0), rx(l), ry(top), grid);
        c.text(rx(l) as usize, TOP + PANEL + 4, &format!("{l:.0}"), 1, black);
    }
    let step = if top <= 2.0 { 0.5 } else { (top / 4.0).ceil() };
    let mut d = 0.0;
    while d <= top + 1e-9 {
        c.line(rx(0.0), ry(d), rx(100.0), ry(d), grid);
        c.text(RIGHT_X - 30, ry(d) as usize, &format!("{d:.1}"), 1, black);
        d += step;
    }
    c.text(RIGHT_X + PANEL - 30, TOP + PANEL + 16, "L", 2, black);
    for (p, d) in patches.iter().zip(&des) {
        c.square(rx(p.lab.l), ry(*d), 2, region_colour(Region::of(p.ink)));
    }
    // Legend.
    let mut y = TOP + 8;
    for r in Region::ALL {
        c.square((RIGHT_X + 16) as f64, (y + 3) as f64, 3, region_colour(r));
        c.text(RIGHT_X + 26, y, r.name(), 1, black);
        y += 12;
    }

    let mut out = Vec::new();
    crate::proof::write_png(&mut out, &c.rgb, WIDTH as u32, HEIGHT as u32, None).map_err(|e| Error::Internal(format!("plot PNG: {e}")))?;
    Ok(out)
}
