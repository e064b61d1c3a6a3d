//! Draws the demo artwork, a poster for "Harbour Lights", an invented harbour festival,
//! and writes it to examples/harbour-lights.png (1800 × 1200 px, 8-bit sRGB, 300 ppi).
//!
//! Everything is drawn here: a dusk harbour scene of smooth gradients (sky, sun, sea with
//! soft waves, a boat silhouette, lantern glows), a strip of saturated patches beyond any
//! press gamut (pure sRGB green and blue among them), a neutral 0–100 % gray ramp, and
//! small black text in platesmith's own 5 × 7 bitmap font (`platesmith::report::font`).
//!
//! Run: `cargo run --release --example make_demo_poster`

use std::fs::File;
use std::io::BufWriter;
use std::path::Path;

use platesmith::report::font;

const W: usize = 1800;
const H: usize = 1200;
const SCENE_H: usize = 880;
const HORIZON: f64 = 540.0;
const PAPER: [f64; 3] = [0.965, 0.953, 0.925];

type Rgb = [f64; 3];

struct Canvas {
    px: Vec<Rgb>,
}

impl Canvas {
    fn get(&self, x: usize, y: usize) -> Rgb {
        self.px[y * W + x]
    }
    fn set(&mut self, x: usize, y: usize, c: Rgb) {
        self.px[y * W + x] = c;
    }
    /// Blends `c` over the pixel with coverage `a` (0..1).
    fn blend(&mut self, x: usize, y: usize, c: Rgb, a: f64) {
        let p = self.get(x, y);
        self.set(x, y, mix(p, c, a.clamp(0.0, 1.0)));
    }
    /// Adds light (for glows), in encoded values, saturating at 1.
    fn add(&mut self, x: usize, y: usize, c: Rgb, k: f64) {
        let p = self.get(x, y);
        self.set(x, y, [p[0] + c[0] * k, p[1] + c[1] * k, p[2] + c[2] * k]);
    }
    fn rect(&mut self, x0: usize, y0: usize, x1: usize, y1: usize, c: Rgb) {
        for y in y0..y1.min(H) {
            for x in x0..x1.min(W) {
                self.set(x, y, c);
            }
        }
    }
}

fn mix(a: Rgb, b: Rgb, t: f64) -> Rgb {
    [a[0] + (b[0] - a[0]) * t, a[1] + (b[1] - a[1]) * t, a[2] + (b[2] - a[2]) * t]
}

fn rgb(r: u8, g: u8, b: u8) -> Rgb {
    [f64::from(r) / 255.0, f64::from(g) / 255.0, f64::from(b) / 255.0]
}

fn smoothstep(e0: f64, e1: f64, x: f64) -> f64 {
    let t = ((x - e0) / (e1 - e0)).clamp(0.0, 1.0);
    t * t * (3.0 - 2.0 * t)
}

/// A colour ramp through stops (position, colour), smooth between stops.
fn ramp(stops: &[(f64, Rgb)], t: f64) -> Rgb {
    if t <= stops[0].0 {
        return stops[0].1;
    }
    for w in stops.windows(2) {
        if t <= w[1].0 {
            return mix(w[0].1, w[1].1, smoothstep(w[0].0, w[1].0, t));
        }
    }
    stops[stops.len() - 1].1
}

/// A small value-noise for texture on the water, deterministic.
fn hash(x: i64, y: i64) -> f64 {
    let mut h = (x as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15) ^ (y as u64).wrapping_mul(0xC2B2_AE3D_27D4_EB4F);
    h ^= h >> 31;
    h = h.wrapping_mul(0xBF58_476D_1CE4_E5B9);
    h ^= h >> 29;
    (h >> 11) as f64 / (1u64 << 53) as f64
}

fn noise(x: f64, y: f64) -> f64 {
    let (xi, yi) = (x.floor() as i64, y.floor() as i64);
    let (fx, fy) = (x - x.floor(), y - y.floor());
    let (sx, sy) = (fx * fx * (3.0 - 2.0 * fx), fy * fy * (3.0 - 2.0 * fy));
    let a = hash(xi, yi) + (hash(xi + 1, yi) - hash(xi, yi)) * sx;
    let b = hash(xi, yi + 1) + (hash(xi + 1, yi + 1) - hash(xi, yi + 1)) * sx;
    a + (b - a) * sy
}

const SUN: (f64, f64, f64) = (1270.0, HORIZON - 38.0, 58.0);

fn sky(c: &mut Canvas) {
    let stops = [
        (0.00, rgb(10, 16, 58)),
        (0.35, rgb(38, 40, 110)),
        (0.62, rgb(132, 64, 120)),
        (0.82, rgb(238, 112, 72)),
        (0.95, rgb(255, 168, 84)),
        (1.00, rgb(255, 196, 120)),
    ];
    for y in 0..HORIZON as usize {
        for x in 0..W {
            let t = y as f64 / HORIZON;
            // The sky warms towards the sun.
            let dx = (x as f64 - SUN.0) / W as f64;
            let warm = (-dx * dx * 6.0).exp() * 0.08;
            let mut col = ramp(&stops, (t + warm).min(1.0));
            // A few stars high up.
            if y < 200 && hash(x as i64, y as i64) > 0.99965 {
                col = mix(col, [1.0, 1.0, 0.95], 0.8 * (1.0 - y as f64 / 200.0));
            }
            c.set(x, y, col);
        }
    }
    // Sun disc with a soft edge and a wide glow.
    for y in 0..SCENE_H {
        for x in 0..W {
            let d = ((x as f64 - SUN.0).powi(2) + (y as f64 - SUN.1).powi(2)).sqrt();
            if (y as f64) < HORIZON {
                let disc = 1.0 - smoothstep(SUN.2 - 1.5, SUN.2 + 1.5, d);
                c.blend(x, y, rgb(255, 236, 180), disc);
                c.add(x, y, rgb(255, 150, 60), 0.55 * (-(d / 260.0).powi(2)).exp());
            }
        }
    }
}

fn sea(c: &mut Canvas) {
    let top = HORIZON as usize;
    for y in top..SCENE_H {
        let depth = (y as f64 - HORIZON) / (SCENE_H as f64 - HORIZON);
        let base = ramp(&[(0.0, rgb(150, 78, 92)), (0.12, rgb(52, 48, 96)), (1.0, rgb(8, 22, 48))], depth);
        // Perspective: waves are finer and flatter near the horizon.
        let scale = 0.02 + depth * 0.25;
        for x in 0..W {
            let xf = x as f64;
            let yf = y as f64;
            let w1 = (xf * 0.012 / scale + (yf * 0.9 / scale).sin() * 0.6 + noise(xf * 0.01, yf * 0.05) * 3.0).sin();
            let w2 = (yf * 0.45 / (scale * 4.0 + 0.05) + noise(xf * 0.004, yf * 0.02) * 6.0).sin();
            let wave = 0.5 * w1 * w2;
            let mut col = mix(base, [0.0, 0.0, 0.0], 0.18 * wave.max(0.0) * depth);
            col = mix(col, rgb(120, 110, 170), 0.12 * (-wave).max(0.0) * (1.0 - depth));
            // The sun's reflection: a shimmering column of warm streaks.
            let dx = (xf - SUN.0) / (60.0 + 260.0 * depth);
            let column = (-dx * dx).exp();
            let glint = smoothstep(0.15, 0.8, w2 * 0.5 + 0.5 + noise(xf * 0.05, yf * 0.3) * 0.5 - 0.25);
            col = mix(col, rgb(255, 180, 96), column * glint * (0.9 - 0.6 * depth));
            c.set(x, y, col);
        }
    }
}

/// Fills a polygon with 4 × 4 supersampled coverage.
fn polygon(c: &mut Canvas, pts: &[(f64, f64)], col: Rgb) {
    let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
    for &(x, y) in pts {
        x0 = x0.min(x);
        y0 = y0.min(y);
        x1 = x1.max(x);
        y1 = y1.max(y);
    }
    let inside = |px: f64, py: f64| {
        let mut inside = false;
        let mut j = pts.len() - 1;
        for i in 0..pts.len() {
            let (xi, yi) = pts[i];
            let (xj, yj) = pts[j];
            if (yi > py) != (yj > py) && px < (xj - xi) * (py - yi) / (yj - yi) + xi {
                inside = !inside;
            }
            j = i;
        }
        inside
    };
    for y in y0.floor().max(0.0) as usize..(y1.ceil() as usize + 1).min(H) {
        for x in x0.floor().max(0.0) as usize..(x1.ceil() as usize + 1).min(W) {
            let mut n = 0;
            for sy in 0..4 {
                for sx in 0..4 {
                    if inside(x as f64 + (sx as f64 + 0.5) / 4.0, y as f64 + (sy as f64 + 0.5) / 4.0) {
                        n += 1;
                    }
                }
            }
            if n > 0 {
                c.blend(x, y, col, n as f64 / 16.0);
            }
        }
    }
}

fn boat(c: &mut Canvas) {
    let ink = rgb(14, 12, 24);
    let wl = 652.0;
    // Hull, mast, two sails, a cabin and a lantern at the bow.
    polygon(
        c,
        &[(430.0, wl - 22.0), (800.0, wl - 26.0), (770.0, wl + 14.0), (470.0, wl + 14.0)],
        ink,
    );
    polygon(
        c,
        &[(560.0, wl - 22.0), (560.0, wl - 50.0), (640.0, wl - 50.0), (648.0, wl - 23.0)],
        ink,
    );
    polygon(
        c,
        &[(612.0, wl - 24.0), (612.0, wl - 300.0), (618.0, wl - 300.0), (618.0, wl - 24.0)],
        ink,
    );
    polygon(c, &[(622.0, wl - 290.0), (622.0, wl - 40.0), (760.0, wl - 44.0)], ink);
    polygon(c, &[(606.0, wl - 250.0), (606.0, wl - 58.0), (492.0, wl - 58.0)], ink);
    // Its reflection, broken by the waves.
    for y in (wl as usize + 14)..(wl as usize + 90) {
        let fade = 1.0 - (y as f64 - wl - 14.0) / 76.0;
        for x in 440..790 {
            let wob = (y as f64 * 0.9).sin() * 6.0;
            let xs = x as f64 + wob;
            if (470.0..770.0).contains(&xs) && noise(xs * 0.08, y as f64 * 0.5) > 0.35 {
                c.blend(x, y, ink, 0.55 * fade);
            }
        }
    }
}

/// A lantern: a small glowing body with a halo, optionally mirrored on the water.
fn lantern(c: &mut Canvas, cx: f64, cy: f64, r: f64, col: Rgb, reflect: bool) {
    let reach = r * 7.0;
    let (x0, x1) = ((cx - reach).max(0.0) as usize, ((cx + reach) as usize).min(W - 1));
    let (y0, y1) = ((cy - reach).max(0.0) as usize, ((cy + reach) as usize).min(SCENE_H - 1));
    for y in y0..=y1 {
        for x in x0..=x1 {
            let dx = x as f64 - cx;
            let dy = (y as f64 - cy) / 1.25;
            let d = (dx * dx + dy * dy).sqrt();
            c.add(x, y, col, 0.65 * (-(d / (r * 2.6)).powi(2)).exp());
            let body = 1.0 - smoothstep(r - 1.0, r + 1.0, d);
            c.blend(x, y, mix(col, [1.0, 1.0, 0.9], 0.35), body);
        }
    }
    if reflect && cy < HORIZON + 330.0 {
        let ry = 2.0 * 660.0 - cy; // mirrored about a line below the lantern
        for y in (cy as usize + 8).min(SCENE_H)..(ry as usize).min(SCENE_H) {
            let t = (y as f64 - cy) / (ry - cy);
            for x in (cx - r * 2.0).max(0.0) as usize..((cx + r * 2.0) as usize).min(W) {
                let streak = noise(x as f64 * 0.3, y as f64 * 0.35);
                let k = (1.0 - t) * 0.35 * smoothstep(0.45, 0.9, streak);
                c.add(x, y, col, k * (-((x as f64 - cx) / r).powi(2)).exp());
            }
        }
    }
}

fn lanterns(c: &mut Canvas) {
    let colours = [
        rgb(255, 60, 40),
        rgb(255, 170, 0),
        rgb(0, 255, 0),
        rgb(255, 230, 60),
        rgb(0, 90, 255),
        rgb(255, 0, 160),
        rgb(0, 230, 255),
    ];
    // A string of lanterns sagging across the top of the sky (a catenary-like curve).
    let wire = |x: f64| 70.0 + 150.0 * (1.0 - ((x / W as f64) * 2.0 - 1.0).powi(2)) * 0.9;
    for x in 0..W {
        let y = wire(x as f64);
        let (yi, fy) = (y.floor() as usize, y - y.floor());
        c.blend(x, yi, rgb(20, 16, 30), 1.0 - fy);
        c.blend(x, yi + 1, rgb(20, 16, 30), 1.0);
        c.blend(x, yi + 2, rgb(20, 16, 30), fy);
    }
    for (i, x) in (60..W).step_by(120).enumerate() {
        let cx = x as f64;
        let cy = wire(cx) + 26.0;
        c.rect(x, wire(cx) as usize, x + 2, cy as usize - 8, rgb(20, 16, 30));
        lantern(c, cx + 1.0, cy, 11.0, colours[i % colours.len()], false);
    }
    // Lanterns floating on the water, smaller with distance.
    let floats = [
        (180.0, 610.0, 7.0),
        (330.0, 720.0, 10.0),
        (900.0, 590.0, 5.0),
        (1020.0, 680.0, 8.0),
        (1480.0, 640.0, 7.0),
        (1620.0, 770.0, 12.0),
        (1150.0, 820.0, 13.0),
        (760.0, 790.0, 11.0),
        (90.0, 840.0, 14.0),
        (1380.0, 575.0, 4.5),
    ];
    for (i, &(x, y, r)) in floats.iter().enumerate() {
        lantern(c, x, y, r, colours[(i * 3 + 1) % colours.len()], true);
    }
}

// ---------------------------------------------------------------- text

/// Draws `text` with its top-left corner at (x, y), each font dot `s` × `s` pixels.
fn text(c: &mut Canvas, x: usize, y: usize, s: usize, col: Rgb, text: &str) {
    for (dx, dy) in font::dots(text) {
        c.rect(x + dx * s, y + dy * s, x + (dx + 1) * s, y + (dy + 1) * s, col);
    }
}

/// Width of `text` from its first dot to its last column, in pixels.
fn text_width(s: usize, text: &str) -> usize {
    font::advance(text) * s - s
}

fn panel(c: &mut Canvas) {
    c.rect(0, SCENE_H, W, H, PAPER);
    let black = [0.0, 0.0, 0.0];
    text(c, 60, 914, 8, black, "HARBOUR LIGHTS 2027");
    let body = [
        "A FESTIVAL OF LANTERNS ON THE WATER, 14 TO 16 AUGUST",
        "OLD QUAY, KESTREL COVE - BOAT PARADE AT DUSK - MUSIC - NIGHT MARKET",
        "FREE ENTRY. LANTERN WORKSHOPS FOR ALL AGES FROM 4 PM.",
    ];
    for (i, line) in body.iter().enumerate() {
        text(c, 62, 992 + i * 24, 2, black, line);
    }
    text(
        c,
        62,
        1066,
        1,
        black,
        "FINE PRINT AT 5 X 7 PIXELS: BLACK TEXT SHOULD PRINT FROM THE K PLATE ALONE.",
    );

    // Saturated patches far outside any press gamut (sRGB primaries and secondaries, a vivid orange).
    let patches = [
        ("GREEN", rgb(0, 255, 0)),
        ("BLUE", rgb(0, 0, 255)),
        ("RED", rgb(255, 0, 0)),
        ("CYAN", rgb(0, 255, 255)),
        ("MAGENTA", rgb(255, 0, 255)),
        ("YELLOW", rgb(255, 255, 0)),
        ("ORANGE", rgb(255, 110, 0)),
        ("VIOLET", rgb(110, 0, 255)),
    ];
    let (px0, pw, gap, py0, ph) = (1010, 84, 8, 912, 84);
    for (i, (name, col)) in patches.iter().enumerate() {
        let x = px0 + i * (pw + gap);
        c.rect(x, py0, x + pw, py0 + ph, *col);
        let tw = text_width(1, name);
        text(c, x + (pw - tw) / 2, py0 + ph + 6, 1, black, name);
    }

    // Neutral ramp: a smooth 0–100 % band over eleven 10 % steps, labelled.
    let step = (W - 120) / 11;
    let (rx0, rx1) = (60, 60 + 11 * step);
    let span = (rx1 - rx0) as f64;
    for x in rx0..rx1 {
        let g = 1.0 - (x - rx0) as f64 / (span - 1.0);
        c.rect(x, 1088, x + 1, 1112, [g, g, g]);
    }
    for k in 0..11 {
        let g = 1.0 - k as f64 / 10.0;
        let x = rx0 + k * step;
        c.rect(x, 1116, x + step, 1160, [g, g, g]);
        let label = format!("{}%", k * 10);
        text(c, x + (step - text_width(2, &label)) / 2, 1166, 2, black, &label);
    }
    // A hairline frame around the ramp so the 0 % step is visible on white paper.
    let line = rgb(40, 40, 40);
    c.rect(rx0 - 1, 1087, rx1 + 1, 1088, line);
    c.rect(rx0 - 1, 1160, rx1 + 1, 1161, line);
    c.rect(rx0 - 1, 1087, rx0, 1161, line);
    c.rect(rx1, 1087, rx1 + 1, 1161, line);
}

fn main() -> std::io::Result<()> {
    let mut c = Canvas { px: vec![[0.0; 3]; W * H] };
    sky(&mut c);
    sea(&mut c);
    lanterns(&mut c);
    boat(&mut c);
    // A soft vignette over the scene.
    for y in 0..SCENE_H {
        for x in 0..W {
            let dx = (x as f64 / W as f64 - 0.5) * 2.0;
            let dy = (y as f64 / SCENE_H as f64 - 0.45) * 2.0;
            let v = 1.0 - 0.18 * smoothstep(0.6, 1.6, (dx * dx + dy * dy).sqrt());
            let p = c.get(x, y);
            c.set(x, y, [p[0] * v, p[1] * v, p[2] * v]);
        }
    }
    panel(&mut c);

    // Quantise to 8 bit with a light ordered dither in the scene so gradients do not band.
    let mut data = Vec::with_capacity(W * H * 3);
    for y in 0..H {
        for x in 0..W {
            let p = c.get(x, y);
            let d = if y < SCENE_H {
                (hash(x as i64 * 7, y as i64 * 13) - 0.5) * 0.8
            } else {
                0.0
            };
            for ch in p {
                data.push((ch.clamp(0.0, 1.0) * 255.0 + 0.5 + d).floor().clamp(0.0, 255.0) as u8);
            }
        }
    }
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/harbour-lights.png");
    let file = BufWriter::new(File::create(&path)?);
    let mut enc = png::Encoder::new(file, W as u32, H as u32);
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Eight);
    enc.set_compression(png::Compression::High);
    // 300 ppi = 11 811 px per metre (pHYs, ISO/IEC 15948 §11.3.5.3).
    enc.set_pixel_dims(Some(png::PixelDimensions {
        xppu: 11_811,
        yppu: 11_811,
        unit: png::Unit::Meter,
    }));
    let mut w = enc.write_header().map_err(std::io::Error::other)?;
    w.write_image_data(&data).map_err(std::io::Error::other)?;
    w.finish().map_err(std::io::Error::other)?;
    println!("wrote {} ({W} × {H} px, 300 ppi)", path.display());
    Ok(())
}
