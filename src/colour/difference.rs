//! Colour difference formulas.
//!
//! Sources: CIE 15:2004 (CIE76 ΔE*ab); CIE 116-1995 (CIE94, here with the
//! graphic-arts weights kL = 1, K1 = 0.045, K2 = 0.015 of ISO 13655 practice);
//! CIE 142-2001 and Sharma, Wu & Dalal, "The CIEDE2000 color-difference
//! formula: implementation notes, supplementary test data, and mathematical
//! observations", Color Res. Appl. 30 (2005) 21–30 (CIEDE2000).

use super::lab::Lab;

/// CIE76 ΔE*ab: Euclidean distance in CIELAB.
#[inline]
pub fn delta_e76(a: Lab, b: Lab) -> f64 {
    ((a.l - b.l).powi(2) + (a.a - b.a).powi(2) + (a.b - b.b).powi(2)).sqrt()
}

/// CIE94 with graphic-arts weights; `reference` is the standard (its chroma
/// sets the weighting functions).
pub fn delta_e94(reference: Lab, sample: Lab) -> f64 {
    let c1 = reference.chroma();
    let c2 = sample.chroma();
    let dl = reference.l - sample.l;
    let dc = c1 - c2;
    let da = reference.a - sample.a;
    let db = reference.b - sample.b;
    let dh2 = (da * da + db * db - dc * dc).max(0.0);
    let sc = 1.0 + 0.045 * c1;
    let sh = 1.0 + 0.015 * c1;
    ((dl).powi(2) + (dc / sc).powi(2) + dh2 / (sh * sh)).sqrt()
}

/// Parametric weights of CIEDE2000 (all 1 for the reference conditions).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct De2000Weights {
    pub kl: f64,
    pub kc: f64,
    pub kh: f64,
}

impl Default for De2000Weights {
    fn default() -> Self {
        De2000Weights { kl: 1.0, kc: 1.0, kh: 1.0 }
    }
}

/// CIEDE2000 with kL = kC = kH = 1.
#[inline]
pub fn ciede2000(a: Lab, b: Lab) -> f64 {
    ciede2000_with(a, b, De2000Weights::default())
}

/// CIEDE2000 following the equations of Sharma, Wu & Dalal (2005), eq. 1–22,
/// including their conventions for the mean hue when a chroma is zero.
#[inline]
pub fn ciede2000_with(lab1: Lab, lab2: Lab, w: De2000Weights) -> f64 {
    ciede2000_terms(lab1, lab2, w).delta_e
}

/// The intermediate terms of CIEDE2000 for one pair, named as in Sharma, Wu &
/// Dalal (2005), Table 1 (hues in degrees). Useful to explain a
/// difference and to check an implementation term by term.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct De2000Terms {
    /// G, the factor that stretches a* near the neutral axis.
    pub g: f64,
    /// a'₁, a'₂.
    pub a1p: f64,
    pub a2p: f64,
    /// C'₁, C'₂.
    pub c1p: f64,
    pub c2p: f64,
    /// h'₁, h'₂ in 0..360.
    pub h1p: f64,
    pub h2p: f64,
    /// ΔL', ΔC', ΔH', sample 2 minus sample 1.
    pub dl: f64,
    pub dc: f64,
    pub dh: f64,
    /// Mean hue h̄'.
    pub h_mean: f64,
    /// T.
    pub t: f64,
    /// Weighting functions S_L, S_C, S_H.
    pub sl: f64,
    pub sc: f64,
    pub sh: f64,
    /// Rotation term R_T.
    pub rt: f64,
    /// ΔE00.
    pub delta_e: f64,
}

/// All the terms of CIEDE2000 for one pair (see [`De2000Terms`]).
///
/// Where h'₁ and h'₂ are exactly opposite (|h'₁ − h'₂| = 180°, pair 14 of
/// Sharma et al.), the formula is discontinuous and the branch taken would
/// depend on the last bit of `atan2`. The opposite case is detected exactly
/// from the a', b' vectors (their cross product is zero and their dot product
/// negative), so the result follows the published value on every platform.
pub fn ciede2000_terms(lab1: Lab, lab2: Lab, w: De2000Weights) -> De2000Terms {
    const POW25_7: f64 = 6_103_515_625.0; // 25^7
    let c1 = lab1.chroma();
    let c2 = lab2.chroma();
    let c_bar = (c1 + c2) / 2.0;
    let c_bar7 = c_bar.powi(7);
    let g = 0.5 * (1.0 - (c_bar7 / (c_bar7 + POW25_7)).sqrt());
    let a1p = (1.0 + g) * lab1.a;
    let a2p = (1.0 + g) * lab2.a;
    let c1p = a1p.hypot(lab1.b);
    let c2p = a2p.hypot(lab2.b);
    let hue = |b: f64, ap: f64| {
        if b == 0.0 && ap == 0.0 {
            0.0
        } else {
            let h = b.atan2(ap).to_degrees();
            if h < 0.0 { h + 360.0 } else { h }
        }
    };
    let h1p = hue(lab1.b, a1p);
    let h2p = hue(lab2.b, a2p);

    let dlp = lab2.l - lab1.l;
    let dcp = c2p - c1p;
    let product = c1p * c2p;
    // Exactly opposite hues: |h'₁ − h'₂| is 180° in exact arithmetic.
    let opposite = product != 0.0 && a1p * lab2.b - lab1.b * a2p == 0.0 && a1p * a2p + lab1.b * lab2.b < 0.0;
    let diff = if opposite { 180.0_f64.copysign(h2p - h1p) } else { h2p - h1p };
    let dhp = if product == 0.0 {
        0.0
    } else if diff > 180.0 {
        diff - 360.0
    } else if diff < -180.0 {
        diff + 360.0
    } else {
        diff
    };
    let dhp_big = 2.0 * product.sqrt() * (dhp.to_radians() / 2.0).sin();

    let lp_bar = (lab1.l + lab2.l) / 2.0;
    let cp_bar = (c1p + c2p) / 2.0;
    let hp_bar = if product == 0.0 {
        h1p + h2p
    } else if diff.abs() <= 180.0 {
        (h1p + h2p) / 2.0
    } else if h1p + h2p < 360.0 {
        (h1p + h2p + 360.0) / 2.0
    } else {
        (h1p + h2p - 360.0) / 2.0
    };

    let t = 1.0 - 0.17 * (hp_bar - 30.0).to_radians().cos()
        + 0.24 * (2.0 * hp_bar).to_radians().cos()
        + 0.32 * (3.0 * hp_bar + 6.0).to_radians().cos()
        - 0.20 * (4.0 * hp_bar - 63.0).to_radians().cos();
    let d_theta = 30.0 * (-((hp_bar - 275.0) / 25.0).powi(2)).exp();
    let cp_bar7 = cp_bar.powi(7);
    let rc = 2.0 * (cp_bar7 / (cp_bar7 + POW25_7)).sqrt();
    let l50 = (lp_bar - 50.0).powi(2);
    let sl = 1.0 + 0.015 * l50 / (20.0 + l50).sqrt();
    let sc = 1.0 + 0.045 * cp_bar;
    let sh = 1.0 + 0.015 * cp_bar * t;
    let rt = -(2.0 * d_theta).to_radians().sin() * rc;

    let tl = dlp / (w.kl * sl);
    let tc = dcp / (w.kc * sc);
    let th = dhp_big / (w.kh * sh);
    let delta_e = (tl * tl + tc * tc + th * th + rt * tc * th).sqrt();
    De2000Terms {
        g,
        a1p,
        a2p,
        c1p,
        c2p,
        h1p,
        h2p,
        dl: dlp,
        dc: dcp,
        dh: dhp_big,
        h_mean: hp_bar,
        t,
        sl,
        sc,
        sh,
        rt,
        delta_e,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn identical_colours_differ_by_zero() {
        let c = Lab::new(50.0, 10.0, -10.0);
        assert_eq!(ciede2000(c, c), 0.0);
        assert_eq!(delta_e76(c, c), 0.0);
        assert_eq!(delta_e94(c, c), 0.0);
    }

    #[test]
    fn sharma_pair_1() {
        // Sharma, Wu & Dalal (2005), Table 1, pair 1: ΔE00 = 2.0425.
        let d = ciede2000(Lab::new(50.0, 2.6772, -79.7751), Lab::new(50.0, 0.0, -82.7485));
        assert!((d - 2.0425).abs() < 5e-5, "{d}");
    }

    #[test]
    fn ciede2000_is_symmetric() {
        let a = Lab::new(60.0, 30.0, 5.0);
        let b = Lab::new(55.0, -10.0, 40.0);
        assert!((ciede2000(a, b) - ciede2000(b, a)).abs() < 1e-12);
    }
}
