//! `platesmith recipe COLOUR`: one colour → its CMYK build, the printed
//! colour, ΔE and what limits it.

use super::options::ModelArgs;
use crate::colour::{EncodedRgb, Lab, RgbSpace};
use crate::error::{Error, Result};
use crate::ink::Cmyk;
use crate::report::{SettingsReport, round_to};
use crate::separation::{IntentLab, RgbGamut, Separation, Separator};
use crate::settings::Coverage;
use clap::Args;
use serde::Serialize;

#[derive(Debug, Args)]
pub struct RecipeArgs {
    /// The colour: `#RRGGBB` or `rgb:R,G,B` (0–255, in the source space),
    /// `lab:L,a,b` (CIELAB D50), or `cmyk:C,M,Y,K` (percent, to see what a build prints).
    #[arg(allow_hyphen_values = true)]
    pub colour: String,
    #[command(flatten)]
    pub model: ModelArgs,
    /// Print the result as JSON.
    #[arg(long)]
    pub json: bool,
}

/// A colour as the user wrote it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ColourSpec {
    Rgb([u8; 3]),
    Lab(Lab),
    Cmyk(Cmyk),
}

fn numbers<const N: usize>(text: &str, what: &str) -> Result<[f64; N]> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    if parts.len() != N {
        return Err(Error::usage(format!("{what} needs {N} comma-separated numbers, got '{text}'")));
    }
    let mut out = [0.0; N];
    for (slot, p) in out.iter_mut().zip(parts) {
        *slot = p
            .parse::<f64>()
            .ok()
            .filter(|v| v.is_finite())
            .ok_or_else(|| Error::usage(format!("'{p}' in {what} is not a number")))?;
    }
    Ok(out)
}

impl ColourSpec {
    pub fn parse(text: &str) -> Result<ColourSpec> {
        let t = text.trim();
        let lower = t.to_ascii_lowercase();
        if let Some(hex) = t.strip_prefix('#') {
            if hex.len() != 6 || !hex.chars().all(|c| c.is_ascii_hexdigit()) {
                return Err(Error::usage(format!("'{t}' is not a #RRGGBB colour")));
            }
            let v = u32::from_str_radix(hex, 16).map_err(|_| Error::usage(format!("'{t}' is not a #RRGGBB colour")))?;
            return Ok(ColourSpec::Rgb([(v >> 16) as u8, (v >> 8) as u8, v as u8]));
        }
        if let Some(rest) = lower.strip_prefix("rgb:") {
            let v = numbers::<3>(rest, "rgb:")?;
            if v.iter().any(|&c| !(0.0..=255.0).contains(&c) || c.fract() != 0.0) {
                return Err(Error::usage(format!("rgb: values must be whole numbers 0–255, got '{rest}'")));
            }
            return Ok(ColourSpec::Rgb(v.map(|c| c as u8)));
        }
        if let Some(rest) = lower.strip_prefix("lab:") {
            let [l, a, b] = numbers::<3>(rest, "lab:")?;
            if !(0.0..=100.0).contains(&l) || a.abs() > 128.0 || b.abs() > 128.0 {
                return Err(Error::usage(format!("lab: L must be 0–100 and a, b within ±128, got '{rest}'")));
            }
            return Ok(ColourSpec::Lab(Lab::new(l, a, b)));
        }
        if let Some(rest) = lower.strip_prefix("cmyk:") {
            let v = numbers::<4>(rest, "cmyk:")?;
            if v.iter().any(|c| !(0.0..=100.0).contains(c)) {
                return Err(Error::usage(format!("cmyk: values are percent 0–100, got '{rest}'")));
            }
            return Ok(ColourSpec::Cmyk(Cmyk::from_percent(v)));
        }
        Err(Error::usage(format!(
            "'{t}' is not a colour; write #RRGGBB, rgb:R,G,B, lab:L,a,b or cmyk:C,M,Y,K"
        )))
    }
}

/// The recipe as reported (percent and CIELAB D50).
#[derive(Debug, Serialize)]
pub struct RecipeReport {
    pub input: String,
    pub target_lab: [f64; 3],
    pub cmyk: [f64; 4],
    pub tac: f64,
    pub tac_limit: f64,
    pub printed_lab: [f64; 3],
    pub printed_lab_absolute: [f64; 3],
    pub delta_e: f64,
    pub in_gamut: bool,
    pub limited_by: Vec<&'static str>,
    pub settings: SettingsReport,
    pub note: &'static str,
}

fn lab3(l: Lab) -> [f64; 3] {
    [round_to(l.l, 2), round_to(l.a, 2), round_to(l.b, 2)]
}

/// Computes the recipe for one colour.
pub fn recipe(spec: ColourSpec, separator: &Separator, source_space: RgbSpace) -> Separation {
    let converter = source_space.converter();
    let gamut = RgbGamut(converter);
    let mapping = separator.source_mapping(&gamut);
    match spec {
        ColourSpec::Rgb(rgb) => {
            let lab = converter.to_lab(EncodedRgb(rgb.map(|v| v as f64 / 255.0)));
            let mut s = separator.separate(IntentLab::new(lab), &mapping);
            if separator.settings().keep_pure_black && rgb == [0, 0, 0] {
                let pure = separator.describe_build(Cmyk::new(0.0, 0.0, 0.0, separator.settings().black.black_max));
                s = Separation {
                    target: s.target,
                    delta_e: s.target.delta_e(pure.printed),
                    ..pure
                };
            }
            s
        }
        ColourSpec::Lab(lab) => separator.separate(IntentLab::new(lab), &mapping),
        ColourSpec::Cmyk(c) => separator.describe_build(c),
    }
}

pub fn run(args: RecipeArgs) -> Result<i32> {
    let spec = ColourSpec::parse(&args.colour)?;
    let setup = args.model.resolve()?;
    let separator = Separator::new(setup.condition.clone(), setup.settings.clone())?;
    let s = recipe(spec, &separator, setup.source_space);
    let report = RecipeReport {
        input: args.colour.clone(),
        target_lab: lab3(s.target.lab()),
        cmyk: s.cmyk.to_percent().map(|v| round_to(v, 1)),
        tac: round_to(s.cmyk.total_percent(), 1),
        tac_limit: round_to(Coverage(setup.settings.tac).percent().0, 1),
        printed_lab: lab3(s.printed.lab()),
        printed_lab_absolute: lab3(s.printed_absolute.lab()),
        delta_e: round_to(s.delta_e, 2),
        in_gamut: s.in_gamut,
        limited_by: s.limited_by.iter().map(|l| l.name()).collect(),
        // One colour has no picture: perceptual compresses from the whole source space.
        settings: SettingsReport {
            compress_from: (setup.settings.intent == crate::separation::Intent::Perceptual)
                .then_some(crate::separation::CompressFrom::Space.name()),
            ..SettingsReport::new(&setup.condition, &setup.settings, setup.source_space)
        },
        note: crate::report::PREDICTION_NOTE,
    };
    let text = if args.json {
        serde_json::to_string_pretty(&report).map_err(|e| Error::Internal(e.to_string()))? + "\n"
    } else {
        text_report(&report)
    };
    crate::error::write_stdout(&text)?;
    Ok(0)
}

fn text_report(r: &RecipeReport) -> String {
    use std::fmt::Write;
    let mut o = String::new();
    let [c, m, y, k] = r.cmyk;
    let _ = writeln!(o, "colour      {}", r.input);
    let _ = writeln!(
        o,
        "build       C {c:.1}  M {m:.1}  Y {y:.1}  K {k:.1}   (total {:.1} % of {:.0} % allowed)",
        r.tac, r.tac_limit
    );
    let f = |l: [f64; 3]| format!("L* {:.2}  a* {:.2}  b* {:.2}", l[0], l[1], l[2]);
    let _ = writeln!(o, "asked for   {}", f(r.target_lab));
    let _ = writeln!(o, "prints as   {}   (ΔE2000 {:.2})", f(r.printed_lab), r.delta_e);
    let _ = writeln!(o, "on paper    {}   (absolute, as measured)", f(r.printed_lab_absolute));
    if r.in_gamut {
        let _ = writeln!(o, "gamut       printable under the limits");
    } else {
        let _ = writeln!(o, "gamut       outside; limited by {}", r.limited_by.join(", "));
    }
    let _ = writeln!(
        o,
        "settings    {} · {} · TAC {:.0} % · GCR {:.0} % · black start {:.0} % · black max {:.0} %",
        r.settings.condition,
        r.settings.intent_phrase(),
        r.settings.tac,
        r.settings.gcr,
        r.settings.black_start,
        r.settings.black_max
    );
    let _ = writeln!(o, "{}", r.note);
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn colour_forms_parse() {
        assert_eq!(ColourSpec::parse("#FF8000").unwrap(), ColourSpec::Rgb([255, 128, 0]));
        assert_eq!(ColourSpec::parse("rgb:1,2,3").unwrap(), ColourSpec::Rgb([1, 2, 3]));
        assert_eq!(
            ColourSpec::parse("lab:50,-20,30").unwrap(),
            ColourSpec::Lab(Lab::new(50.0, -20.0, 30.0))
        );
        assert_eq!(
            ColourSpec::parse("cmyk:100,0,0,0").unwrap(),
            ColourSpec::Cmyk(Cmyk::new(1.0, 0.0, 0.0, 0.0))
        );
    }

    #[test]
    fn bad_colours_are_refused() {
        for bad in [
            "#12345",
            "#GG0000",
            "rgb:1,2",
            "rgb:256,0,0",
            "lab:120,0,0",
            "cmyk:0,0,0,101",
            "red",
            "lab:a,b,c",
        ] {
            assert!(ColourSpec::parse(bad).is_err(), "{bad}");
        }
    }
}
