//! One run, one set of output names per input: `separate` and `inspect --report`
//! name every output after its input's stem (`x.png` → `x.cmyk.tif`,
//! `x.inspect.json` …) in one folder, so two inputs with one stem (`a/x.png
//! b/x.png`, `x.png x.tif`) or one input given twice would write the same files,
//! and the second would replace the first (with `--force`) or be refused for a
//! file the same run just wrote. The run is refused before anything is read or
//! written, with the inputs named and a way out.

use crate::error::{Error, Result};
pub use crate::job::output_stem;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Refuses `inputs` when two of them would write outputs of the same name into
/// `out_dir` (one input given twice, or two inputs with one stem), or when an
/// output of one would be another input: `names(stem)` lists the file names one
/// input writes. `what` names the outputs in the message ("the plates").
pub fn check_unique(inputs: &[PathBuf], out_dir: &Path, what: &str, names: impl Fn(&str) -> Vec<String>) -> Result<()> {
    let mut problems = Vec::new();
    // Inputs given more than once (the same file, however it is spelled).
    let identity = |p: &Path| std::fs::canonicalize(p).unwrap_or_else(|_| p.to_path_buf());
    let mut seen: BTreeMap<PathBuf, &Path> = BTreeMap::new();
    let mut distinct: Vec<&PathBuf> = Vec::new();
    for input in inputs {
        match seen.get(&identity(input)) {
            Some(first) if *first == input.as_path() => problems.push(format!("{} is given twice; give it once", input.display())),
            Some(first) => problems.push(format!(
                "{} and {} are the same file; give it once",
                first.display(),
                input.display()
            )),
            None => {
                seen.insert(identity(input), input);
                distinct.push(input);
            }
        }
    }
    // Distinct inputs with one stem.
    let mut by_stem: BTreeMap<&str, Vec<&PathBuf>> = BTreeMap::new();
    for input in &distinct {
        by_stem.entry(output_stem(input)).or_default().push(input);
    }
    for (stem, group) in by_stem.iter().filter(|(_, g)| g.len() > 1) {
        let listed: Vec<String> = group.iter().map(|p| p.display().to_string()).collect();
        problems.push(format!(
            "{} would all write {what} named {stem}.* into {}",
            listed.join(", "),
            out_dir.display()
        ));
    }
    // An output of one input that is another input.
    let out_dir_real = std::fs::canonicalize(out_dir).ok();
    if let Some(dir) = &out_dir_real {
        for input in &distinct {
            for name in names(output_stem(input)) {
                let target = dir.join(&name);
                if let Some(other) = distinct.iter().find(|o| identity(o) == target) {
                    problems.push(format!(
                        "{} would write {}, which is the input {}",
                        input.display(),
                        target.display(),
                        other.display()
                    ));
                }
            }
        }
    }
    if problems.is_empty() {
        return Ok(());
    }
    Err(Error::usage(format!(
        "nothing written: {}. Each input of a run needs a file name of its own: rename one, or run them separately with a different --out-dir each",
        problems.join("; ")
    )))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(stem: &str) -> Vec<String> {
        vec![format!("{stem}.cmyk.tif")]
    }

    #[test]
    fn distinct_stems_pass_and_shared_stems_are_named() {
        let out = Path::new("no-such-folder");
        let ok = [PathBuf::from("a/x.png"), PathBuf::from("a/y.png")];
        assert!(check_unique(&ok, out, "outputs", names).is_ok());
        let clash = [PathBuf::from("a/x.png"), PathBuf::from("b/x.png"), PathBuf::from("c/x.tif")];
        let e = check_unique(&clash, out, "outputs", names).unwrap_err().to_string();
        assert!(e.contains("a/x.png, b/x.png, c/x.tif would all write outputs named x.*"), "{e}");
        assert!(e.contains("--out-dir"), "{e}");
    }

    #[test]
    fn an_input_given_twice_is_named_once() {
        let twice = [PathBuf::from("a/x.png"), PathBuf::from("a/x.png")];
        let e = check_unique(&twice, Path::new("."), "outputs", names).unwrap_err().to_string();
        assert!(e.contains("a/x.png is given twice"), "{e}");
        assert!(!e.contains("would all write"), "{e}");
    }
}
