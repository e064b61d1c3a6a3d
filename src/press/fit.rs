//! Fitting the built-in model to measured patches: the nine CIELAB aims
//! (paper, solids, two- and three-colour overprints), the tone value increase
//! of each ink, the Yule–Nielsen n-factor and the first-surface parameter of
//! the black overprint rule, by least squares on the CIELAB differences
//! (ΔE*ab components) with the Levenberg–Marquardt method (Levenberg 1944;
//! Marquardt 1963, with the diagonal scaling of JᵀJ; Madsen, Nielsen &
//! Tingleff, "Methods for non-linear least squares problems", 2004, §3.2).
//! The Jacobian is taken by forward differences. Residuals are reported in
//! CIEDE2000.

use super::{AIM_INKS, Aims, BLACK_OVERPRINT_INKS, ModelParams, PressModel};
use crate::cgats::CgatsFile;
use crate::colour::{Lab, Xyz, ciede2000};
use crate::error::{Error, Result};
use crate::ink::Cmyk;
use crate::settings::{Percent, Setting};
use serde::Serialize;
use std::path::Path;

/// One measured patch.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Patch {
    /// SAMPLE_ID (or SAMPLE_NAME, or the row number).
    pub id: String,
    /// Nominal ink, fractions.
    #[serde(skip)]
    pub ink: Cmyk,
    /// Measured CIELAB D50.
    pub lab: Lab,
    /// Line of the patch in its file.
    pub line: usize,
}

/// Patches from the first table of a CGATS file that has CMYK_C/M/Y/K and
/// either LAB_L/A/B or XYZ_X/Y/Z (XYZ on the CGATS scale, Y = 100 for the
/// perfect diffuser; D50 assumed, as ISO 13655 prescribes for graphic arts).
pub fn patches_from_cgats(file: &CgatsFile, path: &Path) -> Result<Vec<Patch>> {
    let cmyk_names = ["CMYK_C", "CMYK_M", "CMYK_Y", "CMYK_K"];
    let table = file
        .tables
        .iter()
        .find(|t| cmyk_names.iter().all(|n| t.column(n).is_some()))
        .ok_or_else(|| Error::input(path, "no table with the columns CMYK_C, CMYK_M, CMYK_Y and CMYK_K"))?;
    let ink_cols: Vec<usize> = cmyk_names.iter().filter_map(|n| table.column(n)).collect();
    let lab_cols: Option<Vec<usize>> = ["LAB_L", "LAB_A", "LAB_B"].iter().map(|n| table.column(n)).collect();
    let xyz_cols: Option<Vec<usize>> = ["XYZ_X", "XYZ_Y", "XYZ_Z"].iter().map(|n| table.column(n)).collect();
    if lab_cols.is_none() && xyz_cols.is_none() {
        return Err(Error::input(
            path,
            "the CMYK table has neither LAB_L, LAB_A, LAB_B nor XYZ_X, XYZ_Y, XYZ_Z columns",
        ));
    }
    let id_col = table.column("SAMPLE_ID").or_else(|| table.column("SAMPLE_NAME"));
    let mut patches = Vec::with_capacity(table.rows.len());
    let mut seen = std::collections::HashMap::new();
    for row in 0..table.rows.len() {
        let line = table.row_lines[row];
        let mut ink = [0.0; 4];
        for (slot, &col) in ink.iter_mut().zip(&ink_cols) {
            let v = table.number(path, row, col)?;
            if !(0.0..=100.0).contains(&v) {
                return Err(Error::input(
                    path,
                    format!(
                        "line {line}: field {}: {} is out of range; allowed 0–100 %",
                        table.fields[col],
                        show_number(v)
                    ),
                ));
            }
            *slot = v.clamp(0.0, 100.0) / 100.0;
        }
        let lab = if let Some(cols) = &lab_cols {
            let l = table.number(path, row, cols[0])?;
            let a = table.number(path, row, cols[1])?;
            let b = table.number(path, row, cols[2])?;
            if !(0.0..=100.5).contains(&l) {
                return Err(Error::input(
                    path,
                    format!("line {line}: field LAB_L: {} is out of range; allowed 0–100", show_number(l)),
                ));
            }
            Lab::new(l, a, b)
        } else {
            let cols = xyz_cols.as_deref().unwrap_or(&[]);
            let v: Vec<f64> = cols.iter().map(|&c| table.number(path, row, c)).collect::<Result<_>>()?;
            if v.iter().any(|&x| !(0.0..=110.0).contains(&x)) {
                return Err(Error::input(
                    path,
                    format!("line {line}: XYZ values must lie in 0–110 (CGATS scale, Y = 100 for the perfect diffuser)"),
                ));
            }
            Lab::from_xyz(Xyz::new(v[0] / 100.0, v[1] / 100.0, v[2] / 100.0))
        };
        let id = id_col.map(|c| table.rows[row][c].clone()).unwrap_or_else(|| (row + 1).to_string());
        if let Some(first) = seen.insert(id.clone(), line) {
            return Err(Error::input(
                path,
                format!("line {line}: patch `{id}` is measured twice (first on line {first}); each SAMPLE_ID must be unique"),
            ));
        }
        patches.push(Patch {
            id,
            ink: Cmyk::from_array(ink),
            lab,
            line,
        });
    }
    if patches.len() < 40 {
        return Err(Error::input(
            path,
            format!(
                "{} patches is too few to fit the model (54 physical parameters); a characterization chart has hundreds",
                patches.len()
            ),
        ));
    }
    Ok(patches)
}

/// ΔE2000 statistics of a fit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Residuals {
    pub count: usize,
    pub mean: f64,
    pub p95: f64,
    pub max: f64,
    /// The same statistics per region of the ink space ([`Region`]).
    pub regions: Vec<RegionStats>,
    /// The worst patches, worst first (at most 10).
    pub worst: Vec<WorstPatch>,
}

/// Statistics of one region.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RegionStats {
    pub region: Region,
    pub count: usize,
    pub mean: f64,
    pub p95: f64,
    pub max: f64,
}

/// Parts of the ink space a press is judged on separately.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Region {
    /// Every ink at 25 % or less (paper included).
    PaperAndHighlights,
    /// Total ink 200 % or more, or black 70 % or more (solids excluded).
    Shadows,
    /// Every ink either absent or at 95 % or more, at least one solid: the
    /// solids and their overprints.
    SolidsAndOverprints,
    /// Everything else.
    Midtones,
}

impl Region {
    pub const ALL: [Region; 4] = [
        Region::PaperAndHighlights,
        Region::Midtones,
        Region::Shadows,
        Region::SolidsAndOverprints,
    ];

    pub fn of(ink: Cmyk) -> Region {
        let v = ink.to_array();
        if v.iter().all(|&x| x <= 0.005 || x >= 0.95) && v.iter().any(|&x| x >= 0.95) {
            Region::SolidsAndOverprints
        } else if v.iter().all(|&x| x <= 0.25) {
            Region::PaperAndHighlights
        } else if v.iter().sum::<f64>() >= 2.0 || v[3] >= 0.7 {
            Region::Shadows
        } else {
            Region::Midtones
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Region::PaperAndHighlights => "paper and highlights",
            Region::Midtones => "midtones",
            Region::Shadows => "shadows",
            Region::SolidsAndOverprints => "solids and overprints",
        }
    }
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstPatch {
    pub id: String,
    pub line: usize,
    pub ink_percent: [f64; 4],
    pub measured: Lab,
    pub predicted: Lab,
    pub delta_e2000: f64,
}

/// Mean, 95th percentile (nearest rank) and maximum of `values`.
fn stats(values: &[f64]) -> (f64, f64, f64) {
    if values.is_empty() {
        return (0.0, 0.0, 0.0);
    }
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    let p95 = v[((0.95 * n as f64).ceil() as usize).clamp(1, n) - 1];
    (v.iter().sum::<f64>() / n as f64, p95, v[n - 1])
}

/// ΔE2000 statistics of `predicted` against the measured `patches` (same order).
pub fn summarize(patches: &[Patch], predicted: &[Lab]) -> Residuals {
    let des: Vec<f64> = patches.iter().zip(predicted).map(|(p, q)| ciede2000(p.lab, *q)).collect();
    let (mean, p95, max) = stats(&des);
    let regions = Region::ALL
        .iter()
        .map(|&region| {
            let v: Vec<f64> = patches
                .iter()
                .zip(&des)
                .filter(|(p, _)| Region::of(p.ink) == region)
                .map(|(_, &d)| d)
                .collect();
            let (mean, p95, max) = stats(&v);
            RegionStats {
                region,
                count: v.len(),
                mean,
                p95,
                max,
            }
        })
        .collect();
    let mut order: Vec<usize> = (0..des.len()).collect();
    order.sort_by(|&a, &b| des[b].total_cmp(&des[a]));
    let worst = order
        .iter()
        .take(10)
        .map(|&i| WorstPatch {
            id: patches[i].id.clone(),
            line: patches[i].line,
            ink_percent: patches[i].ink.to_percent(),
            measured: patches[i].lab,
            predicted: predicted[i],
            delta_e2000: des[i],
        })
        .collect();
    Residuals {
        count: des.len(),
        mean,
        p95,
        max,
        regions,
        worst,
    }
}

/// ΔE2000 residual statistics of `model` against `patches` (95th percentile by
/// the nearest-rank method).
pub fn residuals(model: &dyn PressModel, patches: &[Patch]) -> Residuals {
    let predicted: Vec<Lab> = patches.iter().map(|p| model.lab(p.ink)).collect();
    summarize(patches, &predicted)
}

/// The outcome of [`fit_model`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FitResult {
    pub params: ModelParams,
    pub residuals: Residuals,
    pub iterations: usize,
    /// Root-mean-square CIELAB difference (ΔE*ab) at the end.
    pub rms_delta_e76: f64,
}

const N_PARAMS: usize = 54;

/// Parameter vector: 27 aim coordinates, 4 TVI, n, the surface parameter as a
/// fraction ρ of its upper bound (black solid Y / paper Y), so that every
/// vector inside the box gives a valid model, and the 21 coordinates of the 7
/// primaries with black. The surface parameter only sets where those start
/// (the overprint rule); the fit moves the primaries themselves.
fn to_vector(p: &ModelParams) -> [f64; N_PARAMS] {
    let mut v = [0.0; N_PARAMS];
    for (i, lab) in p.aims.to_array().iter().enumerate() {
        v[3 * i..3 * i + 3].copy_from_slice(&lab.to_array());
    }
    v[27..31].copy_from_slice(&p.tvi50);
    v[31] = p.n;
    v[32] = p.black_surface / surface_bound(&p.aims);
    let over = p.black_overprints.unwrap_or_else(|| p.black_overprints_by_rule());
    for (i, lab) in over.iter().enumerate() {
        v[33 + 3 * i..36 + 3 * i].copy_from_slice(&lab.to_array());
    }
    v
}

fn surface_bound(aims: &Aims) -> f64 {
    (aims.black.to_xyz().y / aims.paper.to_xyz().y).min(1.0)
}

fn from_vector(v: &[f64; N_PARAMS]) -> ModelParams {
    let labs: [Lab; 9] = std::array::from_fn(|i| Lab::new(v[3 * i], v[3 * i + 1], v[3 * i + 2]));
    let aims = Aims::from_array(labs);
    let over: [Lab; 7] = std::array::from_fn(|i| Lab::new(v[33 + 3 * i], v[34 + 3 * i], v[35 + 3 * i]));
    ModelParams {
        aims,
        tvi50: [v[27], v[28], v[29], v[30]],
        n: v[31],
        black_surface: v[32] * surface_bound(&aims),
        black_overprints: Some(over),
    }
}

fn bounds(i: usize) -> (f64, f64) {
    match i {
        0..27 | 33.. if i.is_multiple_of(3) => (1.0, 100.0),
        0..27 | 33.. => (-128.0, 128.0),
        // Tone value increase at 50 %: the range a condition file accepts.
        27..31 => (0.0, Percent(Setting::Tvi.range().hi).coverage().0),
        31 => (1.0, 8.0),
        _ => (0.0, 0.95),
    }
}

fn project(v: &mut [f64; N_PARAMS]) {
    for (i, x) in v.iter_mut().enumerate() {
        let (lo, hi) = bounds(i);
        *x = x.clamp(lo, hi);
    }
}

fn residual_vector(p: &ModelParams, patches: &[Patch], out: &mut Vec<f64>) {
    let model = p.model();
    out.clear();
    for patch in patches {
        let lab = model.lab(patch.ink);
        out.extend_from_slice(&[lab.l - patch.lab.l, lab.a - patch.lab.a, lab.b - patch.lab.b]);
    }
}

/// Solves the symmetric positive definite system `a·x = b` by Cholesky
/// factorisation; `None` when `a` is not positive definite.
fn cholesky_solve(a: &[[f64; N_PARAMS]; N_PARAMS], b: &[f64; N_PARAMS]) -> Option<[f64; N_PARAMS]> {
    let mut l = [[0.0; N_PARAMS]; N_PARAMS];
    for i in 0..N_PARAMS {
        for j in 0..=i {
            let s: f64 = a[i][j] - (0..j).map(|k| l[i][k] * l[j][k]).sum::<f64>();
            if i == j {
                if s <= 0.0 || !s.is_finite() {
                    return None;
                }
                l[i][i] = s.sqrt();
            } else {
                l[i][j] = s / l[j][j];
            }
        }
    }
    let mut y = [0.0; N_PARAMS];
    for i in 0..N_PARAMS {
        y[i] = (b[i] - (0..i).map(|k| l[i][k] * y[k]).sum::<f64>()) / l[i][i];
    }
    let mut x = [0.0; N_PARAMS];
    for i in (0..N_PARAMS).rev() {
        x[i] = (y[i] - (i + 1..N_PARAMS).map(|k| l[k][i] * x[k]).sum::<f64>()) / l[i][i];
    }
    Some(x)
}

/// The mean measured CIELAB of the patches printed at exactly `ink`, if any.
pub fn mean_at(patches: &[Patch], ink: [f64; 4]) -> Option<Lab> {
    let hits: Vec<Lab> = patches
        .iter()
        .filter(|p| p.ink.to_array().iter().zip(ink).all(|(a, b)| (a - b).abs() < 0.005))
        .map(|p| p.lab)
        .collect();
    if hits.is_empty() {
        return None;
    }
    let n = hits.len() as f64;
    Some(Lab::new(
        hits.iter().map(|l| l.l).sum::<f64>() / n,
        hits.iter().map(|l| l.a).sum::<f64>() / n,
        hits.iter().map(|l| l.b).sum::<f64>() / n,
    ))
}

/// A starting point: the aims of `base` replaced by the measured patches
/// printed at exactly those builds (averaged when repeated), where present,
/// and fixed generic values for the rest (TVI 15 %, n = 2, first-surface
/// reflection 2 %; black overprints measured or by the overprint rule). It does
/// not depend on the base's fitted physics, so that refitting a condition from
/// the same data gives the same result whatever the built-ins hold.
pub fn starting_point(patches: &[Patch], base: &ModelParams) -> ModelParams {
    let mut labs = base.aims.to_array();
    for (slot, ink) in labs.iter_mut().zip(AIM_INKS) {
        if let Some(lab) = mean_at(patches, ink) {
            *slot = lab;
        }
    }
    let mut p = ModelParams {
        aims: Aims::from_array(labs),
        tvi50: [0.15; 4],
        n: 2.0,
        black_surface: 0.02,
        black_overprints: None,
    };
    let mut v = to_vector(&p);
    project(&mut v);
    p = from_vector(&v);
    p.black_overprints = None;
    let mut over = p.black_overprints_by_rule();
    for (slot, ink) in over.iter_mut().zip(BLACK_OVERPRINT_INKS) {
        if let Some(lab) = mean_at(patches, ink) {
            *slot = lab;
        }
    }
    p.black_overprints = Some(over);
    let mut v = to_vector(&p);
    project(&mut v);
    from_vector(&v)
}

/// Makes the aims physically ordered (every solid darker than the paper,
/// every overprint no lighter than each ink in it) by lowering L* where a fit
/// left it a hair too high, so the result passes the condition file checks.
pub fn order_aims(aims: &mut Aims) {
    let paper = aims.paper.l;
    for solid in [&mut aims.cyan, &mut aims.magenta, &mut aims.yellow, &mut aims.black] {
        solid.l = solid.l.min(paper - 0.01);
    }
    aims.red.l = aims.red.l.min(aims.magenta.l).min(aims.yellow.l);
    aims.green.l = aims.green.l.min(aims.cyan.l).min(aims.yellow.l);
    aims.blue.l = aims.blue.l.min(aims.cyan.l).min(aims.magenta.l);
    aims.three_colour.l = aims.three_colour.l.min(aims.red.l).min(aims.green.l).min(aims.blue.l);
}

/// [`order_aims`], and every primary with black no lighter than the black
/// solid or the same primary without black.
pub fn order_params(p: &mut ModelParams) {
    order_aims(&mut p.aims);
    let without = p.aims.to_array();
    // Aim index (in `Aims::to_array` order) of each primary of BLACK_OVERPRINT_NAMES without black.
    const PARTNER: [usize; 7] = [1, 2, 7, 3, 6, 5, 8];
    if let Some(over) = &mut p.black_overprints {
        for (lab, partner) in over.iter_mut().zip(PARTNER) {
            lab.l = lab.l.min(without[partner].l).min(p.aims.black.l);
        }
        // The three-colour black is no lighter than any two-colour black.
        over[6].l = over[6].l.min(over[2].l).min(over[4].l).min(over[5].l);
    }
}

/// Fits the model parameters to `patches`, starting from `start`.
pub fn fit_model(patches: &[Patch], start: &ModelParams, max_iterations: usize) -> FitResult {
    let m = patches.len() * 3;
    let mut v = to_vector(start);
    project(&mut v);
    let mut r = Vec::with_capacity(m);
    residual_vector(&from_vector(&v), patches, &mut r);
    let mut cost: f64 = r.iter().map(|x| x * x).sum();
    let mut lambda = 1e-3;
    let mut jac = vec![[0.0; N_PARAMS]; m];
    let mut rp = Vec::with_capacity(m);
    let mut iterations = 0;
    while iterations < max_iterations {
        iterations += 1;
        // Forward-difference Jacobian, stepping inward at the upper bounds.
        for j in 0..N_PARAMS {
            let (_, hi) = bounds(j);
            let mut h = 1e-6 * (v[j].abs() + 1.0);
            if v[j] + h > hi {
                h = -h;
            }
            let mut vp = v;
            vp[j] += h;
            residual_vector(&from_vector(&vp), patches, &mut rp);
            for (row, (a, b)) in jac.iter_mut().zip(rp.iter().zip(&r)) {
                row[j] = (a - b) / h;
            }
        }
        let mut jtj = [[0.0; N_PARAMS]; N_PARAMS];
        let mut jtr = [0.0; N_PARAMS];
        for (row, &ri) in jac.iter().zip(&r) {
            for a in 0..N_PARAMS {
                if row[a] == 0.0 {
                    continue;
                }
                jtr[a] += row[a] * ri;
                for b in 0..=a {
                    jtj[a][b] += row[a] * row[b];
                }
            }
        }
        for a in 0..N_PARAMS {
            for b in 0..a {
                jtj[b][a] = jtj[a][b];
            }
        }
        let max_diag = (0..N_PARAMS).map(|i| jtj[i][i]).fold(0.0, f64::max).max(1e-300);
        let mut improved = false;
        while lambda < 1e12 {
            let mut a = jtj;
            for (i, row) in a.iter_mut().enumerate() {
                row[i] += lambda * jtj[i][i].max(1e-9 * max_diag);
            }
            let neg: [f64; N_PARAMS] = jtr.map(|g| -g);
            let Some(step) = cholesky_solve(&a, &neg) else {
                lambda *= 10.0;
                continue;
            };
            let mut candidate = v;
            for (c, s) in candidate.iter_mut().zip(step) {
                *c += s;
            }
            project(&mut candidate);
            residual_vector(&from_vector(&candidate), patches, &mut rp);
            let new_cost: f64 = rp.iter().map(|x| x * x).sum();
            if new_cost.is_finite() && new_cost < cost {
                let gain = (cost - new_cost) / cost.max(1e-300);
                v = candidate;
                std::mem::swap(&mut r, &mut rp);
                cost = new_cost;
                lambda = (lambda / 3.0).max(1e-12);
                improved = gain > 1e-10;
                break;
            }
            lambda *= 4.0;
        }
        if !improved {
            break;
        }
    }
    let mut params = from_vector(&v);
    order_params(&mut params);
    params.black_surface = params.black_surface.min(0.95 * surface_bound(&params.aims));
    let model = params.model();
    FitResult {
        params,
        residuals: residuals(&model, patches),
        iterations,
        rms_delta_e76: (cost / patches.len().max(1) as f64).sqrt(),
    }
}

/// A number as a message shows it: huge values in exponent form (1e300, not
/// three hundred digits).
fn show_number(v: f64) -> String {
    if v.abs() >= 1e6 { format!("{v:e}") } else { format!("{v}") }
}
