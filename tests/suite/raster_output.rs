//! The staged output set: no partial file after a failure, no overwrite without
//! permission, never an input written, and the set appears together on commit.

use std::fs;
use std::io::Write;
use std::path::Path;

use platesmith::Error;
use platesmith::raster::{
    CmykImage, Compression, Ink, Limits, OutputSet, Samples, TiffOptions, read_raster, write_cmyk_tiff, write_plate_png, write_plate_tiff,
};

fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn output_message(r: platesmith::Result<impl std::fmt::Debug>, want_path: &Path) -> String {
    match r {
        Err(Error::Output { path, message }) => {
            assert_eq!(path, want_path);
            message
        }
        other => panic!("expected an output error for {}, got {other:?}", want_path.display()),
    }
}

fn image(w: u32, h: u32) -> CmykImage {
    let v: Vec<u8> = (0..w * h * 4).map(|i| (i * 31 % 256) as u8).collect();
    CmykImage::new(w, h, Samples::U8(v)).unwrap()
}

#[test]
fn files_appear_only_on_commit_and_no_temporary_remains() {
    let dir = tempfile::tempdir().unwrap();
    let mut set = OutputSet::new(dir.path(), false).unwrap();
    let a = set.stage("a.txt", |w| w.write_all(b"alpha")).unwrap();
    set.stage("b.txt", |w| w.write_all(b"beta")).unwrap();
    assert_eq!(a, dir.path().join("a.txt"));
    // Staged files are hidden temporaries until commit.
    assert!(names(dir.path()).iter().all(|n| n.starts_with('.') && n.ends_with(".part")));
    let done = set.commit().unwrap();
    assert_eq!(done.len(), 2);
    assert_eq!(names(dir.path()), ["a.txt", "b.txt"]);
    assert_eq!(fs::read(dir.path().join("b.txt")).unwrap(), b"beta");
}

#[test]
fn dropping_without_commit_leaves_nothing() {
    let dir = tempfile::tempdir().unwrap();
    {
        let mut set = OutputSet::new(dir.path(), false).unwrap();
        set.stage("a.txt", |w| w.write_all(&[1; 100_000])).unwrap();
    }
    assert!(names(dir.path()).is_empty());
}

#[test]
fn existing_file_is_refused_unless_overwriting() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("job.cmyk.tif");
    fs::write(&target, b"earlier run").unwrap();
    let mut set = OutputSet::new(dir.path(), false).unwrap();
    let m = output_message(set.check("job.cmyk.tif"), &target);
    assert!(m.contains("already exists") && m.contains("--force"), "{m}");
    let mut called = false;
    let m = output_message(
        set.stage("job.cmyk.tif", |_| {
            called = true;
            Ok(())
        }),
        &target,
    );
    assert!(m.contains("already exists"));
    assert!(!called, "nothing is written for a refused target");
    assert_eq!(fs::read(&target).unwrap(), b"earlier run");

    let mut set = OutputSet::new(dir.path(), true).unwrap();
    set.stage("job.cmyk.tif", |w| w.write_all(b"new run")).unwrap();
    assert_eq!(fs::read(&target).unwrap(), b"earlier run", "replaced only on commit");
    set.commit().unwrap();
    assert_eq!(fs::read(&target).unwrap(), b"new run");
}

#[test]
fn an_input_is_never_written_even_when_overwriting() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("art.tif");
    fs::write(&input, b"the artwork").unwrap();
    fs::hard_link(&input, dir.path().join("hard.tif")).unwrap();
    #[cfg(unix)]
    std::os::unix::fs::symlink(&input, dir.path().join("link.tif")).unwrap();
    // The input named through a different spelling of the same path.
    let spelled = dir.path().join(".").join("art.tif");
    let mut set = OutputSet::new(dir.path(), true).unwrap();
    set.protect([&spelled]);
    for name in ["art.tif", "hard.tif", "link.tif"] {
        if name == "link.tif" && !cfg!(unix) {
            continue;
        }
        let m = output_message(set.stage(name, |w| w.write_all(b"plate")), &dir.path().join(name));
        assert!(m.contains("input"), "{name}: {m}");
    }
    set.commit().unwrap();
    assert_eq!(fs::read(&input).unwrap(), b"the artwork");
}

#[test]
fn a_failed_write_leaves_no_partial_file() {
    let dir = tempfile::tempdir().unwrap();
    let img = image(200, 100);
    let mut set = OutputSet::new(dir.path(), false).unwrap();
    set.fail_writes_after(10_000);
    let target = dir.path().join("job.cmyk.tif");
    let m = output_message(
        // Uncompressed, so the 80 000 bytes of samples pass the forced limit.
        set.stage("job.cmyk.tif", |w| {
            let options = TiffOptions {
                compression: Compression::None,
                ..TiffOptions::default()
            };
            write_cmyk_tiff(w, &img, &options)
        }),
        &target,
    );
    assert!(m.contains("disk full"), "{m}");
    assert!(names(dir.path()).is_empty(), "left behind: {:?}", names(dir.path()));
}

#[test]
fn a_failure_midway_through_a_set_keeps_earlier_files_out_of_place() {
    let dir = tempfile::tempdir().unwrap();
    let old = dir.path().join("job.K.tif");
    fs::write(&old, b"previous plate").unwrap();
    let img = image(300, 200);
    let mut set = OutputSet::new(dir.path(), true).unwrap();
    // The composite (240 kB) fits; the plates, written after it, hit the limit as a full disk would.
    set.stage("job.cmyk.tif", |w| write_cmyk_tiff(w, &img, &TiffOptions::default()))
        .unwrap();
    set.fail_writes_after(1000);
    let err = set.stage("job.K.tif", |w| write_plate_tiff(w, &img, Ink::Black, &TiffOptions::default()));
    assert!(err.is_err());
    drop(set); // the job gives up
    assert_eq!(names(dir.path()), ["job.K.tif"]);
    assert_eq!(fs::read(&old).unwrap(), b"previous plate");
}

#[test]
fn a_target_that_appears_before_commit_is_not_clobbered() {
    let dir = tempfile::tempdir().unwrap();
    let mut set = OutputSet::new(dir.path(), false).unwrap();
    set.stage("a.txt", |w| w.write_all(b"ours a")).unwrap();
    set.stage("b.txt", |w| w.write_all(b"ours b")).unwrap();
    fs::write(dir.path().join("b.txt"), b"someone else's").unwrap();
    let m = output_message(set.commit(), &dir.path().join("b.txt"));
    assert!(m.contains("appeared"), "{m}");
    // All or nothing: a.txt was taken back, b.txt is the other writer's, no temporaries.
    assert_eq!(names(dir.path()), ["b.txt"]);
    assert_eq!(fs::read(dir.path().join("b.txt")).unwrap(), b"someone else's");
}

#[test]
fn bad_output_folders_and_names() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("separated");
    let m = output_message(OutputSet::new(&missing, false), &missing);
    assert!(m.contains("does not exist"), "{m}");
    let file = dir.path().join("plain");
    fs::write(&file, b"").unwrap();
    assert!(output_message(OutputSet::new(&file, false), &file).contains("not a folder"));
    let mut set = OutputSet::new(dir.path(), false).unwrap();
    assert!(matches!(set.stage("../escape.txt", |_| Ok(())), Err(Error::Internal(_))));
    set.stage("x.txt", |_| Ok(())).unwrap();
    assert!(output_message(set.stage("x.txt", |_| Ok(())), &dir.path().join("x.txt")).contains("twice"));
}

#[test]
fn a_whole_job_round_trip_leaves_the_input_untouched() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("poster.tif");
    let img = image(64, 40);
    {
        let mut f = fs::File::create(&input).unwrap();
        write_cmyk_tiff(&mut f, &img, &TiffOptions::default()).unwrap();
    }
    let before = fs::read(&input).unwrap();
    let raster = read_raster(&input, &Limits::default()).unwrap();
    let cmyk = CmykImage::new(raster.width, raster.height, raster.samples.clone()).unwrap();
    let mut set = OutputSet::new(dir.path(), true).unwrap();
    set.protect([&input]);
    let opts = TiffOptions {
        compression: Compression::Lzw,
        resolution: raster.resolution,
        icc_profile: None,
    };
    assert!(set.stage("poster.tif", |w| write_cmyk_tiff(w, &cmyk, &opts)).is_err());
    set.stage("poster.cmyk.tif", |w| write_cmyk_tiff(w, &cmyk, &opts)).unwrap();
    for ink in Ink::ALL {
        set.stage(&format!("poster.{}.tif", ink.letter()), |w| write_plate_tiff(w, &cmyk, ink, &opts))
            .unwrap();
        set.stage(&format!("poster.{}.png", ink.letter()), |w| {
            write_plate_png(w, &cmyk, ink, raster.resolution)
        })
        .unwrap();
    }
    assert_eq!(set.commit().unwrap().len(), 9);
    assert_eq!(fs::read(&input).unwrap(), before);
    let back = read_raster(&dir.path().join("poster.cmyk.tif"), &Limits::default()).unwrap();
    assert_eq!(back.samples, img.samples);
}
