//! Pass/fail rules: `METRIC OP VALUE`, e.g. `tac>300`, `over_fraction>0.5%`,
//! `p95_de>3`, `regions>0`. A rule *fails* the file when its comparison
//! holds. Metrics name fields of the report (`tac.max`, `gamut.p95_de`, …)
//! or have a short form (`tac`, `p95_de`); shares are fractions, and a
//! value written with `%` is divided by 100 for them.

use super::InspectReport;
use crate::error::{Error, Result};
use serde::Serialize;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Op {
    Gt,
    Ge,
    Lt,
    Le,
}

/// How a metric's value is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Unit {
    /// Total ink or tone value, percent (`%` optional).
    Percent,
    /// A share of the image, fraction (`%` divides by 100).
    Fraction,
    /// ΔE2000 or a count (no `%`).
    Plain,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Metric {
    TacMax,
    TacP99,
    TacMean,
    TacOver,
    MeanDe,
    P95De,
    MaxDe,
    DeOver,
    OutsideFraction,
    OutsideMaxDe,
    Regions(Option<&'static str>),
    SmallDots,
}

/// Every accepted metric name (the first of each group is the report's name).
const NAMES: &[(&[&str], Metric, Unit)] = &[
    (&["tac.max", "tac", "tac_max"], Metric::TacMax, Unit::Percent),
    (&["tac.p99", "tac_p99"], Metric::TacP99, Unit::Percent),
    (&["tac.mean", "tac_mean"], Metric::TacMean, Unit::Percent),
    (&["tac.over_fraction", "over_fraction"], Metric::TacOver, Unit::Fraction),
    (&["gamut.mean_de", "mean_de"], Metric::MeanDe, Unit::Plain),
    (&["gamut.p95_de", "p95_de"], Metric::P95De, Unit::Plain),
    (&["gamut.max_de", "max_de"], Metric::MaxDe, Unit::Plain),
    (&["gamut.over_fraction", "de_over_fraction"], Metric::DeOver, Unit::Fraction),
    (
        &["gamut.outside_fraction", "outside_fraction"],
        Metric::OutsideFraction,
        Unit::Fraction,
    ),
    (&["gamut.outside_max_de", "outside_max_de"], Metric::OutsideMaxDe, Unit::Plain),
    (&["regions"], Metric::Regions(None), Unit::Plain),
    (
        &["regions.out-of-gamut"],
        Metric::Regions(Some(super::KIND_OUT_OF_GAMUT)),
        Unit::Plain,
    ),
    (&["regions.over-ink"], Metric::Regions(Some(super::KIND_OVER_INK)), Unit::Plain),
    (
        &["regions.rich-black-detail"],
        Metric::Regions(Some(super::KIND_RICH_BLACK)),
        Unit::Plain,
    ),
    (
        &["regions.below-min-dot"],
        Metric::Regions(Some(super::KIND_SMALL_DOT)),
        Unit::Plain,
    ),
    (
        &["plates.below_min_dot_fraction", "below_min_dot_fraction"],
        Metric::SmallDots,
        Unit::Fraction,
    ),
];

/// One parsed rule.
#[derive(Debug, Clone, PartialEq)]
pub struct Rule {
    /// As written (spaces removed).
    pub text: String,
    metric: Metric,
    op: Op,
    value: f64,
}

/// A rule applied to one report.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct RuleOutcome {
    pub rule: String,
    /// The measured value in the rule's unit; `None` when the report has no
    /// such figure (ΔE for CMYK input): the rule then passes.
    pub value: Option<f64>,
    pub failed: bool,
}

/// The rule applied when none is given: any pixel over the ink limit fails.
pub const DEFAULT_RULE: &str = "tac.over_fraction>0";

fn metric_names() -> String {
    NAMES.iter().map(|(n, ..)| n[0]).collect::<Vec<_>>().join(", ")
}

impl Rule {
    /// Parses a rule given on the command line (errors name `--fail-if`).
    pub fn parse(text: &str) -> Result<Rule> {
        Rule::parse_plain(text).map_err(|why| Error::usage(format!("--fail-if '{text}': {why}")))
    }

    /// Parses a rule; the error says what is wrong with it, for any caller
    /// to place (a flag, a ticket line).
    pub fn parse_plain(text: &str) -> std::result::Result<Rule, String> {
        let t: String = text.chars().filter(|c| !c.is_whitespace()).collect();
        let bad = |why: String| why;
        let at = t
            .find(['<', '>'])
            .ok_or_else(|| bad("expected METRIC>VALUE, METRIC>=VALUE, METRIC<VALUE or METRIC<=VALUE".into()))?;
        let (name, rest) = t.split_at(at);
        let (op, number) = match rest {
            r if r.starts_with(">=") => (Op::Ge, &r[2..]),
            r if r.starts_with("<=") => (Op::Le, &r[2..]),
            r if r.starts_with('>') => (Op::Gt, &r[1..]),
            r => (Op::Lt, &r[1..]),
        };
        let lower = name.to_ascii_lowercase();
        let &(_, metric, unit) = NAMES
            .iter()
            .find(|(names, ..)| names.contains(&lower.as_str()))
            .ok_or_else(|| bad(format!("unknown metric '{name}'; known: {}", metric_names())))?;
        let (digits, percent) = match number.strip_suffix('%') {
            Some(d) => (d, true),
            None => (number, false),
        };
        let value: f64 = digits
            .parse()
            .ok()
            .filter(|v: &f64| v.is_finite())
            .ok_or_else(|| bad(format!("'{number}' is not a number")))?;
        let value = match (unit, percent) {
            (Unit::Plain, true) => return Err(bad(format!("'{name}' is not a share; write the value without %"))),
            (Unit::Fraction, true) => value / 100.0,
            _ => value,
        };
        if unit == Unit::Fraction && !(0.0..=1.0).contains(&value) {
            return Err(bad(format!("'{name}' is a share of the image, 0–1 (or 0–100 %)")));
        }
        Ok(Rule {
            text: t,
            metric,
            op,
            value,
        })
    }

    fn measure(&self, r: &InspectReport) -> Option<f64> {
        Some(match self.metric {
            Metric::TacMax => r.tac.max,
            Metric::TacP99 => r.tac.p99,
            Metric::TacMean => r.tac.mean,
            Metric::TacOver => r.tac.over_fraction,
            Metric::MeanDe => r.gamut.as_ref()?.mean_de,
            Metric::P95De => r.gamut.as_ref()?.p95_de,
            Metric::MaxDe => r.gamut.as_ref()?.max_de,
            Metric::DeOver => r.gamut.as_ref()?.over_fraction,
            Metric::OutsideFraction => r.gamut.as_ref()?.outside_fraction,
            Metric::OutsideMaxDe => r.gamut.as_ref()?.outside_max_de,
            Metric::Regions(None) => r.regions_total as f64,
            Metric::Regions(Some(kind)) => r.regions_by_kind.get(kind).copied().unwrap_or(0) as f64,
            Metric::SmallDots => r.plates.iter().map(|p| p.below_min_dot_fraction).fold(0.0, f64::max),
        })
    }

    /// Applies the rule to a report.
    pub fn evaluate(&self, report: &InspectReport) -> RuleOutcome {
        let value = self.measure(report);
        let failed = value.is_some_and(|v| match self.op {
            Op::Gt => v > self.value,
            Op::Ge => v >= self.value,
            Op::Lt => v < self.value,
            Op::Le => v <= self.value,
        });
        RuleOutcome {
            rule: self.text.clone(),
            value,
            failed,
        }
    }
}

/// Parses every rule, reporting the first bad one.
pub fn parse_all<S: AsRef<str>>(texts: &[S]) -> Result<Vec<Rule>> {
    texts.iter().map(|t| Rule::parse(t.as_ref())).collect()
}

/// Judges a report by `rules` (none: [`DEFAULT_RULE`]): the outcome of each
/// and whether it passes all.
pub fn judge(report: &mut InspectReport, rules: &[Rule]) -> Result<()> {
    let default_rule;
    let applied: &[Rule] = if rules.is_empty() {
        default_rule = [Rule::parse(DEFAULT_RULE)?];
        &default_rule
    } else {
        rules
    };
    report.rules = applied.iter().map(|r| r.evaluate(report)).collect();
    report.pass = report.rules.iter().all(|o| !o.failed);
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rules_parse_with_units() {
        let r = Rule::parse("over_fraction > 0.5%").unwrap();
        assert_eq!((r.metric, r.op), (Metric::TacOver, Op::Gt));
        assert!((r.value - 0.005).abs() < 1e-15);
        assert_eq!(Rule::parse("tac>300%").unwrap().value, 300.0);
        assert_eq!(Rule::parse("TAC>=300").unwrap().op, Op::Ge);
        assert_eq!(Rule::parse("gamut.p95_de<=3").unwrap().metric, Metric::P95De);
        assert_eq!(Rule::parse("outside_fraction>1%").unwrap().metric, Metric::OutsideFraction);
        assert_eq!(Rule::parse("gamut.outside_max_de>=10").unwrap().metric, Metric::OutsideMaxDe);
        assert_eq!(Rule::parse("regions.over-ink>0").unwrap().metric, Metric::Regions(Some("over-ink")));
        assert_eq!(Rule::parse(DEFAULT_RULE).unwrap().metric, Metric::TacOver);
    }

    #[test]
    fn bad_rules_say_what_is_wrong() {
        let e = Rule::parse("ink>3").unwrap_err().to_string();
        assert!(e.contains("unknown metric 'ink'") && e.contains("tac.max"), "{e}");
        assert!(Rule::parse("tac=300").unwrap_err().to_string().contains("expected METRIC>VALUE"));
        assert!(Rule::parse("tac>lots").unwrap_err().to_string().contains("'lots' is not a number"));
        assert!(Rule::parse("p95_de>3%").unwrap_err().to_string().contains("without %"));
        assert!(Rule::parse("over_fraction>2").unwrap_err().to_string().contains("0–1"));
        assert!(Rule::parse("regions>").is_err());
    }
}
