//! The report of a condition fitted to measurements (`platesmith fit`) as
//! JSON ([`FitReport`] through [`super::export::PRINTED_JSON`]) or text
//! ([`Text`]), and the ΔE2000 tables it shares with the comparison
//! ([`super::comparison`]): [`stats_line`], [`residual_report`], [`patch_table`].

use super::export::Exporter;
use crate::error::Result;
use crate::press::characterize::Characterization;
use crate::press::fit::{Residuals, WorstPatch};
use serde::Serialize;
use std::fmt::Write as _;
use std::path::Path;

/// The fit as JSON: where from, where to, and the characterization.
#[derive(Debug, Serialize)]
pub struct FitReport<'a> {
    pub measurements: String,
    pub out: String,
    pub source: &'a str,
    #[serde(flatten)]
    pub fit: &'a Characterization,
}

/// The fit as text for a terminal, naming the files written.
#[derive(Debug, Clone, Copy)]
pub struct Text<'a> {
    pub measurements: &'a Path,
    pub out: &'a Path,
    pub plot: Option<&'a Path>,
}

impl Exporter<Characterization> for Text<'_> {
    fn suffix(&self) -> &'static str {
        "fit.txt"
    }

    fn export(&self, fit: &Characterization) -> Result<Option<Vec<u8>>> {
        Ok(Some(self.text(fit).into_bytes()))
    }
}

impl Text<'_> {
    fn text(&self, fit: &Characterization) -> String {
        let p = &fit.params;
        let mut s = String::new();
        let _ = writeln!(
            s,
            "Fitted {} patches from {} ({} iterations of the physical model)",
            fit.residuals.count,
            self.measurements.display(),
            fit.iterations
        );
        let t = p.tvi50.map(|v| v * 100.0);
        let _ = writeln!(
            s,
            "  n-factor {:.3}   TVI at 50 % C {:.1} M {:.1} Y {:.1} K {:.1} %",
            p.n, t[0], t[1], t[2], t[3]
        );
        if fit.correction.is_some() {
            let _ = writeln!(
                s,
                "  lattice correction: smoothness {} (chosen by the cross-validation when run), largest offset {:.2}, {} nodes lowered to keep L* from rising with ink",
                fit.lambda, fit.largest_offset, fit.monotonic_adjusted_nodes
            );
        }
        let _ = writeln!(s, "\nΔE2000 on the fitted patches");
        let _ = writeln!(s, "  physical model alone  {}", stats_line(&fit.physical));
        if fit.correction.is_some() {
            let _ = writeln!(s, "  with the correction   {}", stats_line(&fit.residuals));
        }
        match &fit.cross_validation {
            Some(cv) => {
                let _ = writeln!(
                    s,
                    "\nΔE2000 on patches the fit did not see ({}-fold cross-validation; the physical model alone: mean {:.2})",
                    cv.folds, cv.physical_mean
                );
                s += &residual_report(&cv.held_out);
            }
            None => {
                let _ = writeln!(s, "\nNo cross-validation (--folds 0): the figures below are on the fitted patches");
                s += &residual_report(&fit.residuals);
            }
        }
        let _ = writeln!(s, "\nWrote {}", self.out.display());
        if let Some(plot) = self.plot {
            let _ = writeln!(s, "Wrote {}", plot.display());
        }
        s
    }
}

/// "mean 0.12   95th percentile 0.30   max 1.80 (1617 patches)".
pub fn stats_line(r: &Residuals) -> String {
    format!(
        "mean {:.2}   95th percentile {:.2}   max {:.2}   ({} patches)",
        r.mean, r.p95, r.max, r.count
    )
}

/// Overall and per-region statistics, then the worst patches.
pub fn residual_report(r: &Residuals) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "  {:<24} {}", "all patches", stats_line(r));
    for g in &r.regions {
        if g.count > 0 {
            let _ = writeln!(
                s,
                "  {:<24} mean {:.2}   95th percentile {:.2}   max {:.2}   ({} patches)",
                g.region.name(),
                g.mean,
                g.p95,
                g.max,
                g.count
            );
        }
    }
    let _ = writeln!(s, "\nWorst patches");
    s += &patch_table(&r.worst);
    s
}

/// A table of patches: id, line, CMYK, measured, modelled, ΔE2000.
pub fn patch_table(rows: &[WorstPatch]) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "  {:<10} {:>5}  {:<23} {:<22} {:<22} ΔE00",
        "patch", "line", "C M Y K %", "measured L* a* b*", "model L* a* b*"
    );
    for row in rows {
        let (i, m, p) = (row.ink_percent, row.measured, row.predicted);
        let _ = writeln!(
            s,
            "  {:<10} {:>5}  {:>5.1} {:>5.1} {:>5.1} {:>5.1}  {:>6.2} {:>6.2} {:>7.2}  {:>6.2} {:>6.2} {:>7.2}  {:.2}",
            row.id, row.line, i[0], i[1], i[2], i[3], m.l, m.a, m.b, p.l, p.a, p.b, row.delta_e2000
        );
    }
    s
}
