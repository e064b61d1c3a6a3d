//! Floating-point PCS → CMYK tables (BToD0/1/2, `multiProcessElementsType`,
//! ICC.1:2022 §9.2.13–15 and §10.15) whose grid lies in sRGB coordinates.
//!
//! A 16-bit BToA table samples the separation on a regular CIELAB grid, eight
//! units of a*, b* apart at 33³ nodes. The separation has creases (where an
//! ink reaches 0 or 100 % the others change slope) that run through much of
//! the gamut, and a table interpolates straight across them: for sRGB
//! artwork lcms2 then separates several percent away from platesmith
//! (measured in tests/suite/icc_profile.rs). A `multiProcessElementsType` table can
//! chain matrices, curves and a CLUT freely, so these tables first carry the
//! PCS colour into encoded sRGB, exactly as IEC 61966-2-1 defines it:
//!
//! 1. matrix: CIELAB → (f(X/Xn), f(Y/Yn), f(Z/Zn)), linear in L*, a*, b*
//!    (CIE 015:2018 §8.2.1);
//! 2. curves: f⁻¹, scaled by the D50 white: → PCS XYZ;
//! 3. matrix with offsets: the intent's black scaling (the linear XYZ
//!    scaling of ISO 18619:2015, so that the perceptual reference black of a
//!    v4 perceptual PCS becomes zero) and XYZ D50 → linear sRGB (the
//!    Bradford-adapted matrix of [`RgbSpace::Srgb`]);
//! 4. curves: linear sRGB → grid coordinate: the sRGB encoding on 0..1, which
//!    puts the nodes of the separation table (`separate`'s own 33³ grid) on
//!    nodes of this CLUT; outside 0..1 a few more nodes, spaced wider and
//!    wider in the extended encoding, reach every colour of the PCS encoding
//!    range (see [`LINEAR_RANGE`]);
//! 5. a float CLUT: the separation at each node.
//!
//! So a CMM that reads these tables (lcms2 prefers them to BToA, cmsio1.c)
//! interpolates the same nodes for sRGB artwork as `separate` does. CMMs that
//! ignore them use the 16-bit BToA tables, which are always written too.

use super::ffi::{CURVE_MINUS_INF, CURVE_PLUS_INF, FormulaSegment, chain, segmented_curve};
use crate::colour::{D50, Mat3, RgbSpace, Transfer, Xyz};
use crate::{Error, Result};
use lcms2::{Pipeline, Stage};

/// Linear sRGB reached by the CIELAB box of the 16-bit PCS encoding (L* 0..100,
/// a*, b* −128..127): R −2.16..4.33, G −0.18..1.65, B −0.15..5.03 (computed by
/// `frame_reaches_the_whole_pcs_box` below), rounded out. Colours beyond
/// it (none of them real surface colours) are clamped onto it.
pub const LINEAR_RANGE: (f64, f64) = (-2.2, 5.1);

/// A grid in sRGB coordinates: where each node lies on an axis.
#[derive(Debug, Clone, PartialEq)]
pub struct SrgbFrame {
    /// Linear sRGB value of each node along an axis, ascending (f32-exact,
    /// as the curve breakpoints that meet them are stored in f32).
    linear: Vec<f64>,
    /// Index of the node at encoded sRGB 0; the `inner` nodes from here on
    /// sit at encoded k / (inner − 1).
    zero: usize,
    inner: usize,
}

impl SrgbFrame {
    /// A frame whose nodes on 0..1 are those of an `inner`-point regular grid
    /// in encoded sRGB (2..=129). Outside, steps of 1, 2, 4, … inner steps up
    /// to half the range, then the end of [`LINEAR_RANGE`].
    pub fn new(inner: usize) -> Result<SrgbFrame> {
        if !(2..=129).contains(&inner) {
            return Err(Error::usage(format!("sRGB frame needs 2 to 129 inner nodes, got {inner}")));
        }
        let t = Transfer::Srgb;
        let h = 1.0 / (inner - 1) as f64;
        let mut steps = Vec::new();
        let mut k = 1.0;
        while k * h <= 0.5 + 1e-12 {
            steps.push(k * h);
            k *= 2.0;
        }
        let f32_exact = |v: f64| v as f32 as f64;
        let mut linear: Vec<f64> = Vec::new();
        linear.push(f32_exact(LINEAR_RANGE.0));
        linear.extend(steps.iter().rev().map(|&s| f32_exact(t.decode(-s))));
        let zero = linear.len();
        linear.extend((0..inner).map(|i| t.decode(i as f64 * h)));
        linear.extend(steps.iter().map(|&s| f32_exact(t.decode(1.0 + s))));
        linear.push(f32_exact(LINEAR_RANGE.1));
        Ok(SrgbFrame { linear, zero, inner })
    }

    /// Nodes per axis.
    pub fn grid(&self) -> usize {
        self.linear.len()
    }

    /// Linear sRGB of a node along one axis.
    pub fn linear(&self, index: usize) -> f64 {
        self.linear[index]
    }

    /// The CLUT index of inner node `k` (encoded sRGB k / (inner − 1)).
    pub fn inner_index(&self, k: usize) -> usize {
        self.zero + k
    }

    /// PCS XYZ (D50, Y of white 1) of a node.
    pub fn node_xyz(&self, index: [usize; 3]) -> Xyz {
        let m = RgbSpace::Srgb.converter().to_pcs_matrix();
        Xyz::from_array(m.apply(index.map(|i| self.linear[i])))
    }

    /// The grid coordinate (0..1) of each node.
    fn coordinate(&self, index: usize) -> f64 {
        index as f64 / (self.grid() - 1) as f64
    }

    /// Linear sRGB → grid coordinate, as formula segments.
    fn coordinate_curve(&self) -> Vec<FormulaSegment> {
        let n = self.grid();
        let mut out = Vec::with_capacity(n + 4);
        // Straight between two breakpoints, kept positive under the power.
        let line = |x0: f64, x1: f64, u0: f64, u1: f64| {
            let slope = (u1 - u0) / (x1 - x0);
            let b = 1.0 + slope.abs() * x0.abs().max(x1.abs());
            FormulaSegment {
                x0: x0 as f32,
                x1: x1 as f32,
                gamma: 1.0,
                a: slope,
                b,
                c: u0 - slope * x0 - b,
            }
        };
        let flat = |x0: f32, x1: f32, u: f64| FormulaSegment {
            x0,
            x1,
            gamma: 1.0,
            a: 0.0,
            b: 1.0,
            c: u - 1.0,
        };
        out.push(flat(CURVE_MINUS_INF, self.linear[0] as f32, 0.0));
        for i in 0..self.zero {
            out.push(line(self.linear[i], self.linear[i + 1], self.coordinate(i), self.coordinate(i + 1)));
        }
        // Encoded sRGB e ↦ u0 + span·e, through IEC 61966-2-1's two pieces.
        let (u0, u1) = (self.coordinate(self.zero), self.coordinate(self.zero + self.inner - 1));
        let span = u1 - u0;
        let knee = 0.003_130_8_f32;
        out.push(FormulaSegment {
            x0: 0.0,
            x1: knee,
            gamma: 1.0,
            a: 12.92 * span,
            b: 1.0,
            c: u0 - 1.0,
        });
        out.push(FormulaSegment {
            x0: knee,
            x1: 1.0,
            gamma: 1.0 / 2.4,
            a: (1.055 * span).powf(2.4),
            b: 0.0,
            c: u0 - 0.055 * span,
        });
        let last_inner = self.zero + self.inner - 1;
        for i in last_inner..n - 1 {
            out.push(line(self.linear[i], self.linear[i + 1], self.coordinate(i), self.coordinate(i + 1)));
        }
        out.push(flat(self.linear[n - 1] as f32, CURVE_PLUS_INF, 1.0));
        out
    }
}

/// A per-channel linear XYZ scaling X' = scale·X + offset (black scaling).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct XyzScaling {
    pub scale: [f64; 3],
    pub offset: [f64; 3],
}

impl XyzScaling {
    pub const IDENTITY: XyzScaling = XyzScaling {
        scale: [1.0; 3],
        offset: [0.0; 3],
    };
}

/// One intent's floating-point table.
#[derive(Debug, Clone, PartialEq)]
pub struct FloatIntent {
    /// Applied to the PCS XYZ before the frame's matrix.
    pub scaling: XyzScaling,
    /// CMYK (0..1) per node, first axis (red) slowest, 4 values per node.
    pub table: Vec<f32>,
}

/// The BToD0/1/2 tables (perceptual, relative colorimetric, saturation).
#[derive(Debug, Clone, PartialEq)]
pub struct FloatTables {
    pub frame: SrgbFrame,
    pub intents: [FloatIntent; 3],
}

/// CIE 015:2018 §8.2.1: δ = 6/29.
const DELTA: f64 = 6.0 / 29.0;

/// The pipeline of one intent: CIELAB (PCS values as they are) → CMYK.
pub(super) fn pipeline(frame: &SrgbFrame, intent: &FloatIntent) -> Result<Pipeline> {
    let n = frame.grid();
    if intent.table.len() != n.pow(3) * 4 {
        return Err(Error::Internal(format!(
            "float table has {} values, {} needed",
            intent.table.len(),
            n.pow(3) * 4
        )));
    }
    let lcms = |what: &str| Error::Internal(format!("lcms2 could not allocate {what}"));
    let (l, a, b) = (1.0 / 116.0, 1.0 / 500.0, 1.0 / 200.0);
    let to_f = [l, a, 0.0, l, 0.0, 0.0, l, 0.0, -b];
    let f_offset = [16.0 / 116.0; 3];
    let white = D50.xyz.to_array();
    let finv: Vec<lcms2::ToneCurve> = white
        .iter()
        .map(|&w| {
            let slope = w * 3.0 * DELTA * DELTA;
            segmented_curve(&[
                FormulaSegment {
                    x0: CURVE_MINUS_INF,
                    x1: DELTA as f32,
                    gamma: 1.0,
                    a: slope,
                    b: 1.0,
                    c: -1.0 - slope * 4.0 / 29.0,
                },
                FormulaSegment {
                    x0: DELTA as f32,
                    x1: CURVE_PLUS_INF,
                    gamma: 3.0,
                    a: w.cbrt(),
                    b: 0.0,
                    c: 0.0,
                },
            ])
        })
        .collect::<Result<_>>()?;
    let from_pcs = RgbSpace::Srgb
        .converter()
        .to_pcs_matrix()
        .inverse()
        .expect("sRGB matrix is invertible");
    let s = intent.scaling;
    let to_rgb = from_pcs.mul(&Mat3([[s.scale[0], 0.0, 0.0], [0.0, s.scale[1], 0.0], [0.0, 0.0, s.scale[2]]]));
    let rgb_offset = from_pcs.apply(s.offset);
    let coordinate = segmented_curve(&frame.coordinate_curve())?;
    let stages = vec![
        Stage::new_matrix(&to_f, 3, 3, Some(&f_offset)).map_err(|_| lcms("a matrix"))?,
        Stage::new_tone_curves(&finv.iter().map(|c| &**c).collect::<Vec<_>>()).map_err(|_| lcms("curves"))?,
        Stage::new_matrix(&to_rgb.0.concat(), 3, 3, Some(&rgb_offset)).map_err(|_| lcms("a matrix"))?,
        Stage::new_tone_curves(&[&*coordinate, &*coordinate, &*coordinate]).map_err(|_| lcms("curves"))?,
        Stage::new_clut::<f32>(n, 3, 4, Some(&intent.table)).map_err(|_| lcms("a CLUT"))?,
    ];
    chain(3, 4, stages)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::colour::Lab;

    #[test]
    fn frame_reaches_the_whole_pcs_box() {
        // Every colour of the encoding box (L* 0..100, a*, b* −128..127,
        // ICC.1:2022 §6.3.4.2) lands inside LINEAR_RANGE in linear sRGB.
        let conv = RgbSpace::Srgb.converter();
        let (mut lo, mut hi) = ([f64::MAX; 3], [f64::MIN; 3]);
        for l in (0..=100).step_by(2) {
            for a in (-128..=127).step_by(3) {
                for b in (-128..=127).step_by(3) {
                    let rgb = conv.xyz_to_linear(Lab::new(l as f64, a as f64, b as f64).to_xyz()).0;
                    for c in 0..3 {
                        lo[c] = lo[c].min(rgb[c]);
                        hi[c] = hi[c].max(rgb[c]);
                    }
                }
            }
        }
        assert!(
            lo.iter().all(|&v| v >= LINEAR_RANGE.0) && hi.iter().all(|&v| v <= LINEAR_RANGE.1),
            "{lo:?} {hi:?}"
        );
        // ...and the range is not much wider than needed.
        assert!(lo[0] < LINEAR_RANGE.0 + 0.1 && hi[2] > LINEAR_RANGE.1 - 0.1, "{lo:?} {hi:?}");
    }

    #[test]
    fn inner_nodes_sit_on_the_regular_srgb_grid() {
        let frame = SrgbFrame::new(33).unwrap();
        assert_eq!(frame.grid(), 33 + 2 * 6);
        let t = Transfer::Srgb;
        for k in 0..33 {
            assert!((t.encode(frame.linear(frame.inner_index(k))) - k as f64 / 32.0).abs() < 1e-12);
        }
        assert!(frame.linear.windows(2).all(|w| w[0] < w[1]));
        assert!(SrgbFrame::new(1).is_err());
    }

    #[test]
    fn coordinate_curve_puts_every_node_on_its_grid_coordinate() {
        // lcms2 evaluates the curve (cmsEvalToneCurveFloat) at every node's
        // linear value; each must come out at that node's coordinate.
        let frame = SrgbFrame::new(33).unwrap();
        let curve = segmented_curve(&frame.coordinate_curve()).unwrap();
        for i in 0..frame.grid() {
            let u = curve.eval(frame.linear(i) as f32) as f64;
            assert!((u - frame.coordinate(i)).abs() < 2e-6, "node {i}: {u} vs {}", frame.coordinate(i));
        }
        // Clamped beyond the ends, monotonic in between.
        assert_eq!(curve.eval(-100.0f32), 0.0);
        assert!((curve.eval(100.0f32) - 1.0).abs() < 1e-6);
        let mut last = -1.0f32;
        for i in 0..=2000 {
            let u = curve.eval(-2.5 + i as f32 * 0.004);
            assert!(u >= last - 1e-6, "at {}", -2.5 + i as f32 * 0.004);
            last = u;
        }
    }
}
