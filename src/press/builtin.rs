//! Built-in printing conditions and their registry.
//!
//! Aim values are CIELAB D50 (2°, white backing) for paper, solids and
//! overprints as characterised for the matching paper type of ISO 12647-2
//! (offset) and ISO 12647-3 (coldset newsprint). They are "from memory":
//! recalled, not copied from the standards; check them against the standard
//! and the print vendor's data before relying on them. The three-colour
//! overprint is not an aim of those parts; its value is from memory of
//! characterization data for the same paper types.
//!
//! The primaries with black come from the overprint rule of
//! [`super::overprint_black`]. Its first-surface parameter is set per stock so
//! that the four-colour 400 % patch prints the deep black such stock gives
//! (from memory: L* about 8 on gloss coated, 22 on uncoated, 28 on newsprint).
//! The reasoning: light reflected at the ink surface never passes through the
//! ink and bounds how dark any build can get. A smooth air–ink interface
//! reflects about 4 % (Fresnel, refractive index 1.5); on gloss coated stock
//! almost all of it is specular and the 45°/0° geometry of the measurement
//! excludes it (about 1 % of the paper's reflectance remains), while matte
//! uncoated stock scatters it into the instrument (about 4 %) and rough,
//! absorbent newsprint with ink sunk into the fibres more still (about 8.5 %).
//!
//! Defaults for the total ink limit, black generation, minimum printable dot
//! and ink film figures are common practice for each kind of stock.

use super::{Aims, ModelParams, PrintingCondition};
use crate::colour::Lab;
use crate::separation::BlackGeneration;

/// Names of the built-in conditions; the first is the default everywhere.
pub const NAMES: [&str; 3] = ["coated-offset", "uncoated-offset", "newsprint"];

/// The default condition's name.
pub const DEFAULT: &str = NAMES[0];

/// Names of the built-in conditions, the default first.
pub fn names() -> &'static [&'static str] {
    &NAMES
}

/// A built-in condition by name (case-insensitive).
pub fn by_name(name: &str) -> Option<PrintingCondition> {
    match name.to_ascii_lowercase().as_str() {
        "coated-offset" => Some(coated_offset()),
        "uncoated-offset" => Some(uncoated_offset()),
        "newsprint" => Some(newsprint()),
        _ => None,
    }
}

/// Every built-in condition, the default first.
pub fn all() -> Vec<PrintingCondition> {
    vec![coated_offset(), uncoated_offset(), newsprint()]
}

/// Premium coated paper, sheetfed offset (ISO 12647-2 paper type 1 aims, from memory).
pub fn coated_offset() -> PrintingCondition {
    let params = ModelParams {
        aims: Aims {
            paper: Lab::new(95.0, 0.0, -2.0),
            cyan: Lab::new(55.0, -37.0, -50.0),
            magenta: Lab::new(48.0, 74.0, -3.0),
            yellow: Lab::new(89.0, -5.0, 93.0),
            black: Lab::new(16.0, 0.0, 0.0),
            red: Lab::new(47.0, 68.0, 48.0),
            green: Lab::new(50.0, -65.0, 27.0),
            blue: Lab::new(24.0, 22.0, -46.0),
            three_colour: Lab::new(23.0, 0.0, 0.0),
        },
        // ISO 12647-2 positive plates on paper types 1 and 2, from memory.
        tvi50: [0.14, 0.14, 0.14, 0.17],
        // Smooth coated stock: little lateral light scattering (common practice n ≈ 2).
        n: 2.0,
        black_surface: 0.010,
    };
    // Common practice: TAC 330 % for sheetfed on premium coated stock; medium
    // GCR; 2 % smallest dot held on plate and press; about 1.1 g/m² per process
    // colour and a slightly heavier black.
    let black = BlackGeneration {
        gcr: 0.5,
        black_start: 0.2,
        black_max: 0.95,
        shape: 2.0,
        uca: 0.0,
    };
    PrintingCondition::from_params("coated-offset", "premium coated paper, sheetfed offset", params, 3.3, black, 0.02)
        .with_ink_film([1.1, 1.1, 1.1, 1.2])
}

/// Wood-free uncoated white paper, offset (ISO 12647-2 paper type 4 aims, from memory).
pub fn uncoated_offset() -> PrintingCondition {
    let params = ModelParams {
        aims: Aims {
            paper: Lab::new(93.0, 0.0, -3.0),
            cyan: Lab::new(58.0, -25.0, -43.0),
            magenta: Lab::new(54.0, 58.0, -2.0),
            yellow: Lab::new(86.0, -4.0, 75.0),
            black: Lab::new(31.0, 1.0, 1.0),
            red: Lab::new(52.0, 55.0, 26.0),
            green: Lab::new(52.0, -42.0, 13.0),
            blue: Lab::new(38.0, 8.0, -31.0),
            three_colour: Lab::new(34.0, 1.0, 0.0),
        },
        // ISO 12647-2 positive plates on uncoated paper, from memory.
        tvi50: [0.18, 0.18, 0.18, 0.21],
        // Rough, absorbent stock scatters more light sideways inside the paper
        // (common practice n ≈ 2.5 for uncoated; 2.5 also has a fast path).
        n: 2.5,
        black_surface: 0.040,
    };
    // Common practice: TAC 280 % on uncoated stock; stronger GCR to keep
    // neutrals stable and ink low; 3 % smallest dot; heavier ink films.
    let black = BlackGeneration {
        gcr: 0.6,
        black_start: 0.15,
        black_max: 0.95,
        shape: 2.0,
        uca: 0.0,
    };
    PrintingCondition::from_params(
        "uncoated-offset",
        "wood-free uncoated white paper, offset",
        params,
        2.8,
        black,
        0.03,
    )
    .with_ink_film([1.4, 1.4, 1.4, 1.6])
}

/// Standard newsprint, coldset web offset (ISO 12647-3 aims, from memory).
pub fn newsprint() -> PrintingCondition {
    let params = ModelParams {
        aims: Aims {
            paper: Lab::new(82.0, 0.0, 3.0),
            cyan: Lab::new(57.0, -23.0, -27.0),
            magenta: Lab::new(54.0, 44.0, -1.0),
            yellow: Lab::new(78.0, -3.0, 58.0),
            black: Lab::new(34.0, 1.0, 2.0),
            red: Lab::new(52.0, 41.0, 25.0),
            green: Lab::new(53.0, -34.0, 17.0),
            blue: Lab::new(41.0, 9.0, -22.0),
            three_colour: Lab::new(38.0, 2.0, 3.0),
        },
        // ISO 12647-3 gives its tone value increase aim at the 40 % patch
        // (about 26 %, from memory); the same figure is used here at 50 %.
        tvi50: [0.26, 0.26, 0.26, 0.26],
        // Newsprint scatters most (common practice n ≈ 3).
        n: 3.0,
        black_surface: 0.085,
    };
    // Common practice: TAC 240 % on newsprint; heavy GCR with black from 10 %;
    // 4 % smallest dot; coldset ink films around 1.8–2 g/m².
    let black = BlackGeneration {
        gcr: 0.8,
        black_start: 0.1,
        black_max: 0.9,
        shape: 1.5,
        uca: 0.0,
    };
    PrintingCondition::from_params("newsprint", "standard newsprint, coldset web offset", params, 2.4, black, 0.04)
        .with_ink_film([1.8, 1.8, 1.8, 2.0])
}
