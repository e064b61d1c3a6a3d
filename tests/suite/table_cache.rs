//! The persistent table cache through the real binary: a hit gives the same
//! files as a miss and as a run without the cache, a damaged entry is
//! rebuilt with a note, several processes fill one folder at once, the size
//! limit evicts, `--no-cache` leaves the folder alone, a changed setting
//! misses, and two pictures share the picture-independent table base (the
//! entry of the default perceptual intent from the picture's own gamut).
//!
//! These check the program against itself (the cache must not change what
//! is printed); the entries' checksum is SHA-256 (FIPS 180-4, checked
//! against its published "abc" example in `src/cache/key.rs`), the inputs
//! are PNG (ISO/IEC 15948) files of the synthetic coastal scene
//! (`tests/support/scene.rs`), whose saturated ramp leaves the press gamut,
//! so its picture-adaptive mapping compresses.

use crate::scene::{SCENE_H, SCENE_W, scene};
use assert_cmd::Command;
use std::path::{Path, PathBuf};

/// A small table grid keeps the builds short; the cache treats every grid alike.
const GRID: &str = "9";

fn scene_png(path: &Path) {
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, SCENE_W as u32, SCENE_H as u32);
        enc.set_color(png::ColorType::Rgb);
        let mut wr = enc.write_header().unwrap();
        wr.write_image_data(&scene()).unwrap();
        wr.finish().unwrap();
    }
    std::fs::write(path, out).unwrap();
}

/// A temporary folder with the scene as `coast.png` and the path of a cache folder in it (not made).
fn workspace() -> (tempfile::TempDir, PathBuf, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("coast.png");
    scene_png(&input);
    let cache = dir.path().join("cache");
    (dir, input, cache)
}

struct Run {
    files: Vec<(String, Vec<u8>)>,
    summary: serde_json::Value,
}

/// The `separate` process of one run, with the cache in `cache`.
fn separate_process(cache: &Path, input: &Path, out: &Path, extra: &[&str]) -> std::process::Command {
    let mut cmd = std::process::Command::new(assert_cmd::cargo::cargo_bin("platesmith"));
    cmd.env("PLATESMITH_CACHE_DIR", cache)
        .env_remove("PLATESMITH_CACHE_LIMIT_MIB")
        .arg("separate")
        .arg(input)
        .arg("--out-dir")
        .arg(out)
        .args(["--table-grid", GRID, "--force"])
        .args(extra);
    cmd
}

fn separate_cmd(cache: &Path, input: &Path, out: &Path, extra: &[&str]) -> Command {
    Command::from_std(separate_process(cache, input, out, extra))
}

/// Separates `input` into `out` with the cache in `cache`; the composite and
/// plates by name, and the summary.
fn separate(cache: &Path, input: &Path, out: &Path, extra: &[&str]) -> Run {
    separate_cmd(cache, input, out, extra).assert().success();
    let stem = input.file_stem().unwrap().to_string_lossy().into_owned();
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(out)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "tif"))
        .map(|p| (p.file_name().unwrap().to_string_lossy().into_owned(), std::fs::read(&p).unwrap()))
        .collect();
    files.sort();
    let summary = serde_json::from_slice(&std::fs::read(out.join(format!("{stem}.summary.json"))).unwrap()).unwrap();
    Run { files, summary }
}

fn table_source(run: &Run) -> &str {
    run.summary["timings"]["table_source"].as_str().unwrap()
}

fn notes(run: &Run) -> Vec<String> {
    run.summary["notes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|n| n.as_str().unwrap().to_string())
        .collect()
}

fn entries(cache: &Path, prefix: &str) -> Vec<PathBuf> {
    let mut found: Vec<PathBuf> = match std::fs::read_dir(cache) {
        Ok(dir) => dir
            .map(|e| e.unwrap().path())
            .filter(|p| p.file_name().unwrap().to_string_lossy().starts_with(prefix))
            .collect(),
        Err(_) => Vec::new(),
    };
    found.sort();
    found
}

#[test]
fn a_cache_hit_writes_the_same_files_as_a_miss_and_as_no_cache() {
    let (dir, input, cache) = workspace();
    let unused = dir.path().join("unused");
    let plain = separate(&unused, &input, &dir.path().join("plain"), &["--no-cache"]);
    assert!(!unused.exists(), "--no-cache wrote into the cache folder");
    let cold = separate(&cache, &input, &dir.path().join("cold"), &[]);
    let warm = separate(&cache, &input, &dir.path().join("warm"), &[]);
    assert_eq!(plain.files.len(), 5, "composite and four plates");
    for (run, name) in [(&cold, "cold"), (&warm, "warm")] {
        assert_eq!(run.files.len(), plain.files.len());
        for ((a, bytes_a), (b, bytes_b)) in plain.files.iter().zip(&run.files) {
            assert_eq!(a, b);
            assert!(bytes_a == bytes_b, "{name} run: {a} differs from the run without the cache");
        }
    }
    assert_eq!(table_source(&plain), "built");
    assert_eq!(table_source(&cold), "built");
    assert_eq!(table_source(&warm), "cached");
    assert_eq!(warm.summary["timings"]["profile_source"], "cached");
    assert_eq!(cold.summary["settings"], warm.summary["settings"]);
    // The picture-independent base and the picture's finished table.
    assert_eq!(entries(&cache, "table-base-").len(), 1);
    assert_eq!(entries(&cache, "table-").len(), 2);
    assert_eq!(entries(&cache, "profile-").len(), 1);
}

/// The colorimetric intent and compression from the whole source space
/// depend on no picture: their whole table is the entry, and a hit writes
/// the files of a miss.
#[test]
fn a_table_that_depends_on_no_picture_is_its_own_entry() {
    let (dir, input, cache) = workspace();
    for extra in [&["--intent", "relative"][..], &["--compress-from", "space"]] {
        let plain = separate(
            &dir.path().join("unused"),
            &input,
            &dir.path().join("plain"),
            &[&["--no-cache"], extra].concat(),
        );
        let cold = separate(&cache, &input, &dir.path().join("cold"), extra);
        let warm = separate(&cache, &input, &dir.path().join("warm"), extra);
        assert_eq!((table_source(&cold), table_source(&warm)), ("built", "cached"), "{extra:?}");
        assert!(cold.files == plain.files && warm.files == plain.files, "{extra:?}");
    }
    assert_eq!(entries(&cache, "table-base-").len(), 0);
    assert_eq!(entries(&cache, "table-").len(), 2);
}

/// The entries of the scene's table, damaged in turn: its finished table
/// (rebuilt from the cached base), the picture-independent base (rebuilt
/// when the finished table is gone too, so that the run needs it) and the
/// press gamut's boundary (rebuilt whenever a run starts).
#[test]
fn a_damaged_entry_is_rebuilt_with_a_note() {
    let (dir, input, cache) = workspace();
    let first = separate(&cache, &input, &dir.path().join("first"), &[]);
    let base = entries(&cache, "table-base-").pop().unwrap();
    let table = entries(&cache, "table-").into_iter().find(|p| *p != base).unwrap();
    let gamut = entries(&cache, "press-gamut-").pop().unwrap();
    for (entry, what, source) in [
        (&table, "table ", "cached"),
        (&base, "table base ", "built"),
        (&gamut, "press gamut ", "cached"),
    ] {
        let good = std::fs::read(entry).unwrap();
        let flipped = {
            let mut b = good.clone();
            let at = b.len() - 1000;
            b[at] ^= 0x01;
            b
        };
        for (damage, bytes) in [("a flipped bit", flipped), ("a truncated file", good[..good.len() / 2].to_vec())] {
            std::fs::write(entry, &bytes).unwrap();
            if entry == &base {
                std::fs::remove_file(&table).unwrap();
            }
            let run = separate(&cache, &input, &dir.path().join("again"), &[]);
            assert_eq!(table_source(&run), source, "{what}{damage}");
            let prefix = format!("cached {what}");
            assert!(
                notes(&run)
                    .iter()
                    .any(|n| n.starts_with(&prefix) && n.contains(" was damaged (") && n.ends_with("); rebuilt")),
                "{what}{damage}: {:?}",
                notes(&run)
            );
            assert_eq!(run.files, first.files, "{what}{damage}");
            // The rebuilt entry replaced the damaged one.
            assert_eq!(std::fs::read(entry).unwrap(), good, "{what}{damage}");
            let next = separate(&cache, &input, &dir.path().join("next"), &[]);
            assert_eq!(table_source(&next), "cached", "{what}{damage}");
            assert!(!notes(&next).iter().any(|n| n.contains("damaged")));
        }
    }
}

#[test]
fn several_processes_fill_one_cache_folder_at_once() {
    let (dir, input, cache) = workspace();
    // Two settings, each run by two processes at the same time.
    let settings: [&[&str]; 4] = [&[], &["--tac", "280"], &[], &["--tac", "280"]];
    let children: Vec<_> = settings
        .iter()
        .enumerate()
        .map(|(i, extra)| {
            let out = dir.path().join(format!("out{i}"));
            separate_process(&cache, &input, &out, extra)
                .stdout(std::process::Stdio::null())
                .spawn()
                .unwrap()
        })
        .collect();
    for mut child in children {
        assert!(child.wait().unwrap().success());
    }
    let read = |i: usize| std::fs::read(dir.path().join(format!("out{i}/coast.cmyk.tif"))).unwrap();
    assert!(read(0) == read(2) && read(1) == read(3));
    assert!(read(0) != read(1));
    // One base, table, profile and press gamut per setting, no partial
    // files left, each entry whole.
    assert_eq!(entries(&cache, "table-base-").len(), 2);
    assert_eq!(entries(&cache, "table-").len(), 4);
    assert_eq!(entries(&cache, "profile-").len(), 2);
    assert_eq!(entries(&cache, "press-gamut-").len(), 2);
    assert_eq!(std::fs::read_dir(&cache).unwrap().count(), 8);
    for (i, extra) in settings.iter().enumerate().take(2) {
        let run = separate(&cache, &input, &dir.path().join("check"), extra);
        assert_eq!(table_source(&run), "cached");
        assert_eq!(run.summary["timings"]["profile_source"], "cached");
        assert!(!notes(&run).iter().any(|n| n.contains("cache")), "{:?}", notes(&run));
        assert!(run.files.iter().any(|(name, bytes)| name == "coast.cmyk.tif" && *bytes == read(i)));
    }
}

#[test]
fn the_size_limit_evicts_the_least_recently_used_entries() {
    let (dir, input, cache) = workspace();
    // 2 MiB holds one small table and its profile (about 1.2 MB), not two:
    // each run evicts the oldest entries of the runs before it.
    for tac in ["300", "290", "280"] {
        separate_cmd(&cache, &input, &dir.path().join("out"), &["--tac", tac])
            .env("PLATESMITH_CACHE_LIMIT_MIB", "2")
            .assert()
            .success();
        let used: u64 = std::fs::read_dir(&cache)
            .unwrap()
            .map(|e| {
                use std::os::unix::fs::MetadataExt;
                e.unwrap().metadata().unwrap().blocks() * 512
            })
            .sum();
        assert!(used <= 2 << 20, "{used} bytes in the cache folder after --tac {tac}");
    }
    // The last run's entries are kept, the first run's profile is gone.
    let last = separate(&cache, &input, &dir.path().join("last"), &["--tac", "280"]);
    assert_eq!(table_source(&last), "cached");
    assert_eq!(last.summary["timings"]["profile_source"], "cached");
    let first = separate(&cache, &input, &dir.path().join("first"), &["--tac", "300"]);
    assert_eq!(first.summary["timings"]["profile_source"], "built");
}

#[test]
fn a_changed_setting_misses_and_the_same_settings_hit() {
    let (dir, input, cache) = workspace();
    separate(&cache, &input, &dir.path().join("base"), &[]);
    for extra in [
        &["--gcr", "40"][..],
        &["--intent", "relative"],
        &["--compress-from", "space"],
        &["--condition", "uncoated-offset"],
        &["--source-space", "display-p3"],
    ] {
        let run = separate(&cache, &input, &dir.path().join("changed"), extra);
        assert_eq!(table_source(&run), "built", "{extra:?}");
    }
    let again = separate(&cache, &input, &dir.path().join("again"), &[]);
    assert_eq!(table_source(&again), "cached");
}

#[test]
fn an_unwritable_cache_folder_never_fails_a_job() {
    let (dir, input, _) = workspace();
    // A file where the folder should be: it can be neither read as a folder nor made.
    let blocked = dir.path().join("blocked");
    std::fs::write(&blocked, b"not a folder").unwrap();
    let run = separate(&blocked, &input, &dir.path().join("out"), &[]);
    assert_eq!(table_source(&run), "built");
    assert!(
        notes(&run).iter().any(|n| n.contains("going on without the cache")),
        "{:?}",
        notes(&run)
    );
    let plain = separate(&blocked, &input, &dir.path().join("plain"), &["--no-cache"]);
    assert_eq!(run.files, plain.files);
    assert_eq!(std::fs::read(&blocked).unwrap(), b"not a folder");
}

/// Two pictures of one source that leave the press gamut in different
/// places share the picture-independent table base: the second one finds
/// it in the folder (`cached`), only its own step runs, and its files are
/// the files of a run without the cache. A picture inside the gamut (the
/// scene without its saturated ramp) shares it too.
#[test]
fn two_pictures_share_the_picture_independent_base() {
    let (dir, input, cache) = workspace();
    let first = separate(&cache, &input, &dir.path().join("first"), &[]);
    assert_eq!(table_source(&first), "built");
    assert_eq!(entries(&cache, "table-base-").len(), 1);
    // The scene with its saturated ramp pulled to mid gray: it reaches beyond
    // the press gamut elsewhere or nowhere, so its mapping differs.
    let mut pixels = scene();
    for row in crate::scene::RAMP_ROWS {
        for v in &mut pixels[3 * SCENE_W * row..3 * SCENE_W * (row + 1)] {
            *v = 128 + *v / 8;
        }
    }
    let other = dir.path().join("harbour.png");
    {
        let mut out = Vec::new();
        let mut enc = png::Encoder::new(&mut out, SCENE_W as u32, SCENE_H as u32);
        enc.set_color(png::ColorType::Rgb);
        let mut wr = enc.write_header().unwrap();
        wr.write_image_data(&pixels).unwrap();
        wr.finish().unwrap();
        std::fs::write(&other, out).unwrap();
    }
    let second = separate(&cache, &other, &dir.path().join("second"), &[]);
    assert_eq!(table_source(&second), "cached", "{:?}", notes(&second));
    assert_eq!(entries(&cache, "table-base-").len(), 1, "one base for both pictures");
    assert_eq!(entries(&cache, "table-").len(), 3, "the base and each picture's finished table");
    assert!(!notes(&second).iter().any(|n| n.contains("cache")), "{:?}", notes(&second));
    let plain = separate(&dir.path().join("unused"), &other, &dir.path().join("plain"), &["--no-cache"]);
    assert_eq!(table_source(&plain), "built");
    assert!(
        second.files == plain.files,
        "the hit wrote other files than a run without the cache"
    );
    assert!(
        first.files.iter().zip(&second.files).any(|(a, b)| a.1 != b.1),
        "two different pictures"
    );
}

/// A measurement file given as the condition is fitted on load once: the
/// fit is kept in the cache folder, a hit separates to the same files as a
/// miss and as `--no-cache` (which writes no entry), and a damaged entry is
/// fitted anew with a note naming the file. The data set is FOGRA29L
/// (`testdata/characterization/`, public characterization data).
#[test]
fn a_measurement_file_as_the_condition_is_fitted_once() {
    let (dir, input, cache) = workspace();
    let data = Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/characterization/FOGRA29L.ti3");
    let condition = ["--condition", data.to_str().unwrap()];
    let unused = dir.path().join("unused");
    let plain = separate(
        &unused,
        &input,
        &dir.path().join("plain"),
        &[&condition[..], &["--no-cache"]].concat(),
    );
    assert!(!unused.exists(), "--no-cache wrote into the cache folder");
    let cold = separate(&cache, &input, &dir.path().join("cold"), &condition);
    let fitted = entries(&cache, "fitted-condition-");
    assert_eq!(fitted.len(), 1, "one fitted condition kept");
    let text = String::from_utf8(std::fs::read(&fitted[0]).unwrap()[96..].to_vec()).unwrap();
    assert!(text.contains("fitted on load") && text.contains("[correction]"), "{text}");
    let inode = |p: &Path| std::os::unix::fs::MetadataExt::ino(&std::fs::metadata(p).unwrap());
    let written = inode(&fitted[0]);
    let warm = separate(&cache, &input, &dir.path().join("warm"), &condition);
    // A hit reads the entry and leaves it (a fit would write it anew, by rename).
    assert_eq!(inode(&fitted[0]), written, "the warm run fitted again");
    for run in [&cold, &warm] {
        assert_eq!(run.files, plain.files, "the fit kept in the folder separates as a fresh one");
        // The summary names the measurement file as the condition.
        assert_eq!(run.summary["settings"]["condition"], "FOGRA29L.ti3");
    }
    // Damage the entry's payload: the next run fits anew, says so, and
    // separates the same.
    let mut bytes = std::fs::read(&fitted[0]).unwrap();
    let last = bytes.len() - 2;
    bytes[last] ^= 0x55;
    std::fs::write(&fitted[0], bytes).unwrap();
    let out = separate_cmd(&cache, &input, &dir.path().join("again"), &condition)
        .assert()
        .success();
    let stderr = String::from_utf8_lossy(&out.get_output().stderr).into_owned();
    assert!(stderr.contains("FOGRA29L.ti3") && stderr.contains("damaged"), "{stderr}");
    let again = separate(&cache, &input, &dir.path().join("again2"), &condition);
    assert_eq!(again.files, plain.files);
    assert_eq!(entries(&cache, "fitted-condition-").len(), 1);
}
