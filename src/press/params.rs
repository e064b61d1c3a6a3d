//! The characterization parameters a Neugebauer printing condition is built
//! from: CIELAB aims of paper, solids and overprints, tone value increase per
//! ink, the Yule–Nielsen n-factor and the first-surface parameter of the black
//! overprint rule.

use super::neugebauer::{NeugebauerModel, NeugebauerParams, complete_primaries};
use crate::colour::{Lab, Xyz};
use crate::ink::Ink;
use serde::Serialize;

/// CIELAB D50 aims for the 8 primaries without black plus the black solid.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
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

/// Names of the aims in the order of [`Aims::to_array`], as used in files and reports.
pub const AIM_NAMES: [&str; 9] = [
    "paper",
    "cyan",
    "magenta",
    "yellow",
    "black",
    "red",
    "green",
    "blue",
    "three_colour",
];

/// Nominal CMYK (fractions) of each aim, in the order of [`Aims::to_array`].
pub const AIM_INKS: [[f64; 4]; 9] = [
    [0.0, 0.0, 0.0, 0.0],
    [1.0, 0.0, 0.0, 0.0],
    [0.0, 1.0, 0.0, 0.0],
    [0.0, 0.0, 1.0, 0.0],
    [0.0, 0.0, 0.0, 1.0],
    [0.0, 1.0, 1.0, 0.0],
    [1.0, 0.0, 1.0, 0.0],
    [1.0, 1.0, 0.0, 0.0],
    [1.0, 1.0, 1.0, 0.0],
];

impl Aims {
    /// Primaries indexed by the bit mask of [`NeugebauerParams::primaries`].
    pub fn primaries_without_black(&self) -> [Xyz; 8] {
        [
            self.paper,
            self.cyan,
            self.magenta,
            self.blue,
            self.yellow,
            self.green,
            self.red,
            self.three_colour,
        ]
        .map(|l| l.to_xyz())
    }

    /// paper, cyan, magenta, yellow, black, red, green, blue, three_colour.
    pub fn to_array(&self) -> [Lab; 9] {
        [
            self.paper,
            self.cyan,
            self.magenta,
            self.yellow,
            self.black,
            self.red,
            self.green,
            self.blue,
            self.three_colour,
        ]
    }

    /// The inverse of [`Aims::to_array`].
    pub fn from_array(v: [Lab; 9]) -> Aims {
        let [paper, cyan, magenta, yellow, black, red, green, blue, three_colour] = v;
        Aims {
            paper,
            cyan,
            magenta,
            yellow,
            black,
            red,
            green,
            blue,
            three_colour,
        }
    }

    /// The solid of one ink.
    pub fn solid(&self, ink: Ink) -> Lab {
        match ink {
            Ink::Cyan => self.cyan,
            Ink::Magenta => self.magenta,
            Ink::Yellow => self.yellow,
            Ink::Black => self.black,
        }
    }
}

/// Everything the built-in model of a condition is computed from.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ModelParams {
    pub aims: Aims,
    /// Tone value increase at 50 % nominal per ink (C, M, Y, K), fractions.
    pub tvi50: [f64; 4],
    /// Yule–Nielsen n-factor.
    pub n: f64,
    /// First-surface reflection of the black overprint rule, as a fraction of
    /// the paper's tristimulus values (see [`super::overprint_black`]).
    pub black_surface: f64,
    /// Measured (fitted) CIELAB of the 7 primaries printed with black, in the
    /// order of [`BLACK_OVERPRINT_NAMES`]; when given they replace the
    /// overprint rule (which then only serves as the starting point of a fit).
    pub black_overprints: Option<[Lab; 7]>,
}

/// Names of the primaries with black (bit masks 9 to 15 of the Neugebauer
/// primaries), as used in files and reports.
pub const BLACK_OVERPRINT_NAMES: [&str; 7] = [
    "cyan_black",
    "magenta_black",
    "blue_black",
    "yellow_black",
    "green_black",
    "red_black",
    "three_colour_black",
];

/// Nominal CMYK (fractions) of each primary of [`BLACK_OVERPRINT_NAMES`].
pub const BLACK_OVERPRINT_INKS: [[f64; 4]; 7] = [
    [1.0, 0.0, 0.0, 1.0],
    [0.0, 1.0, 0.0, 1.0],
    [1.0, 1.0, 0.0, 1.0],
    [0.0, 0.0, 1.0, 1.0],
    [1.0, 0.0, 1.0, 1.0],
    [0.0, 1.0, 1.0, 1.0],
    [1.0, 1.0, 1.0, 1.0],
];

impl ModelParams {
    /// The 16 Neugebauer primaries: the 8 aims without black and the 8 with
    /// black derived by the overprint rule.
    pub fn primaries(&self) -> [Xyz; 16] {
        let mut all = complete_primaries(self.aims.primaries_without_black(), self.aims.black.to_xyz(), self.black_surface);
        if let Some(over) = &self.black_overprints {
            for (slot, lab) in all[9..].iter_mut().zip(over) {
                *slot = lab.to_xyz();
            }
        }
        all
    }

    /// The primaries with black by the overprint rule, as CIELAB, in the order
    /// of [`BLACK_OVERPRINT_NAMES`] (a fit's starting point).
    pub fn black_overprints_by_rule(&self) -> [Lab; 7] {
        let all = complete_primaries(self.aims.primaries_without_black(), self.aims.black.to_xyz(), self.black_surface);
        std::array::from_fn(|i| Lab::from_xyz(all[9 + i]))
    }

    pub fn neugebauer(&self) -> NeugebauerParams {
        NeugebauerParams {
            primaries: self.primaries(),
            n: self.n,
            tvi50: self.tvi50,
        }
    }

    pub fn model(&self) -> NeugebauerModel {
        NeugebauerModel::new(self.neugebauer())
    }
}
