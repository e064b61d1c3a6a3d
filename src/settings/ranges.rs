//! The one table of allowed ranges of the job and condition settings, and
//! the one wording of a value outside its range, whatever it came from: a
//! flag (`--gcr 120: allowed range is 0–100 %`), a ticket key or a condition
//! file key (`job.toml: line 3: model.gcr = 120: allowed range is 0–100 %`).
//!
//! Values are checked in the unit a person types ([`Setting::range`]: percent
//! for ink figures); the caller converts to coverage after the check.

use crate::error::{Error, Result};
use std::path::Path;

/// A setting with an allowed range.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Setting {
    /// Total ink limit, percent. 100 % is one solid, 400 % all four: a limit
    /// outside that either prints no solid at all or limits nothing.
    Tac,
    /// Gray component replacement, percent of the neutral component.
    Gcr,
    /// Black start, percent of the darkness of the darkest neutral. At 100 %
    /// the black curve has no span left to rise over (it divides by
    /// 1 − black start), so 99 % is the highest start. Condition files used to
    /// take 100 %, which the separator then refused.
    BlackStart,
    /// Maximum black, percent.
    BlackMax,
    /// Exponent of the black curve above black start. At 5 black already
    /// reaches 3 % of its rise only at the middle of the span (0.5⁵), at 0.2 it
    /// is at 87 % there: beyond either end the curve is a step, which a start
    /// or GCR setting says better. Condition files used to take up to 10,
    /// which the separator then refused.
    BlackShape,
    /// Under colour addition in the deepest shadows, percent.
    Uca,
    /// Nodes per axis of the separation table: 5 is the coarsest that still
    /// follows the black curve, 129 (2.1 million nodes) the finest that builds
    /// in a reasonable time and memory.
    TableGrid,
    /// Smallest printable dot of a condition, percent.
    MinDot,
    /// Yule–Nielsen n of a condition (1 = Murray–Davies, no optical dot gain).
    YuleNielsenN,
    /// First-surface reflection of a condition, percent of paper.
    BlackSurface,
    /// Tone value increase at 50 % of a condition, percent (also the bound of
    /// the fit of measurements, `press::fit`).
    Tvi,
    /// Ink film at 100 % of a condition, g/m².
    InkFilm,
}

/// The closed interval a setting's value must lie in, in the unit people type.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Range {
    pub lo: f64,
    pub hi: f64,
    /// Appended to the range in messages (" %", " g/m²", "").
    pub unit: &'static str,
}

impl Range {
    pub fn contains(&self, v: f64) -> bool {
        v.is_finite() && v >= self.lo && v <= self.hi
    }
}

/// Where a value came from, for the error that names it.
#[derive(Debug, Clone, Copy)]
pub enum Origin<'a> {
    /// A command-line flag, with its dashes: `--gcr`.
    Flag(&'a str),
    /// A key of a file (ticket or condition file): `model.gcr`, `tac`; the
    /// line when known.
    File { path: &'a Path, key: &'a str, line: Option<usize> },
    /// A setting made in code or a key without a file (a ticket built in memory).
    Key(&'a str),
}

impl Setting {
    /// The allowed range: the one table.
    pub const fn range(self) -> Range {
        let (lo, hi, unit) = match self {
            Setting::Tac => (100.0, 400.0, " %"),
            Setting::Gcr => (0.0, 100.0, " %"),
            Setting::BlackStart => (0.0, 99.0, " %"),
            Setting::BlackMax => (0.0, 100.0, " %"),
            Setting::BlackShape => (0.2, 5.0, ""),
            Setting::Uca => (0.0, 100.0, " %"),
            Setting::TableGrid => (5.0, 129.0, " nodes per axis"),
            Setting::MinDot => (0.0, 20.0, " %"),
            Setting::YuleNielsenN => (1.0, 10.0, ""),
            Setting::BlackSurface => (0.0, 20.0, " % of paper"),
            Setting::Tvi => (0.0, 30.0, " %"),
            Setting::InkFilm => (0.0, 5.0, " g/m²"),
        };
        Range { lo, hi, unit }
    }

    /// `value` when it lies in the range, else the error naming its origin.
    pub fn check(self, value: f64, origin: Origin) -> Result<f64> {
        let r = self.range();
        if r.contains(value) {
            return Ok(value);
        }
        let why = format!("allowed range is {}–{}{}", r.lo, r.hi, r.unit);
        Err(match origin {
            Origin::Flag(flag) => Error::usage(format!("{flag} {value}: {why}")),
            Origin::File { path, key, line } => {
                let at = line.map(|l| format!("line {l}: ")).unwrap_or_default();
                Error::input(path, format!("{at}{key} = {value}: {why}"))
            }
            Origin::Key(key) => Error::usage(format!("{key} = {value}: {why}")),
        })
    }

    /// A whole number of nodes (the table grid) checked as [`Setting::check`] does.
    pub fn check_count(self, value: usize, origin: Origin) -> Result<usize> {
        self.check(value as f64, origin).map(|_| value)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_origin_has_the_same_wording() {
        let flag = Setting::Gcr.check(120.0, Origin::Flag("--gcr")).unwrap_err().to_string();
        assert_eq!(flag, "--gcr 120: allowed range is 0–100 %");
        let path = Path::new("job.toml");
        let file = Setting::Gcr
            .check(
                120.0,
                Origin::File {
                    path,
                    key: "model.gcr",
                    line: Some(3),
                },
            )
            .unwrap_err()
            .to_string();
        assert!(
            file.ends_with("job.toml: line 3: model.gcr = 120: allowed range is 0–100 %"),
            "{file}"
        );
        let key = Setting::BlackShape.check(7.0, Origin::Key("black shape")).unwrap_err().to_string();
        assert_eq!(key, "black shape = 7: allowed range is 0.2–5");
    }

    #[test]
    fn edges_are_inside_and_nan_is_outside() {
        for s in [Setting::Tac, Setting::BlackStart, Setting::BlackShape, Setting::TableGrid] {
            let r = s.range();
            assert!(
                s.check(r.lo, Origin::Key("x")).is_ok() && s.check(r.hi, Origin::Key("x")).is_ok(),
                "{s:?}"
            );
            assert!(s.check(f64::NAN, Origin::Key("x")).is_err(), "{s:?}");
            assert!(s.check(f64::INFINITY, Origin::Key("x")).is_err(), "{s:?}");
        }
        assert!(Setting::BlackStart.check(99.5, Origin::Key("x")).is_err());
        assert!(Setting::BlackShape.check(5.5, Origin::Key("x")).is_err());
        assert!(Setting::BlackShape.check(0.19, Origin::Key("x")).is_err());
        assert!(Setting::TableGrid.check_count(130, Origin::Key("x")).is_err());
    }
}
