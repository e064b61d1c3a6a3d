//! `inspect` reads, separates and checks a picture band by band: the report
//! files must not depend on the band height, the band separation must be
//! the separation `separate` makes of the whole picture, and a region that
//! crosses bands must stay one region.
//!
//! Sources: connected components under the 8-neighbourhood as defined for
//! digital pictures by Rosenfeld and Pfaltz, "Sequential operations in
//! digital picture processing", J. ACM 13 (1966), found here by a plain
//! flood fill (a breadth-first search over a pixel mask), independent of the
//! program's run-based labelling; the fine-detail rule (no square of the
//! stroke width fits into the region) is checked by trying every square.

use platesmith::inspect::{InspectOptions, InspectTimings, Inspection, inspect_file, inspect_separated};
use platesmith::job::Workshop;
use platesmith::raster::{CmykImage, Compression, Resolution, Samples, TiffOptions, write_cmyk_tiff};
use platesmith::report::folder::write_report_dir;
use platesmith::setup::{JobInput, JobKind, ModelInput};
use serde_json::Value;
use std::collections::{BTreeMap, VecDeque};
use std::path::{Path, PathBuf};
use std::time::Instant;

fn repo(path: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(path)
}

fn workshop() -> Workshop {
    let model = ModelInput::default().resolve().unwrap();
    JobInput::default().resolve(JobKind::Inspect, model).unwrap().workshop().unwrap()
}

fn options(band_rows: Option<u32>) -> InspectOptions {
    InspectOptions {
        keep_maps: true,
        small_dot_regions: true,
        band_rows,
        ..InspectOptions::default()
    }
}

/// The inspection with its timings cleared (they are the only thing that may differ).
fn without_timings(mut inspection: Inspection) -> Inspection {
    inspection.report.timings = InspectTimings {
        read_ms: 0.0,
        separate_ms: 0.0,
        analyse_ms: 0.0,
        total_ms: 0.0,
    };
    inspection
}

/// Every file of the report folder (JSON, CSV, the map PNGs, HTML), by name.
fn report_files(workshop: &Workshop, input: &Path, inspection: &Inspection) -> BTreeMap<String, Vec<u8>> {
    let dir = tempfile::tempdir().unwrap();
    let written = write_report_dir(dir.path(), false, input, inspection, &workshop.separator).unwrap();
    written
        .iter()
        .map(|p| (p.file_name().unwrap().to_string_lossy().into_owned(), std::fs::read(p).unwrap()))
        .collect()
}

/// The report files at band heights 1, 7, 64 and the whole height are the same, byte for byte.
fn same_at_every_band_height(workshop: &Workshop, input: &Path, height: u32) -> Inspection {
    let whole = without_timings(inspect_file(workshop, input, &options(Some(height))).unwrap());
    let reference = report_files(workshop, input, &whole);
    assert!(reference.len() >= 4, "{:?}", reference.keys());
    for rows in [1, 7, 64] {
        let banded = without_timings(inspect_file(workshop, input, &options(Some(rows))).unwrap());
        let files = report_files(workshop, input, &banded);
        assert_eq!(files.keys().collect::<Vec<_>>(), reference.keys().collect::<Vec<_>>());
        for (name, bytes) in &files {
            assert!(
                bytes == &reference[name],
                "{}: {name} differs with bands of {rows} rows",
                input.display()
            );
        }
    }
    whole
}

/// What each pixel of the test picture is.
#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Kind {
    Tint,
    OverInk,
    RichBlack,
    SmallDot,
}

const W: usize = 220;
const H: usize = 160;

/// Shapes that cross the rows where bands of 7 and 64 rows meet in every
/// way: U shapes and three arms whose parts join only rows later, an arch
/// that splits, blocks and one-pixel lines that touch only diagonally
/// across a band boundary (both diagonals), twins of equal size (order of
/// ties), specks; rich black as a thin stroke (fine detail), a thick block
/// and a thin stroke that joins a thick block a band later (not fine
/// detail); a strip of dots below the minimum dot. Later shapes paint over
/// earlier ones.
fn picture() -> Vec<Kind> {
    let mut k = vec![Kind::Tint; W * H];
    let mut fill = |kind: Kind, x0: usize, x1: usize, y0: usize, y1: usize| {
        for y in y0..y1 {
            for x in x0..x1 {
                k[y * W + x] = kind;
            }
        }
    };
    use Kind::*;
    // U: arms joined by a bar at rows 70..77 (after the boundary at 64).
    fill(OverInk, 10, 17, 2, 70);
    fill(OverInk, 30, 37, 2, 70);
    fill(OverInk, 10, 37, 70, 77);
    // Three arms joined at rows 66..72.
    for x in [45, 55, 65] {
        fill(OverInk, x, x + 5, 20, 66);
    }
    fill(OverInk, 45, 70, 66, 72);
    // An arch: one region that splits into two legs.
    fill(OverInk, 10, 40, 80, 86);
    fill(OverInk, 10, 15, 86, 140);
    fill(OverInk, 35, 40, 86, 140);
    // Blocks touching at one corner across rows 63/64, 6/7 and (the other diagonal) 69/70.
    fill(OverInk, 100, 110, 50, 64);
    fill(OverInk, 110, 120, 64, 80);
    fill(OverInk, 140, 150, 0, 7);
    fill(OverInk, 150, 160, 7, 20);
    fill(OverInk, 130, 138, 62, 70);
    fill(OverInk, 122, 130, 70, 78);
    // One-pixel diagonal lines, each pixel touching the next only at a corner.
    for i in 0..55 {
        fill(OverInk, 160 + i, 161 + i, 30 + i, 31 + i);
    }
    for i in 0..50 {
        fill(OverInk, 214 - i, 215 - i, 90 + i, 91 + i);
    }
    // Twins of equal size on the same rows; specks.
    fill(OverInk, 60, 68, 100, 108);
    fill(OverInk, 80, 88, 100, 108);
    fill(OverInk, 60, 63, 120, 123);
    fill(OverInk, 100, 103, 125, 127);
    // Rich black: a thin stroke across row 128, a thick block, a thin stroke joining a thick block.
    fill(RichBlack, 150, 153, 100, 150);
    fill(RichBlack, 120, 145, 110, 135);
    fill(RichBlack, 170, 173, 95, 128);
    fill(RichBlack, 165, 185, 128, 148);
    fill(SmallDot, 50, 120, 145, 155);
    k
}

fn cmyk_of(kind: Kind) -> [u8; 4] {
    match kind {
        Kind::Tint => [40, 30, 20, 0],
        Kind::OverInk => [255; 4],
        // 100 % black over 117 % C + M + Y: 218 %, under the limit.
        Kind::RichBlack => [100, 100, 100, 255],
        // 1.2 %, below the 2 % smallest dot of the default condition.
        Kind::SmallDot => [3, 0, 0, 0],
    }
}

fn rgb_of(kind: Kind) -> [u8; 3] {
    match kind {
        Kind::Tint => [200, 196, 190],
        Kind::OverInk => [0, 255, 0],
        Kind::RichBlack => [0, 0, 255],
        Kind::SmallDot => [255, 0, 255],
    }
}

/// The picture as an 8-bit CMYK TIFF at 300 ppi.
fn write_cmyk(path: &Path, kinds: &[Kind]) {
    let samples: Vec<u8> = kinds.iter().flat_map(|&k| cmyk_of(k)).collect();
    let image = CmykImage::new(W as u32, H as u32, Samples::U8(samples)).unwrap();
    let opts = TiffOptions {
        compression: Compression::None,
        resolution: Some(Resolution {
            x_ppi: 300.0,
            y_ppi: 300.0,
        }),
        icc_profile: None,
    };
    write_cmyk_tiff(&mut std::fs::File::create(path).unwrap(), &image, &opts).unwrap();
}

/// The picture as RGB PNG at 300 ppi: 8-bit RGB, or 16-bit RGBA with some transparency.
fn write_rgb(path: &Path, kinds: &[Kind], sixteen: bool) {
    let mut info = png::Info::with_size(W as u32, H as u32);
    info.pixel_dims = Some(png::PixelDimensions {
        xppu: 11811,
        yppu: 11811,
        unit: png::Unit::Meter,
    });
    let data: Vec<u8> = if sixteen {
        info.color_type = png::ColorType::Rgba;
        info.bit_depth = png::BitDepth::Sixteen;
        kinds
            .iter()
            .enumerate()
            .flat_map(|(i, &k)| {
                let [r, g, b] = rgb_of(k).map(|v| v as u16 * 257 - (i % 5) as u16 * (v > 0) as u16);
                let a: u16 = if i % W < 30 { 40_000 } else { 65_535 };
                [r, g, b, a].into_iter().flat_map(u16::to_be_bytes)
            })
            .collect()
    } else {
        info.color_type = png::ColorType::Rgb;
        info.bit_depth = png::BitDepth::Eight;
        kinds.iter().flat_map(|&k| rgb_of(k)).collect()
    };
    let file = std::fs::File::create(path).unwrap();
    let mut w = png::Encoder::with_info(std::io::BufWriter::new(file), info)
        .unwrap()
        .write_header()
        .unwrap();
    w.write_image_data(&data).unwrap();
}

/// A component's bounding box, pixel count and pixels.
type Component = ([u32; 4], u64, Vec<(usize, usize)>);

/// Connected components of the pixels of `kind` under the 8-neighbourhood,
/// by flood fill: (bounding box, pixel count, the pixels).
fn components(kinds: &[Kind], kind: &[Kind]) -> Vec<Component> {
    let mut seen = vec![false; W * H];
    let mut out = Vec::new();
    for start in 0..W * H {
        if seen[start] || !kind.contains(&kinds[start]) {
            continue;
        }
        seen[start] = true;
        let mut queue = VecDeque::from([start]);
        let mut pixels = Vec::new();
        while let Some(i) = queue.pop_front() {
            let (x, y) = (i % W, i / W);
            pixels.push((x, y));
            for dy in -1i64..=1 {
                for dx in -1i64..=1 {
                    let (nx, ny) = (x as i64 + dx, y as i64 + dy);
                    if nx < 0 || ny < 0 || nx >= W as i64 || ny >= H as i64 {
                        continue;
                    }
                    let j = ny as usize * W + nx as usize;
                    if !seen[j] && kind.contains(&kinds[j]) {
                        seen[j] = true;
                        queue.push_back(j);
                    }
                }
            }
        }
        let x0 = pixels.iter().map(|p| p.0).min().unwrap();
        let x1 = pixels.iter().map(|p| p.0).max().unwrap();
        let y0 = pixels.iter().map(|p| p.1).min().unwrap();
        let y1 = pixels.iter().map(|p| p.1).max().unwrap();
        let bbox = [x0 as u32, y0 as u32, (x1 - x0 + 1) as u32, (y1 - y0 + 1) as u32];
        out.push((bbox, pixels.len() as u64, pixels));
    }
    out
}

/// Whether some `side` × `side` square of the component's own pixels fits in it.
fn holds_a_square(pixels: &[(usize, usize)], side: usize) -> bool {
    let set: std::collections::HashSet<(usize, usize)> = pixels.iter().copied().collect();
    pixels
        .iter()
        .any(|&(x, y)| (0..side).all(|dy| (0..side).all(|dx| set.contains(&(x + dx, y + dy)))))
}

/// The expected regions of one kind in report order (largest first, then
/// top-most, then left-most): bounding box and size.
fn expected(kinds: &[Kind], kind: &[Kind], min_pixels: u64, square: Option<usize>) -> Vec<([u32; 4], u64)> {
    let mut found: Vec<([u32; 4], u64)> = components(kinds, kind)
        .into_iter()
        .filter(|(_, n, px)| *n >= min_pixels && square.is_none_or(|s| !holds_a_square(px, s)))
        .map(|(b, n, _)| (b, n))
        .collect();
    found.sort_by(|a, b| b.1.cmp(&a.1).then(a.0[1].cmp(&b.0[1])).then(a.0[0].cmp(&b.0[0])));
    found
}

fn regions_of(report: &Value, kind: &str) -> Vec<([u32; 4], u64)> {
    report["regions"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| r["kind"] == kind)
        .map(|r| {
            let b: Vec<u32> = r["bbox"].as_array().unwrap().iter().map(|v| v.as_u64().unwrap() as u32).collect();
            ([b[0], b[1], b[2], b[3]], r["pixels"].as_u64().unwrap())
        })
        .collect()
}

#[test]
fn regions_that_cross_bands_are_the_connected_components_of_a_flood_fill() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("crossing-shapes.tif");
    let kinds = picture();
    write_cmyk(&input, &kinds);
    let workshop = workshop();
    // 300 ppi: a pixel is 0.0847 mm; the default 0.25 mm² is 35 pixels, and
    // strokes under 0.5 mm are under 6 pixels.
    let (min_pixels, side) = (35, 6);
    let over = expected(&kinds, &[Kind::OverInk], min_pixels, None);
    // 400 % is rich black too (black 100 % over C + M + Y).
    let rich = expected(&kinds, &[Kind::OverInk, Kind::RichBlack], min_pixels, Some(side));
    let dots = expected(&kinds, &[Kind::SmallDot], min_pixels, None);
    // The picture is what it is meant to be: the U, the three arms, the arch
    // and the corner-touching pairs are one region each; specks are dropped;
    // of the rich black only the thin stroke and the first one-pixel
    // diagonal are fine detail (the other diagonal runs into the thick
    // block of rich black at row 128 and is part of it).
    assert_eq!(over.len(), 10, "{over:?}");
    assert!(over.contains(&([10, 2, 27, 75], 7 * 68 * 2 + 27 * 7)), "{over:?}");
    assert!(over.contains(&([100, 50, 20, 30], 10 * 14 + 10 * 16)), "{over:?}");
    assert_eq!(rich, vec![([150, 100, 3, 50], 150), ([160, 30, 55, 55], 55)], "{rich:?}");
    assert_eq!(dots.len(), 1);
    for rows in [1, 7, 64, H as u32] {
        let inspection = inspect_file(&workshop, &input, &options(Some(rows))).unwrap();
        let report = serde_json::to_value(&inspection.report).unwrap();
        assert_eq!(regions_of(&report, "over-ink"), over, "bands of {rows} rows");
        assert_eq!(regions_of(&report, "rich-black-detail"), rich, "bands of {rows} rows");
        assert_eq!(regions_of(&report, "below-min-dot"), dots, "bands of {rows} rows");
        assert_eq!(report["regions_total"], over.len() + rich.len() + dots.len());
    }
}

#[test]
fn cmyk_report_files_do_not_depend_on_the_band_height() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("crossing-shapes.tif");
    write_cmyk(&input, &picture());
    let workshop = workshop();
    same_at_every_band_height(&workshop, &input, H as u32);
    // A CMYK fixture with an alpha channel.
    same_at_every_band_height(&workshop, &repo("testdata/inputs/cmyk-alpha.tif"), 40);
}

#[test]
fn rgb_report_files_do_not_depend_on_the_band_height() {
    let dir = tempfile::tempdir().unwrap();
    let workshop = workshop();
    for sixteen in [false, true] {
        let input = dir.path().join(format!("crossing-shapes-{}.png", if sixteen { 16 } else { 8 }));
        write_rgb(&input, &picture(), sixteen);
        let whole = same_at_every_band_height(&workshop, &input, H as u32);
        let out_of_gamut = whole.report.regions.iter().filter(|r| r.kind == "out-of-gamut").count();
        assert!(out_of_gamut >= 10, "{out_of_gamut} out-of-gamut regions");
    }
}

#[test]
fn the_demo_report_files_do_not_depend_on_the_band_height() {
    let t = Instant::now();
    same_at_every_band_height(&workshop(), &repo("examples/harbour-lights.png"), 1200);
    eprintln!("demo at five band heights: {:.1} s", t.elapsed().as_secs_f64());
}

/// The band separation of a file gives the CMYK `separate` makes of the
/// whole picture: the report of the file read band by band equals that of
/// the separation in memory (the hot folder's path), for the default
/// perceptual intent, whose table comes from the picture's own colours.
#[test]
fn the_band_separation_is_the_separation_of_the_whole_picture() {
    let workshop = workshop();
    let dir = tempfile::tempdir().unwrap();
    let shapes = dir.path().join("crossing-shapes-16.png");
    write_rgb(&shapes, &picture(), true);
    for input in [repo("examples/harbour-lights.png"), shapes] {
        let banded = without_timings(inspect_file(&workshop, &input, &options(Some(64))).unwrap());
        let separated = workshop.separate_file(&input).unwrap();
        let in_memory = without_timings(inspect_separated(&workshop, &input, &separated, &options(None), Instant::now()).unwrap());
        let (a, b) = (
            report_files(&workshop, &input, &banded),
            report_files(&workshop, &input, &in_memory),
        );
        for (name, bytes) in &a {
            assert!(bytes == &b[name], "{}: {name} differs", input.display());
        }
    }
}

/// Every file a directory holds, by name; JSON with its timings removed (the only
/// thing that may differ between two runs).
fn outputs_of(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| {
            let path = e.unwrap().path();
            let name = path.file_name().unwrap().to_string_lossy().into_owned();
            let mut bytes = std::fs::read(&path).unwrap();
            if name.ends_with(".json") {
                let mut v: Value = serde_json::from_slice(&bytes).unwrap();
                v.as_object_mut().unwrap().remove("timings");
                bytes = serde_json::to_vec_pretty(&v).unwrap();
            }
            (name, bytes)
        })
        .collect()
}

/// The hot folder's single pass ([`Workshop::stream_job`] inspected by `inspect_job` as
/// it writes) gives the outputs and the report of the in-memory path it replaced
/// (`separate_file`, `write_outputs_in`, `inspect_separated`), byte for byte but the
/// timings: RGB from the picture's own gamut (8 and 16-bit), gray as neutrals, CMYK
/// re-separated. A consistency check of the streamed path against the whole-picture one.
#[test]
fn the_single_pass_of_the_hot_folder_gives_the_in_memory_outputs_and_report() {
    let dir = tempfile::tempdir().unwrap();
    let shapes = dir.path().join("crossing-shapes-16.png");
    write_rgb(&shapes, &picture(), true);
    let cmyk = dir.path().join("crossing-shapes.tif");
    write_cmyk(&cmyk, &picture());
    for input in [
        repo("examples/harbour-lights.png"),
        shapes,
        cmyk,
        repo("testdata/inputs/gray16.png"),
    ] {
        let name = input.display().to_string();
        let (whole, streamed) = (dir.path().join("whole"), dir.path().join("streamed"));
        for d in [&whole, &streamed] {
            let _ = std::fs::remove_dir_all(d);
            std::fs::create_dir_all(d).unwrap();
        }
        let in_memory = workshop();
        let separated = in_memory.separate_file(&input).unwrap();
        let place = |dir| platesmith::job::OutputPlace {
            dir,
            listed_dir: Path::new(""),
            input_shown: &input,
        };
        in_memory
            .write_outputs_in(&input, &separated, Instant::now(), &place(&whole))
            .unwrap();
        let expected = without_timings(inspect_separated(&in_memory, &input, &separated, &options(None), Instant::now()).unwrap());
        // Other band heights for the job and the check: the outputs do not depend on them.
        let shop = workshop().with_band_rows(7);
        let mut job = shop.stream_job(&input, place(&streamed), Instant::now()).unwrap();
        let got = without_timings(platesmith::inspect::inspect_job(&shop, &input, &mut job, &options(Some(13)), Instant::now()).unwrap());
        job.finish().unwrap();
        let (a, b) = (outputs_of(&whole), outputs_of(&streamed));
        assert_eq!(a.keys().collect::<Vec<_>>(), b.keys().collect::<Vec<_>>(), "{name}");
        for (file, bytes) in &a {
            assert!(bytes == &b[file], "{name}: {file} differs");
        }
        let (a, b) = (report_files(&in_memory, &input, &expected), report_files(&shop, &input, &got));
        assert_eq!(a.keys().collect::<Vec<_>>(), b.keys().collect::<Vec<_>>(), "{name}");
        for (file, bytes) in &a {
            assert!(bytes == &b[file], "{name}: report {file} differs");
        }
    }
}

/// The progress `inspect` shows on a terminal for one file: one call per band of each
/// pass (two passes when the table comes from the picture's own colours), counting up to
/// the total it announces, and the report is the one without progress.
#[test]
fn inspect_progress_counts_every_band_of_every_pass() {
    let shop = workshop();
    let dir = tempfile::tempdir().unwrap();
    let cmyk = dir.path().join("crossing-shapes.tif");
    write_cmyk(&cmyk, &picture());
    for (input, passes) in [(repo("examples/harbour-lights.png"), 2), (cmyk, 1)] {
        let calls = std::sync::Mutex::new(Vec::new());
        let opts = options(Some(64));
        let got =
            platesmith::inspect::inspect_file_with_progress(&shop, &input, &opts, &|done, total| calls.lock().unwrap().push((done, total)))
                .unwrap();
        let calls = calls.into_inner().unwrap();
        let total = calls.last().unwrap().1;
        assert_eq!(calls.last().unwrap().0, total, "{}", input.display());
        assert!(calls.iter().enumerate().all(|(i, &c)| c == (i as u64 + 1, total)), "{calls:?}");
        let (width, height) = (got.report.width, got.report.height);
        // The colour pass takes the job's bands (8-bit CMYK rows of BAND_BYTES), the check bands of 64 rows.
        let job_rows = (platesmith::job::BAND_BYTES / (width as usize * 4)) as u32;
        assert_eq!(
            total,
            u64::from(height.div_ceil(job_rows)) * (passes - 1) + u64::from(height.div_ceil(64))
        );
        let plain = without_timings(inspect_file(&shop, &input, &opts).unwrap());
        assert_eq!(
            serde_json::to_string(&without_timings(got).report).unwrap(),
            serde_json::to_string(&plain.report).unwrap()
        );
    }
}
