//! A CMYK ICC output profile as the press model.
//!
//! lcms2 evaluates the profile's CMYK → PCS table (AToB1, relative
//! colorimetric, by default) once on a regular 4D grid; lookups then
//! interpolate that grid with 4D simplex interpolation: the unit cell around
//! the coverage is split into the 24 simplices (pentatopes) of the Kuhn
//! triangulation, the one holding the point is found by sorting the four
//! fractional parts, and its 5 vertices are blended with the barycentric
//! weights (Kasson, Nin, Plouffe & Hafner, "Performing color space
//! conversions with three-dimensional linear interpolation", J. Electronic
//! Imaging 4(3), 1995, generalised to four dimensions). The grid holds
//! absolute CIELAB D50, so `lab()` interpolates directly and the model stays
//! `Send + Sync` with no lcms2 state.

use super::{MediaWhite, PressModel, PrintingCondition};
use crate::colour::{D50, Lab, Xyz};
use crate::ink::Cmyk;
use crate::settings::BlackGeneration;
use crate::{Error, Result};
use lcms2::{
    CIExyY, ColorSpaceSignature, Flags, GlobalContext, InfoType, Intent, Locale, PixelFormat, Profile, ProfileClassSignature, Tag,
    TagSignature, Transform,
};
use rayon::prelude::*;
use std::path::Path;
use std::sync::Arc;

/// Default points per CMYK axis of the sampled grid: 21⁴ = 194 481 nodes, 2.3 MB.
///
/// Measured against lcms2 evaluating the profile directly on 5000 random builds
/// (tests/suite/icc_profile.rs, `sampled_grid_error_against_lcms2`), ΔE2000 mean / max:
/// profile 11⁴ — grid 17: 0.059 / 0.40, grid 21: 0.013 / 0.18; profile 17⁴ —
/// grid 17: 0.020 / 0.25, grid 21: 0.032 / 0.22; grid 33 (14 MB, several
/// times slower to load) reaches 0.006 / 0.12. 21 keeps the worst case near
/// 0.2 whatever the profile's own grid, at a size that stays in cache.
pub const DEFAULT_MODEL_GRID: usize = 21;

/// Total ink limit assumed when lcms2 cannot detect one (the profile has no
/// usable BToA0 table): 300 %, a conservative default (common practice: coated
/// sheetfed runs about 300–340 %, so 300 % rarely overloads a press).
pub const FALLBACK_TAC_PERCENT: f64 = 300.0;

/// Which colorimetry of the profile the model reports (as absolute CIELAB either way).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum IccColorimetry {
    /// The relative colorimetric table (AToB1, media-relative), converted to
    /// absolute with the profile's media white point by the ICC.1:2022 Annex A
    /// scaling ([`MediaWhite`]). The default.
    #[default]
    Relative,
    /// lcms2's absolute colorimetric intent (AToB1 and lcms2's own white-point
    /// handling, which also honours a `chad` tag).
    Absolute,
}

/// How a profile is turned into a model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IccModelOptions {
    pub colorimetry: IccColorimetry,
    /// Points per CMYK axis of the sampled grid (2..=65); default [`DEFAULT_MODEL_GRID`].
    pub grid: usize,
}

impl Default for IccModelOptions {
    fn default() -> Self {
        IccModelOptions {
            colorimetry: IccColorimetry::Relative,
            grid: DEFAULT_MODEL_GRID,
        }
    }
}

/// A press model sampled from a CMYK ICC output profile.
#[derive(Clone)]
pub struct IccPressModel {
    grid: usize,
    /// Index strides of C, M, Y, K (K fastest).
    strides: [usize; 4],
    /// Absolute CIELAB D50 per node.
    table: Vec<[f32; 3]>,
    media_white: Xyz,
    tac_percent: Option<f64>,
    description: Option<String>,
}

impl IccPressModel {
    /// Loads a profile file with the default options.
    pub fn from_file(path: &Path) -> Result<IccPressModel> {
        IccPressModel::from_file_with(path, IccModelOptions::default())
    }

    pub fn from_file_with(path: &Path, options: IccModelOptions) -> Result<IccPressModel> {
        let bytes = std::fs::read(path).map_err(|e| Error::input(path, format!("cannot read the ICC profile: {e}")))?;
        IccPressModel::from_bytes(&bytes, path, options)
    }

    /// Builds the model from profile bytes; `origin` names the source in errors.
    pub fn from_bytes(bytes: &[u8], origin: &Path, options: IccModelOptions) -> Result<IccPressModel> {
        let bad = |message: String| Error::input(origin, message);
        if !(2..=65).contains(&options.grid) {
            return Err(Error::usage(format!(
                "ICC model grid must be 2 to 65 points per axis, got {}",
                options.grid
            )));
        }
        check_header(bytes).map_err(bad)?;
        let profile =
            Profile::new_icc(bytes).map_err(|_| bad("not an ICC profile lcms2 can read (damaged header or tag directory)".into()))?;
        let class = profile.device_class();
        if class != ProfileClassSignature::OutputClass {
            return Err(bad(format!(
                "is a {} profile, not a CMYK output (printer) profile",
                class_name(class)
            )));
        }
        let space = profile.color_space();
        if space != ColorSpaceSignature::CmykData {
            return Err(bad(format!("is an output profile for {space:?}, not for CMYK")));
        }
        let pcs = profile.pcs();
        if pcs != ColorSpaceSignature::LabData && pcs != ColorSpaceSignature::XYZData {
            return Err(bad(format!(
                "has an invalid profile connection space {pcs:?} (Lab or XYZ expected)"
            )));
        }
        let intent = match options.colorimetry {
            IccColorimetry::Relative => Intent::RelativeColorimetric,
            IccColorimetry::Absolute => Intent::AbsoluteColorimetric,
        };
        // LCMS_USED_AS_INPUT = 0: the CMYK → PCS direction.
        if !profile.is_intent_supported(intent, 0) {
            return Err(bad("has no CMYK → PCS table (AToB0/AToB1) to model the press with".into()));
        }
        let media_white = match profile.read_tag(TagSignature::MediaWhitePointTag) {
            Tag::CIEXYZ(w) => Xyz::new(w.X, w.Y, w.Z),
            // ICC.1:2022 §8.2 requires the tag; lcms2 assumes D50 without it, and so do we.
            _ => D50.xyz,
        };
        if !(media_white.x > 0.0 && media_white.y > 0.0 && media_white.z > 0.0) {
            return Err(bad(format!("has an invalid media white point {media_white:?}")));
        }

        let d50 = D50.xyz;
        let sum = d50.x + d50.y + d50.z;
        let white = CIExyY {
            x: d50.x / sum,
            y: d50.y / sum,
            Y: 1.0,
        };
        let lab_profile = Profile::new_lab4_context(GlobalContext::new(), &white)
            .map_err(|e| Error::Internal(format!("lcms2 could not create a Lab profile: {e}")))?;
        // No cache: the transform is then `Sync` and rows are transformed in parallel.
        let transform: Transform<[f64; 4], [f64; 3], GlobalContext, _> = Transform::new_flags_context(
            GlobalContext::new(),
            &profile,
            PixelFormat::CMYK_DBL,
            &lab_profile,
            PixelFormat::Lab_DBL,
            intent,
            Flags::NO_CACHE | Flags::NO_OPTIMIZE,
        )
        .map_err(|_| bad("its CMYK → PCS table cannot be used (damaged or truncated tag data)".into()))?;

        let n = options.grid;
        let step = 100.0 / (n - 1) as f64; // lcms2 takes floating-point CMYK in percent
        let inputs: Vec<[f64; 4]> = (0..n.pow(4))
            .map(|i| [i / (n * n * n), i / (n * n) % n, i / n % n, i % n].map(|v| v as f64 * step))
            .collect();
        let mut labs = vec![[0.0f64; 3]; inputs.len()];
        inputs
            .par_chunks(4096)
            .zip(labs.par_chunks_mut(4096))
            .for_each(|(input, output)| transform.transform_pixels(input, output));

        let media = MediaWhite::new(media_white);
        let mut table = Vec::with_capacity(labs.len());
        for (lab, ink) in labs.iter().zip(&inputs) {
            let lab = Lab::from_array(*lab);
            let absolute = match options.colorimetry {
                IccColorimetry::Relative => media.absolute_lab_from_relative(lab),
                IccColorimetry::Absolute => lab,
            };
            if !absolute.is_finite() {
                return Err(bad(format!(
                    "its CMYK → PCS table gives no colour for C {:.0} M {:.0} Y {:.0} K {:.0} %",
                    ink[0], ink[1], ink[2], ink[3]
                )));
            }
            table.push([absolute.l as f32, absolute.a as f32, absolute.b as f32]);
        }
        let tac = profile.detect_tac();
        Ok(IccPressModel {
            grid: n,
            strides: [n * n * n, n * n, n, 1],
            table,
            media_white,
            tac_percent: (tac.is_finite() && tac > 0.0).then_some(tac),
            description: profile.info(InfoType::Description, Locale::none()).filter(|d| !d.trim().is_empty()),
        })
    }

    /// The total ink lcms2 finds in the profile's BToA0 table (`cmsDetectTAC`),
    /// in percent; `None` when it finds none.
    pub fn detected_tac(&self) -> Option<f64> {
        self.tac_percent
    }

    /// The profile's media white point (absolute XYZ, D50; D50 when the tag is missing).
    pub fn media_white(&self) -> Xyz {
        self.media_white
    }

    /// The profile description, when it has one.
    pub fn description(&self) -> Option<&str> {
        self.description.as_deref()
    }

    /// Points per CMYK axis of the sampled grid.
    pub fn grid(&self) -> usize {
        self.grid
    }

    /// Absolute CIELAB by 4D simplex interpolation of the grid.
    #[inline]
    fn interpolate(&self, ink: Cmyk) -> [f64; 3] {
        let last = (self.grid - 1) as f64;
        let mut base = 0;
        // (fraction, stride) per axis
        let mut axes = [(0.0f64, 0usize); 4];
        for (axis, (v, stride)) in ink.to_array().into_iter().zip(self.strides).enumerate() {
            let x = v.clamp(0.0, 1.0) * last;
            // A NaN coverage gives cell 0 (`as` saturates) and a NaN result.
            let cell = (x as usize).min(self.grid - 2);
            base += cell * stride;
            axes[axis] = (x - cell as f64, stride);
        }
        // Sorting network for four values, largest fraction first.
        let swap = |axes: &mut [(f64, usize); 4], i: usize, j: usize| {
            if axes[i].0 < axes[j].0 {
                axes.swap(i, j);
            }
        };
        swap(&mut axes, 0, 1);
        swap(&mut axes, 2, 3);
        swap(&mut axes, 0, 2);
        swap(&mut axes, 1, 3);
        swap(&mut axes, 1, 2);

        let t = &self.table;
        let mut index = base;
        let mut node = t[index];
        let mut weight = 1.0 - axes[0].0;
        let mut out = [node[0] as f64 * weight, node[1] as f64 * weight, node[2] as f64 * weight];
        for k in 0..4 {
            index += axes[k].1;
            node = t[index];
            weight = if k < 3 { axes[k].0 - axes[k + 1].0 } else { axes[3].0 };
            out[0] += node[0] as f64 * weight;
            out[1] += node[1] as f64 * weight;
            out[2] += node[2] as f64 * weight;
        }
        out
    }
}

/// Shows the settings, not the 2 MB table.
impl std::fmt::Debug for IccPressModel {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("IccPressModel")
            .field("grid", &self.grid)
            .field("media_white", &self.media_white)
            .field("tac_percent", &self.tac_percent)
            .field("description", &self.description)
            .finish_non_exhaustive()
    }
}

impl PressModel for IccPressModel {
    fn xyz(&self, ink: Cmyk) -> Xyz {
        Lab::from_array(self.interpolate(ink)).to_xyz()
    }

    fn lab(&self, ink: Cmyk) -> Lab {
        Lab::from_array(self.interpolate(ink))
    }

    fn paper_xyz(&self) -> Xyz {
        let p = self.table[0];
        Lab::new(p[0] as f64, p[1] as f64, p[2] as f64).to_xyz()
    }
}

/// A printing condition from a CMYK output profile file.
///
/// - `name`: the file stem.
/// - `description`: the profile description, or "ICC output profile FILE".
/// - `model`: [`IccPressModel`] with the default options (relative colorimetric, 21⁴ grid).
/// - `tac`: the TAC lcms2 detects in the profile; when it detects none,
///   [`FALLBACK_TAC_PERCENT`] (a default, marked as such).
/// - `black`: `BlackGeneration::default()` (a default: a profile does not state its black generation usably).
/// - `min_dot`: 0.02 (a default, common practice: 2 % is the smallest dot most plates hold).
pub fn condition_from_icc(path: &Path) -> Result<PrintingCondition> {
    let model = IccPressModel::from_file(path)?;
    let name = path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "icc".into());
    let description = model.description().map(str::to_owned).unwrap_or_else(|| {
        format!(
            "ICC output profile {}",
            path.file_name().map(|f| f.to_string_lossy()).unwrap_or_default()
        )
    });
    let tac = model.detected_tac().unwrap_or(FALLBACK_TAC_PERCENT) / 100.0;
    Ok(PrintingCondition::new(
        name,
        description,
        Arc::new(model),
        tac,
        BlackGeneration::default(),
        0.02,
    ))
}

/// Checks what lcms2 tolerates silently: a file shorter than its header says
/// (lcms2 drops the tags past the end and may fall back to other tables).
/// ICC.1:2022 §7.2.2: bytes 0–3 hold the profile size, bytes 36–39 the
/// signature 'acsp'.
fn check_header(bytes: &[u8]) -> std::result::Result<(), String> {
    if bytes.len() < 132 {
        return Err(format!(
            "is not an ICC profile: {} bytes, shorter than the 128-byte header and tag count",
            bytes.len()
        ));
    }
    if &bytes[36..40] != b"acsp" {
        return Err("is not an ICC profile (no 'acsp' signature at byte 36)".into());
    }
    let declared = u32::from_be_bytes([bytes[0], bytes[1], bytes[2], bytes[3]]) as usize;
    if declared > bytes.len() {
        return Err(format!(
            "is truncated: its header gives {declared} bytes but only {} are present",
            bytes.len()
        ));
    }
    Ok(())
}

fn class_name(class: ProfileClassSignature) -> &'static str {
    match class {
        ProfileClassSignature::InputClass => "input (scanner or camera)",
        ProfileClassSignature::DisplayClass => "display",
        ProfileClassSignature::OutputClass => "output",
        ProfileClassSignature::LinkClass => "device link",
        ProfileClassSignature::AbstractClass => "abstract",
        ProfileClassSignature::ColorSpaceClass => "colour space",
        ProfileClassSignature::NamedColorClass => "named colour",
        _ => "non-printer",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn linear_model(grid: usize) -> IccPressModel {
        // A table whose Lab is an affine function of CMYK: simplex interpolation
        // reproduces affine functions exactly (barycentric weights sum to 1 and
        // reproduce the vertex coordinates).
        let f = |c: [f64; 4]| {
            [
                90.0 - 20.0 * c[0] - 30.0 * c[1] - 5.0 * c[2] - 60.0 * c[3],
                40.0 * c[1] - 30.0 * c[0],
                70.0 * c[2] - 45.0 * c[0],
            ]
        };
        let n = grid;
        let table = (0..n.pow(4))
            .map(|i| {
                let c = [i / (n * n * n), i / (n * n) % n, i / n % n, i % n].map(|v| v as f64 / (n - 1) as f64);
                f(c).map(|v| v as f32)
            })
            .collect();
        IccPressModel {
            grid,
            strides: [n * n * n, n * n, n, 1],
            table,
            media_white: D50.xyz,
            tac_percent: None,
            description: None,
        }
    }

    #[test]
    fn simplex_interpolation_reproduces_affine_tables() {
        let model = linear_model(5);
        for ink in [
            Cmyk::new(0.13, 0.77, 0.5, 0.91),
            Cmyk::new(1.0, 0.0, 0.33, 0.999),
            Cmyk::new(0.6, 0.6, 0.6, 0.6),
        ] {
            let lab = model.lab(ink);
            let want = 90.0 - 20.0 * ink.c - 30.0 * ink.m - 5.0 * ink.y - 60.0 * ink.k;
            assert!((lab.l - want).abs() < 1e-4, "{ink:?}: {lab:?}");
            assert!((lab.b - (70.0 * ink.y - 45.0 * ink.c)).abs() < 1e-4);
        }
    }

    #[test]
    fn coverage_is_clamped_and_nan_does_not_panic() {
        let model = linear_model(3);
        assert_eq!(model.lab(Cmyk::new(-1.0, 2.0, 0.0, 0.0)), model.lab(Cmyk::new(0.0, 1.0, 0.0, 0.0)));
        assert!(!model.lab(Cmyk::new(f64::NAN, 0.0, 0.0, 0.0)).is_finite());
        // Debug output names the settings and leaves the table out.
        assert!(format!("{model:?}").len() < 200);
    }

    #[test]
    fn header_checks_name_the_problem() {
        assert!(check_header(b"short").unwrap_err().contains("shorter"));
        let mut bytes = vec![0u8; 200];
        assert!(check_header(&bytes).unwrap_err().contains("acsp"));
        bytes[36..40].copy_from_slice(b"acsp");
        bytes[0..4].copy_from_slice(&1000u32.to_be_bytes());
        assert!(check_header(&bytes).unwrap_err().contains("truncated"));
    }
}
