//! Percent and coverage: the two units of ink settings, and the only place
//! that converts between them.
//!
//! A person types and reads percent (TAC 300, GCR 60); the numeric core works
//! in coverage fractions (3.0, 0.6), as `crate::ink::Cmyk` does.

use serde::{Deserialize, Serialize};
use std::fmt;
use std::str::FromStr;

/// An ink figure in percent, as typed on the command line, in tickets and
/// condition files, and as every report shows it (TAC 300 = 300 %).
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, Default, Serialize, Deserialize)]
#[serde(transparent)]
pub struct Percent(pub f64);

/// An ink figure as a fraction, as the numeric core uses it (TAC 3.0 = 300 %).
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, Default, Serialize, Deserialize)]
#[serde(transparent)]
pub struct Coverage(pub f64);

impl Percent {
    /// The same figure as a fraction.
    pub fn coverage(self) -> Coverage {
        Coverage(self.0 / 100.0)
    }
}

impl Coverage {
    /// The same figure in percent.
    pub fn percent(self) -> Percent {
        Percent(self.0 * 100.0)
    }
}

impl fmt::Display for Percent {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        fmt::Display::fmt(&self.0, f)
    }
}

/// Parsed as a plain number (`300`, `62.5`), with the number parser's own error.
impl FromStr for Percent {
    type Err = std::num::ParseFloatError;
    fn from_str(s: &str) -> Result<Percent, Self::Err> {
        s.parse().map(Percent)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_conversions_are_the_plain_scaling_by_one_hundred() {
        // The settings layer must not change a separation: the conversion is
        // exactly the division and multiplication the code did before.
        for p in [0.0, 20.0, 99.0, 100.0, 280.0, 300.0, 400.0, 62.5, 0.1] {
            assert_eq!(Percent(p).coverage().0.to_bits(), (p / 100.0).to_bits());
            assert_eq!(Coverage(p / 100.0).percent().0.to_bits(), (p / 100.0 * 100.0).to_bits());
        }
        // The range edges survive the round trip exactly.
        for p in [0.0, 99.0, 100.0, 400.0] {
            assert_eq!(Percent(p).coverage().percent(), Percent(p));
        }
    }

    #[test]
    fn parses_and_prints_as_a_number() {
        assert_eq!("62.5".parse::<Percent>(), Ok(Percent(62.5)));
        assert!("sixty".parse::<Percent>().is_err());
        assert_eq!(Percent(300.0).to_string(), "300");
    }
}
