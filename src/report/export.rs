//! The one interface every report format is written through.
//!
//! An [`Exporter`] turns a subject (an inspection, a job summary) into the
//! bytes of one file; [`write_set`] writes the files of several exporters as
//! one [`OutputSet`] (all or none, the input never written), and [`stage`]
//! adds one file to a set that holds other outputs too (the summary beside
//! the plates). Standard output takes the same bytes ([`Exporter::export`]).
//!
//! The formats: [`Json`] (any serialisable subject), and for an inspection
//! the text summary ([`super::text`]), the CSV region table
//! ([`super::region_table`]), the PNG maps ([`super::maps`]) and the HTML page
//! ([`super::html`]), gathered for the report folder in [`super::folder`].

use crate::error::{Error, Result};
use crate::raster::OutputSet;
use serde::Serialize;
use std::path::{Path, PathBuf};

/// One report format for subjects of type `S`.
pub trait Exporter<S: ?Sized> {
    /// The file name after the stem: `inspect.json` names `<stem>.inspect.json`.
    fn suffix(&self) -> &'static str;

    /// The file's bytes; `None` when the subject has nothing to show in this
    /// format (no ΔE map for a CMYK file).
    fn export(&self, subject: &S) -> Result<Option<Vec<u8>>>;

    /// The name of the file this format writes for `stem`.
    fn file_name(&self, stem: &str) -> String {
        file_name(stem, self.suffix())
    }
}

/// `<stem>.<suffix>`: every report file is named after its input's stem.
pub fn file_name(stem: &str, suffix: &str) -> String {
    format!("{stem}.{suffix}")
}

/// Pretty-printed JSON (two-space indents), with or without a final line break.
#[derive(Debug, Clone, Copy)]
pub struct Json {
    pub suffix: &'static str,
    pub final_newline: bool,
}

/// The summary of a `separate` job, beside the plates (no final line break).
pub const SUMMARY_JSON: Json = Json {
    suffix: "summary.json",
    final_newline: false,
};

/// The inspection report (with a final line break, in a file or on standard output).
pub const INSPECT_JSON: Json = Json {
    suffix: "inspect.json",
    final_newline: true,
};

/// A report printed on standard output (`recipe`, `compare`, `conditions`,
/// `fit` with `--json`), with a final line break.
pub const PRINTED_JSON: Json = Json {
    suffix: "json",
    final_newline: true,
};

impl Json {
    /// The name of the file for `stem` (what [`Exporter::file_name`] gives, for any subject).
    pub fn file_name(&self, stem: &str) -> String {
        file_name(stem, self.suffix)
    }

    /// The JSON text of `value`.
    pub fn text<T: Serialize + ?Sized>(&self, value: &T) -> Result<String> {
        let mut text = serde_json::to_string_pretty(value).map_err(|e| Error::Internal(e.to_string()))?;
        if self.final_newline {
            text.push('\n');
        }
        Ok(text)
    }
}

impl<T: Serialize + ?Sized> Exporter<T> for Json {
    fn suffix(&self) -> &'static str {
        self.suffix
    }

    fn export(&self, subject: &T) -> Result<Option<Vec<u8>>> {
        self.text(subject).map(|t| Some(t.into_bytes()))
    }
}

/// Prints what one exporter makes of `subject` on standard output.
pub fn print<S: ?Sized>(subject: &S, exporter: &dyn Exporter<S>) -> Result<()> {
    match exporter.export(subject)? {
        Some(bytes) => crate::error::write_stdout(&String::from_utf8_lossy(&bytes)),
        None => Ok(()),
    }
}

/// Stages the file of one exporter into `out`; `None` when it has nothing to write.
pub fn stage<S: ?Sized>(out: &mut OutputSet, stem: &str, subject: &S, exporter: &dyn Exporter<S>) -> Result<Option<PathBuf>> {
    match exporter.export(subject)? {
        Some(bytes) => out
            .stage(&exporter.file_name(stem), |w| std::io::Write::write_all(w, &bytes))
            .map(Some),
        None => Ok(None),
    }
}

/// Writes the files of `exporters` for one subject into `dir` (made when
/// missing) as one set: all files or none; `input` is never written.
pub fn write_set<S: ?Sized>(
    dir: &Path,
    overwrite: bool,
    input: &Path,
    stem: &str,
    subject: &S,
    exporters: &[&dyn Exporter<S>],
) -> Result<Vec<PathBuf>> {
    // Everything is rendered before the folder is touched: an error leaves nothing behind.
    let mut files = Vec::with_capacity(exporters.len());
    for e in exporters {
        if let Some(bytes) = e.export(subject)? {
            files.push((e.file_name(stem), bytes));
        }
    }
    std::fs::create_dir_all(dir).map_err(|e| Error::output(dir, format!("cannot create the folder: {e}")))?;
    let mut out = OutputSet::new(dir, overwrite)?;
    out.protect([input]);
    for (name, bytes) in &files {
        out.stage(name, |w| std::io::Write::write_all(w, bytes))?;
    }
    out.commit()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn json_ends_with_a_line_break_only_when_asked() {
        let v = serde_json::json!({"a": [1, 2]});
        assert_eq!(SUMMARY_JSON.text(&v).unwrap(), "{\n  \"a\": [\n    1,\n    2\n  ]\n}");
        assert_eq!(INSPECT_JSON.text(&v).unwrap(), "{\n  \"a\": [\n    1,\n    2\n  ]\n}\n");
        assert_eq!(INSPECT_JSON.file_name("poster"), "poster.inspect.json");
        assert_eq!(
            Exporter::<serde_json::Value>::file_name(&SUMMARY_JSON, "poster"),
            "poster.summary.json"
        );
    }

    /// A format that fails: the set writes nothing, not even the folder.
    struct Broken;
    impl Exporter<serde_json::Value> for Broken {
        fn suffix(&self) -> &'static str {
            "broken.txt"
        }
        fn export(&self, _: &serde_json::Value) -> Result<Option<Vec<u8>>> {
            Err(Error::Internal("cannot render".into()))
        }
    }

    /// A format with nothing to show for this subject.
    struct Nothing;
    impl Exporter<serde_json::Value> for Nothing {
        fn suffix(&self) -> &'static str {
            "nothing.txt"
        }
        fn export(&self, _: &serde_json::Value) -> Result<Option<Vec<u8>>> {
            Ok(None)
        }
    }

    #[test]
    fn a_set_is_written_whole_or_not_at_all() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = tmp.path().join("reports");
        let input = tmp.path().join("poster.png");
        let v = serde_json::json!({"a": 1});
        let failed = write_set(&dir, false, &input, "poster", &v, &[&INSPECT_JSON, &Broken]);
        assert!(failed.is_err());
        assert!(!dir.exists());
        let written = write_set(&dir, false, &input, "poster", &v, &[&INSPECT_JSON, &Nothing]).unwrap();
        assert_eq!(written, [dir.join("poster.inspect.json")]);
        assert_eq!(std::fs::read_to_string(&written[0]).unwrap(), "{\n  \"a\": 1\n}\n");
        // Existing files are kept unless overwriting is allowed.
        assert!(write_set(&dir, false, &input, "poster", &v, &[&INSPECT_JSON]).is_err());
        assert!(write_set(&dir, true, &input, "poster", &v, &[&INSPECT_JSON]).is_ok());
    }
}
