//! The one table of allowed ranges: the same range and the same wording
//! whether a value comes from a flag, a ticket or a condition file, at the
//! edges where those sources used to disagree (condition files took black
//! start up to 100 % and black shape up to 10; flags and tickets 99 % and 5).

use platesmith::press::condition_file::parse_condition;
use platesmith::settings::Percent;
use platesmith::setup::ModelInput;
use platesmith::ticket::Ticket;
use std::path::{Path, PathBuf};

fn condition_text() -> String {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/press/harbour-lane-sheetfed.toml");
    std::fs::read_to_string(path).unwrap()
}

/// The example condition with one line replaced (the line must exist).
fn condition_with(from: &str, to: &str) -> String {
    let text = condition_text();
    assert!(text.contains(from), "{from} in the example condition");
    text.replacen(from, to, 1)
}

fn line_of(text: &str, needle: &str) -> usize {
    text.lines().position(|l| l.contains(needle)).unwrap() + 1
}

fn flag_error(input: ModelInput) -> String {
    input.resolve().expect_err("the flag is out of range").to_string()
}

#[test]
fn black_start_of_100_percent_is_refused_by_every_source() {
    // Condition file: refused at its line, where before the file was taken
    // and the separator refused the job without naming the file.
    let text = condition_with("black_start = 25", "black_start = 100");
    let err = parse_condition(&text, Path::new("house.toml")).unwrap_err().to_string();
    let line = line_of(&text, "black_start = 100");
    assert_eq!(
        err,
        format!("house.toml: line {line}: black_generation.black_start = 100: allowed range is 0–99 %")
    );
    // Ticket.
    let err = Ticket::parse("[model]\nblack_start = 100\n", Path::new("job.toml"))
        .unwrap_err()
        .to_string();
    assert_eq!(err, "job.toml: line 2: model.black_start = 100: allowed range is 0–99 %");
    // Flag.
    let err = flag_error(ModelInput {
        black_start: Some(Percent(100.0)),
        ..ModelInput::default()
    });
    assert_eq!(err, "--black-start 100: allowed range is 0–99 %");
}

#[test]
fn black_start_of_99_percent_is_taken_by_every_source() {
    let text = condition_with("black_start = 25", "black_start = 99");
    let c = parse_condition(&text, Path::new("house.toml")).unwrap();
    assert_eq!(c.black.black_start, 0.99);
    let t = Ticket::parse("[model]\nblack_start = 99\n", Path::new("job.toml")).unwrap();
    assert_eq!(t.model.black_start, Some(Percent(99.0)));
    let setup = ModelInput {
        black_start: Some(Percent(99.0)),
        ..ModelInput::default()
    }
    .resolve()
    .unwrap();
    assert_eq!(setup.settings.black.black_start, 0.99);
}

#[test]
fn black_shape_above_5_is_refused_by_every_source() {
    let text = condition_with("shape = 2.0", "shape = 5.5");
    let err = parse_condition(&text, Path::new("house.toml")).unwrap_err().to_string();
    let line = line_of(&text, "shape = 5.5");
    assert_eq!(
        err,
        format!("house.toml: line {line}: black_generation.shape = 5.5: allowed range is 0.2–5")
    );
    let err = Ticket::parse("[model]\n\nblack_shape = 5.5\n", Path::new("job.toml"))
        .unwrap_err()
        .to_string();
    assert_eq!(err, "job.toml: line 3: model.black_shape = 5.5: allowed range is 0.2–5");
    let err = flag_error(ModelInput {
        black_shape: Some(5.5),
        ..ModelInput::default()
    });
    assert_eq!(err, "--black-shape 5.5: allowed range is 0.2–5");
}

#[test]
fn black_shape_of_5_and_of_0_2_is_taken_by_every_source() {
    for shape in [5.0, 0.2] {
        let text = condition_with("shape = 2.0", &format!("shape = {shape}"));
        assert_eq!(parse_condition(&text, Path::new("house.toml")).unwrap().black.shape, shape);
        let t = Ticket::parse(&format!("[model]\nblack_shape = {shape}\n"), Path::new("job.toml")).unwrap();
        assert_eq!(t.model.black_shape, Some(shape));
        let setup = ModelInput {
            black_shape: Some(shape),
            ..ModelInput::default()
        }
        .resolve()
        .unwrap();
        assert_eq!(setup.settings.black.shape, shape);
    }
}

#[test]
fn a_condition_file_at_the_edges_separates() {
    // The widest settings a condition file now takes build a separator.
    let dir = tempfile::tempdir().unwrap();
    let path: PathBuf = dir.path().join("edges.toml");
    let text = condition_with("black_start = 25", "black_start = 99").replacen("shape = 2.0", "shape = 5", 1);
    std::fs::write(&path, text).unwrap();
    let setup = ModelInput {
        condition: Some(path.to_string_lossy().into_owned()),
        ..ModelInput::default()
    }
    .resolve()
    .unwrap();
    assert_eq!((setup.settings.black.black_start, setup.settings.black.shape), (0.99, 5.0));
    setup.separator().unwrap();
}

#[test]
fn tac_gcr_and_table_grid_have_one_wording_per_source() {
    let text = condition_with("tac = 320", "tac = 99");
    let err = parse_condition(&text, Path::new("house.toml")).unwrap_err().to_string();
    assert_eq!(err, "house.toml: line 4: tac = 99: allowed range is 100–400 %");
    let err = Ticket::parse("[model]\ngcr = 101\n", Path::new("job.toml"))
        .unwrap_err()
        .to_string();
    assert_eq!(err, "job.toml: line 2: model.gcr = 101: allowed range is 0–100 %");
    let err = Ticket::parse("[model]\ntable_grid = 4\n", Path::new("job.toml"))
        .unwrap_err()
        .to_string();
    assert_eq!(err, "job.toml: line 2: model.table_grid = 4: allowed range is 5–129 nodes per axis");
    let err = flag_error(ModelInput {
        table_grid: Some(130),
        ..ModelInput::default()
    });
    assert_eq!(err, "--table-grid 130: allowed range is 5–129 nodes per axis");
    let err = flag_error(ModelInput {
        tac: Some(Percent(f64::NAN)),
        ..ModelInput::default()
    });
    assert_eq!(err, "--tac NaN: allowed range is 100–400 %");
}
