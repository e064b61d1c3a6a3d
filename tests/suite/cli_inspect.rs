//! `platesmith inspect` driven as a user would, on images with known answers
//! made here.
//!
//! Outside references:
//! - CIEDE2000 per pixel: Little CMS 2's cmsCIE2000DeltaE (kL = kC = kH = 1,
//!   CIE 142:2001) on the source colour (sRGB, IEC 61966-2-1, through lcms2's
//!   built-in sRGB profile to CIELAB D50) and the printed colour of the CMYK
//!   that `separate` writes (the library's forward model through `Separator`).
//! - Areas in mm² from the resolution: 1 inch = 25.4 mm (ISO 80000-3 / the
//!   international inch); TIFF 6.0 XResolution/YResolution, PNG pHYs.
//! - Region geometry: 8-connected components of the patches drawn here.

use assert_cmd::Command;
use lcms2::{CIELab, CIELabExt, CIExyY, GlobalContext, Intent as LcmsIntent, PixelFormat, Profile, Transform};
use platesmith::ink::Cmyk;
use platesmith::raster::{CmykImage, Compression, Limits, Resolution, Samples, TiffOptions, read_raster, write_cmyk_tiff};
use platesmith::separation::{Intent, SeparationSettings, Separator};
use serde_json::Value;
use std::path::{Path, PathBuf};

fn platesmith() -> Command {
    Command::cargo_bin("platesmith").unwrap()
}

struct Dir(tempfile::TempDir);

impl Dir {
    fn new() -> Dir {
        Dir(tempfile::tempdir().unwrap())
    }
    fn path(&self, name: &str) -> PathBuf {
        self.0.path().join(name)
    }
}

/// An 8-bit RGB PNG at 150 ppi (pHYs 5906 pixels per metre).
fn write_rgb_png(path: &Path, width: u32, height: u32, data: &[u8]) {
    let file = std::fs::File::create(path).unwrap();
    let mut info = png::Info::with_size(width, height);
    info.color_type = png::ColorType::Rgb;
    info.bit_depth = png::BitDepth::Eight;
    info.pixel_dims = Some(png::PixelDimensions {
        xppu: 5906,
        yppu: 5906,
        unit: png::Unit::Meter,
    });
    let mut w = png::Encoder::with_info(std::io::BufWriter::new(file), info)
        .unwrap()
        .write_header()
        .unwrap();
    w.write_image_data(data).unwrap();
}

/// The scene as an 8-bit and as a 16-bit PNG.
fn scene_files(d: &Dir) -> (PathBuf, PathBuf) {
    let (w, h) = SCENE;
    let eight = d.path("scene8.png");
    write_rgb_png(&eight, w, h, &scene());
    let sixteen = d.path("scene16.png");
    write_scene_16(&sixteen);
    (eight, sixteen)
}

/// `platesmith inspect FILE ARGS…` as JSON.
fn inspect_json(path: &Path, args: &[&str]) -> Value {
    json_of(
        &platesmith()
            .arg("inspect")
            .arg(path)
            .args(args)
            .assert()
            .get_output()
            .stdout
            .clone(),
    )
}

/// The scene at 16 bits (v × 257 is the same colour as v at 8 bits).
fn write_scene_16(path: &Path) {
    let (w, h) = SCENE;
    let file = std::fs::File::create(path).unwrap();
    let mut enc = png::Encoder::new(std::io::BufWriter::new(file), w, h);
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Sixteen);
    let data: Vec<u8> = scene().iter().flat_map(|&v| (v as u16 * 257).to_be_bytes()).collect();
    enc.write_header().unwrap().write_image_data(&data).unwrap();
}

/// A patch: x, y, width, height and its RGB value.
type Patch = ([u32; 4], [u8; 3]);

/// Vivid sRGB blue and green lie far outside any offset gamut; the tan
/// patch and the grey ground lie well inside.
const BLUE: Patch = ([20, 30, 50, 50], [0, 0, 255]);
const GREEN: Patch = ([120, 90, 60, 40], [0, 255, 0]);
const TAN: Patch = ([120, 15, 50, 40], [190, 160, 130]);
const GROUND: [u8; 3] = [128, 128, 128];
const SCENE: (u32, u32) = (200, 150);

fn scene() -> Vec<u8> {
    let (w, h) = SCENE;
    let mut v = Vec::with_capacity((w * h * 3) as usize);
    for y in 0..h {
        for x in 0..w {
            let mut c = GROUND;
            for ([px, py, pw, ph], rgb) in [BLUE, GREEN, TAN] {
                if (px..px + pw).contains(&x) && (py..py + ph).contains(&y) {
                    c = rgb;
                }
            }
            v.extend(c);
        }
    }
    v
}

fn iou(a: [u32; 4], b: [u32; 4]) -> f64 {
    let ix = (a[0] + a[2]).min(b[0] + b[2]).saturating_sub(a[0].max(b[0])) as f64;
    let iy = (a[1] + a[3]).min(b[1] + b[3]).saturating_sub(a[1].max(b[1])) as f64;
    let inter = ix * iy;
    inter / ((a[2] * a[3]) as f64 + (b[2] * b[3]) as f64 - inter)
}

fn bbox(v: &Value) -> [u32; 4] {
    let b = v["bbox"].as_array().unwrap();
    std::array::from_fn(|i| b[i].as_u64().unwrap() as u32)
}

fn json_of(out: &[u8]) -> Value {
    serde_json::from_slice(out).unwrap_or_else(|e| panic!("not JSON ({e}): {}", String::from_utf8_lossy(out)))
}

const MODEL: [&str; 4] = ["--intent", "relative", "--table-grid", "17"];

/// sRGB → CIELAB D50 through lcms2's own sRGB profile.
fn lcms_srgb_lab(rgb: [u8; 3]) -> CIELab {
    let srgb = Profile::new_srgb();
    let lab = Profile::new_lab4_context(GlobalContext::new(), CIExyY::d50()).unwrap();
    let t: Transform<[u8; 3], [f64; 3]> = Transform::new(
        &srgb,
        PixelFormat::RGB_8,
        &lab,
        PixelFormat::Lab_DBL,
        LcmsIntent::RelativeColorimetric,
    )
    .unwrap();
    let mut out = [[0.0; 3]];
    t.transform_pixels(&[rgb], &mut out);
    CIELab {
        L: out[0][0],
        a: out[0][1],
        b: out[0][2],
    }
}

#[test]
fn out_of_gamut_patches_are_found_where_they_are_with_the_delta_e_of_a_direct_computation() {
    let d = Dir::new();
    let input = d.path("scene.png");
    let (w, h) = SCENE;
    write_rgb_png(&input, w, h, &scene());
    let out = platesmith()
        .arg("inspect")
        .arg(&input)
        .args(MODEL)
        .args(["--json", "--de-thresholds", "1,3,10"])
        .assert();
    let out = out.code(0).get_output().stdout.clone();
    let r = json_of(&out);
    assert_eq!(r["kind"], "rgb");
    assert_eq!((r["width"].as_u64(), r["height"].as_u64()), (Some(200), Some(150)));
    assert!((r["resolution_ppi"][0].as_f64().unwrap() - 150.0).abs() < 0.01);
    assert!(r["note"].as_str().unwrap().contains("prediction"));

    // The CMYK that `separate` writes with the same settings.
    let sep_dir = d.path("sep");
    platesmith()
        .arg("separate")
        .arg(&input)
        .arg("--out-dir")
        .arg(&sep_dir)
        .args(MODEL)
        .args(["--plates", "none"])
        .assert()
        .success();
    let composite = read_raster(&sep_dir.join("scene.cmyk.tif"), &Limits::default()).unwrap();
    let Samples::U8(cmyk) = &composite.samples else {
        panic!("8-bit composite expected")
    };
    let condition = platesmith::press::builtin::coated_offset();
    let mut settings = SeparationSettings::for_condition(&condition);
    settings.intent = Intent::Relative;
    settings.table_grid = 17;
    let separator = Separator::new(condition, settings).unwrap();
    let rgb = scene();
    // ΔE per pixel, directly: lcms2's CIEDE2000 of the source colour and the printed colour.
    let de: Vec<f64> = (0..(w * h) as usize)
        .map(|i| {
            let src = lcms_srgb_lab([rgb[i * 3], rgb[i * 3 + 1], rgb[i * 3 + 2]]);
            let px = &cmyk[i * 4..i * 4 + 4];
            let ink = Cmyk::new(
                px[0] as f64 / 255.0,
                px[1] as f64 / 255.0,
                px[2] as f64 / 255.0,
                px[3] as f64 / 255.0,
            );
            let p = separator.printed_in_frame(ink).lab();
            src.cie2000_delta_e(&CIELab { L: p.l, a: p.a, b: p.b }, 1.0, 1.0, 1.0)
        })
        .collect();
    // Our sRGB and lcms2's agree to a few hundredths of ΔE (tests/suite/colour_lcms2.rs).
    const TOL: f64 = 0.03;
    let g = &r["gamut"];
    let mean = de.iter().sum::<f64>() / de.len() as f64;
    let max = de.iter().cloned().fold(0.0, f64::max);
    assert!(
        (g["mean_de"].as_f64().unwrap() - mean).abs() < TOL,
        "mean {} vs {mean}",
        g["mean_de"]
    );
    assert!((g["max_de"].as_f64().unwrap() - max).abs() < TOL, "max {} vs {max}", g["max_de"]);
    let mut sorted = de.clone();
    sorted.sort_by(f64::total_cmp);
    let p95 = sorted[(0.95 * sorted.len() as f64).ceil() as usize - 1];
    assert!(
        (g["p95_de"].as_f64().unwrap() - p95).abs() < TOL + 0.01,
        "p95 {} vs {p95}",
        g["p95_de"]
    );
    for (k, t) in [1.0, 3.0, 10.0].iter().enumerate() {
        let share = de.iter().filter(|&&v| v > *t).count() as f64 / de.len() as f64;
        assert!((g["over"][k]["fraction"].as_f64().unwrap() - share).abs() < 1e-6, "share over {t}");
    }
    // Regions at ΔE > 10 (the largest threshold): the two vivid patches.
    let regions: Vec<&Value> = r["regions"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|g| g["kind"] == "out-of-gamut")
        .collect();
    assert_eq!(regions.len(), 2, "{regions:?}");
    // pHYs 5906 pixels per metre = 150.0124 ppi.
    let mm = 1000.0 / 5906.0;
    for (patch, _) in [BLUE, GREEN] {
        let found = regions
            .iter()
            .find(|g| iou(bbox(g), patch) >= 0.9)
            .unwrap_or_else(|| panic!("no region at {patch:?}: {regions:?}"));
        let [x, y, pw, ph] = patch;
        let direct: Vec<f64> = (y..y + ph)
            .flat_map(|yy| (x..x + pw).map(move |xx| (yy * w + xx) as usize))
            .map(|i| de[i])
            .collect();
        let dmax = direct.iter().cloned().fold(0.0, f64::max);
        let dmean = direct.iter().sum::<f64>() / direct.len() as f64;
        assert!((found["max"].as_f64().unwrap() - dmax).abs() < TOL, "{found} vs {dmax}");
        assert!((found["mean"].as_f64().unwrap() - dmean).abs() < TOL, "{found} vs {dmean}");
        assert_eq!(found["pixels"].as_u64().unwrap(), (pw * ph) as u64);
        assert!((found["area_mm2"].as_f64().unwrap() - (pw * ph) as f64 * mm * mm).abs() < 0.001);
        assert!((found["bbox_mm"][2].as_f64().unwrap() - pw as f64 * mm).abs() < 0.006);
        // A vivid RGB primary is out of gamut: something limits it.
        assert_eq!(found["in_gamut"], false);
        assert!(!found["limited_by"].as_array().unwrap().is_empty());
    }
    // The in-gamut patch is not reported, at any kind.
    for g in r["regions"].as_array().unwrap() {
        assert!(iou(bbox(g), TAN.0) < 0.1, "the in-gamut patch was reported: {g}");
    }
    assert_eq!(r["regions_by_kind"]["over-ink"], 0);
}

#[test]
fn sixteen_bit_input_agrees_with_eight_bit() {
    // The same scene at 16 bits (v × 257 is the same colour): the same regions
    // and, within the 8-bit rounding of the CMYK, the same ΔE.
    let d = Dir::new();
    let (eight, sixteen) = scene_files(&d);
    let (a, b) = (
        inspect_json(&eight, &[&MODEL[..], &["--json"]].concat()),
        inspect_json(&sixteen, &[&MODEL[..], &["--json"]].concat()),
    );
    for key in ["mean_de", "max_de"] {
        assert!(
            (a["gamut"][key].as_f64().unwrap() - b["gamut"][key].as_f64().unwrap()).abs() < 0.5,
            "{key}: {} vs {}",
            a["gamut"],
            b["gamut"]
        );
    }
    let boxes = |r: &Value| r["regions"].as_array().unwrap().iter().map(bbox).collect::<Vec<_>>();
    assert_eq!(boxes(&a), boxes(&b));
}

/// The share outside the press gamut does not depend on the intent: under
/// relative colorimetric (the clip itself) and perceptual alike it is the
/// blue and green patches, 4 900 of 30 000 pixels, at 8 and 16 bits; and its
/// largest distance is that of the relative separation's own ΔE; the
/// out-of-gamut regions are those two patches under every intent. Under
/// perceptual, too, only those patches are moved by more than 2 ΔE2000.
#[test]
fn the_share_outside_the_gamut_is_the_colours_the_press_cannot_reach_whatever_the_intent() {
    let d = Dir::new();
    let (eight, sixteen) = scene_files(&d);
    let (w, h) = SCENE;
    let run = |p: &Path, intent: &str| inspect_json(p, &["--intent", intent, "--table-grid", "17", "--region-de", "2", "--json"]);
    let patches = (50.0 * 50.0 + 60.0 * 40.0) / (w * h) as f64;
    let relative = run(&eight, "relative")["gamut"].clone();
    // Relative colorimetric: the ΔE of the separation is the distance itself.
    assert_eq!(relative["outside_fraction"], relative["over_fraction"], "{relative}");
    assert_eq!(relative["outside_max_de"], relative["max_de"], "{relative}");
    for (file, bits) in [(&eight, 8), (&sixteen, 16)] {
        for intent in ["perceptual", "relative", "absolute"] {
            let r = run(file, intent);
            let g = &r["gamut"];
            let boxes: Vec<[u32; 4]> = r["regions"]
                .as_array()
                .unwrap()
                .iter()
                .filter(|v| v["kind"] == "out-of-gamut")
                .map(bbox)
                .collect();
            assert_eq!(boxes.len(), 2, "{bits}-bit {intent}: {boxes:?}");
            for (patch, found) in [BLUE, GREEN].iter().zip(&boxes) {
                assert!(iou(patch.0, *found) >= 0.9, "{bits}-bit {intent}: {found:?} for {:?}", patch.0);
            }
            let share = g["outside_fraction"].as_f64().unwrap();
            assert!(
                (share - patches).abs() < 1e-5,
                "{bits}-bit {intent}: {share} outside, patches {patches}: {g}"
            );
            let largest = g["outside_max_de"].as_f64().unwrap();
            let want = relative["max_de"].as_f64().unwrap();
            // The relative ΔE is of the 8-bit CMYK written; the distance uses
            // the table's unrounded value.
            assert!(
                (largest - want).abs() < 0.5,
                "{bits}-bit {intent}: largest {largest}, relative separation {want}"
            );
        }
    }
    // Perceptual keeps printable colours: its ΔE over 2 is the two patches
    // only, not the in-gamut ground and tan (the requirement that perceptual
    // keep the colours the press can print, CIE 156:2004's first criterion).
    for from in ["picture", "space"] {
        let r = inspect_json(
            &eight,
            &["--table-grid", "17", "--region-de", "2", "--compress-from", from, "--json"],
        );
        assert_eq!(r["settings"]["intent"], "perceptual");
        assert_eq!(r["settings"]["compress_from"], from, "{}", r["settings"]);
        let over = r["gamut"]["over_fraction"].as_f64().unwrap();
        eprintln!("perceptual from the {from}: ΔE > 2 on {over:.4} of the pixels, patches {patches:.4}");
        assert!(
            over <= patches + 1e-3,
            "from the {from}: perceptual moved printable colours too: {}",
            r["gamut"]
        );
    }
    let relative = run(&eight, "relative");
    assert!(relative["settings"].get("compress_from").is_none(), "{}", relative["settings"]);
}

#[test]
fn region_threshold_and_minimum_area_are_configurable() {
    let d = Dir::new();
    let input = d.path("scene.png");
    write_rgb_png(&input, SCENE.0, SCENE.1, &scene());
    let run = |extra: &[&str]| {
        json_of(
            &platesmith()
                .arg("inspect")
                .arg(&input)
                .args(MODEL)
                .arg("--json")
                .args(extra)
                .assert()
                .get_output()
                .stdout
                .clone(),
        )
    };
    let count = |r: &Value| r["regions_by_kind"]["out-of-gamut"].as_u64().unwrap();
    assert_eq!(count(&run(&["--region-de", "5"])), 2);
    assert_eq!(count(&run(&["--region-de", "500"])), 0);
    // Blue: 2500 px = 71.7 mm², green: 2400 px = 68.8 mm² at 150 ppi.
    let r = run(&["--region-de", "5", "--min-area", "70"]);
    assert_eq!(count(&r), 1);
    assert!(iou(bbox(&r["regions"][0]), BLUE.0) >= 0.9);
    assert_eq!(r["gamut"]["threshold"], 5.0);
}

/// A CMYK TIFF at 200 ppi: a light tint, a 400 % block and a thin rich black line.
const BLOCK: [u32; 4] = [40, 50, 100, 60];
const LINE: [u32; 4] = [20, 130, 200, 2];

fn write_cmyk_fixture(path: &Path) {
    let (w, h) = (240u32, 160u32);
    let mut v = Vec::with_capacity((w * h * 4) as usize);
    let inside = |b: [u32; 4], x: u32, y: u32| (b[0]..b[0] + b[2]).contains(&x) && (b[1]..b[1] + b[3]).contains(&y);
    for y in 0..h {
        for x in 0..w {
            let px: [u8; 4] = if inside(BLOCK, x, y) {
                [255; 4]
            } else if inside(LINE, x, y) {
                [153, 128, 128, 255] // 60/50/50/100: 260 %, under the limit
            } else {
                [51, 26, 26, 0]
            };
            v.extend(px);
        }
    }
    let image = CmykImage::new(w, h, Samples::U8(v)).unwrap();
    let mut f = std::fs::File::create(path).unwrap();
    let opts = TiffOptions {
        compression: Compression::None,
        resolution: Some(Resolution {
            x_ppi: 200.0,
            y_ppi: 200.0,
        }),
        icc_profile: None,
    };
    write_cmyk_tiff(&mut f, &image, &opts).unwrap();
}

#[test]
fn a_400_percent_block_is_one_over_ink_region_of_the_right_area() {
    let d = Dir::new();
    let input = d.path("plate-ready.tif");
    write_cmyk_fixture(&input);
    let out = platesmith()
        .arg("inspect")
        .arg(&input)
        .args(["--json", "--fail-if", "tac>400"])
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let r = json_of(&out);
    assert_eq!(r["kind"], "cmyk");
    assert!(r.get("gamut").is_none());
    assert_eq!(r["tac"]["max"], 400.0);
    let over: Vec<&Value> = r["regions"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|g| g["kind"] == "over-ink")
        .collect();
    assert_eq!(over.len(), 1, "{over:?}");
    let g = over[0];
    assert_eq!(bbox(g), BLOCK);
    assert_eq!(g["pixels"], 6000);
    // 6000 px × (25.4 / 200 mm)² = 96.774 mm².
    assert!((g["area_mm2"].as_f64().unwrap() - 6000.0 * 0.127 * 0.127).abs() < 1e-3, "{g}");
    let mm: Vec<f64> = g["bbox_mm"].as_array().unwrap().iter().map(|v| v.as_f64().unwrap()).collect();
    assert_eq!(mm, vec![5.08, 6.35, 12.7, 7.62]);
    assert_eq!((g["max"].as_f64(), g["mean"].as_f64()), (Some(400.0), Some(400.0)));
    assert!((r["tac"]["over_fraction"].as_f64().unwrap() - 6000.0 / (240.0 * 160.0)).abs() < 1e-6);
    // Mean total ink from the drawn areas: 400 %, 664/255 and 103/255 of 100 %.
    let tac_mean = (6000.0 * 400.0 + 400.0 * 66400.0 / 255.0 + 32000.0 * 10300.0 / 255.0) / 38400.0;
    assert!(
        (r["tac"]["mean"].as_f64().unwrap() - tac_mean).abs() < 0.06,
        "{} vs {tac_mean}",
        r["tac"]
    );
    // The 2-pixel (0.25 mm) rich black line is fine detail; the block is not.
    let rich: Vec<&Value> = r["regions"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|g| g["kind"] == "rich-black-detail")
        .collect();
    assert_eq!(rich.len(), 1, "{rich:?}");
    assert_eq!(bbox(rich[0]), LINE);
    // Plates: cyan mean over the image from the drawn areas.
    let px = 240.0 * 160.0;
    let c_mean = (6000.0 * 1.0 + 400.0 * 0.6 + (px - 6400.0) * 0.2) / px * 100.0;
    assert!((r["plates"][0]["mean_percent"].as_f64().unwrap() - c_mean).abs() < 0.01);
    assert_eq!(r["plates"][0]["inked_fraction"], 1.0);
}

#[test]
fn fail_if_rules_set_the_exit_code_and_name_the_rule() {
    let d = Dir::new();
    let input = d.path("plate-ready.tif");
    write_cmyk_fixture(&input);
    let code = |rules: &[&str]| {
        let mut cmd = platesmith();
        cmd.arg("inspect").arg(&input);
        for r in rules {
            cmd.args(["--fail-if", r]);
        }
        let out = cmd.output().unwrap();
        (out.status.code(), String::from_utf8_lossy(&out.stderr).to_string())
    };
    let (c, err) = code(&["tac>300"]);
    assert_eq!(c, Some(1));
    assert!(err.contains("rule 'tac>300' failed") && err.contains("400"), "{err}");
    assert_eq!(code(&["tac>400"]).0, Some(0));
    assert_eq!(code(&["over_fraction>50%"]).0, Some(0));
    assert_eq!(code(&["over_fraction>1%"]).0, Some(1));
    assert_eq!(
        code(&["regions.over-ink>1", "p95_de>3"]).0,
        Some(0),
        "ΔE rules do not apply to CMYK input"
    );
    let (c, err) = code(&["tac>400", "regions>0"]);
    assert_eq!(c, Some(1));
    assert!(err.contains("'regions>0'") && !err.contains("'tac>400'"), "{err}");
    // No rule: any pixel over the limit fails.
    assert_eq!(code(&[]).0, Some(1));
    let (c, err) = code(&["ink>3"]);
    assert_eq!(c, Some(2));
    assert!(err.contains("unknown metric 'ink'"), "{err}");
    // A ticket carries rules too.
    let ticket = d.path("job.toml");
    std::fs::write(&ticket, "[checks]\nfail_if = [\"tac>350\"]\n").unwrap();
    let out = platesmith()
        .arg("inspect")
        .arg(&input)
        .arg("--ticket")
        .arg(&ticket)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("'tac>350'"));
}

#[test]
fn report_folder_holds_json_csv_maps_and_page_or_nothing() {
    let d = Dir::new();
    let input = d.path("scene.png");
    write_rgb_png(&input, SCENE.0, SCENE.1, &scene());
    let dir = d.path("report");
    platesmith()
        .arg("inspect")
        .arg(&input)
        .args(MODEL)
        .arg("--report")
        .arg(&dir)
        .assert()
        .code(0);
    let r: Value = serde_json::from_str(&std::fs::read_to_string(dir.join("scene.inspect.json")).unwrap()).unwrap();
    let csv = std::fs::read_to_string(dir.join("scene.regions.csv")).unwrap();
    assert_eq!(csv.lines().count(), 1 + r["regions"].as_array().unwrap().len());
    assert!(csv.starts_with("number,kind,x,y,width,height"));
    for map in ["scene.de-map.png", "scene.ink-map.png"] {
        let file = std::fs::File::open(dir.join(map)).unwrap();
        let reader = png::Decoder::new(std::io::BufReader::new(file)).read_info().unwrap();
        assert!(reader.info().width >= SCENE.0 && reader.info().height >= SCENE.1, "{map}");
    }
    let html = std::fs::read_to_string(dir.join("scene.inspect.html")).unwrap();
    assert!(html.contains("data:image/png;base64,") && html.contains("<svg") && html.contains("a contract proof"));
    assert!(
        !html.contains("src='http") && !html.contains("href='http"),
        "the page is self-contained"
    );

    // A failed write leaves no file of the set.
    let dir2 = d.path("report2");
    platesmith()
        .env("PLATESMITH_FAIL_WRITE_AFTER_BYTES", "200")
        .arg("inspect")
        .arg(&input)
        .args(MODEL)
        .arg("--report")
        .arg(&dir2)
        .assert()
        .code(2);
    let left: Vec<_> = std::fs::read_dir(&dir2)
        .map(|d| d.flatten().map(|e| e.file_name()).collect())
        .unwrap_or_default();
    assert!(left.is_empty(), "{left:?}");
}

#[test]
fn several_inputs_give_an_array_and_a_bad_file_exits_2_without_stopping_the_others() {
    let d = Dir::new();
    let cmyk = d.path("a.tif");
    write_cmyk_fixture(&cmyk);
    let bad = d.path("broken.png");
    std::fs::write(&bad, b"\x89PNG\r\n\x1a\nnot really").unwrap();
    let out = platesmith()
        .arg("inspect")
        .arg(&bad)
        .arg(&cmyk)
        .args(["--json", "--fail-if", "tac>400"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("broken.png"), "{err}");
    let v = json_of(&out.stdout);
    assert_eq!(v.as_array().unwrap().len(), 1);
    assert!(v[0]["file"].as_str().unwrap().ends_with("a.tif"));
    // The text summary says what was found.
    let out = platesmith().arg("inspect").arg(&cmyk).output().unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("1 over-ink") && text.contains("prediction"), "{text}");
}
