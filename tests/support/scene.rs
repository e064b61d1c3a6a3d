//! A synthetic coastal scene of our own, made by code: a sky gradient
//! (sRGB 30,110,200 at the top to 180,230,240 at the horizon), a sea band, a
//! meadow band, three skin-tone patches, a saturated emblem (an orange ring
//! round a violet-blue disc) and, along the bottom, a saturated ramp from
//! mid-gray to sRGB blue that leaves every press gamut. Used by the tests of
//! the perceptual intent and by `examples/make_coast_scene.rs` (the proofs
//! in docs/PERCEPTUAL.md).

/// Width and height in pixels.
pub const SCENE_W: usize = 512;
pub const SCENE_H: usize = 320;
/// Rows of the ramp at the bottom; its column x has code x / 2.
pub const RAMP_ROWS: std::ops::Range<usize> = 296..320;

/// The ramp's colour at step `v` (0..=255): mid-gray to sRGB blue.
pub fn ramp_colour(v: usize) -> [u8; 3] {
    let t = v as f64 / 255.0;
    let rg = (128.0 * (1.0 - t)).round() as u8;
    let b = (128.0 + 127.0 * t).round() as u8;
    [rg, rg, b]
}

fn mix(a: [f64; 3], b: [f64; 3], t: f64) -> [u8; 3] {
    std::array::from_fn(|k| (a[k] + (b[k] - a[k]) * t).round().clamp(0.0, 255.0) as u8)
}

/// Interleaved 8-bit sRGB pixels, row by row.
pub fn scene() -> Vec<u8> {
    let (w, h) = (SCENE_W, SCENE_H);
    let horizon = h * 45 / 100;
    let shore = h * 62 / 100;
    let mut px = vec![0u8; w * h * 3];
    for y in 0..h {
        for x in 0..w {
            let fx = x as f64 / (w - 1) as f64;
            let c: [u8; 3] = if RAMP_ROWS.contains(&y) {
                ramp_colour(x / 2)
            } else if y < horizon {
                mix([30.0, 110.0, 200.0], [180.0, 230.0, 240.0], y as f64 / horizon as f64)
            } else if y < shore {
                // Sea: darker far out, lighter toward the shore, with a swell.
                let t = (y - horizon) as f64 / (shore - horizon) as f64;
                let swell = 6.0 * (fx * 40.0 + t * 9.0).sin();
                mix([20.0 + swell, 95.0 + swell, 150.0 + swell], [45.0, 140.0, 165.0], t)
            } else {
                // Meadow: yellower in front, with a gentle ripple.
                let t = (y - shore) as f64 / (RAMP_ROWS.start - shore) as f64;
                let ripple = 8.0 * (fx * 25.0).sin() * (t * 7.0).cos();
                mix([50.0 + ripple, 125.0 + ripple, 45.0], [120.0, 175.0, 60.0 + ripple], t)
            };
            px[(y * w + x) * 3..][..3].copy_from_slice(&c);
        }
    }
    // Skin tones: three patches on the meadow (light, medium, deep).
    let skins = [[233.0, 190.0, 160.0], [198.0, 140.0, 105.0], [120.0, 75.0, 55.0]];
    for (i, skin) in skins.iter().enumerate() {
        let (x0, y0) = (40 + i * 70, shore + 20);
        for y in y0..y0 + 50 {
            for x in x0..x0 + 50 {
                let shade = 1.0 - 0.15 * ((x - x0) as f64 / 50.0);
                let c = skin.map(|v| v * shade);
                px[(y * w + x) * 3..][..3].copy_from_slice(&mix(c, c, 0.0));
            }
        }
    }
    // The emblem: an orange ring round a violet-blue disc, in the sky.
    let (cx, cy) = (w as f64 * 0.78, h as f64 * 0.22);
    for y in 0..horizon {
        for x in 0..w {
            let r = ((x as f64 - cx).powi(2) + (y as f64 - cy).powi(2)).sqrt();
            let c = if r < 28.0 {
                Some([60, 20, 255])
            } else if r < 44.0 {
                Some([255, 110, 0])
            } else {
                None
            };
            if let Some(c) = c {
                px[(y * w + x) * 3..][..3].copy_from_slice(&c);
            }
        }
    }
    px
}
