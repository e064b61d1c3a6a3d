//! Printing conditions in TOML files: the same fields as the built-in
//! conditions, percent for every ink figure, CIELAB D50 for the aims.
//!
//! ```toml
//! name = "house-press"                # optional, defaults to the file stem
//! description = "our sheetfed press"  # optional
//! tac = 320                           # total ink limit, percent (100–400)
//! min_dot = 2                         # smallest printable dot, percent (optional, default 2)
//! yule_nielsen_n = 2.0                # 1–10
//! black_surface = 1.0                 # first-surface reflection, percent of paper (0–20)
//!
//! [tvi]                               # tone value increase at 50 %, percent (0–30)
//! cyan = 14
//! magenta = 14
//! yellow = 14
//! black = 17
//!
//! [ink_film]                          # g/m² at 100 % (optional; 0–5)
//! cyan = 1.1
//! magenta = 1.1
//! yellow = 1.1
//! black = 1.2
//!
//! [black_generation]                  # optional; percent except shape
//! gcr = 50
//! black_start = 20
//! black_max = 95
//! shape = 2.0
//! uca = 0
//!
//! [aims]                              # CIELAB D50 [L*, a*, b*]
//! paper = [95.0, 0.0, -2.0]
//! cyan = [55.0, -37.0, -50.0]
//! magenta = [48.0, 74.0, -3.0]
//! yellow = [89.0, -5.0, 93.0]
//! black = [16.0, 0.0, 0.0]
//! red = [47.0, 68.0, 48.0]            # magenta + yellow
//! green = [50.0, -65.0, 27.0]         # cyan + yellow
//! blue = [24.0, 22.0, -46.0]          # cyan + magenta
//! three_colour = [23.0, 0.0, 0.0]     # cyan + magenta + yellow
//! ```
//!
//! A condition fitted to measurements (`platesmith fit`) adds `source` (the
//! data it was fitted to), `[black_overprints]` (the seven primaries printed
//! with black, CIELAB D50, which then replace the overprint rule: keys
//! `cyan_black`, `magenta_black`, `blue_black`, `yellow_black`,
//! `green_black`, `red_black`, `three_colour_black`), `[measured]` (the
//! measured CIELAB at those builds and the nine aims, from the data, for
//! `conditions show`) and `[correction]`, the
//! lattice of CIELAB offsets fitted to the residuals of the physical model
//! (see [`super::correction`]):
//!
//! ```toml
//! [correction]
//! cyan = [0.0, 10.0, 20.0, 100.0]     # node levels per ink, percent, 0 first, 100 last
//! magenta = [0.0, 50.0, 100.0]
//! yellow = [0.0, 100.0]
//! black = [0.0, 100.0]
//! values = [[0.1, -0.2, 0.05], ...]  # ΔL*, Δa*, Δb* per node, black varying fastest
//! ```
//!
//! Unknown keys are errors (a misspelt key must not be silently ignored);
//! every error names the file, the key, the line and the allowed range.

use super::{AIM_NAMES, Aims, Axis, BLACK_OVERPRINT_NAMES, Correction, DEFAULT_INK_FILM, ModelParams, PrintingCondition, builtin};
use crate::colour::Lab;
use crate::error::{Error, Result};
use crate::settings::{BlackGeneration, InkEcho, Origin, Percent, Setting};
use serde::Deserialize;
use std::fmt::Write as _;
use std::ops::Range;
use std::path::Path;
use toml::Spanned;

type Num = Spanned<f64>;

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileCondition {
    name: Option<Spanned<String>>,
    description: Option<String>,
    tac: Num,
    min_dot: Option<Num>,
    yule_nielsen_n: Num,
    black_surface: Num,
    tvi: PerInk,
    ink_film: Option<PerInk>,
    black_generation: Option<FileBlack>,
    aims: FileAims,
    source: Option<String>,
    measured: Option<std::collections::BTreeMap<String, Spanned<[f64; 3]>>>,
    black_overprints: Option<FileOverprints>,
    correction: Option<FileCorrection>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileOverprints {
    cyan_black: Spanned<[f64; 3]>,
    magenta_black: Spanned<[f64; 3]>,
    blue_black: Spanned<[f64; 3]>,
    yellow_black: Spanned<[f64; 3]>,
    green_black: Spanned<[f64; 3]>,
    red_black: Spanned<[f64; 3]>,
    three_colour_black: Spanned<[f64; 3]>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileCorrection {
    cyan: Spanned<Vec<f64>>,
    magenta: Spanned<Vec<f64>>,
    yellow: Spanned<Vec<f64>>,
    black: Spanned<Vec<f64>>,
    values: Spanned<Vec<[f64; 3]>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct PerInk {
    cyan: Num,
    magenta: Num,
    yellow: Num,
    black: Num,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileBlack {
    gcr: Num,
    black_start: Num,
    black_max: Num,
    shape: Num,
    uca: Num,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct FileAims {
    paper: Spanned<[f64; 3]>,
    cyan: Spanned<[f64; 3]>,
    magenta: Spanned<[f64; 3]>,
    yellow: Spanned<[f64; 3]>,
    black: Spanned<[f64; 3]>,
    red: Spanned<[f64; 3]>,
    green: Spanned<[f64; 3]>,
    blue: Spanned<[f64; 3]>,
    three_colour: Spanned<[f64; 3]>,
}

/// Line (1-based) of a byte offset.
fn line_of(text: &str, offset: usize) -> usize {
    text.as_bytes()[..offset.min(text.len())].iter().filter(|&&b| b == b'\n').count() + 1
}

/// Checks values against their allowed ranges, reporting the first failure
/// with file, key and line.
struct Checker<'a> {
    path: &'a Path,
    text: &'a str,
}

impl Checker<'_> {
    fn error(&self, span: Range<usize>, key: &str, problem: String) -> Error {
        Error::input(self.path, format!("line {}: `{key}`: {problem}", line_of(self.text, span.start)))
    }

    /// A number within the setting's range (in the file's unit), checked through the one table.
    fn range(&self, v: &Num, key: &str, setting: Setting) -> Result<f64> {
        let origin = Origin::File {
            path: self.path,
            key,
            line: Some(line_of(self.text, v.span().start)),
        };
        setting.check(*v.get_ref(), origin)
    }

    fn per_ink(&self, v: &PerInk, table: &str, setting: Setting) -> Result<[f64; 4]> {
        Ok([
            self.range(&v.cyan, &format!("{table}.cyan"), setting)?,
            self.range(&v.magenta, &format!("{table}.magenta"), setting)?,
            self.range(&v.yellow, &format!("{table}.yellow"), setting)?,
            self.range(&v.black, &format!("{table}.black"), setting)?,
        ])
    }

    fn lab(&self, v: &Spanned<[f64; 3]>, key: &str) -> Result<Lab> {
        let [l, a, b] = *v.get_ref();
        if !(l.is_finite() && (0.0..=100.0).contains(&l)) {
            return Err(self.error(v.span(), key, format!("L* {l} is out of range; allowed 0–100")));
        }
        for (name, x) in [("a*", a), ("b*", b)] {
            if !(x.is_finite() && (-128.0..=128.0).contains(&x)) {
                return Err(self.error(v.span(), key, format!("{name} {x} is out of range; allowed -128–128")));
            }
        }
        Ok(Lab::new(l, a, b))
    }
}

/// Parses and validates a condition from TOML text; `path` names the file in
/// errors and gives the default name (its stem).
pub fn parse_condition(text: &str, path: &Path) -> Result<PrintingCondition> {
    let file: FileCondition = toml::from_str(text).map_err(|e| {
        let line = e.span().map(|s| format!("line {}: ", line_of(text, s.start))).unwrap_or_default();
        Error::input(path, format!("{line}{}", e.message().trim_end()))
    })?;
    let ck = Checker { path, text };

    let pct = |v: f64| Percent(v).coverage().0;
    let tac = pct(ck.range(&file.tac, "tac", Setting::Tac)?);
    let min_dot = match &file.min_dot {
        Some(v) => pct(ck.range(v, "min_dot", Setting::MinDot)?),
        None => 0.02,
    };
    let n = ck.range(&file.yule_nielsen_n, "yule_nielsen_n", Setting::YuleNielsenN)?;
    let surface = pct(ck.range(&file.black_surface, "black_surface", Setting::BlackSurface)?);
    let tvi50 = ck.per_ink(&file.tvi, "tvi", Setting::Tvi)?.map(pct);
    let ink_film = match &file.ink_film {
        Some(v) => ck.per_ink(v, "ink_film", Setting::InkFilm)?,
        None => DEFAULT_INK_FILM,
    };
    let black = match &file.black_generation {
        Some(b) => BlackGeneration {
            gcr: pct(ck.range(&b.gcr, "black_generation.gcr", Setting::Gcr)?),
            black_start: pct(ck.range(&b.black_start, "black_generation.black_start", Setting::BlackStart)?),
            black_max: pct(ck.range(&b.black_max, "black_generation.black_max", Setting::BlackMax)?),
            shape: ck.range(&b.shape, "black_generation.shape", Setting::BlackShape)?,
            uca: pct(ck.range(&b.uca, "black_generation.uca", Setting::Uca)?),
        },
        None => BlackGeneration::default(),
    };

    let a = &file.aims;
    let spanned = [
        &a.paper,
        &a.cyan,
        &a.magenta,
        &a.yellow,
        &a.black,
        &a.red,
        &a.green,
        &a.blue,
        &a.three_colour,
    ];
    let mut labs = [Lab::default(); 9];
    for (i, v) in spanned.iter().enumerate() {
        labs[i] = ck.lab(v, &format!("aims.{}", AIM_NAMES[i]))?;
    }
    // Physical order: ink only absorbs, so every solid is darker than the paper
    // and every overprint no lighter than each ink in it. The model's
    // monotonicity (more ink never lightens) rests on this.
    const CONTAINS: [(usize, &[usize]); 8] = [
        (1, &[0]),
        (2, &[0]),
        (3, &[0]),
        (4, &[0]),
        (5, &[2, 3]),
        (6, &[1, 3]),
        (7, &[1, 2]),
        (8, &[5, 6, 7]),
    ];
    for (over, parts) in CONTAINS {
        for &p in parts {
            if labs[over].l > labs[p].l || (p == 0 && labs[over].l == labs[p].l) {
                let what = if p == 0 {
                    "a solid must be darker than the paper"
                } else {
                    "an overprint cannot be lighter than an ink in it"
                };
                return Err(ck.error(
                    spanned[over].span(),
                    &format!("aims.{}", AIM_NAMES[over]),
                    format!(
                        "L* {} is lighter than aims.{} (L* {}): {what}; allowed L* up to {}",
                        labs[over].l, AIM_NAMES[p], labs[p].l, labs[p].l
                    ),
                ));
            }
        }
    }
    let aims = Aims::from_array(labs);
    let max_surface = aims.black.to_xyz().y / aims.paper.to_xyz().y;
    if surface >= max_surface {
        return Err(ck.error(
            file.black_surface.span(),
            "black_surface",
            format!(
                "{} % is not below the black solid's luminance factor relative to paper; allowed 0–{:.2} % for these aims",
                surface * 100.0,
                max_surface * 100.0
            ),
        ));
    }

    let black_overprints = match &file.black_overprints {
        None => None,
        Some(o) => {
            let spanned = [
                &o.cyan_black,
                &o.magenta_black,
                &o.blue_black,
                &o.yellow_black,
                &o.green_black,
                &o.red_black,
                &o.three_colour_black,
            ];
            let mut over = [Lab::default(); 7];
            for (i, v) in spanned.iter().enumerate() {
                let key = format!("black_overprints.{}", BLACK_OVERPRINT_NAMES[i]);
                over[i] = ck.lab(v, &key)?;
                if over[i].l > aims.black.l {
                    return Err(ck.error(
                        v.span(),
                        &key,
                        format!(
                            "L* {} is lighter than aims.black (L* {}): an overprint cannot be lighter than an ink in it",
                            over[i].l, aims.black.l
                        ),
                    ));
                }
            }
            Some(over)
        }
    };
    let correction = match &file.correction {
        None => None,
        Some(c) => Some(std::sync::Arc::new(read_correction(&ck, c)?)),
    };

    let name = match &file.name {
        Some(n) => {
            let s = n.get_ref().trim();
            if s.is_empty() || s.len() > 64 || s.chars().any(|c| c.is_control()) {
                return Err(ck.error(n.span(), "name", "must be 1–64 printable characters".into()));
            }
            s.to_string()
        }
        None => path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "condition".into()),
    };
    let description = file
        .description
        .unwrap_or_else(|| format!("printing condition from {}", path.display()));
    let params = ModelParams {
        aims,
        tvi50,
        n,
        black_surface: surface,
        black_overprints,
    };
    let mut measured = Vec::new();
    if let Some(table) = &file.measured {
        for (key, value) in table {
            let Some((name, ink)) = super::aim_builds().find(|(n, _)| n == key) else {
                return Err(ck.error(
                    value.span(),
                    &format!("measured.{key}"),
                    format!(
                        "not an aim build; allowed {}",
                        super::aim_builds().map(|(n, _)| n).collect::<Vec<_>>().join(", ")
                    ),
                ));
            };
            measured.push(super::MeasuredAim {
                name: name.to_string(),
                ink,
                lab: ck.lab(value, &format!("measured.{key}"))?,
            });
        }
        // In the order of `aim_builds`, not the file's (a map is sorted by name).
        measured.sort_by_key(|m| super::aim_builds().position(|(n, _)| n == m.name));
    }
    let mut condition = PrintingCondition::from_fitted(name, description, params, correction, tac, black, min_dot)
        .with_ink_film(ink_film)
        .with_source(file.source.unwrap_or_default());
    condition.measured = measured;
    Ok(condition)
}

/// The `[correction]` table: node levels per ink (percent) and the offsets.
fn read_correction(ck: &Checker, c: &FileCorrection) -> Result<Correction> {
    let mut axes = Vec::with_capacity(4);
    for (key, levels) in [
        ("cyan", &c.cyan),
        ("magenta", &c.magenta),
        ("yellow", &c.yellow),
        ("black", &c.black),
    ] {
        let fractions: Vec<f64> = levels.get_ref().iter().map(|v| v / 100.0).collect();
        let axis = Axis::new(&fractions).ok_or_else(|| {
            ck.error(
                levels.span(),
                &format!("correction.{key}"),
                "node levels must be 2–64 ascending percentages, at least 0.1 apart, from 0 to 100".into(),
            )
        })?;
        axes.push(axis);
    }
    let nodes: usize = axes.iter().map(Axis::len).product();
    let values = c.values.get_ref();
    if values.len() != nodes {
        return Err(ck.error(
            c.values.span(),
            "correction.values",
            format!("{} offsets for {nodes} nodes; one [ΔL*, Δa*, Δb*] per node is needed", values.len()),
        ));
    }
    if let Some(bad) = values.iter().flatten().find(|v| !v.is_finite() || v.abs() > 50.0) {
        return Err(ck.error(
            c.values.span(),
            "correction.values",
            format!("{bad} is out of range; allowed -50–50"),
        ));
    }
    let axes: [Axis; 4] = axes
        .try_into()
        .map_err(|_| Error::Internal("four correction axes expected".into()))?;
    Correction::new(axes, values.clone()).ok_or_else(|| Error::Internal("correction size checked above".into()))
}

/// Reads a condition file.
pub fn read_condition_file(path: &Path) -> Result<PrintingCondition> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::input(path, format!("cannot read: {e}")))?;
    parse_condition(&text, path)
}

/// Extensions of CGATS measurement files accepted as conditions.
pub const MEASUREMENT_EXTENSIONS: [&str; 4] = [".ti3", ".cgats", ".it8", ".txt"];

/// Whether `spec` names a CGATS measurement file ([`MEASUREMENT_EXTENSIONS`]).
pub fn is_measurement_file(spec: &str) -> bool {
    let lower = spec.to_ascii_lowercase();
    MEASUREMENT_EXTENSIONS.iter().any(|e| lower.ends_with(e))
}

/// A printing condition from a built-in name (`coated-offset`), a `.toml`
/// file, a CMYK ICC output profile (`.icc`, `.icm`) read through the ICC
/// profile model, or a CGATS measurement file (`.ti3`, `.cgats`, `.it8`,
/// `.txt`), fitted on load ([`fitted_on_load`]). The jobs load conditions
/// through `condition_fit::load_condition`, which keeps such a fit in the
/// cache folder.
pub fn load_condition(spec: &str) -> Result<PrintingCondition> {
    let lower = spec.to_ascii_lowercase();
    if is_measurement_file(spec) {
        return parse_condition(&fitted_on_load(Path::new(spec))?, Path::new(spec));
    }
    if lower.ends_with(".toml") {
        return read_condition_file(Path::new(spec));
    }
    if lower.ends_with(".icc") || lower.ends_with(".icm") {
        return super::icc_model::condition_from_icc(Path::new(spec));
    }
    builtin::by_name(spec).ok_or_else(|| {
        Error::usage(format!(
            "unknown printing condition `{spec}`: built-in conditions are {}; or give a .toml condition file, a CMYK .icc profile or a CGATS measurement file (.ti3, .cgats, .it8, .txt)",
            builtin::names().join(", ")
        ))
    })
}

/// Writes `text` to `path` atomically: a temporary file in the same folder,
/// then a rename (or, without `overwrite`, a hard link that fails when `path`
/// exists, so an existing file is never replaced even in a race).
pub fn write_file_atomically(path: &Path, text: &str, overwrite: bool) -> Result<()> {
    use std::io::Write;
    if !overwrite && path.exists() {
        return Err(Error::output(
            path,
            "the file exists; choose another name or allow overwriting (--force)",
        ));
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let stem = path
        .file_name()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "condition".into());
    let temp = dir.join(format!(".{stem}.{}.partial", std::process::id()));
    let result = (|| -> std::io::Result<()> {
        let mut f = std::fs::OpenOptions::new().write(true).create_new(true).open(&temp)?;
        f.write_all(text.as_bytes())?;
        f.sync_all()?;
        drop(f);
        if overwrite {
            std::fs::rename(&temp, path)
        } else {
            match std::fs::hard_link(&temp, path) {
                Ok(()) => std::fs::remove_file(&temp),
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Err(e),
                // A file system without hard links: checked above, rename.
                Err(_) => std::fs::rename(&temp, path),
            }
        }
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&temp);
    }
    result.map_err(|e| {
        if e.kind() == std::io::ErrorKind::AlreadyExists {
            Error::output(path, "the file exists; choose another name or allow overwriting (--force)")
        } else {
            Error::output(path, e.to_string())
        }
    })
}

/// A measurement file as a condition: the condition file (TOML text) of
/// the press model fitted to it (physical model and correction, no
/// cross-validation; the job defaults of the default built-in condition),
/// named by the file's name,
/// as `platesmith fit` would write it. The condition is always read back
/// from this text, so a fit kept in the cache folder and a fresh one give
/// the same condition to the bit.
pub fn fitted_on_load(path: &Path) -> Result<String> {
    let (defaults, options) = fit_on_load_inputs()?;
    // Named by the file itself (`press.ti3`), so that every summary and
    // report that names the condition names the measurement file.
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned());
    let fitted = super::characterize::fit_measurements(path, &defaults, name, None, &options)?;
    let header = format!(
        "Printing condition fitted on load by platesmith to the {} patches of {}",
        fitted.patches.len(),
        path.display()
    );
    to_toml(&fitted.condition, &[header])
}

/// What [`fitted_on_load`] fits with besides the file: the default
/// built-in condition (starting point and job defaults) and the options.
pub fn fit_on_load_inputs() -> Result<(PrintingCondition, super::characterize::Options)> {
    let defaults = builtin::by_name(builtin::DEFAULT).ok_or_else(|| Error::Internal("no default condition".into()))?;
    let options = super::characterize::Options {
        folds: 0,
        ..Default::default()
    };
    Ok((defaults, options))
}

/// A number for a TOML file: rounded to `decimals`, always with a decimal point.
fn num(x: f64, decimals: usize) -> String {
    let s = format!("{x:.decimals$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    let s = if s == "-0" { "0".to_string() } else { s };
    if s.contains('.') { s } else { format!("{s}.0") }
}

/// TOML text for a condition with characterization parameters, in the form
/// [`parse_condition`] reads. `header` lines are written as comments first.
pub fn to_toml(condition: &PrintingCondition, header: &[String]) -> Result<String> {
    let p = condition.params.as_ref().ok_or_else(|| {
        Error::usage(format!(
            "condition `{}` has no characterization parameters to write as TOML",
            condition.name
        ))
    })?;
    let mut s = String::new();
    for h in header {
        let _ = writeln!(s, "# {h}");
    }
    let esc = |t: &str| t.replace('\\', "\\\\").replace('"', "\\\"");
    let _ = writeln!(s, "name = \"{}\"", esc(&condition.name));
    let _ = writeln!(s, "description = \"{}\"", esc(&condition.description));
    if !condition.source.is_empty() {
        let _ = writeln!(s, "source = \"{}\"", esc(&condition.source));
    }
    let b = InkEcho::new(condition.tac, &condition.black);
    let _ = writeln!(s, "tac = {}  # percent", num(b.tac.0, 1));
    let _ = writeln!(s, "min_dot = {}  # percent", num(condition.min_dot * 100.0, 2));
    let _ = writeln!(s, "yule_nielsen_n = {}", num(p.n, 4));
    let _ = writeln!(s, "black_surface = {}  # percent of paper", num(p.black_surface * 100.0, 3));
    let inks = ["cyan", "magenta", "yellow", "black"];
    let _ = writeln!(s, "\n[tvi]  # tone value increase at 50 %, percent");
    for (i, ink) in inks.iter().enumerate() {
        let _ = writeln!(s, "{ink} = {}", num(p.tvi50[i] * 100.0, 2));
    }
    let _ = writeln!(s, "\n[ink_film]  # g/m² at 100 %");
    for (i, ink) in inks.iter().enumerate() {
        let _ = writeln!(s, "{ink} = {}", num(condition.ink_film[i], 3));
    }
    let _ = writeln!(s, "\n[black_generation]  # percent, except shape");
    let _ = writeln!(s, "gcr = {}", num(b.gcr.0, 2));
    let _ = writeln!(s, "black_start = {}", num(b.black_start.0, 2));
    let _ = writeln!(s, "black_max = {}", num(b.black_max.0, 2));
    let _ = writeln!(s, "shape = {}", num(b.black_shape, 3));
    let _ = writeln!(s, "uca = {}", num(b.uca.0, 2));
    let _ = writeln!(s, "\n[aims]  # CIELAB D50 [L*, a*, b*]");
    for (name, lab) in AIM_NAMES.iter().zip(p.aims.to_array()) {
        let _ = writeln!(s, "{name} = [{}, {}, {}]", num(lab.l, 2), num(lab.a, 2), num(lab.b, 2));
    }
    if !condition.measured.is_empty() {
        let _ = writeln!(s, "\n[measured]  # CIELAB D50 measured at the aim builds, from the data fitted to");
        for m in &condition.measured {
            let _ = writeln!(s, "{} = [{}, {}, {}]", m.name, num(m.lab.l, 2), num(m.lab.a, 2), num(m.lab.b, 2));
        }
    }
    if let Some(over) = &p.black_overprints {
        let _ = writeln!(
            s,
            "\n[black_overprints]  # CIELAB D50 [L*, a*, b*] of the primaries printed with black"
        );
        for (name, lab) in BLACK_OVERPRINT_NAMES.iter().zip(over) {
            let _ = writeln!(s, "{name} = [{}, {}, {}]", num(lab.l, 2), num(lab.a, 2), num(lab.b, 2));
        }
    }
    if let Some(c) = &condition.correction {
        let _ = writeln!(
            s,
            "\n[correction]  # CIELAB offsets on a lattice over CMYK (node levels in percent), fitted to the physical model's residuals"
        );
        for (key, axis) in ["cyan", "magenta", "yellow", "black"].iter().zip(c.axes()) {
            let levels: Vec<String> = axis.levels().iter().map(|v| num(v * 100.0, 3)).collect();
            let _ = writeln!(s, "{key} = [{}]", levels.join(", "));
        }
        let _ = writeln!(
            s,
            "values = [  # ΔL*, Δa*, Δb* per node; black varies fastest, then yellow, magenta, cyan"
        );
        for v in c.values() {
            let _ = writeln!(s, "  [{}, {}, {}],", num(v[0], 4), num(v[1], 4), num(v[2], 4));
        }
        let _ = writeln!(s, "]");
    }
    Ok(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn built_in_conditions_round_trip_through_toml() {
        for c in builtin::all() {
            let text = to_toml(&c, &[]).unwrap();
            let back = parse_condition(&text, Path::new("x.toml")).unwrap();
            assert_eq!(back.name, c.name);
            let (a, b) = (c.params.unwrap(), back.params.unwrap());
            assert_eq!(a.aims, b.aims);
            assert!((a.black_surface - b.black_surface).abs() < 1e-12 && (a.n - b.n).abs() < 1e-12);
            assert!(a.tvi50.iter().zip(b.tvi50).all(|(x, y)| (x - y).abs() < 1e-12));
            assert!((back.black.gcr - c.black.gcr).abs() < 1e-12);
            assert!((back.tac - c.tac).abs() < 1e-12);
            assert_eq!(back.ink_film, c.ink_film);
        }
    }

    #[test]
    fn numbers_always_parse_as_floats() {
        assert_eq!(num(14.000000000000002, 2), "14.0");
        assert_eq!(num(-0.0001, 2), "0.0");
        assert_eq!(num(2.4, 4), "2.4");
    }

    #[test]
    fn a_missing_icc_profile_is_named_in_the_error() {
        let err = load_condition("press.icc").unwrap_err().to_string();
        assert!(err.contains("press.icc") && err.contains("ICC"), "{err}");
    }

    #[test]
    fn unknown_name_lists_the_built_in_names() {
        let err = load_condition("glossy").unwrap_err().to_string();
        assert!(err.contains("coated-offset") && err.contains("newsprint"), "{err}");
    }
}
