//! The regions of an inspection as CSV (RFC 4180), one row per region,
//! numbered as on the maps and in the HTML page.

use super::export::Exporter;
use super::folder::InspectionFiles;
use crate::error::{Error, Result};
use crate::inspect::InspectReport;

/// The column names.
pub const COLUMNS: [&str; 24] = [
    "number",
    "kind",
    "x",
    "y",
    "width",
    "height",
    "x_mm",
    "y_mm",
    "width_mm",
    "height_mm",
    "pixels",
    "area_mm2",
    "max",
    "mean",
    "unit",
    "at_x",
    "at_y",
    "source",
    "lab_l",
    "lab_a",
    "lab_b",
    "printed_lab",
    "cmyk_percent",
    "limited_by",
];

fn join(v: &[f64]) -> String {
    v.iter().map(|x| format!("{x}")).collect::<Vec<_>>().join(" ")
}

/// The CSV text of a report's regions.
pub fn regions_csv(report: &InspectReport) -> Result<Vec<u8>> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let err = |e: csv::Error| Error::Internal(format!("region table: {e}"));
    w.write_record(COLUMNS).map_err(err)?;
    for (n, r) in report.regions.iter().enumerate() {
        let c = &r.colour;
        let record = [
            (n + 1).to_string(),
            r.kind.to_string(),
            r.bbox[0].to_string(),
            r.bbox[1].to_string(),
            r.bbox[2].to_string(),
            r.bbox[3].to_string(),
            r.bbox_mm[0].to_string(),
            r.bbox_mm[1].to_string(),
            r.bbox_mm[2].to_string(),
            r.bbox_mm[3].to_string(),
            r.pixels.to_string(),
            r.area_mm2.to_string(),
            r.max.to_string(),
            r.mean.to_string(),
            r.unit.to_string(),
            c.at[0].to_string(),
            c.at[1].to_string(),
            join(&c.source),
            c.lab[0].to_string(),
            c.lab[1].to_string(),
            c.lab[2].to_string(),
            join(&c.printed_lab),
            join(&c.cmyk),
            r.limited_by.as_ref().map(|l| l.join(" ")).unwrap_or_default(),
        ];
        w.write_record(&record).map_err(err)?;
    }
    w.into_inner().map_err(|e| Error::Internal(format!("region table: {e}")))
}

/// The region table as a CSV file of the report folder.
pub struct RegionTable;

impl Exporter<InspectionFiles<'_>> for RegionTable {
    fn suffix(&self) -> &'static str {
        "regions.csv"
    }

    fn export(&self, files: &InspectionFiles) -> Result<Option<Vec<u8>>> {
        regions_csv(&files.inspection.report).map(Some)
    }
}
