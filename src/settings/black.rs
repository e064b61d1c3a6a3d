//! Black generation settings (the rule that applies them is `separation::black`).

use serde::{Deserialize, Serialize};

/// How much of the neutral component black ink carries, and where.
///
/// All values are fractions 0..1 inside the code; the command line, tickets and
/// reports show percent.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BlackGeneration {
    /// Gray component replacement: 0 = black only where the colour cannot be
    /// reached without it (skeleton black, UCR style); 1 = black replaces the
    /// neutral component as far as the limits allow.
    pub gcr: f64,
    /// Darkness of the neutral component (0 = paper, 1 = the darkest printable
    /// neutral) at which black begins.
    pub black_start: f64,
    /// Maximum black coverage.
    pub black_max: f64,
    /// Exponent of the black curve above black start (1 = linear rise,
    /// larger = black comes in faster).
    pub shape: f64,
    /// Under colour addition in the deepest shadows: 0 = none, 1 = the
    /// deepest neutrals return to the least black that reaches them.
    pub uca: f64,
}

impl Default for BlackGeneration {
    fn default() -> Self {
        BlackGeneration {
            gcr: 0.5,
            black_start: 0.2,
            black_max: 0.95,
            shape: 2.0,
            uca: 0.0,
        }
    }
}
