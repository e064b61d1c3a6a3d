//! One colour through the separation: a colour as a person writes it
//! ([`ColourSpec`]: `#RRGGBB`, `rgb:`, `lab:`, `cmyk:`) and its recipe (the
//! CMYK build, what it prints and what limits it) under a job's model
//! settings. The command line parses into it; `report::recipe` reports it.

use crate::colour::{EncodedRgb, Lab, RgbSpace};
use crate::error::{Error, Result};
use crate::ink::Cmyk;
use crate::separation::{IntentLab, RgbGamut, Separation, Separator};

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
