//! The ΔE memo: CIEDE2000 (CIE 142:2001) between a pixel's source colour
//! and the printed colour of its CMYK depends on the pixel's values only, so
//! it is computed once per distinct value, exactly. 8-bit RGB keeps a dense
//! table over all 2²⁴ values (fixed in size, whatever the picture's),
//! filled band by band for the values met, with the forward model evaluated
//! once per distinct CMYK; 16-bit RGB keeps a memo per stretch of rows.
//! Beside it, the distance outside the press gamut: ΔE2000 to the nearest
//! printable colour, through a relative colorimetric table when the job's
//! intent is another.

use crate::colour::{EncodedRgb, Lab, ciede2000};
use crate::ink::Cmyk;
use crate::job::table_for_source;
use crate::raster::Samples;
use crate::separation::{Intent, SeparationTable, Separator};
use crate::source::RgbSource;
use rayon::prelude::*;
use std::collections::HashMap;

/// An 8-bit RGB key (R << 16 | G << 8 | B) as encoded values 0..1.
fn key_rgb(key: u32) -> [f64; 3] {
    [
        (key >> 16) as f64 / 255.0,
        ((key >> 8) & 255) as f64 / 255.0,
        (key & 255) as f64 / 255.0,
    ]
}

/// A CMYK sample as one key (16 bits per ink).
#[inline]
pub(super) fn cmyk_key(samples: &Samples, i: usize) -> u64 {
    let q: [u64; 4] = match samples {
        Samples::U8(v) => std::array::from_fn(|c| v[i * 4 + c] as u64 * 257),
        Samples::U16(v) => std::array::from_fn(|c| v[i * 4 + c] as u64),
    };
    q[0] << 48 | q[1] << 32 | q[2] << 16 | q[3]
}

pub(super) fn cmyk_of_key(k: u64) -> Cmyk {
    let f = |s: u32| ((k >> s) & 0xFFFF) as f64 / 65535.0;
    Cmyk::new(f(48), f(32), f(16), f(0))
}

/// RGB code values of pixel `i` as 0..1.
#[inline]
pub(super) fn rgb_at(samples: &Samples, i: usize) -> [f64; 3] {
    match samples {
        Samples::U8(v) => std::array::from_fn(|c| v[i * 3 + c] as f64 / 255.0),
        Samples::U16(v) => std::array::from_fn(|c| v[i * 3 + c] as f64 / 65535.0),
    }
}

#[inline]
pub(super) fn rgb_key(samples: &Samples, i: usize) -> u64 {
    match samples {
        Samples::U8(v) => (v[i * 3] as u64) << 16 | (v[i * 3 + 1] as u64) << 8 | v[i * 3 + 2] as u64,
        Samples::U16(v) => (v[i * 3] as u64) << 32 | (v[i * 3 + 1] as u64) << 16 | v[i * 3 + 2] as u64,
    }
}

/// The RGB values 0..1 of a key of [`rgb_key`] for samples of `bits`.
pub(super) fn rgb_of_key(key: u64, bits: u8) -> [f64; 3] {
    let (shift, max) = if bits == 8 { (8, 255.0) } else { (16, 65535.0) };
    let mask = (1u64 << shift) - 1;
    [key >> (2 * shift), (key >> shift) & mask, key & mask].map(|c| c as f64 / max)
}

/// Everything needed to give the ΔE of a pixel, carried from band to band.
pub(super) struct DeModel<'a> {
    separator: &'a Separator,
    source: &'a RgbSource,
    /// 8-bit RGB: ΔE (as f32 bits) per RGB value, filled for the values met
    /// so far (pages of the table are touched only where values occur).
    pub dense: Option<Vec<u32>>,
    /// 8-bit RGB: one bit per RGB value, set once its entries are filled.
    done: Vec<u64>,
    /// The relative colorimetric table (no black point compensation) that
    /// finds each colour's nearest printable colour, where the intent is
    /// another; `None` when the separation itself is that clip.
    reach: Option<SeparationTable>,
    /// 8-bit RGB with `reach`: the distance outside the gamut (f32 bits) per
    /// RGB value.
    dense_outside: Option<Vec<u32>>,
    /// Distinct RGB values met (8-bit RGB).
    pub distinct: u64,
}

impl<'a> DeModel<'a> {
    /// The model for source RGB of `bits` per sample in `source`.
    pub fn new(separator: &'a Separator, source: &'a RgbSource, bits: u8) -> DeModel<'a> {
        let settings = separator.settings();
        let reach = (settings.intent != Intent::Relative || settings.bpc)
            .then(|| table_for_source(&separator.with_intent(Intent::Relative, false), source));
        let eight = bits == 8;
        DeModel {
            separator,
            source,
            dense: eight.then(|| vec![0u32; 1 << 24]),
            done: if eight { vec![0u64; 1 << 18] } else { Vec::new() },
            dense_outside: (eight && reach.is_some()).then(|| vec![0u32; 1 << 24]),
            reach,
            distinct: 0,
        }
    }

    /// Makes the model ready for a band (its source RGB and the CMYK it
    /// separates to): 8-bit RGB values not met before get their ΔE and
    /// distance outside the gamut, from the first pixel that has them.
    pub fn prepare(&mut self, rgb: &Samples, cmyk: &Samples) {
        let (Some(dense), Samples::U8(v)) = (&mut self.dense, rgb) else {
            return;
        };
        const STEP: usize = 1 << 16;
        let done = &self.done;
        let is_done = |key: usize| done[key >> 6] >> (key & 63) & 1 == 1;
        // Values not met before, in pixel order (repeats within a chunk once).
        let candidates: Vec<(u32, usize)> = v
            .par_chunks(3 * STEP)
            .enumerate()
            .flat_map_iter(|(c, chunk)| {
                let mut seen = std::collections::HashSet::new();
                let mut out = Vec::new();
                for (k, px) in chunk.chunks_exact(3).enumerate() {
                    let key = (px[0] as u32) << 16 | (px[1] as u32) << 8 | px[2] as u32;
                    if !is_done(key as usize) && seen.insert(key) {
                        out.push((key, c * STEP + k));
                    }
                }
                out
            })
            .collect();
        let mut fresh: Vec<(u64, u32)> = Vec::new();
        for (key, i) in candidates {
            let (word, bit) = (key as usize >> 6, key & 63);
            if self.done[word] >> bit & 1 == 0 {
                self.done[word] |= 1 << bit;
                fresh.push((cmyk_key(cmyk, i), key));
            }
        }
        self.distinct += fresh.len() as u64;
        // Grouped by the CMYK they separate to: the forward model once per
        // distinct CMYK, the source colour once per distinct RGB.
        fresh.par_sort_unstable();
        let mut starts: Vec<usize> = Vec::with_capacity(fresh.len() / 4096 + 2);
        starts.push(0);
        let mut last = 0;
        for k in 1..fresh.len() {
            if k - last >= 4096 && fresh[k].0 != fresh[k - 1].0 {
                starts.push(k);
                last = k;
            }
        }
        starts.push(fresh.len());
        let (separator, source, reach) = (self.separator, self.source, self.reach.as_ref());
        let values: Vec<Vec<(u32, f32, f32)>> = starts
            .par_windows(2)
            .map(|span| {
                let group = &fresh[span[0]..span[1]];
                let rgb: Vec<[f64; 3]> = group.iter().map(|&(_, key)| key_rgb(key)).collect();
                let labs = source.labs_of(&rgb);
                let mut printed = (u64::MAX, Lab::default());
                let mut out = Vec::with_capacity(group.len());
                for ((&(ink, key), lab), rgb) in group.iter().zip(labs).zip(&rgb) {
                    if printed.0 != ink {
                        printed = (ink, separator.printed_in_frame(cmyk_of_key(ink)).lab());
                    }
                    let de = ciede2000(lab, printed.1) as f32;
                    // The distance outside the gamut, where it is not the ΔE itself.
                    let outside = reach.map_or(de, |reach| {
                        ciede2000(lab, separator.printed_relative(reach.lookup(EncodedRgb(*rgb))).lab()) as f32
                    });
                    out.push((key, de, outside));
                }
                out
            })
            .collect();
        for (key, de, outside) in values.into_iter().flatten() {
            dense[key as usize] = de.to_bits();
            if let Some(o) = &mut self.dense_outside {
                o[key as usize] = outside.to_bits();
            }
        }
    }

    /// ΔE of one pixel (its source RGB values 0..1 and its CMYK key), and
    /// its distance outside the gamut, computed directly.
    pub fn compute(&self, rgb: [f64; 3], cmyk: u64) -> (f32, f32) {
        let lab = self.source.labs_of(&[rgb])[0];
        let de = ciede2000(lab, self.separator.printed_in_frame(cmyk_of_key(cmyk)).lab()) as f32;
        let outside = match &self.reach {
            Some(reach) => ciede2000(lab, self.separator.printed_relative(reach.lookup(EncodedRgb(rgb))).lab()) as f32,
            None => de,
        };
        (de, outside)
    }
}

/// A lookup over one band: the dense table, or a memo of the values met in
/// the rows walked (16-bit RGB).
pub(super) struct DeLookup<'m, 'a> {
    model: &'m DeModel<'a>,
    rgb: &'m Samples,
    cmyk: &'m Samples,
    memo: HashMap<u64, (f32, f32)>,
}

impl<'m, 'a> DeLookup<'m, 'a> {
    /// A lookup over a band's source RGB and its CMYK.
    pub fn new(model: &'m DeModel<'a>, rgb: &'m Samples, cmyk: &'m Samples) -> DeLookup<'m, 'a> {
        DeLookup {
            model,
            rgb,
            cmyk,
            memo: HashMap::new(),
        }
    }

    /// The source RGB key of pixel `i` of the band.
    #[inline]
    pub fn key(&self, i: usize) -> u64 {
        rgb_key(self.rgb, i)
    }

    /// ΔE of pixel `i` of the band and its distance outside the gamut.
    #[inline]
    pub fn get(&mut self, i: usize) -> (f32, f32) {
        let key = rgb_key(self.rgb, i);
        if let Some(d) = &self.model.dense {
            let de = f32::from_bits(d[key as usize]);
            let outside = match &self.model.dense_outside {
                Some(o) => f32::from_bits(o[key as usize]),
                None => de,
            };
            return (de, outside);
        }
        if let Some(&v) = self.memo.get(&key) {
            return v;
        }
        let v = self.model.compute(rgb_at(self.rgb, i), cmyk_key(self.cmyk, i));
        self.memo.insert(key, v);
        v
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::colour::RgbSpace;

    /// The memo per distinct value, filled band by band, gives exactly what
    /// a direct computation per pixel gives, for repeated and unrelated
    /// values alike, whichever band a value first occurs in.
    #[test]
    fn memoised_delta_e_is_the_direct_computation() {
        let condition = crate::press::builtin::coated_offset();
        let settings = crate::separation::SeparationSettings::for_condition(&condition);
        let separator = Separator::new(condition, settings).unwrap();
        let source = RgbSource::Named(RgbSpace::Srgb);
        let mut state = 0x5EED_u64;
        let mut next = || {
            state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (state >> 56) as u8
        };
        let pixels = 3000;
        // Few distinct RGB values (so most repeat), each with its own CMYK;
        // some CMYK shared between RGB values.
        let palette: Vec<([u8; 3], [u8; 4])> = (0..200)
            .map(|k| {
                (
                    [next(), next(), next()],
                    if k % 3 == 0 {
                        [10, 20, 30, 40]
                    } else {
                        [next(), next(), next(), next()]
                    },
                )
            })
            .collect();
        let (mut rgb, mut cmyk) = (Vec::new(), Vec::new());
        for _ in 0..pixels {
            let (r, c) = palette[next() as usize % palette.len()];
            rgb.extend(r);
            cmyk.extend(c);
        }
        let mut model = DeModel::new(&separator, &source, 8);
        assert!(model.dense.is_some());
        // Three bands of unequal height.
        let mut met = std::collections::HashSet::new();
        for (a, b) in [(0, 700), (700, 2500), (2500, pixels)] {
            let band_rgb = Samples::U8(rgb[a * 3..b * 3].to_vec());
            let band_cmyk = Samples::U8(cmyk[a * 4..b * 4].to_vec());
            model.prepare(&band_rgb, &band_cmyk);
            met.extend(rgb[a * 3..b * 3].chunks_exact(3).map(|p| [p[0], p[1], p[2]]));
            assert_eq!(model.distinct, met.len() as u64);
            let mut lookup = DeLookup::new(&model, &band_rgb, &band_cmyk);
            for i in 0..b - a {
                let (got, want) = (lookup.get(i), model.compute(rgb_at(&band_rgb, i), cmyk_key(&band_cmyk, i)));
                assert_eq!(
                    (got.0.to_bits(), got.1.to_bits()),
                    (want.0.to_bits(), want.1.to_bits()),
                    "pixel {}",
                    a + i
                );
            }
        }
    }

    #[test]
    fn rgb_keys_round_trip() {
        let s8 = Samples::U8(vec![1, 2, 255]);
        assert_eq!(rgb_of_key(rgb_key(&s8, 0), 8), rgb_at(&s8, 0));
        let s16 = Samples::U16(vec![65535, 0, 40000]);
        assert_eq!(rgb_of_key(rgb_key(&s16, 0), 16), rgb_at(&s16, 0));
    }

    #[test]
    fn cmyk_keys_round_trip() {
        let s = Samples::U8(vec![255, 0, 128, 3]);
        let c = cmyk_of_key(cmyk_key(&s, 0));
        assert_eq!(c.c, 1.0);
        assert_eq!(c.m, 0.0);
        assert!((c.y - 128.0 / 255.0).abs() < 1e-12 && (c.k - 3.0 / 255.0).abs() < 1e-12);
    }
}
