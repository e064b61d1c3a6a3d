//! Smoothing the deepest shadows of a table's nodes in ink space, shared by
//! the RGB and CMYK tables.

/// Lightness range above the black point over which the table is smoothed.
const SHADOW_RANGE: f64 = 13.0;

/// Smoothing passes in the shadows.
const SHADOW_PASSES: usize = 3;

/// Used with relative colorimetric with black point compensation, which
/// carries the source black onto the press black point so that the whole
/// shadow range is reproduced (see `Separator::smooths_shadows_in_ink`).
/// Perceptual does not use it: its table must agree with the direct
/// separation, so its shadows are shaped in the mapping (the shadow taper
/// and the focal point's descent near the black, `gamut.rs`).
///
/// Near the black point the press responds little to any ink but black: the
/// exact inversion there swings the other plates widely for small colour
/// differences, which would band in dark gradients. Since those swings cost
/// little colour, the table is smoothed in ink space over the deepest
/// shadows: a few passes of a [1 2 1]/4 kernel along each axis, blended in
/// with a weight that is 1 at the black point and 0 at `SHADOW_RANGE` above
/// it. Every node stays a convex combination of in-limit builds, so the ink
/// limit and maximum black still hold.
/// `axes` is the number of grid dimensions (3 for RGB, 4 for CMYK input).
pub(crate) fn smooth_shadows(inks: &mut [[f64; 4]], lightness: &[f64], n: usize, axes: u32, black_l: f64) {
    let weight: Vec<f64> = lightness
        .iter()
        .map(|&l| {
            let t = ((l - black_l) / SHADOW_RANGE).clamp(0.0, 1.0);
            1.0 - t * t * (3.0 - 2.0 * t)
        })
        .collect();
    if weight.iter().all(|&w| w == 0.0) {
        return;
    }
    let strides: Vec<usize> = (0..axes).rev().map(|a| n.pow(a)).collect();
    for _ in 0..SHADOW_PASSES {
        for &d in &strides {
            let src = inks.to_vec();
            for i in 0..inks.len() {
                let w = weight[i];
                if w == 0.0 {
                    continue;
                }
                let pos = (i / d) % n;
                let lo = if pos > 0 { i - d } else { i };
                let hi = if pos + 1 < n { i + d } else { i };
                for ch in 0..4 {
                    let blurred = 0.25 * src[lo][ch] + 0.5 * src[i][ch] + 0.25 * src[hi][ch];
                    inks[i][ch] = (1.0 - w) * src[i][ch] + w * blurred;
                }
            }
        }
    }
}
