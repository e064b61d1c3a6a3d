//! `platesmith recipe COLOUR`: one colour → its CMYK build, the printed
//! colour, ΔE and what limits it.

use super::options::ModelArgs;
use crate::error::Result;
use crate::recipe::{ColourSpec, recipe};
use crate::report::export::{Exporter, PRINTED_JSON, print};
use crate::report::recipe::{RecipeReport, Text};
use crate::separation::Separator;
use clap::Args;

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

pub fn run(args: RecipeArgs) -> Result<i32> {
    let spec = ColourSpec::parse(&args.colour)?;
    let setup = args.model.resolve()?;
    let separator = Separator::new(setup.condition.clone(), setup.settings.clone())?;
    let s = recipe(spec, &separator, setup.source_space);
    let report = RecipeReport::new(&args.colour, &s, &setup.condition, &setup.settings, setup.source_space);
    let exporter: &dyn Exporter<RecipeReport> = if args.json { &PRINTED_JSON } else { &Text };
    print(&report, exporter)?;
    Ok(0)
}
