//! A deterministic photo-like 8-bit RGB picture for the speed measurements
//! (shared by `benches/end_to_end.rs` and `examples/compare_lcms2.rs`): an
//! evening harbour of our own, made of smooth gradients (sky, water), soft
//! round lights, hard-edged shapes (quay, boats) and a little grain, so that
//! neighbouring pixels are mostly alike as in a photograph, and not random
//! noise. Rows are made in parallel; the picture does not depend on threads.

#![allow(dead_code)]

use rayon::prelude::*;

/// 8660 × 5774 = 50.0 megapixels.
pub const WIDTH: usize = 8660;
pub const HEIGHT: usize = 5774;

/// splitmix64 of a pixel's coordinates: grain that does not depend on order.
fn grain(x: usize, y: usize) -> f64 {
    let mut z = (y as u64) << 32 | x as u64;
    z = z.wrapping_add(0x9E3779B97F4A7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58476D1CE4E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D049BB133111EB);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 53) as f64 - 0.5
}

fn mix(a: [f64; 3], b: [f64; 3], t: f64) -> [f64; 3] {
    std::array::from_fn(|i| a[i] + (b[i] - a[i]) * t)
}

/// Encoded RGB (0..1) of the picture at (u, v), both 0..1 across the frame.
fn scene(u: f64, v: f64) -> [f64; 3] {
    let horizon = 0.46;
    let mut c = if v < horizon {
        // Sky: deep blue at the top to a warm orange glow at the horizon.
        let t = (v / horizon).powf(1.6);
        let glow = (-((u - 0.62) * 3.0).powi(2)).exp() * t;
        mix(mix([0.07, 0.10, 0.32], [0.55, 0.42, 0.58], t), [0.98, 0.62, 0.28], glow * 0.8)
    } else {
        // Water: darker toward the viewer, with waves that catch the glow.
        let t = (v - horizon) / (1.0 - horizon);
        let wave = (u * 180.0 + (v * 90.0).sin() * 3.0).sin() * (v * 400.0).sin();
        let sparkle = (-((u - 0.62) * 5.0).powi(2)).exp() * (0.5 + 0.5 * wave) * (1.0 - t);
        mix(
            mix([0.16, 0.22, 0.40], [0.02, 0.05, 0.12], t.sqrt()),
            [0.95, 0.70, 0.35],
            sparkle * 0.7,
        )
    };
    // The quay: a dark band with lit windows.
    if (0.40..0.47).contains(&v) && u < 0.45 {
        c = [0.10, 0.09, 0.11];
        let (wx, wy) = ((u * 120.0).fract(), ((v - 0.40) * 120.0).fract());
        if (0.3..0.6).contains(&wx) && (0.3..0.7).contains(&wy) && ((u * 120.0) as i64 % 3 != 0) {
            c = [1.0, 0.82, 0.45];
        }
    }
    // Three boats: saturated hulls.
    for (bx, hull) in [(0.55, [0.80, 0.10, 0.12]), (0.72, [0.05, 0.45, 0.30]), (0.86, [0.95, 0.85, 0.10])] {
        let dx = (u - bx).abs();
        if dx < 0.05 && (0.50..0.55).contains(&v) && dx < 0.05 - (v - 0.50) * 0.4 {
            c = hull;
        }
    }
    // Harbour lights: soft round glows.
    for (lx, ly, colour) in [
        (0.10, 0.38, [1.0, 0.9, 0.6]),
        (0.30, 0.36, [0.6, 0.9, 1.0]),
        (0.93, 0.42, [1.0, 0.3, 0.2]),
    ] {
        let d2 = (u - lx).powi(2) + ((v - ly) * 1.5).powi(2);
        let g = (-d2 / 0.0004).exp();
        c = mix(c, colour, g);
    }
    c
}

/// The picture as interleaved 8-bit RGB, `WIDTH × HEIGHT` pixels.
pub fn harbour_rgb8() -> Vec<u8> {
    harbour_rgb8_sized(WIDTH, HEIGHT)
}

/// The same picture at another size.
pub fn harbour_rgb8_sized(width: usize, height: usize) -> Vec<u8> {
    let mut out = vec![0u8; width * height * 3];
    out.par_chunks_mut(width * 3).enumerate().for_each(|(y, row)| {
        let v = (y as f64 + 0.5) / height as f64;
        for (x, px) in row.chunks_exact_mut(3).enumerate() {
            let u = (x as f64 + 0.5) / width as f64;
            let c = scene(u, v);
            let n = grain(x, y) * 4.0;
            for i in 0..3 {
                px[i] = (c[i] * 255.0 + n).round().clamp(0.0, 255.0) as u8;
            }
        }
    });
    out
}

/// Writes interleaved 8-bit RGB as an uncompressed baseline TIFF.
pub fn write_rgb8_tiff(path: &std::path::Path, rgb: &[u8], width: usize, height: usize) -> std::io::Result<()> {
    let file = std::io::BufWriter::new(std::fs::File::create(path)?);
    let mut enc = tiff::encoder::TiffEncoder::new(file).map_err(std::io::Error::other)?;
    enc.write_image::<tiff::encoder::colortype::RGB8>(width as u32, height as u32, rgb)
        .map_err(std::io::Error::other)?;
    Ok(())
}
