//! `platesmith separate` driven as a user would: the real binary on images
//! made here, checking exit codes and the files written.
//!
//! Outside references: the TIFF 6.0 specification (Separated photometric,
//! InkSet, WhiteIsZero plates), ICC.1 (embedded profiles, read back through
//! lcms2), and Python tifffile via scripts/check_tiff.py where installed.

use assert_cmd::Command;
use platesmith::raster::{Layout, Limits, Samples, read_raster};
use std::path::{Path, PathBuf};

fn platesmith() -> Command {
    Command::cargo_bin("platesmith").unwrap()
}

/// Writes an 8- or 16-bit PNG; `channels` 1 (gray), 2, 3 (RGB) or 4 (RGBA).
fn write_png(path: &Path, width: u32, height: u32, channels: u8, bits: u8, data: &[u16], icc: Option<Vec<u8>>) {
    let file = std::fs::File::create(path).unwrap();
    let mut info = png::Info::with_size(width, height);
    info.color_type = match channels {
        1 => png::ColorType::Grayscale,
        2 => png::ColorType::GrayscaleAlpha,
        3 => png::ColorType::Rgb,
        _ => png::ColorType::Rgba,
    };
    info.bit_depth = if bits == 16 { png::BitDepth::Sixteen } else { png::BitDepth::Eight };
    info.icc_profile = icc.map(std::borrow::Cow::Owned);
    // 150 ppi in pHYs (pixels per metre, ISO/IEC 15948 §11.3.5.3).
    info.pixel_dims = Some(png::PixelDimensions {
        xppu: 5906,
        yppu: 5906,
        unit: png::Unit::Meter,
    });
    let enc = png::Encoder::with_info(std::io::BufWriter::new(file), info).unwrap();
    let mut w = enc.write_header().unwrap();
    let bytes: Vec<u8> = if bits == 16 {
        data.iter().flat_map(|v| v.to_be_bytes()).collect()
    } else {
        data.iter().map(|&v| v as u8).collect()
    };
    w.write_image_data(&bytes).unwrap();
}

/// A test picture: hue sweep left to right, lightness top to bottom.
fn picture(width: u32, height: u32, channels: u8, max: u16) -> Vec<u16> {
    let mut out = Vec::new();
    for y in 0..height {
        for x in 0..width {
            let (fx, fy) = (x as f64 / (width - 1) as f64, y as f64 / (height - 1) as f64);
            let rgb = [fx, (1.0 - fx) * fy, fy * 0.5 + 0.25 * fx];
            let m = max as f64;
            match channels {
                1 => out.push((fy * m) as u16),
                2 => out.extend([(fy * m) as u16, max / 2]),
                3 => out.extend(rgb.map(|v| (v * m) as u16)),
                _ => {
                    out.extend(rgb.map(|v| (v * m) as u16));
                    out.push((fx * m) as u16);
                }
            }
        }
    }
    out
}

struct Outputs {
    dir: tempfile::TempDir,
}

impl Outputs {
    fn new() -> Outputs {
        Outputs {
            dir: tempfile::tempdir().unwrap(),
        }
    }
    fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }
}

fn samples_u32(s: &Samples) -> Vec<u32> {
    match s {
        Samples::U8(v) => v.iter().map(|&x| x as u32).collect(),
        Samples::U16(v) => v.iter().map(|&x| x as u32).collect(),
    }
}

fn separate(input: &Path, out: &Path, extra: &[&str]) -> assert_cmd::assert::Assert {
    platesmith()
        .arg("separate")
        .arg(input)
        .arg("--out-dir")
        .arg(out)
        .args(["--table-grid", "17"])
        .args(extra)
        .assert()
}

#[test]
fn composite_and_plates_agree_and_respect_the_ink_limit() {
    let o = Outputs::new();
    let input = o.path("scene.png");
    write_png(&input, 64, 48, 3, 8, &picture(64, 48, 3, 255), None);
    let out = o.path("out");
    separate(&input, &out, &["--tac", "280"]).success();
    let composite = read_raster(&out.join("scene.cmyk.tif"), &Limits::default()).unwrap();
    assert_eq!((composite.width, composite.height, composite.layout), (64, 48, Layout::Cmyk));
    // Resolution copied from the input (150 ppi in pHYs).
    let res = composite.resolution.unwrap();
    assert!((res.x_ppi - 150.0).abs() < 0.1, "{res:?}");
    let c = samples_u32(&composite.samples);
    for px in c.chunks_exact(4) {
        // 280 % of 255 codes is 714: not one code over, after 8-bit rounding.
        assert!(px.iter().sum::<u32>() <= 714, "over the limit: {px:?}");
    }
    // Plates are WhiteIsZero: read back as gray levels, 255 − ink.
    for (i, letter) in ["C", "M", "Y", "K"].iter().enumerate() {
        let plate = read_raster(&out.join(format!("scene.{letter}.tif")), &Limits::default()).unwrap();
        assert_eq!(plate.layout, Layout::Gray);
        let p = samples_u32(&plate.samples);
        for (k, px) in c.chunks_exact(4).enumerate() {
            assert_eq!(255 - p[k], px[i], "plate {letter} pixel {k}");
        }
    }
    let summary: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("scene.summary.json")).unwrap()).unwrap();
    assert_eq!(summary["tac"]["limit"], 280.0);
    assert!(summary["tac"]["max"].as_f64().unwrap() <= 281.0);
    assert!(summary["notes"][0].as_str().unwrap().contains("srgb assumed"));
    // The default perceptual intent compressed from the picture's own colours.
    assert_eq!(summary["settings"]["intent"], "perceptual");
    assert_eq!(summary["settings"]["compress_from"], "picture", "{}", summary["settings"]);
}

/// `--compress-from space` is echoed in the summary and the printed ticket;
/// a ticket with another value is refused, naming the file and the key.
#[test]
fn the_source_of_compression_is_a_setting() {
    let o = Outputs::new();
    let input = o.path("art.png");
    write_png(&input, 8, 8, 3, 8, &picture(8, 8, 3, 255), None);
    separate(&input, &o.path("out"), &["--compress-from", "space"]).success();
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(o.path("out").join("art.summary.json")).unwrap()).unwrap();
    assert_eq!(s["settings"]["compress_from"], "space");
    let printed = platesmith()
        .args(["separate", "--print-ticket", "--compress-from", "space"])
        .assert()
        .success();
    assert!(String::from_utf8_lossy(&printed.get_output().stdout).contains("compress_from = \"space\""));
    let ticket = o.path("job.toml");
    std::fs::write(&ticket, "[model]\ncompress_from = \"everything\"\n").unwrap();
    let bad = platesmith()
        .arg("separate")
        .arg(&input)
        .arg("--ticket")
        .arg(&ticket)
        .arg("--out-dir")
        .arg(o.path("bad"))
        .assert()
        .code(2);
    let err = String::from_utf8_lossy(&bad.get_output().stderr).to_string();
    assert!(err.contains("job.toml") && err.contains("compress_from"), "{err}");
    assert!(!o.path("bad").exists());
}

#[test]
fn sixteen_bit_rgba_and_gray_inputs() {
    let o = Outputs::new();
    let out = o.path("out");
    let rgba = o.path("rgba16.png");
    write_png(&rgba, 20, 10, 4, 16, &picture(20, 10, 4, 65535), None);
    separate(&rgba, &out, &["--bits", "16"]).success();
    let c = read_raster(&out.join("rgba16.cmyk.tif"), &Limits::default()).unwrap();
    assert_eq!(c.bits, 16);
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("rgba16.summary.json")).unwrap()).unwrap();
    assert!(
        s["notes"]
            .as_array()
            .unwrap()
            .iter()
            .any(|n| n.as_str().unwrap().contains("alpha flattened"))
    );
    // Fully transparent pixels (x = 0) print as paper: no ink.
    let v = samples_u32(&c.samples);
    assert_eq!(&v[0..4], &[0, 0, 0, 0]);

    let gray = o.path("gray.png");
    write_png(&gray, 16, 16, 1, 8, &picture(16, 16, 1, 255), None);
    separate(&gray, &out, &["--gray", "black-only"]).success();
    let g = samples_u32(&read_raster(&out.join("gray.cmyk.tif"), &Limits::default()).unwrap().samples);
    assert!(
        g.chunks_exact(4).all(|px| px[0] == 0 && px[1] == 0 && px[2] == 0),
        "black-only gray used other inks"
    );
    // Darker gray → more black (monotone).
    let k: Vec<u32> = g.chunks_exact(4).map(|p| p[3]).collect();
    assert!(k[0] >= k[k.len() - 1]);
}

/// The ink limit and maximum black hold to the code in every path that ends
/// in 8-bit samples: 8-bit RGB, 16-bit RGB written at 8 bits, black-only
/// gray, and 16-bit CMYK re-separated to 8 bits. Dark saturated colours sit
/// on the limit, where rounding each plate to the nearest code would add up
/// to two codes (the issues allowed TAC + 1 %; a hard limit allows none).
#[test]
fn no_eight_bit_output_exceeds_the_ink_limit_or_maximum_black() {
    let o = Outputs::new();
    let out = o.path("out");
    // Dark, saturated colours on a fine grid: many land on the 280 % limit.
    let (w, h) = (64u32, 64u32);
    let mut dark = Vec::new();
    for y in 0..h {
        for x in 0..w {
            let (fx, fy) = (x as f64 / (w - 1) as f64, y as f64 / (h - 1) as f64);
            dark.extend([0.12 * fx, 0.1 * fy, 0.12 * (1.0 - fx) * (1.0 - fy)].map(|v| (v * 65535.0) as u16));
        }
    }
    let rgb16 = o.path("dark16.png");
    write_png(&rgb16, w, h, 3, 16, &dark, None);
    let rgb8 = o.path("dark8.png");
    write_png(&rgb8, w, h, 3, 8, &dark.iter().map(|&v| v / 257).collect::<Vec<_>>(), None);
    let gray = o.path("gray.png");
    write_png(&gray, 16, 16, 1, 8, &picture(16, 16, 1, 255), None);
    // Relative colorimetric carries every colour darker than the press black
    // onto it, at the limit (perceptual keeps the shadows' gradation above it).
    let limits = ["--tac", "280", "--black-max", "96", "--intent", "relative"];
    let (tac_codes, k_codes) = (714, 244); // floor(2.80 · 255), floor(0.96 · 255)
    separate(&rgb16, &out, &limits).success();
    separate(&rgb8, &out, &limits).success();
    separate(&gray, &out, &[&limits[..], &["--gray", "black-only"]].concat()).success();
    // 16-bit CMYK in, re-separated for the same limits, 8 bits out.
    separate(&rgb16, &o.path("wide"), &["--bits", "16", "--tac", "330"]).success();
    platesmith()
        .arg("separate")
        .arg(o.path("wide/dark16.cmyk.tif"))
        .arg("--out-dir")
        .arg(&out)
        .args(["--source-condition", "coated-offset"])
        .args(limits)
        .assert()
        .success();
    let mut at_limit = 0;
    for name in ["dark16.cmyk.tif", "dark8.cmyk.tif", "gray.cmyk.tif", "dark16.cmyk.cmyk.tif"] {
        let r = read_raster(&out.join(name), &Limits::default()).unwrap();
        assert_eq!(r.bits, 8, "{name}");
        for px in samples_u32(&r.samples).chunks_exact(4) {
            let total: u32 = px.iter().sum();
            assert!(total <= tac_codes && px[3] <= k_codes, "{name}: {px:?} over 280 % / K 96 %");
            at_limit += (total + 2 >= tac_codes) as u32;
        }
    }
    assert!(
        at_limit > 100,
        "only {at_limit} pixels near the limit: the check would not see rounding"
    );
}

/// Builds an RGB profile with wide primaries through lcms2 (a test fixture).
fn wide_profile() -> Vec<u8> {
    use lcms2::{CIExyY, CIExyYTRIPLE, Profile, ToneCurve};
    let white = CIExyY {
        x: 0.3127,
        y: 0.3290,
        Y: 1.0,
    };
    let primaries = CIExyYTRIPLE {
        Red: CIExyY {
            x: 0.7347,
            y: 0.2653,
            Y: 1.0,
        },
        Green: CIExyY {
            x: 0.1152,
            y: 0.8264,
            Y: 1.0,
        },
        Blue: CIExyY {
            x: 0.1566,
            y: 0.0177,
            Y: 1.0,
        },
    };
    let curve = ToneCurve::new(2.2);
    Profile::new_rgb(&white, &primaries, &[&curve, &curve, &curve])
        .unwrap()
        .icc()
        .unwrap()
}

#[test]
fn an_embedded_profile_changes_the_separation_as_lcms2_predicts() {
    let o = Outputs::new();
    let out = o.path("out");
    let pixels: Vec<u16> = [[40u16, 200, 60], [200, 60, 40]]
        .iter()
        .flat_map(|p| p.iter().copied().cycle().take(3 * 32))
        .collect();
    let plain = o.path("plain.png");
    let tagged = o.path("tagged.png");
    write_png(&plain, 8, 8, 3, 8, &pixels, None);
    write_png(&tagged, 8, 8, 3, 8, &pixels, Some(wide_profile()));
    separate(&plain, &out, &["--intent", "relative"]).success();
    separate(&tagged, &out, &["--intent", "relative"]).success();
    let a = samples_u32(&read_raster(&out.join("plain.cmyk.tif"), &Limits::default()).unwrap().samples);
    let b = samples_u32(&read_raster(&out.join("tagged.cmyk.tif"), &Limits::default()).unwrap().samples);
    assert_ne!(a, b);
    // lcms2 says the tagged green is more saturated than sRGB's: it needs at least as much cyan+yellow
    // and lies further out of gamut, so the summary's source line names the profile.
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(out.join("tagged.summary.json")).unwrap()).unwrap();
    // Named by its description tag, as lcms2 reads it from the profile.
    let description = lcms2::Profile::new_icc(&wide_profile())
        .unwrap()
        .info(lcms2::InfoType::Description, lcms2::Locale::none())
        .unwrap();
    assert_eq!(s["source"], format!("embedded ICC profile \"{description}\""));
}

#[test]
fn a_garbage_profile_is_an_error_unless_ignored() {
    let o = Outputs::new();
    let out = o.path("out");
    let input = o.path("bad-icc.png");
    write_png(&input, 4, 4, 3, 8, &picture(4, 4, 3, 255), Some(vec![7u8; 300]));
    let before = std::fs::read(&input).unwrap();
    separate(&input, &out, &[])
        .code(2)
        .stderr(predicates::str::contains("bad-icc.png"))
        .stderr(predicates::str::contains("--ignore-bad-profile"));
    assert!(!out.join("bad-icc.cmyk.tif").exists());
    separate(&input, &out, &["--ignore-bad-profile"]).success();
    assert_eq!(std::fs::read(&input).unwrap(), before, "input changed");
}

#[test]
fn existing_outputs_are_kept_without_force() {
    let o = Outputs::new();
    let out = o.path("out");
    let input = o.path("a.png");
    write_png(&input, 4, 4, 3, 8, &picture(4, 4, 3, 255), None);
    separate(&input, &out, &[]).success();
    let first = std::fs::read(out.join("a.cmyk.tif")).unwrap();
    separate(&input, &out, &["--tac", "250"])
        .code(2)
        .stderr(predicates::str::contains("a.cmyk.tif"));
    assert_eq!(std::fs::read(out.join("a.cmyk.tif")).unwrap(), first);
    separate(&input, &out, &["--tac", "250", "--force"]).success();
    assert_ne!(std::fs::read(out.join("a.cmyk.tif")).unwrap(), first);
}

#[test]
fn a_failed_write_leaves_no_partial_file() {
    // The failure hook is read by builds with debug assertions only (the test profile).
    if !cfg!(debug_assertions) {
        eprintln!("skipped: release build, the write-failure hook is off");
        return;
    }
    let o = Outputs::new();
    let out = o.path("out");
    let input = o.path("a.png");
    write_png(&input, 32, 32, 3, 8, &picture(32, 32, 3, 255), None);
    platesmith()
        .env("PLATESMITH_FAIL_WRITE_AFTER_BYTES", "1000")
        .arg("separate")
        .arg(&input)
        .arg("--out-dir")
        .arg(&out)
        .args(["--table-grid", "9", "--compression", "none"])
        .assert()
        .code(2);
    let left: Vec<_> = std::fs::read_dir(&out).unwrap().collect();
    assert!(left.is_empty(), "left behind: {left:?}");
}

#[test]
fn one_bad_file_does_not_stop_the_others() {
    let o = Outputs::new();
    let out = o.path("out");
    let good = o.path("good.png");
    write_png(&good, 4, 4, 3, 8, &picture(4, 4, 3, 255), None);
    let bad = o.path("bad.png");
    std::fs::write(&bad, b"not an image").unwrap();
    platesmith()
        .arg("separate")
        .arg(&bad)
        .arg(&good)
        .arg("--out-dir")
        .arg(&out)
        .args(["--table-grid", "9"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("bad.png"))
        .stderr(predicates::str::contains("1 separated, 1 failed"));
    assert!(out.join("good.cmyk.tif").exists());
}

#[test]
fn the_printed_ticket_repeats_the_job() {
    let o = Outputs::new();
    let out = platesmith()
        .args(["separate", "--print-ticket", "--tac", "290", "--gcr", "70", "--intent", "relative"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("tac = 290") && text.contains("gcr = 70") && text.contains("intent = \"relative\""),
        "{text}"
    );
    let ticket = o.path("job.toml");
    std::fs::write(&ticket, &text).unwrap();
    let again = platesmith()
        .args(["separate", "--print-ticket", "--ticket"])
        .arg(&ticket)
        .output()
        .unwrap();
    assert_eq!(String::from_utf8(again.stdout).unwrap(), text);
}

#[test]
fn bad_tickets_name_file_key_and_line() {
    let o = Outputs::new();
    let ticket = o.path("job.toml");
    std::fs::write(&ticket, "[model]\ntac = 450\n").unwrap();
    platesmith()
        .args(["separate", "x.png", "--ticket"])
        .arg(&ticket)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("job.toml"))
        .stderr(predicates::str::contains("line 2"))
        .stderr(predicates::str::contains("model.tac"));
    std::fs::write(&ticket, "[model]\ngcr = 50\nshade = 3\n").unwrap();
    platesmith()
        .args(["separate", "x.png", "--ticket"])
        .arg(&ticket)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("line 3"));
}

#[test]
fn out_of_range_flags_are_usage_errors() {
    platesmith().args(["separate", "x.png", "--gcr", "-5"]).assert().code(2);
    platesmith()
        .args(["recipe", "#ff0000", "--tac", "450"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("100–400"));
}

#[test]
fn written_tiffs_read_in_an_independent_reader() {
    if !crate::tifffile_available() {
        return;
    }
    let o = Outputs::new();
    let out = o.path("out");
    let input = o.path("p.png");
    write_png(&input, 24, 16, 3, 8, &picture(24, 16, 3, 255), None);
    separate(&input, &out, &[]).success();
    // tifffile reads the composite as 4 samples per pixel, Separated photometric.
    let code = format!(
        "import tifffile,sys\nt=tifffile.TiffFile(r'{}')\np=t.pages[0]\nassert p.photometric==5, p.photometric\nassert p.samplesperpixel==4\nprint(p.shape)",
        out.join("p.cmyk.tif").display()
    );
    let r = std::process::Command::new("python3").args(["-c", &code]).output().unwrap();
    assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
}

#[test]
fn cmyk_input_is_reseparated_and_pure_black_stays_black_only() {
    let o = Outputs::new();
    let first = o.path("first");
    let input = o.path("art.png");
    // Left half a colour picture, right half pure black text-like pixels.
    let mut px = picture(24, 12, 3, 255);
    for y in 0..12 {
        for x in 12..24 {
            let i = (y * 24 + x) * 3;
            px[i..i + 3].copy_from_slice(&[0, 0, 0]);
        }
    }
    write_png(&input, 24, 12, 3, 8, &px, None);
    separate(&input, &first, &["--keep-pure-black", "--tac", "330"]).success();
    let cmyk_in = first.join("art.cmyk.tif");
    let second = o.path("second");
    platesmith()
        .arg("separate")
        .arg(&cmyk_in)
        .arg("--out-dir")
        .arg(&second)
        .args(["--condition", "newsprint", "--source-condition", "coated-offset"])
        .assert()
        .success();
    let out = samples_u32(&read_raster(&second.join("art.cmyk.cmyk.tif"), &Limits::default()).unwrap().samples);
    let src = samples_u32(&read_raster(&cmyk_in, &Limits::default()).unwrap().samples);
    for (k, (a, b)) in src.chunks_exact(4).zip(out.chunks_exact(4)).enumerate() {
        if a[0] == 0 && a[1] == 0 && a[2] == 0 {
            assert!(b[0] == 0 && b[1] == 0 && b[2] == 0, "pixel {k}: pure black {a:?} became {b:?}");
        }
        // newsprint's ink limit (240 %, from its condition) is 612 codes.
        assert!(b.iter().sum::<u32>() <= 612, "pixel {k}: {b:?}");
    }
    let s: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(second.join("art.cmyk.summary.json")).unwrap()).unwrap();
    assert_eq!(s["source"], "CMYK for coated-offset");
}

#[test]
fn the_composite_embeds_our_output_profile() {
    // ICC.1:2022 §7.2 header fields read through lcms2: an output (prtr)
    // profile for CMYK data with a CIELAB PCS, described as platesmith's for
    // the condition; the plates carry none (one ink, no CMYK meaning).
    use lcms2::{ColorSpaceSignature, Locale, Profile, ProfileClassSignature};
    let o = Outputs::new();
    let input = o.path("tagged.png");
    write_png(&input, 8, 8, 3, 8, &picture(8, 8, 3, 255), None);
    let out = o.path("out");
    separate(&input, &out, &["--tac", "300"]).success();
    let composite = read_raster(&out.join("tagged.cmyk.tif"), &Limits::default()).unwrap();
    let bytes = composite.icc_profile.expect("the composite embeds a profile");
    let p = Profile::new_icc(&bytes).expect("lcms2 reads the embedded profile");
    assert_eq!(p.device_class(), ProfileClassSignature::OutputClass);
    assert_eq!(p.color_space(), ColorSpaceSignature::CmykData);
    assert_eq!(p.pcs(), ColorSpaceSignature::LabData);
    let description = p.info(lcms2::InfoType::Description, Locale::none()).unwrap();
    assert!(
        description.contains("platesmith") && description.contains("coated-offset") && description.contains("TAC 300 %"),
        "{description}"
    );
    let plate = read_raster(&out.join("tagged.C.tif"), &Limits::default()).unwrap();
    assert!(plate.icc_profile.is_none());
}
