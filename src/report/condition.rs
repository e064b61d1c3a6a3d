//! The report of printing conditions (`platesmith conditions`): the list of
//! the built-in conditions and one condition in detail, as JSON
//! ([`super::export::PRINTED_JSON`]) or text ([`ListText`], [`ShowText`]).
//! The figures themselves are computed in `press::figures`.

use super::export::Exporter;
use crate::error::Result;
use crate::press::figures::ConditionReport;
use std::fmt::Write as _;

/// The built-in conditions as a text table.
#[derive(Debug, Clone, Copy)]
pub struct ListText;

impl Exporter<[ConditionReport]> for ListText {
    fn suffix(&self) -> &'static str {
        "conditions.txt"
    }

    fn export(&self, reports: &[ConditionReport]) -> Result<Option<Vec<u8>>> {
        let mut s = String::new();
        let _ = writeln!(s, "Built-in printing conditions (* marks the default)\n");
        let _ = writeln!(
            s,
            "  {:<17} {:>5}  {:>19}  {:>12}  {:>13}  description",
            "name", "TAC %", "paper L* a* b*", "400 % L*", "gamut ΔE³"
        );
        for r in reports {
            let mark = if r.default { '*' } else { ' ' };
            let _ = writeln!(
                s,
                "{mark} {:<17} {:>5.0}  {:>6.1} {:>5.1} {:>6.1}  {:>12.1}  {:>13}  {}",
                r.name,
                r.tac_percent,
                r.paper.l,
                r.paper.a,
                r.paper.b,
                r.four_colour_400.l,
                thousands(r.gamut.volume),
                r.description
            );
        }
        let _ = writeln!(s, "\nDetails: platesmith conditions show NAME");
        Ok(Some(s.into_bytes()))
    }
}

/// One condition in detail as text.
#[derive(Debug, Clone, Copy)]
pub struct ShowText;

impl Exporter<ConditionReport> for ShowText {
    fn suffix(&self) -> &'static str {
        "condition.txt"
    }

    fn export(&self, r: &ConditionReport) -> Result<Option<Vec<u8>>> {
        let mut s = String::new();
        let tag = match (r.default, r.built_in) {
            (true, _) => " (built in, default)",
            (false, true) => " (built in)",
            _ => "",
        };
        let _ = writeln!(s, "{}{tag}\n  {}", r.name, r.description);
        if r.source.is_empty() {
            let _ = writeln!(s, "  source: not given\n");
        } else {
            let _ = writeln!(s, "  characterized from {}\n", r.source);
        }
        let _ = writeln!(s, "Defaults");
        let _ = writeln!(s, "  total ink limit      {:.0} %", r.tac_percent);
        let _ = writeln!(s, "  smallest dot         {:.1} %", r.min_dot_percent);
        let b = &r.black_generation;
        let _ = writeln!(
            s,
            "  black generation     GCR {:.0} %, black start {:.0} %, black max {:.0} %, shape {:.2}, UCA {:.0} %",
            b.gcr, b.black_start, b.black_max, b.shape, b.uca
        );
        let f = r.ink_film_g_per_m2;
        let _ = writeln!(
            s,
            "  ink film at 100 %    C {:.2}  M {:.2}  Y {:.2}  K {:.2} g/m²",
            f[0], f[1], f[2], f[3]
        );
        if let Some(m) = &r.model {
            let t = m.tvi50_percent;
            let _ = writeln!(
                s,
                "\nModel: Yule–Nielsen modified Neugebauer, 16 primaries{}",
                if m.kind.ends_with("lattice") {
                    ", with a lattice correction fitted to the measurements"
                } else {
                    ""
                }
            );
            let _ = writeln!(s, "  n-factor             {:.3}", m.yule_nielsen_n);
            let _ = writeln!(
                s,
                "  TVI at 50 %          C {:.1}  M {:.1}  Y {:.1}  K {:.1} %",
                t[0], t[1], t[2], t[3]
            );
            let _ = writeln!(
                s,
                "  black overprint      first-surface reflection {:.2} % of paper",
                m.black_surface_percent
            );
        }
        if !r.aims.is_empty() {
            let what = if r.aims.first().is_some_and(|a| a.from == "measured") {
                "Aims measured in the data (CIELAB D50) and the model's error at each"
            } else {
                "Aims (CIELAB D50) and the model at the same builds"
            };
            let _ = writeln!(s, "\n{what}");
            let _ = writeln!(
                s,
                "  {:<19} {:>6} {:>7} {:>7}    {:>6} {:>7} {:>7}   {:>5}",
                "", "aim L*", "a*", "b*", "model L*", "a*", "b*", "ΔE00"
            );
            for a in &r.aims {
                let _ = writeln!(
                    s,
                    "  {:<19} {}    {}   {:5.2}",
                    a.name,
                    lab_columns(a.aim),
                    lab_columns(a.predicted),
                    a.delta_e2000
                );
            }
        }
        let _ = writeln!(s, "\nComputed by the model");
        let _ = writeln!(
            s,
            "  predicted TVI        at 25 / 50 / 75 % (Murray–Davies on the tone channel; from Y alone)"
        );
        for t in &r.predicted_tvi {
            let (v, y) = (t.tvi_percent, t.tvi_luminance_percent);
            let _ = writeln!(
                s,
                "    {:<8} ({})       {:5.1} / {:5.1} / {:5.1} %     Y: {:5.1} / {:5.1} / {:5.1} %",
                t.ink.name(),
                t.channel,
                v[0],
                v[1],
                v[2],
                y[0],
                y[1],
                y[2]
            );
        }
        let g = &r.gray_balance;
        let _ = writeln!(
            s,
            "  gray balance         C {:.1}  M {:.1}  Y {:.1} % prints neutral (relative a* {:.2}, b* {:.2}), L* {:.1}{}",
            g.cmy_percent[0],
            g.cmy_percent[1],
            g.cmy_percent[2],
            g.relative_lab.a,
            g.relative_lab.b,
            g.absolute_lab.l,
            if g.neutral_reached { "" } else { " — neutral not reached" }
        );
        let t = r.rule_of_thumb_50_40_40;
        let _ = writeln!(s, "  50/40/40 C/M/Y       relative a* {:.2}, b* {:.2}", t.a, t.b);
        let _ = writeln!(s, "  400 % (C M Y K)      {}", lab_columns(r.four_colour_400));
        let d = r.darkest_within_tac_percent;
        let _ = writeln!(
            s,
            "  darkest within TAC   {}  at C {:.0} M {:.0} Y {:.0} K {:.0} %",
            lab_columns(r.darkest_within_tac),
            d[0],
            d[1],
            d[2],
            d[3]
        );
        let _ = writeln!(
            s,
            "  gamut volume         {} ΔE*ab³ within {:.0} % (voxel counting, voxels of {} unit)",
            thousands(r.gamut.volume),
            r.tac_percent,
            r.gamut.voxel,
        );
        Ok(Some(s.into_bytes()))
    }
}

/// 412345.6 → "412 346" (thin groups for reading).
fn thousands(v: f64) -> String {
    let digits = format!("{:.0}", v.max(0.0));
    let mut out = String::new();
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(' ');
        }
        out.push(ch);
    }
    out
}

fn lab_columns(l: crate::colour::Lab) -> String {
    format!("{:6.2} {:7.2} {:7.2}", l.l, l.a, l.b)
}
