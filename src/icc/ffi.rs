//! The one unsafe corner of platesmith: what the safe `lcms2` crate lacks for
//! writing ICC tables.
//!
//! The `lcms2` crate can allocate pipelines, CLUT stages and curve stages and
//! write a pipeline as a tag, but it has no call that puts a stage into a
//! pipeline and none that builds a segmented curve (the only curve a
//! `multiProcessElementsType` table can hold). This module adds exactly those
//! (`cmsPipelineInsertStage` and `cmsBuildSegmentedToneCurve` from
//! lcms2-sys) behind safe functions. Everything else in `icc` uses the safe
//! crate.

use crate::{Error, Result};
use foreign_types::ForeignType;
use lcms2::{Pipeline, Stage, ToneCurve};
use lcms2_sys as sys;

/// Whether the CLUT is framed by identity curve sets.
///
/// `lutAtoBType` / `lutBtoAType` (v4) are written by lcms2 only for the
/// stage patterns "B", "M Matrix B", "A CLUT B" and "A CLUT M Matrix B"
/// (`Type_LUTA2B_Write`, `Type_LUTB2A_Write` in cmstypes.c), so a lone CLUT
/// needs identity A and B curves. `lut16Type` (v2) takes a lone CLUT and
/// writes identity input and output tables itself.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Framing {
    CurvesAroundClut,
    ClutOnly,
}

/// A pipeline `inputs → outputs` made of one 16-bit CLUT with `grid` points
/// per input axis, filled from `table` (first input axis varies slowest,
/// `outputs` values per node, as ICC.1:2022 §10.12.3 lays out a CLUT).
pub(super) fn clut_pipeline(inputs: u32, outputs: u32, grid: u32, table: &[u16], framing: Framing) -> Result<Pipeline> {
    let nodes = (grid as usize).pow(inputs);
    if table.len() != nodes * outputs as usize {
        return Err(Error::Internal(format!(
            "CLUT table has {} values, {} needed for {grid}^{inputs} nodes × {outputs}",
            table.len(),
            nodes * outputs as usize
        )));
    }
    let lcms = |what: &str| Error::Internal(format!("lcms2 could not allocate {what}"));
    let mut stages = Vec::with_capacity(3);
    let identity = ToneCurve::new(1.0);
    if framing == Framing::CurvesAroundClut {
        stages.push(Stage::new_tone_curves(&vec![&*identity; inputs as usize]).map_err(|_| lcms("input curves"))?);
    }
    // The safe constructor copies the whole table (cmsStageAllocCLut16bit).
    stages.push(Stage::new_clut::<u16>(grid as usize, inputs, outputs, Some(table)).map_err(|_| lcms("a CLUT"))?);
    if framing == Framing::CurvesAroundClut {
        stages.push(Stage::new_tone_curves(&vec![&*identity; outputs as usize]).map_err(|_| lcms("output curves"))?);
    }

    chain(inputs, outputs, stages)
}

/// A pipeline `inputs → outputs` of the given stages, in order.
pub(super) fn chain(inputs: u32, outputs: u32, stages: Vec<Stage>) -> Result<Pipeline> {
    let pipeline =
        Pipeline::new(inputs as usize, outputs as usize).map_err(|_| Error::Internal("lcms2 could not allocate a pipeline".into()))?;
    for stage in stages {
        // SAFETY: `pipeline.as_ptr()` is a live cmsPipeline owned by `pipeline`;
        // `stage.into_ptr()` hands over a live cmsStage that we no longer own.
        // cmsPipelineInsertStage links the stage into the pipeline before it
        // checks the chain (cmslut.c), so from here on the pipeline owns it and
        // frees it when `pipeline` drops, on success and on failure alike.
        let linked = unsafe { sys::cmsPipelineInsertStage(pipeline.as_ptr(), sys::StageLoc::AT_END, stage.into_ptr()) };
        if linked == 0 {
            return Err(Error::Internal("lcms2 rejected the stage chain of a table".into()));
        }
    }
    Ok(pipeline)
}

/// One piece of a segmented curve: y = (a·x + b)^gamma + c for x in (x0, x1]
/// (the formula segment of ICC.1:2022 §10.2.2, function type 0; lcms2's
/// parametric type 6). For gamma ≠ 1 lcms2 gives y = c where a·x + b < 0, so
/// callers keep a·x + b positive over the segment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct FormulaSegment {
    pub x0: f32,
    pub x1: f32,
    pub gamma: f64,
    pub a: f64,
    pub b: f64,
    pub c: f64,
}

/// lcms2's bounds for "minus and plus infinity" in segmented curves (cmsgamma.c).
pub(super) const CURVE_MINUS_INF: f32 = -1e22;
pub(super) const CURVE_PLUS_INF: f32 = 1e22;

/// A segmented tone curve (the only curve a multiProcessElementsType curve
/// set can hold) from formula segments that tile the real line in order.
pub(super) fn segmented_curve(segments: &[FormulaSegment]) -> Result<ToneCurve> {
    let tiles = segments.first().is_some_and(|s| s.x0 == CURVE_MINUS_INF)
        && segments.last().is_some_and(|s| s.x1 == CURVE_PLUS_INF)
        && segments.windows(2).all(|w| w[0].x1 == w[1].x0 && w[0].x0 < w[0].x1);
    if !tiles {
        return Err(Error::Internal("curve segments must tile the real line in order".into()));
    }
    let raw: Vec<sys::CurveSegment> = segments
        .iter()
        .map(|s| {
            let mut params = [0.0; 10];
            params[..4].copy_from_slice(&[s.gamma, s.a, s.b, s.c]);
            sys::CurveSegment {
                x0: s.x0,
                x1: s.x1,
                Type: 6,
                Params: params,
                nGridPoints: 0,
                SampledPoints: std::ptr::null_mut(),
            }
        })
        .collect();
    // SAFETY: `raw` holds `raw.len()` initialised segments and outlives the
    // call; formula segments carry no sample pointer. lcms2 copies the
    // segments into the curve it returns (or returns null), and
    // `ToneCurve::from_ptr` takes ownership of that curve, freeing it on drop.
    let curve = unsafe { sys::cmsBuildSegmentedToneCurve(std::ptr::null_mut(), raw.len() as u32, raw.as_ptr()) };
    if curve.is_null() {
        return Err(Error::Internal("lcms2 could not build a segmented curve".into()));
    }
    Ok(unsafe { ToneCurve::from_ptr(curve) })
}

#[cfg(test)]
mod tests {
    use super::super::{IccVersion, encoding};
    use super::*;
    use crate::colour::Lab;

    /// lcms2's own Lab encoders (cmspcs.c), the reference for `encoding`.
    fn lcms2_encode(lab: Lab, version: IccVersion) -> [u16; 3] {
        let input = sys::CIELab {
            L: lab.l,
            a: lab.a,
            b: lab.b,
        };
        let mut out = [0u16; 3];
        // SAFETY: both functions read one CIELab and write exactly three u16
        // into the array, which lives for the call; they keep no pointer.
        unsafe {
            match version {
                IccVersion::V4 => sys::cmsFloat2LabEncoded(out.as_mut_ptr(), &input),
                IccVersion::V2 => sys::cmsFloat2LabEncodedV2(out.as_mut_ptr(), &input),
            }
        }
        out
    }

    fn lcms2_decode(code: [u16; 3], version: IccVersion) -> Lab {
        let mut out = sys::CIELab { L: 0.0, a: 0.0, b: 0.0 };
        // SAFETY: reads three u16 from the array and writes one CIELab.
        unsafe {
            match version {
                IccVersion::V4 => sys::cmsLabEncoded2Float(&mut out, code.as_ptr()),
                IccVersion::V2 => sys::cmsLabEncoded2FloatV2(&mut out, code.as_ptr()),
            }
        }
        Lab::new(out.L, out.a, out.b)
    }

    #[test]
    fn lab_encoding_matches_lcms2() {
        let mut state = 0x1234_5678_9abc_def0_u64;
        let mut next = move || {
            // xorshift64 (Marsaglia 2003)
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        for version in [IccVersion::V4, IccVersion::V2] {
            for _ in 0..20_000 {
                // Beyond both ends of the encodable range, to check clamping too.
                let lab = Lab::new(next() * 110.0 - 5.0, next() * 280.0 - 140.0, next() * 280.0 - 140.0);
                assert_eq!(
                    encoding::encode_lab(lab, version),
                    lcms2_encode(lab, version),
                    "{lab:?} {version:?}"
                );
                let code = [(next() * 65535.0) as u16, (next() * 65535.0) as u16, (next() * 65535.0) as u16];
                let (ours, theirs) = (encoding::decode_lab(code, version), lcms2_decode(code, version));
                assert!((ours.l - theirs.l).abs() < 1e-12 && (ours.a - theirs.a).abs() < 1e-12);
                assert!((ours.b - theirs.b).abs() < 1e-12);
            }
        }
    }

    #[test]
    fn pipeline_has_the_stage_pattern_of_each_table_type() {
        let table = vec![0u16; 2usize.pow(4) * 3];
        let framed = clut_pipeline(4, 3, 2, &table, Framing::CurvesAroundClut).unwrap();
        assert_eq!((framed.stage_count(), framed.input_channels(), framed.output_channels()), (3, 4, 3));
        let bare = clut_pipeline(4, 3, 2, &table, Framing::ClutOnly).unwrap();
        assert_eq!(bare.stage_count(), 1);
        assert!(clut_pipeline(4, 3, 3, &table, Framing::ClutOnly).is_err());
    }
}
