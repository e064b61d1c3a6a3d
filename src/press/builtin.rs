//! Built-in printing conditions.
//!
//! Aim values are CIELAB D50 (2°, white backing, M0) for paper, solids and
//! overprints as characterised for the matching paper type of ISO 12647-2/-3.
//! They are "from memory": recalled, not copied from the standard; check them
//! against the standard and the print vendor's data before relying on them.

use super::neugebauer::{NeugebauerModel, NeugebauerParams, complete_primaries};
use super::PrintingCondition;
use crate::colour::{Lab, Xyz};
use crate::separation::BlackGeneration;
use std::sync::Arc;

/// Aims for the 8 primaries without black plus the black solid.
#[derive(Debug, Clone, Copy)]
pub struct Aims {
    pub paper: Lab,
    pub cyan: Lab,
    pub magenta: Lab,
    pub yellow: Lab,
    pub black: Lab,
    /// Magenta + yellow.
    pub red: Lab,
    /// Cyan + yellow.
    pub green: Lab,
    /// Cyan + magenta.
    pub blue: Lab,
    /// Cyan + magenta + yellow.
    pub three_colour: Lab,
}

impl Aims {
    /// Primaries indexed by the bit mask of [`NeugebauerParams::primaries`].
    pub fn primaries_without_black(&self) -> [Xyz; 8] {
        [
            self.paper, self.cyan, self.magenta, self.blue, self.yellow, self.green, self.red, self.three_colour,
        ]
        .map(|l| l.to_xyz())
    }
}

/// Premium coated paper, sheetfed offset (ISO 12647-2 paper type 1 aims, from memory).
pub fn coated_offset() -> PrintingCondition {
    let aims = Aims {
        paper: Lab::new(95.0, 0.0, -2.0),
        cyan: Lab::new(55.0, -37.0, -50.0),
        magenta: Lab::new(48.0, 74.0, -3.0),
        yellow: Lab::new(89.0, -5.0, 93.0),
        black: Lab::new(16.0, 0.0, 0.0),
        red: Lab::new(47.0, 68.0, 48.0),
        green: Lab::new(50.0, -65.0, 27.0),
        blue: Lab::new(24.0, 22.0, -46.0),
        three_colour: Lab::new(23.0, 0.0, 0.0),
    };
    let primaries = complete_primaries(aims.primaries_without_black(), aims.black.to_xyz(), 0.006);
    let model = NeugebauerModel::new(NeugebauerParams { primaries, n: 2.0, tvi50: [0.14, 0.14, 0.14, 0.17] });
    PrintingCondition {
        name: "coated-offset".into(),
        description: "premium coated paper, sheetfed offset".into(),
        model: Arc::new(model),
        tac: 3.2,
        black: BlackGeneration::default(),
        min_dot: 0.02,
    }
}
