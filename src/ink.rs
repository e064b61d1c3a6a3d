//! Ink coverage values.
//!
//! Inside the code, ink is a fraction 0..1 per channel ([`Cmyk`]); everything a
//! person or a script reads shows percent (0–100), and total ink (TAC) is the
//! sum in percent, e.g. 300.

use crate::settings::{Coverage, Percent};
use serde::{Deserialize, Serialize};

/// Coverage of cyan, magenta, yellow and black as fractions 0..1.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Cmyk {
    pub c: f64,
    pub m: f64,
    pub y: f64,
    pub k: f64,
}

/// The four process inks in plate order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Ink {
    Cyan,
    Magenta,
    Yellow,
    Black,
}

impl Ink {
    pub const ALL: [Ink; 4] = [Ink::Cyan, Ink::Magenta, Ink::Yellow, Ink::Black];

    /// One-letter plate name: C, M, Y, K.
    pub fn letter(self) -> &'static str {
        match self {
            Ink::Cyan => "C",
            Ink::Magenta => "M",
            Ink::Yellow => "Y",
            Ink::Black => "K",
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Ink::Cyan => "cyan",
            Ink::Magenta => "magenta",
            Ink::Yellow => "yellow",
            Ink::Black => "black",
        }
    }

    pub fn index(self) -> usize {
        self as usize
    }
}

impl Cmyk {
    pub const ZERO: Cmyk = Cmyk {
        c: 0.0,
        m: 0.0,
        y: 0.0,
        k: 0.0,
    };

    pub const fn new(c: f64, m: f64, y: f64, k: f64) -> Cmyk {
        Cmyk { c, m, y, k }
    }

    pub fn from_array(v: [f64; 4]) -> Cmyk {
        Cmyk {
            c: v[0],
            m: v[1],
            y: v[2],
            k: v[3],
        }
    }

    pub fn to_array(self) -> [f64; 4] {
        [self.c, self.m, self.y, self.k]
    }

    /// From percent values (0–100 each).
    pub fn from_percent(p: [f64; 4]) -> Cmyk {
        Cmyk::from_array(p.map(|v| Percent(v).coverage().0))
    }

    /// Percent values (0–100 each).
    pub fn to_percent(self) -> [f64; 4] {
        self.to_array().map(|v| Coverage(v).percent().0)
    }

    /// Total ink as a fraction (0..4).
    #[inline]
    pub fn total(self) -> f64 {
        self.c + self.m + self.y + self.k
    }

    /// Total ink in percent (0–400), the TAC of this build.
    pub fn total_percent(self) -> f64 {
        Coverage(self.total()).percent().0
    }

    pub fn get(self, ink: Ink) -> f64 {
        self.to_array()[ink.index()]
    }

    /// Every channel clamped to 0..1.
    pub fn clamped(self) -> Cmyk {
        Cmyk::from_array(self.to_array().map(|v| v.clamp(0.0, 1.0)))
    }

    pub fn is_finite(self) -> bool {
        self.to_array().iter().all(|v| v.is_finite())
    }
}
