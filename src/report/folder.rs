//! The report folder of an inspection (`inspect --report DIR`, and the hot
//! folder's inspect step): the JSON report, the CSV region table, the ΔE and
//! total ink maps and the HTML page, written as one set through
//! [`super::export::write_set`]. Its schema is in `docs/inspect-report.md`.

use super::export::{Exporter, INSPECT_JSON};
use super::{html, maps, region_table};
use crate::error::{Error, Result};
use crate::inspect::{Inspection, MapData};
use crate::separation::Separator;
use std::cell::OnceCell;
use std::path::{Path, PathBuf};

/// One inspection and what its report files are made of. The maps are drawn
/// once, on first use, and shared by the PNG files and the HTML page that
/// embeds them.
pub struct InspectionFiles<'a> {
    pub inspection: &'a Inspection,
    /// The separator the inspection was made with (the HTML page draws its gamut).
    pub separator: &'a Separator,
    de_png: OnceCell<Option<Vec<u8>>>,
    ink_png: OnceCell<Vec<u8>>,
}

impl<'a> InspectionFiles<'a> {
    pub fn new(inspection: &'a Inspection, separator: &'a Separator) -> InspectionFiles<'a> {
        InspectionFiles {
            inspection,
            separator,
            de_png: OnceCell::new(),
            ink_png: OnceCell::new(),
        }
    }

    /// The reduced maps the PNG files draw (kept when the inspection was asked to).
    pub fn maps(&self) -> Result<&'a MapData> {
        self.inspection
            .maps
            .as_ref()
            .ok_or_else(|| Error::Internal("report folder without maps".into()))
    }

    /// The ΔE map as PNG (RGB and gray input; `None` for CMYK).
    pub fn de_png(&self) -> Result<Option<&[u8]>> {
        if self.de_png.get().is_none() {
            let png = maps::de_map_for(self.maps()?, &self.inspection.report)?;
            let _ = self.de_png.set(png);
        }
        Ok(self.de_png.get().and_then(|p| p.as_deref()))
    }

    /// The total ink map as PNG.
    pub fn ink_png(&self) -> Result<&[u8]> {
        if let Some(png) = self.ink_png.get() {
            return Ok(png);
        }
        let png = maps::ink_map_for(self.maps()?, &self.inspection.report)?;
        Ok(self.ink_png.get_or_init(|| png))
    }
}

/// The JSON report, as `inspect --json` prints it.
pub struct ReportJson;

impl Exporter<InspectionFiles<'_>> for ReportJson {
    fn suffix(&self) -> &'static str {
        INSPECT_JSON.suffix
    }

    fn export(&self, files: &InspectionFiles) -> Result<Option<Vec<u8>>> {
        INSPECT_JSON.export(&files.inspection.report)
    }
}

/// The formats of the report folder, in the order they are written.
pub fn exporters<'a>() -> [&'a dyn Exporter<InspectionFiles<'a>>; 5] {
    [&ReportJson, &region_table::RegionTable, &maps::DeMap, &maps::InkMap, &html::Page]
}

/// The names of every file the report folder of `stem` may hold.
pub fn file_names(stem: &str) -> Vec<String> {
    exporters().iter().map(|e| e.file_name(stem)).collect()
}

/// Writes the report folder of one file as one set (all files or none).
pub fn write_report_dir(dir: &Path, overwrite: bool, input: &Path, inspection: &Inspection, separator: &Separator) -> Result<Vec<PathBuf>> {
    let stem = crate::job::output_stem(input);
    let files = InspectionFiles::new(inspection, separator);
    super::export::write_set(dir, overwrite, input, stem, &files, &exporters())
}
