//! `platesmith conditions [list | show NAME]`.

use crate::error::Result;
use crate::press::builtin;
use crate::press::figures::ConditionReport;
use crate::press::gamut::GamutOptions;
use crate::report::condition::{ListText, ShowText};
use crate::report::export::{Exporter, PRINTED_JSON, print};
use clap::{Args, Subcommand};
use rayon::prelude::*;

#[derive(Debug, Args)]
pub struct ConditionsArgs {
    #[command(subcommand)]
    pub action: Option<ConditionsAction>,
}

#[derive(Debug, Subcommand)]
pub enum ConditionsAction {
    /// The built-in conditions with their main figures (the default action).
    List {
        /// Print JSON instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Parameters, aims and computed figures of one condition.
    Show {
        /// A built-in name (see `conditions list`) or a condition file (.toml).
        name: String,
        /// Print JSON instead of text.
        #[arg(long)]
        json: bool,
    },
}

pub fn run(args: ConditionsArgs) -> Result<i32> {
    match args.action.unwrap_or(ConditionsAction::List { json: false }) {
        ConditionsAction::List { json } => list(json),
        ConditionsAction::Show { name, json } => show(&name, json),
    }
}

fn list(json: bool) -> Result<i32> {
    let reports: Vec<ConditionReport> = builtin::all()
        .par_iter()
        .map(|c| ConditionReport::new(c, GamutOptions::default()))
        .collect();
    let exporter: &dyn Exporter<[ConditionReport]> = if json { &PRINTED_JSON } else { &ListText };
    print(reports.as_slice(), exporter)?;
    Ok(0)
}

fn show(name: &str, json: bool) -> Result<i32> {
    let condition = crate::condition_fit::load_condition(name, true)?;
    let report = ConditionReport::new(&condition, GamutOptions::default());
    let exporter: &dyn Exporter<ConditionReport> = if json { &PRINTED_JSON } else { &ShowText };
    print(&report, exporter)?;
    Ok(0)
}
