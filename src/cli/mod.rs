//! Command-line definitions (clap) and dispatch.

mod compare;
mod conditions;
mod fit;
pub mod hotfolder;
pub mod inspect;
pub mod options;
mod output_names;
pub mod profile;
pub mod proof;
pub mod recipe;
pub mod separate;

use crate::error::Result;
use clap::{Parser, Subcommand};

/// Separate RGB artwork into CMYK plates for a printing condition, and check
/// gamut and ink before plating.
///
/// Every figure is a model's prediction: a contract proof and the printer's own
/// specifications decide, and local standards and the print vendor's
/// requirements take precedence.
#[derive(Debug, Parser)]
#[command(name = "platesmith", version, about, long_about)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// One colour → its CMYK build, the printed colour, ΔE and what limits it.
    Recipe(recipe::RecipeArgs),
    /// Separate images into a composite CMYK TIFF and one plate per ink.
    Separate(separate::SeparateArgs),
    /// List the built-in printing conditions or show one in detail.
    Conditions(conditions::ConditionsArgs),
    /// Fit a press model to measured patches (CGATS text) and write it as a condition file.
    Fit(fit::FitArgs),
    /// Hold a condition against measured patches: ΔE2000 per patch, statistics, exit 1 over a tolerance.
    Compare(compare::CompareArgs),
    /// Watch a folder: separate every file that arrives, results to out/, inputs to done/ or failed/.
    Hotfolder(hotfolder::HotfolderArgs),
    /// Write the separation as an ICC output profile (CMYK, CIELAB PCS, all intents).
    Profile(profile::ProfileArgs),
    /// Simulate the print on screen: a PNG of how the separation prints on the condition.
    Proof(proof::ProofArgs),
    /// How an RGB file will print, or whether a CMYK file is safe to plate: ΔE, ink, regions, rules.
    Inspect(inspect::InspectArgs),
}

/// Runs a parsed command line; the returned code is the process exit code.
pub fn run(cli: Cli) -> Result<i32> {
    match cli.command {
        Command::Recipe(args) => recipe::run(args),
        Command::Separate(args) => separate::run(args),
        Command::Conditions(args) => conditions::run(args),
        Command::Fit(args) => fit::run(args),
        Command::Compare(args) => compare::run(args),
        Command::Hotfolder(args) => hotfolder::run(args),
        Command::Profile(args) => profile::run(args),
        Command::Proof(args) => proof::run(args),
        Command::Inspect(args) => inspect::run(args),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn command_line_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}
