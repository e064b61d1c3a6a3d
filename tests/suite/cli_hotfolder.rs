//! `platesmith hotfolder` driven as a shop would: the real binary on a folder
//! of files made here, with `--once`, with instances running in the
//! background that are signalled (SIGTERM) or killed (SIGKILL), and with two
//! instances on one folder.
//!
//! Every wait has a deadline and every spawned process is killed when a test
//! ends. Outside references: POSIX rename(2) and flock semantics (the claim
//! and lock protocol under test), the TIFF 6.0 specification §16 (the
//! composite is PhotometricInterpretation 5, Separated, with 4 samples), read
//! back with the image-rs `tiff` decoder, and ISO/IEC 15948 (PNG) for the
//! fixtures written with the `png` encoder.

use std::collections::{BTreeMap, BTreeSet};
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, ExitStatus, Stdio};
use std::time::{Duration, Instant};

const BIN: &str = env!("CARGO_BIN_EXE_platesmith");
const DELAY_ENV: &str = "PLATESMITH_HOTFOLDER_JOB_DELAY_MS";
/// A deadline long enough for a loaded 2-core machine; only a hang reaches it.
const DEADLINE: Duration = Duration::from_secs(120);

use crate::rng::SplitMix64 as Rng;

/// An 8-bit RGB PNG of a colour ramp (ISO/IEC 15948 through the `png` encoder).
fn png_bytes(width: u32, height: u32, seed: u64) -> Vec<u8> {
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, width, height);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        let mut w = enc.write_header().unwrap();
        let data: Vec<u8> = (0..height)
            .flat_map(|y| {
                (0..width).flat_map(move |x| {
                    [
                        (x * 255 / width.max(1)) as u8,
                        (y * 255 / height.max(1)) as u8,
                        (seed * 37 % 256) as u8,
                    ]
                })
            })
            .collect();
        w.write_image_data(&data).unwrap();
    }
    out
}

/// An 8-bit RGB TIFF (TIFF 6.0 baseline RGB, through the `tiff` encoder).
fn tiff_bytes(width: u32, height: u32, seed: u64) -> Vec<u8> {
    let mut out = std::io::Cursor::new(Vec::new());
    let data: Vec<u8> = (0..width * height)
        .flat_map(|i| [(i * 7 % 256) as u8, (seed * 50 % 256) as u8, (i % 200) as u8])
        .collect();
    tiff::encoder::TiffEncoder::new(&mut out)
        .unwrap()
        .write_image::<tiff::encoder::colortype::RGB8>(width, height, &data)
        .unwrap();
    out.into_inner()
}

/// A hot folder in a temporary directory, with a fast ticket.
struct Hot {
    _tmp: tempfile::TempDir,
    dir: PathBuf,
}

impl Hot {
    fn new() -> Hot {
        let tmp = tempfile::tempdir().unwrap();
        let dir = tmp.path().join("hot");
        fs::create_dir_all(dir.join("in")).unwrap();
        // A small table keeps the jobs quick; the ticket is picked up as DIR/ticket.toml.
        fs::write(dir.join("ticket.toml"), "[model]\ntable_grid = 9\n").unwrap();
        Hot { _tmp: tmp, dir }
    }
    fn path(&self, rel: &str) -> PathBuf {
        self.dir.join(rel)
    }
    fn put(&self, name: &str, bytes: &[u8]) {
        fs::write(self.path("in").join(name), bytes).unwrap();
    }
    fn names(&self, rel: &str) -> BTreeSet<String> {
        match fs::read_dir(self.path(rel)) {
            Ok(rd) => rd.map(|e| e.unwrap().file_name().to_string_lossy().to_string()).collect(),
            Err(_) => BTreeSet::new(),
        }
    }
    /// Names in a folder that are not hidden.
    fn visible(&self, rel: &str) -> BTreeSet<String> {
        self.names(rel).into_iter().filter(|n| !n.starts_with('.')).collect()
    }
    fn log(&self) -> String {
        fs::read_to_string(self.path("hotfolder.log")).unwrap_or_default()
    }
    /// Log lines split into fields: time, event, file, result, duration, instance.
    fn log_lines(&self) -> Vec<Vec<String>> {
        self.log().lines().map(|l| l.split('\t').map(str::to_string).collect()).collect()
    }
    fn command(&self, extra: &[&str]) -> Command {
        let mut c = Command::new(BIN);
        c.arg("hotfolder").arg(&self.dir).args(extra).env_remove(DELAY_ENV);
        c
    }
    fn once(&self, extra: &[&str]) -> (ExitStatus, String) {
        let settle: &[&str] = if extra.contains(&"--settle") { &[] } else { &["--settle", "0.2"] };
        let mut c = self.command(&[&["--once"], settle, extra].concat());
        let child = c.stdout(Stdio::null()).stderr(Stdio::piped()).spawn().unwrap();
        let mut running = Running(Some(child));
        let status = running.wait(DEADLINE).expect("hotfolder --once did not finish before the deadline");
        let mut err = String::new();
        if let Some(mut e) = running.0.as_mut().and_then(|c| c.stderr.take()) {
            std::io::Read::read_to_string(&mut e, &mut err).unwrap();
        }
        (status, err)
    }
    fn spawn(&self, extra: &[&str], delay_ms: Option<u64>) -> Running {
        let mut c = self.command(extra);
        if let Some(d) = delay_ms {
            c.env(DELAY_ENV, d.to_string());
        }
        Running(Some(c.stdout(Stdio::null()).stderr(Stdio::null()).spawn().unwrap()))
    }
}

/// A spawned instance, killed (SIGKILL) and reaped when dropped.
struct Running(Option<Child>);

impl Running {
    fn pid(&self) -> u32 {
        self.0.as_ref().unwrap().id()
    }
    fn signal(&self, name: &str) {
        let ok = Command::new("kill")
            .args(["-s", name, &self.pid().to_string()])
            .status()
            .unwrap()
            .success();
        assert!(ok, "kill -s {name} failed");
    }
    /// Waits for the exit, up to `limit`.
    fn wait(&mut self, limit: Duration) -> Option<ExitStatus> {
        let child = self.0.as_mut()?;
        let end = Instant::now() + limit;
        loop {
            if let Some(s) = child.try_wait().unwrap() {
                return Some(s);
            }
            if Instant::now() > end {
                return None;
            }
            std::thread::sleep(Duration::from_millis(20));
        }
    }
}

impl Drop for Running {
    fn drop(&mut self) {
        if let Some(mut c) = self.0.take() {
            let _ = c.kill();
            let _ = c.wait();
        }
    }
}

/// Polls `cond` until it holds or the deadline passes.
fn wait_until(what: &str, mut cond: impl FnMut() -> bool) {
    let end = Instant::now() + DEADLINE;
    while !cond() {
        assert!(Instant::now() < end, "gave up waiting: {what}");
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// Checks `out/<folder>/`: its record lists exactly its files, every file is
/// there, the composite is a Separated 4-sample TIFF of the input's size,
/// there are four plates, and the summary names the input.
fn assert_complete_output(hot: &Hot, folder: &str, input: &str, size: (u32, u32)) -> serde_json::Value {
    let dir = hot.path("out").join(folder);
    // The files inside are named after the input.
    let stem = Path::new(input).file_stem().unwrap().to_str().unwrap();
    let record: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(dir.join("hotfolder.json")).unwrap_or_else(|e| panic!("{stem}: no record: {e}"))).unwrap();
    assert_eq!(record["input"], input);
    assert_eq!(record["result"], "done");
    let mut listed: BTreeSet<String> = record["outputs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    listed.insert("hotfolder.json".into());
    let present: BTreeSet<String> = fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    assert_eq!(present, listed, "{stem}: files present vs listed (no temporary or extra files)");
    for ink in ["C", "M", "Y", "K"] {
        assert!(present.contains(&format!("{stem}.{ink}.tif")), "{stem}: plate {ink}");
    }
    // TIFF 6.0 §16: PhotometricInterpretation 5 (Separated), 4 samples per pixel.
    let mut dec = tiff::decoder::Decoder::new(fs::File::open(dir.join(format!("{stem}.cmyk.tif"))).unwrap()).unwrap();
    assert_eq!(dec.dimensions().unwrap(), size, "{stem}: composite size");
    assert_eq!(dec.get_tag_u32(tiff::tags::Tag::PhotometricInterpretation).unwrap(), 5);
    assert_eq!(dec.get_tag_u32(tiff::tags::Tag::SamplesPerPixel).unwrap(), 4);
    match dec.read_image().unwrap() {
        tiff::decoder::DecodingResult::U8(v) => assert_eq!(v.len(), (size.0 * size.1 * 4) as usize),
        _ => panic!("{stem}: expected 8-bit samples"),
    }
    let summary: serde_json::Value = serde_json::from_str(&fs::read_to_string(dir.join(format!("{stem}.summary.json"))).unwrap()).unwrap();
    assert_eq!(summary["file"], input);
    assert_eq!(
        (
            summary["width"].as_u64().unwrap() as u32,
            summary["height"].as_u64().unwrap() as u32
        ),
        size
    );
    record
}

/// No instance folder, lock file or unfinished result is left.
fn assert_clean(hot: &Hot) {
    assert!(hot.names("work").is_empty(), "work/ holds {:?}", hot.names("work"));
    assert!(
        hot.names("out/.staging").is_empty(),
        "out/.staging holds {:?}",
        hot.names("out/.staging")
    );
}

#[test]
fn thirty_files_each_end_once_in_done_or_failed_with_complete_outputs() {
    let hot = Hot::new();
    let mut rng = Rng(0x5EED_0001);
    // (name, bytes, expected: Some(size) = done, None = failed)
    type Fixture = (String, Vec<u8>, Option<(u32, u32)>);
    let mut files: Vec<Fixture> = Vec::new();
    for i in 0..12u32 {
        let (w, h) = (6 + i, 5 + i % 4);
        files.push((format!("art{i:02}.png"), png_bytes(w, h, i as u64), Some((w, h))));
    }
    for i in 0..4u32 {
        files.push((format!("scan{i}.tif"), tiff_bytes(7 + i, 6, i as u64), Some((7 + i, 6))));
    }
    // Wrong extension: PNG content named .tif is read by its content.
    for i in 0..2u32 {
        files.push((format!("misnamed{i}.tif"), png_bytes(9, 4, 100 + i as u64), Some((9, 4))));
    }
    // Wrong extension: text named .png.
    for i in 0..2 {
        files.push((
            format!("notes{i}.png"),
            format!("delivery notes {i}\nplease print\n").into_bytes(),
            None,
        ));
    }
    // Corrupt: random bytes under image names.
    for (i, ext) in ["png", "tif", "jpg"].iter().enumerate() {
        let mut bytes = rng.bytes(700);
        bytes[0] = b'Z';
        files.push((format!("noise{i}.{ext}"), bytes, None));
    }
    // Truncated: the first half of a PNG and of a TIFF.
    for i in 0..2u64 {
        let full = png_bytes(20, 20, 200 + i);
        files.push((format!("cut{i}.png"), full[..full.len() / 2].to_vec(), None));
    }
    let full = tiff_bytes(30, 30, 9);
    files.push(("cut2.tif".into(), full[..full.len() / 3].to_vec(), None));
    // Zero bytes, and staying so.
    files.push(("empty0.png".into(), Vec::new(), None));
    files.push(("empty1.tif".into(), Vec::new(), None));
    // Still being written: two PNGs that grow for a while (faster than the
    // settle time) before they are complete. Taken early they would fail.
    let growing: Vec<(String, Vec<u8>)> = (0..2u64).map(|i| (format!("slow{i}.png"), png_bytes(40, 30, 300 + i))).collect();
    for (name, bytes) in &growing {
        files.push((name.clone(), bytes.clone(), Some((40, 30))));
    }
    assert_eq!(files.len(), 30);
    for (name, bytes, _) in &files {
        if !growing.iter().any(|(g, _)| g == name) {
            hot.put(name, bytes);
        }
    }
    // Hidden and temporary names are never taken.
    hot.put(".hidden.png", &png_bytes(4, 4, 1));
    hot.put("upload.png.part", &png_bytes(4, 4, 2));
    for (name, bytes) in &growing {
        hot.put(name, &bytes[..16]);
    }
    let writer = {
        let growing = growing.clone();
        let inbox = hot.path("in");
        std::thread::spawn(move || {
            let mut files: Vec<fs::File> = growing
                .iter()
                .map(|(n, _)| fs::OpenOptions::new().append(true).open(inbox.join(n)).unwrap())
                .collect();
            let mut offset = 16;
            let len = growing[0].1.len().max(growing[1].1.len());
            let step = len.div_ceil(30).max(1);
            while offset < len {
                std::thread::sleep(Duration::from_millis(60));
                for (f, (_, bytes)) in files.iter_mut().zip(&growing) {
                    if offset < bytes.len() {
                        f.write_all(&bytes[offset..(offset + step).min(bytes.len())]).unwrap();
                        f.flush().unwrap();
                    }
                }
                offset += step;
            }
        })
    };
    // The settle time (1 s) is many times the writer's step (60 ms).
    let (status, stderr) = hot.once(&["--settle", "1", "--jobs", "2"]);
    writer.join().unwrap();
    assert_eq!(status.code(), Some(1), "some files failed, so --once exits 1; stderr:\n{stderr}");

    let done = hot.visible("done");
    let failed: BTreeSet<String> = hot.visible("failed").into_iter().filter(|n| !n.ends_with(".error.txt")).collect();
    assert_eq!(
        hot.names("in"),
        [".hidden.png", "upload.png.part"].map(String::from).into(),
        "in/ holds only the hidden and temporary names, untouched"
    );
    assert_clean(&hot);
    let log = hot.log_lines();
    for (name, bytes, expect) in &files {
        let in_done = done.contains(name);
        let in_failed = failed.contains(name);
        assert!(in_done ^ in_failed, "{name}: in done {in_done}, in failed {in_failed}");
        // Exactly one result line per file in the log.
        let results = log.iter().filter(|l| l[2] == *name && (l[1] == "done" || l[1] == "failed")).count();
        assert_eq!(results, 1, "{name}: result lines in the log");
        let stem = Path::new(name).file_stem().unwrap().to_str().unwrap();
        match expect {
            Some(size) => {
                assert!(
                    in_done,
                    "{name} should be done; error: {:?}",
                    fs::read_to_string(hot.path("failed").join(format!("{name}.error.txt")))
                );
                assert_eq!(
                    &fs::read(hot.path("done").join(name)).unwrap(),
                    bytes,
                    "{name}: input moved unchanged"
                );
                assert_complete_output(&hot, stem, name, *size);
            }
            None => {
                assert!(in_failed, "{name} should have failed");
                assert_eq!(
                    &fs::read(hot.path("failed").join(name)).unwrap(),
                    bytes,
                    "{name}: input moved unchanged"
                );
                let why = fs::read_to_string(hot.path("failed").join(format!("{name}.error.txt"))).unwrap();
                assert!(why.starts_with(&format!("{name} failed")), "{why}");
                assert!(!why.contains("/work/"), "the reason names the file as it arrived: {why}");
                assert!(!hot.path("out").join(stem).exists(), "{name}: no output folder for a failed job");
            }
        }
    }
    assert_eq!(done.len(), 20);
    assert_eq!(
        hot.visible("out").len(),
        20,
        "one output folder per done file: {:?}",
        hot.visible("out")
    );
    let reason = |name: &str| fs::read_to_string(hot.path("failed").join(format!("{name}.error.txt"))).unwrap();
    assert!(reason("empty0.png").contains("empty file (0 bytes)"), "{}", reason("empty0.png"));
    assert!(reason("notes0.png").contains("text file"), "{}", reason("notes0.png"));
    assert!(reason("cut0.png").contains("truncated"), "{}", reason("cut0.png"));

    // The same name again: a new folder and a new name, never mixed or replaced.
    let again = png_bytes(5, 5, 77);
    hot.put("art00.png", &again);
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    assert_eq!(fs::read(hot.path("done/art00-2.png")).unwrap(), again);
    assert_complete_output(&hot, "art00-2", "art00.png", (5, 5));
    assert_complete_output(&hot, "art00", "art00.png", (6, 5));
}

/// A JPEG cut short with its end marker appended (written by Pillow/libjpeg, cut by
/// scripts/reference/make_input_fixtures.py) is filed under failed/ with the reason; a ticket
/// that accepts damaged data sends it to done/, and the log says what was accepted.
#[test]
fn a_jpeg_cut_short_is_filed_under_failed_unless_the_ticket_accepts_damage() {
    let cut = fs::read(Path::new(env!("CARGO_MANIFEST_DIR")).join("testdata/inputs/cut-baseline.jpg")).unwrap();
    let hot = Hot::new();
    hot.put("transfer.jpg", &cut);
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(1), "the file failed, so --once exits 1; stderr:\n{stderr}");
    assert_eq!(
        hot.visible("failed"),
        BTreeSet::from(["transfer.jpg".to_string(), "transfer.jpg.error.txt".to_string()])
    );
    assert_eq!(fs::read(hot.path("failed/transfer.jpg")).unwrap(), cut, "the input is unchanged");
    let why = fs::read_to_string(hot.path("failed/transfer.jpg.error.txt")).unwrap();
    assert!(why.contains("damaged JPEG data") && why.contains("--accept-damaged"), "{why}");
    assert!(hot.visible("out").is_empty() && hot.visible("done").is_empty());

    let hot = Hot::new();
    fs::write(
        hot.path("ticket.toml"),
        "[model]\ntable_grid = 9\n\n[limits]\naccept_damaged = true\n",
    )
    .unwrap();
    hot.put("transfer.jpg", &cut);
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    assert_eq!(hot.visible("done"), BTreeSet::from(["transfer.jpg".to_string()]));
    let log = hot.log_lines();
    let damaged = log
        .iter()
        .find(|l| l[1] == "damaged" && l[2] == "transfer.jpg")
        .unwrap_or_else(|| panic!("{}", hot.log()));
    assert!(damaged[3].contains("damaged JPEG data"), "{damaged:?}");
    let summary: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(hot.path("out/transfer/transfer.summary.json")).unwrap()).unwrap();
    let notes = summary["notes"].to_string();
    assert!(notes.contains("damaged JPEG data"), "{notes}");
}

#[test]
fn outputs_are_those_of_separate_with_the_same_ticket() {
    let hot = Hot::new();
    let bytes = png_bytes(17, 11, 5);
    hot.put("poster.png", &bytes);
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    let alone = tempfile::tempdir().unwrap();
    let input = alone.path().join("poster.png");
    fs::write(&input, &bytes).unwrap();
    let out = alone.path().join("sep");
    let st = Command::new(BIN)
        .arg("separate")
        .arg(&input)
        .arg("--ticket")
        .arg(hot.path("ticket.toml"))
        .arg("--out-dir")
        .arg(&out)
        .output()
        .unwrap();
    assert!(st.status.success(), "{}", String::from_utf8_lossy(&st.stderr));
    for f in ["poster.cmyk.tif", "poster.C.tif", "poster.K.tif"] {
        assert_eq!(
            fs::read(out.join(f)).unwrap(),
            fs::read(hot.path("out/poster").join(f)).unwrap(),
            "{f}"
        );
    }
    // The report of the hot folder's single pass (the bands inspected as they are
    // written) is that of `inspect` on the file, but for the timings and the name shown.
    let report = alone.path().join("report");
    let st = Command::new(BIN)
        .arg("inspect")
        .arg(&input)
        .arg("--ticket")
        .arg(hot.path("ticket.toml"))
        .arg("--report")
        .arg(&report)
        .output()
        .unwrap();
    assert!(st.status.code().is_some_and(|c| c < 2), "{}", String::from_utf8_lossy(&st.stderr));
    let masked = |path: PathBuf| {
        let mut v: serde_json::Value = serde_json::from_slice(&fs::read(path).unwrap()).unwrap();
        for key in ["timings", "file"] {
            v.as_object_mut().unwrap().remove(key);
        }
        v
    };
    assert_eq!(
        masked(report.join("poster.inspect.json")),
        masked(hot.path("out/poster/poster.inspect.json"))
    );
    let mut compared = 0;
    for entry in fs::read_dir(&report).unwrap() {
        let name = entry.unwrap().file_name().to_string_lossy().into_owned();
        if name.ends_with(".png") || name.ends_with(".csv") {
            assert_eq!(
                fs::read(report.join(&name)).unwrap(),
                fs::read(hot.path("out/poster").join(&name)).unwrap(),
                "{name}"
            );
            compared += 1;
        }
    }
    assert!(compared >= 3, "{compared} maps and tables compared");
}

#[test]
fn a_worker_killed_mid_job_is_finished_after_a_restart() {
    let hot = Hot::new();
    let bytes = png_bytes(12, 9, 3);
    hot.put("flyer.png", &bytes);
    // Each job waits 60 s after its steps, before its results are committed.
    let mut first = hot.spawn(&["--settle", "0.2"], Some(60_000));
    wait_until("the file is taken and its results are being written", || {
        hot.names("out/.staging").iter().any(|inst| {
            hot.names(&format!("out/.staging/{inst}"))
                .iter()
                .any(|job| hot.names(&format!("out/.staging/{inst}/{job}")).contains("flyer.summary.json"))
        })
    });
    first.signal("KILL");
    assert!(first.wait(DEADLINE).is_some());
    // The kill left the claim in work/ and nothing visible in out/.
    let instances: Vec<String> = hot.names("work").into_iter().filter(|n| !n.ends_with(".lock")).collect();
    assert_eq!(instances.len(), 1);
    assert!(hot.names(&format!("work/{}", instances[0])).contains("flyer.png"));
    assert!(hot.visible("out").is_empty(), "no half-written result in out/");
    assert!(hot.visible("done").is_empty() && hot.visible("failed").is_empty());

    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    assert_eq!(fs::read(hot.path("done/flyer.png")).unwrap(), bytes);
    assert_complete_output(&hot, "flyer", "flyer.png", (12, 9));
    assert_eq!(hot.visible("out").len(), 1);
    assert_clean(&hot);
    assert!(
        hot.log_lines().iter().any(|l| l[1] == "recover" && l[3].contains(&instances[0])),
        "{}",
        hot.log()
    );
}

#[test]
fn two_workers_on_one_folder_never_process_a_file_twice() {
    let hot = Hot::new();
    let names: Vec<String> = (0..24).map(|i| format!("card{i:02}.png")).collect();
    for (i, n) in names.iter().enumerate() {
        hot.put(n, &png_bytes(8, 6, i as u64));
    }
    // Slowed jobs (300 ms) so both instances are busy at once.
    let args = ["--once", "--settle", "0.2"];
    let mut a = hot.spawn(&args, Some(300));
    let mut b = hot.spawn(&args, Some(300));
    let sa = a.wait(DEADLINE).expect("instance A finished");
    let sb = b.wait(DEADLINE).expect("instance B finished");
    assert_eq!((sa.code(), sb.code()), (Some(0), Some(0)));
    let expected: BTreeSet<String> = names.iter().cloned().collect();
    assert_eq!(hot.visible("done"), expected, "every file once in done/, none renumbered");
    assert!(hot.visible("failed").is_empty());
    let stems: BTreeSet<String> = names.iter().map(|n| n.trim_end_matches(".png").to_string()).collect();
    assert_eq!(hot.visible("out"), stems, "one output folder per file, none renumbered");
    assert_clean(&hot);
    let log = hot.log_lines();
    let mut by_instance: BTreeMap<String, usize> = BTreeMap::new();
    for n in &names {
        let takes: Vec<&Vec<String>> = log.iter().filter(|l| l[1] == "take" && l[2] == *n).collect();
        let dones: Vec<&Vec<String>> = log.iter().filter(|l| l[1] == "done" && l[2] == *n).collect();
        assert_eq!((takes.len(), dones.len()), (1, 1), "{n}: taken and done once");
        assert_eq!(takes[0][5], dones[0][5], "{n}: done by the instance that took it");
        let record = assert_complete_output(&hot, n.trim_end_matches(".png"), n, (8, 6));
        assert!(
            record["job"].as_str().unwrap().starts_with(&format!("{}/", dones[0][5])),
            "{n}: record of the same claim"
        );
        *by_instance.entry(dones[0][5].clone()).or_default() += 1;
    }
    assert_eq!(by_instance.len(), 2, "both instances took files: {by_instance:?}");
}

#[test]
fn sigterm_finishes_the_file_in_progress_then_exits_0() {
    let hot = Hot::new();
    let first = png_bytes(10, 10, 1);
    let second = png_bytes(11, 10, 2);
    hot.put("a1.png", &first);
    let mut run = hot.spawn(&["--settle", "0.2", "--jobs", "1"], Some(2_000));
    wait_until("a1.png is taken", || {
        hot.log_lines().iter().any(|l| l[1] == "take" && l[2] == "a1.png")
    });
    hot.put("a2.png", &second);
    run.signal("TERM");
    let status = run.wait(DEADLINE).expect("exits after finishing");
    assert_eq!(status.code(), Some(0));
    assert_eq!(fs::read(hot.path("done/a1.png")).unwrap(), first);
    assert_complete_output(&hot, "a1", "a1.png", (10, 10));
    // Nothing new is taken after the signal.
    assert_eq!(fs::read(hot.path("in/a2.png")).unwrap(), second);
    assert_clean(&hot);
    let events: Vec<String> = hot.log_lines().iter().map(|l| l[1].clone()).collect();
    assert_eq!(events.last().map(String::as_str), Some("stop"), "{events:?}");
    assert!(events.contains(&"stopping".to_string()));
}

#[test]
fn a_second_signal_exits_at_once_and_a_restart_finishes_the_work() {
    let hot = Hot::new();
    let bytes = png_bytes(9, 7, 4);
    hot.put("menu.png", &bytes);
    let mut run = hot.spawn(&["--settle", "0.2"], Some(60_000));
    wait_until("menu.png is taken", || {
        hot.log_lines().iter().any(|l| l[1] == "take" && l[2] == "menu.png")
    });
    run.signal("TERM");
    wait_until("the first signal is seen", || hot.log_lines().iter().any(|l| l[1] == "stopping"));
    run.signal("TERM");
    // The job would wait 60 s more: exiting before it ends is the second signal's doing.
    let status = run.wait(Duration::from_secs(30)).expect("exits at the second signal");
    assert_eq!(status.code(), Some(143));
    assert!(hot.visible("done").is_empty() && hot.visible("out").is_empty());
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    assert_eq!(fs::read(hot.path("done/menu.png")).unwrap(), bytes);
    assert_complete_output(&hot, "menu", "menu.png", (9, 7));
    assert_clean(&hot);
}

#[test]
fn bad_settings_exit_2_naming_the_problem_and_create_nothing() {
    let hot = Hot::new();
    fs::remove_dir(hot.path("in")).unwrap();
    fs::write(hot.path("ticket.toml"), "[model]\ntable_grid = 9\nshade = 3\n").unwrap();
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(2));
    assert!(
        stderr.contains("ticket.toml") && stderr.contains("line 3") && stderr.contains("shade"),
        "{stderr}"
    );
    assert_eq!(
        hot.names(""),
        ["ticket.toml".to_string()].into(),
        "nothing created for a bad ticket"
    );

    // A ticket given by flag wins over DIR/ticket.toml; a missing one is named.
    let (status, stderr) = hot.once(&["--ticket", "/nonexistent/job.toml"]);
    assert_eq!(status.code(), Some(2));
    assert!(stderr.contains("/nonexistent/job.toml"), "{stderr}");

    // A rule inspect cannot evaluate is named with the ticket's line.
    fs::write(
        hot.path("ticket.toml"),
        "[model]\ntable_grid = 9\n[checks]\nfail_if = [\"shade > 3\"]\n",
    )
    .unwrap();
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(2));
    assert!(stderr.contains("ticket.toml") && stderr.contains("shade"), "{stderr}");

    let (status, stderr) = hot.once(&["--jobs", "0"]);
    assert_eq!(status.code(), Some(2));
    assert!(stderr.contains("--jobs"), "{stderr}");

    let missing = hot.path("no-such-folder");
    let out = Command::new(BIN).arg("hotfolder").arg(&missing).arg("--once").output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(
        String::from_utf8_lossy(&out.stderr).contains("no-such-folder"),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(!missing.exists());
}

/// Lays out what a process killed between two steps of the protocol leaves:
/// an unlocked lock file and a work folder holding `name`.
fn dead_instance(hot: &Hot, id: &str, name: &str, bytes: &[u8]) -> PathBuf {
    for d in ["work", "out", "done", "failed"] {
        fs::create_dir_all(hot.path(d)).unwrap();
    }
    fs::write(hot.path("work").join(format!("{id}.lock")), format!("{id}\n")).unwrap();
    let dir = hot.path("work").join(id);
    fs::create_dir(&dir).unwrap();
    fs::write(dir.join(name), bytes).unwrap();
    dir.join(name)
}

#[test]
fn a_crash_after_the_results_were_committed_finishes_without_processing_again() {
    let hot = Hot::new();
    let bytes = png_bytes(8, 8, 8);
    hot.put("label.png", &bytes);
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    // Make it look as if the instance died after renaming its results into
    // out/ and before moving the input: the record names that claim.
    let id = "gone-4242-abc";
    fs::remove_file(hot.path("done/label.png")).unwrap();
    let left = dead_instance(&hot, id, "label.png", &bytes);
    let record_path = hot.path("out/label/hotfolder.json");
    let mut record: serde_json::Value = serde_json::from_str(&fs::read_to_string(&record_path).unwrap()).unwrap();
    record["job"] = format!("{id}/label.png").into();
    fs::write(&record_path, serde_json::to_string(&record).unwrap()).unwrap();
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    assert!(!left.exists());
    assert_eq!(fs::read(hot.path("done/label.png")).unwrap(), bytes);
    assert_eq!(hot.visible("out"), ["label".to_string()].into(), "not processed a second time");
    assert_clean(&hot);
}

#[test]
fn a_crash_between_link_and_unlink_leaves_the_file_moved_once() {
    let hot = Hot::new();
    let bytes = png_bytes(8, 8, 9);
    let id = "gone-4343-def";
    let left = dead_instance(&hot, id, "badge.png", &bytes);
    // The move to done/ made its link and died before the unlink.
    fs::hard_link(&left, hot.path("done/badge.png")).unwrap();
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    assert!(!left.exists());
    assert_eq!(hot.visible("done"), ["badge.png".to_string()].into());
    assert!(hot.visible("out").is_empty(), "not processed again");
    assert_clean(&hot);
    assert!(
        hot.log_lines().iter().any(|l| l[1] == "recovered" && l[2] == "badge.png"),
        "{}",
        hot.log()
    );
}

#[test]
fn a_crash_while_moving_to_failed_leaves_one_failed_file_with_its_reason() {
    // A failure's move links the input into failed/, writes its error text,
    // then unlinks the claim. Killed after the link: no text yet, so the link
    // is undone and the file fails again, once, with its real reason.
    let hot = Hot::new();
    let bytes = b"this is not an image".to_vec();
    let left = dead_instance(&hot, "gone-4444-aaa", "scrap.png", &bytes);
    fs::hard_link(&left, hot.path("failed/scrap.png")).unwrap();
    // Killed after the text: the move is complete but for the unlink.
    let left2 = dead_instance(&hot, "gone-4545-bbb", "torn.png", &bytes);
    fs::hard_link(&left2, hot.path("failed/torn.png")).unwrap();
    fs::write(hot.path("failed/torn.png.error.txt"), "torn.png failed: written before the crash\n").unwrap();
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(1), "a file failed, so --once exits 1; stderr:\n{stderr}");
    assert!(!left.exists() && !left2.exists());
    let expected: BTreeSet<String> = ["scrap.png", "scrap.png.error.txt", "torn.png", "torn.png.error.txt"]
        .map(String::from)
        .into();
    assert_eq!(
        hot.visible("failed"),
        expected,
        "each input once in failed/, each with its text, none renumbered"
    );
    assert_eq!(fs::read(hot.path("failed/scrap.png")).unwrap(), bytes, "the input is unchanged");
    let why = fs::read_to_string(hot.path("failed/scrap.png.error.txt")).unwrap();
    assert!(
        why.starts_with("scrap.png failed") && why.contains("Nothing was written to out/"),
        "{why}"
    );
    assert_eq!(
        fs::read_to_string(hot.path("failed/torn.png.error.txt")).unwrap(),
        "torn.png failed: written before the crash\n",
        "a complete move is not redone"
    );
    assert!(hot.visible("out").is_empty());
    assert_clean(&hot);
    let log = hot.log_lines();
    assert!(
        log.iter()
            .any(|l| l[1] == "recovered" && l[2] == "scrap.png" && l[3].contains("without its error text")),
        "{}",
        hot.log()
    );
    assert!(log.iter().any(|l| l[1] == "failed" && l[2] == "scrap.png"), "{}", hot.log());
    assert!(!log.iter().any(|l| l[1] == "failed" && l[2] == "torn.png"), "{}", hot.log());
}

#[test]
fn a_folder_of_a_live_instance_is_left_alone() {
    let hot = Hot::new();
    let bytes = png_bytes(8, 8, 10);
    hot.put("tag.png", &bytes);
    // A live instance holds its claim while its job runs (60 s).
    let _live = hot.spawn(&["--settle", "0.2"], Some(60_000));
    wait_until("tag.png is taken", || {
        hot.log_lines().iter().any(|l| l[1] == "take" && l[2] == "tag.png")
    });
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    assert!(
        hot.visible("done").is_empty() && hot.visible("out").is_empty(),
        "the other instance's file was not taken"
    );
    assert_eq!(hot.log_lines().iter().filter(|l| l[1] == "take" && l[2] == "tag.png").count(), 1);
}

/// Every job is inspected: the report sits beside the plates, and the
/// ticket's `[checks] fail_if` rules decide between done/ and failed/ (the
/// failed rule named in the error text), the outputs kept either way.
#[test]
fn the_tickets_rules_judge_each_file_and_the_inspection_report_is_kept() {
    let hot = Hot::new();
    // Random pixels always carry some ink: a total of more than 1 % fails.
    fs::write(
        hot.path("ticket.toml"),
        "[model]\ntable_grid = 9\n[checks]\nfail_if = [\"tac>1\"]\n",
    )
    .unwrap();
    hot.put("heavy.png", &png_bytes(16, 12, 7));
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(1), "a failed rule fails the run: {stderr}");
    assert_eq!(
        hot.visible("failed"),
        ["heavy.png".to_string(), "heavy.png.error.txt".to_string()].into()
    );
    let why = fs::read_to_string(hot.path("failed/heavy.png.error.txt")).unwrap();
    assert!(why.contains("tac>1"), "the error text names the rule: {why}");
    let kept = hot.visible("out/heavy");
    for f in [
        "heavy.cmyk.tif",
        "heavy.inspect.json",
        "heavy.inspect.html",
        "heavy.regions.csv",
        "heavy.ink-map.png",
        "heavy.de-map.png",
    ] {
        assert!(kept.contains(f), "out/heavy holds {kept:?}, not {f}");
    }
    let report: serde_json::Value = serde_json::from_str(&fs::read_to_string(hot.path("out/heavy/heavy.inspect.json")).unwrap()).unwrap();
    assert_eq!(report["file"], "heavy.png");
    assert_eq!(report["pass"], false);

    // The same file under a rule it meets goes to done/, with its report.
    fs::write(
        hot.path("ticket.toml"),
        "[model]\ntable_grid = 9\n[checks]\nfail_if = [\"tac>400\"]\n",
    )
    .unwrap();
    hot.put("light.png", &png_bytes(16, 12, 7));
    let (status, stderr) = hot.once(&[]);
    assert_eq!(status.code(), Some(0), "{stderr}");
    assert!(hot.visible("done").contains("light.png"));
    let record = assert_complete_output(&hot, "light", "light.png", (16, 12));
    assert_eq!(record["result"], "done");
    let report: serde_json::Value = serde_json::from_str(&fs::read_to_string(hot.path("out/light/light.inspect.json")).unwrap()).unwrap();
    assert_eq!(report["pass"], true);
    assert_eq!(report["kind"], "rgb");
    assert_clean(&hot);
}
