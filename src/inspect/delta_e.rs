//! The ΔE memo: CIEDE2000 (CIE 142:2001) between a pixel's source colour
//! and the printed colour of its CMYK depends on the pixel's values only, so
//! it is computed once per distinct value, exactly. 8-bit RGB keeps a dense
//! table over all 2²⁴ values, filled for those present, with the forward
//! model evaluated once per distinct CMYK; 16-bit RGB keeps a memo per band.
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
use std::sync::atomic::{AtomicU32, Ordering};

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

/// Everything needed to give the ΔE of a pixel.
pub(super) struct DeModel<'a> {
    separator: &'a Separator,
    source: &'a RgbSource,
    rgb: &'a Samples,
    cmyk: &'a Samples,
    /// 8-bit RGB: ΔE (as f32 bits) per RGB value, filled for the values present.
    pub dense: Option<Vec<AtomicU32>>,
    /// The relative colorimetric table (no black point compensation) that
    /// finds each colour's nearest printable colour, where the intent is
    /// another; `None` when the separation itself is that clip.
    reach: Option<SeparationTable>,
    /// 8-bit RGB with `reach`: the distance outside the gamut (f32 bits) per
    /// RGB value.
    dense_outside: Option<Vec<AtomicU32>>,
    pub distinct: u64,
}

impl<'a> DeModel<'a> {
    pub fn new(separator: &'a Separator, source: &'a RgbSource, rgb: &'a Samples, cmyk: &'a Samples) -> DeModel<'a> {
        let pixels = rgb.len() / 3;
        let settings = separator.settings();
        let reach = (settings.intent != Intent::Relative || settings.bpc)
            .then(|| table_for_source(&separator.with_intent(Intent::Relative, false), source));
        let mut model = DeModel {
            separator,
            source,
            rgb,
            cmyk,
            dense: None,
            reach,
            dense_outside: None,
            distinct: 0,
        };
        let Samples::U8(v) = rgb else { return model };
        if pixels >= u32::MAX as usize {
            return model;
        }
        let (first, distinct) = first_pixels(v);
        // Grouped by the CMYK they separate to: the forward model once per
        // distinct CMYK, the source colour once per distinct RGB.
        let mut items: Vec<(u64, u32)> = distinct.par_iter().map(|&(key, i)| (cmyk_key(cmyk, i as usize), key)).collect();
        items.par_sort_unstable();
        let mut starts: Vec<usize> = Vec::with_capacity(items.len() / 4096 + 2);
        starts.push(0);
        let mut last = 0;
        for k in 1..items.len() {
            if k - last >= 4096 && items[k].0 != items[k - 1].0 {
                starts.push(k);
                last = k;
            }
        }
        starts.push(items.len());
        // The distance outside the gamut, where it is not the ΔE itself, from
        // the same source colours.
        let outside = model.reach.as_ref().map(|reach| {
            (
                reach,
                (0..1usize << 24).into_par_iter().map(|_| AtomicU32::new(0)).collect::<Vec<_>>(),
            )
        });
        starts.par_windows(2).for_each(|span| {
            let group = &items[span[0]..span[1]];
            let rgb: Vec<[f64; 3]> = group.iter().map(|&(_, key)| key_rgb(key)).collect();
            let labs = source.labs_of(&rgb);
            let mut printed = (u64::MAX, Lab::default());
            for ((&(ink, key), lab), rgb) in group.iter().zip(labs).zip(&rgb) {
                if printed.0 != ink {
                    printed = (ink, separator.printed_in_frame(cmyk_of_key(ink)).lab());
                }
                first[key as usize].store((ciede2000(lab, printed.1) as f32).to_bits(), Ordering::Relaxed);
                if let Some((reach, o)) = &outside {
                    let d = ciede2000(lab, separator.printed_relative(reach.lookup(EncodedRgb(*rgb))).lab());
                    o[key as usize].store((d as f32).to_bits(), Ordering::Relaxed);
                }
            }
        });
        model.dense_outside = outside.map(|(_, o)| o);
        model.distinct = distinct.len() as u64;
        model.dense = Some(first);
        model
    }

    /// ΔE of pixel `i`, and its distance outside the gamut, computed directly.
    pub fn compute(&self, i: usize) -> (f32, f32) {
        let rgb = rgb_at(self.rgb, i);
        let lab = self.source.labs_of(&[rgb])[0];
        let de = ciede2000(lab, self.separator.printed_in_frame(cmyk_of_key(cmyk_key(self.cmyk, i))).lab()) as f32;
        let outside = match &self.reach {
            Some(reach) => ciede2000(lab, self.separator.printed_relative(reach.lookup(EncodedRgb(rgb))).lab()) as f32,
            None => de,
        };
        (de, outside)
    }
}

/// Pass 1 over 8-bit RGB: per RGB value (R << 16 | G << 8 | B), the first
/// pixel that has it (`u32::MAX` for values not present), and the values
/// present with their first pixel, in value order.
fn first_pixels(v: &[u8]) -> (Vec<AtomicU32>, Vec<(u32, u32)>) {
    let first: Vec<AtomicU32> = (0..1usize << 24).into_par_iter().map(|_| AtomicU32::new(u32::MAX)).collect();
    const STEP: usize = 1 << 16;
    v.par_chunks(3 * STEP).enumerate().for_each(|(c, chunk)| {
        for (k, px) in chunk.chunks_exact(3).enumerate() {
            let key = (px[0] as usize) << 16 | (px[1] as usize) << 8 | px[2] as usize;
            let i = (c * STEP + k) as u32;
            let slot = &first[key];
            if slot.load(Ordering::Relaxed) > i {
                slot.fetch_min(i, Ordering::Relaxed);
            }
        }
    });
    let distinct: Vec<(u32, u32)> = first
        .par_iter()
        .enumerate()
        .filter_map(|(k, s)| {
            let i = s.load(Ordering::Relaxed);
            (i != u32::MAX).then_some((k as u32, i))
        })
        .collect();
    (first, distinct)
}

/// A per-band lookup: the dense table, or a memo of the band's own values.
pub(super) struct DeLookup<'m, 'a> {
    pub model: &'m DeModel<'a>,
    pub memo: HashMap<u64, (f32, f32)>,
}

impl DeLookup<'_, '_> {
    /// ΔE of pixel `i` and its distance outside the gamut.
    #[inline]
    pub fn get(&mut self, i: usize) -> (f32, f32) {
        let key = rgb_key(self.model.rgb, i);
        if let Some(d) = &self.model.dense {
            let de = f32::from_bits(d[key as usize].load(Ordering::Relaxed));
            let outside = match &self.model.dense_outside {
                Some(o) => f32::from_bits(o[key as usize].load(Ordering::Relaxed)),
                None => de,
            };
            return (de, outside);
        }
        if let Some(&v) = self.memo.get(&key) {
            return v;
        }
        let v = self.model.compute(i);
        self.memo.insert(key, v);
        v
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::colour::RgbSpace;

    /// The memo per distinct value gives exactly what a direct computation
    /// per pixel gives, for repeated and unrelated values alike.
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
        let (rgb, cmyk) = (Samples::U8(rgb), Samples::U8(cmyk));
        let model = DeModel::new(&separator, &source, &rgb, &cmyk);
        assert!(model.dense.is_some());
        let mut lookup = DeLookup {
            model: &model,
            memo: HashMap::new(),
        };
        for i in 0..pixels {
            let (got, want) = (lookup.get(i), model.compute(i));
            assert_eq!(
                (got.0.to_bits(), got.1.to_bits()),
                (want.0.to_bits(), want.1.to_bits()),
                "pixel {i}"
            );
        }
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
