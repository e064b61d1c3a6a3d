//! `platesmith proof` driven as a user would. The outside reference is lcms2:
//! the proof of a CMYK file must equal lcms2's own CMYK → sRGB transform
//! through the exported profile (`platesmith profile`) and lcms2's built-in
//! sRGB profile (IEC 61966-2-1), within 1 code value.

use assert_cmd::Command;
use lcms2::{Flags, GlobalContext, Intent, PixelFormat, Profile, Transform};
use platesmith::raster::{CmykImage, Compression, Layout, Limits, Samples, TiffOptions, read_raster, write_cmyk_tiff};
use std::path::Path;

fn platesmith() -> Command {
    Command::cargo_bin("platesmith").unwrap()
}

/// A CMYK TIFF whose pixels run through ink builds of every kind: a
/// 9-step grid of C, M, Y, K (6561 pixels).
fn cmyk_file(path: &Path) -> Vec<[u8; 4]> {
    let steps = [0u8, 32, 64, 96, 128, 160, 192, 224, 255];
    let mut px = Vec::new();
    for c in steps {
        for m in steps {
            for y in steps {
                for k in steps {
                    px.push([c, m, y, k]);
                }
            }
        }
    }
    let image = CmykImage::new(81, 81, Samples::U8(px.iter().flatten().copied().collect())).unwrap();
    let mut f = std::fs::File::create(path).unwrap();
    write_cmyk_tiff(
        &mut f,
        &image,
        &TiffOptions {
            compression: Compression::None,
            resolution: None,
            icc_profile: None,
        },
    )
    .unwrap();
    px
}

fn rgb_of(path: &Path) -> (u32, u32, Vec<u8>) {
    let r = read_raster(path, &Limits::default()).unwrap();
    assert_eq!((r.layout, r.bits), (Layout::Rgb, 8));
    let Samples::U8(v) = r.samples else { panic!("8-bit") };
    (r.width, r.height, v)
}

#[test]
fn proof_of_cmyk_equals_lcms2_through_the_exported_profile() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("builds.tif");
    let px = cmyk_file(&input);
    let model = ["--condition", "coated-offset", "--tac", "300"];
    let icc = dir.path().join("press.icc");
    platesmith().args(["profile", "--out"]).arg(&icc).args(model).assert().success();
    let press = Profile::new_icc(&std::fs::read(&icc).unwrap()).unwrap();
    let srgb = Profile::new_srgb();
    for (flag, intent) in [
        (None, Intent::RelativeColorimetric),
        (Some("--paper-white"), Intent::AbsoluteColorimetric),
    ] {
        let out = dir.path().join(format!("proof-{intent:?}.png"));
        let mut cmd = platesmith();
        cmd.arg("proof").arg(&input).arg("--out").arg(&out).args(model);
        if let Some(f) = flag {
            cmd.arg(f);
        }
        cmd.assert().success();
        let (w, h, got) = rgb_of(&out);
        assert_eq!((w, h), (81, 81));
        let t: Transform<[u8; 4], [u8; 3], GlobalContext, lcms2::DisallowCache> = Transform::new_flags_context(
            GlobalContext::new(),
            &press,
            PixelFormat::CMYK_8,
            &srgb,
            PixelFormat::RGB_8,
            intent,
            Flags::NO_CACHE | Flags::NO_OPTIMIZE,
        )
        .unwrap();
        let mut want = vec![[0u8; 3]; px.len()];
        t.transform_pixels(&px, &mut want);
        let mut worst = 0i32;
        let mut off = 0usize;
        for (i, w) in want.iter().enumerate() {
            let d = (0..3).map(|c| (got[3 * i + c] as i32 - w[c] as i32).abs()).max().unwrap();
            worst = worst.max(d);
            off += (d > 0) as usize;
            assert!(
                d <= 1,
                "{intent:?}: CMYK {:?} proofs as {:?}, lcms2 says {w:?}",
                px[i],
                &got[3 * i..3 * i + 3]
            );
        }
        println!(
            "{intent:?}: proof vs lcms2: largest difference {worst} code value(s), {off} of {} pixels differ",
            px.len()
        );
        // Paper: white without paper simulation, the paper's own tint with it.
        let paper = &got[0..3];
        match flag {
            None => assert_eq!(paper, [255, 255, 255]),
            Some(_) => assert!(paper.iter().any(|&v| v < 255), "{paper:?}"),
        }
    }
}

#[test]
fn rgb_input_side_by_side_and_progressives() {
    let dir = tempfile::tempdir().unwrap();
    let input = dir.path().join("art.png");
    // A small gradient picture written through the png crate (sRGB assumed: no profile).
    let (w, h) = (24u32, 12u32);
    let mut data = Vec::new();
    for y in 0..h {
        for x in 0..w {
            data.extend([(x * 255 / (w - 1)) as u8, (y * 255 / (h - 1)) as u8, 128]);
        }
    }
    {
        let f = std::fs::File::create(&input).unwrap();
        let mut enc = png::Encoder::new(f, w, h);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        enc.write_header().unwrap().write_image_data(&data).unwrap();
    }
    let before = std::fs::read(&input).unwrap();
    let out = dir.path().join("look.png");
    platesmith()
        .arg("proof")
        .arg(&input)
        .arg("--out")
        .arg(&out)
        .args(["--side-by-side", "--progressives", "--table-grid", "17"])
        .assert()
        .success();
    let (sw, sh, both) = rgb_of(&out);
    assert_eq!((sw, sh), (2 * w, h));
    // The left half is the original: sRGB shown on sRGB is unchanged (±1 for
    // the round trip through CIELAB).
    for y in 0..h as usize {
        for x in 0..w as usize {
            for c in 0..3 {
                let (a, b) = (
                    both[(y * 2 * w as usize + x) * 3 + c] as i32,
                    data[(y * w as usize + x) * 3 + c] as i32,
                );
                assert!((a - b).abs() <= 1, "({x}, {y}): {a} vs {b}");
            }
        }
    }
    // Progressives: cyan alone has no red light absorbed less than the full build.
    let names = ["1-c", "2-cm", "3-cmy", "4-cmyk"];
    let images: Vec<Vec<u8>> = names.iter().map(|n| rgb_of(&dir.path().join(format!("look.{n}.png"))).2).collect();
    let right: Vec<u8> = (0..h as usize)
        .flat_map(|y| both[(y * 2 * w as usize + w as usize) * 3..(y + 1) * 2 * w as usize * 3].to_vec())
        .collect();
    assert_eq!(images[3], right, "the full progressive is the proof");
    // Each added ink can only darken (ink absorbs light): sum of values falls.
    let sum = |v: &Vec<u8>| v.iter().map(|&x| x as u64).sum::<u64>();
    assert!(sum(&images[0]) >= sum(&images[1]) && sum(&images[1]) >= sum(&images[2]) && sum(&images[2]) >= sum(&images[3]));
    assert_eq!(std::fs::read(&input).unwrap(), before, "input changed");
    // Existing outputs are kept without --force.
    platesmith()
        .arg("proof")
        .arg(&input)
        .arg("--out")
        .arg(&out)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("--force"));
}

#[test]
fn bad_input_is_an_error_naming_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let bad = dir.path().join("not-an-image.png");
    std::fs::write(&bad, b"plain text").unwrap();
    let out = dir.path().join("p.png");
    platesmith()
        .arg("proof")
        .arg(&bad)
        .arg("--out")
        .arg(&out)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("not-an-image.png"));
    let input = dir.path().join("builds.tif");
    cmyk_file(&input);
    let display = dir.path().join("display.icc");
    std::fs::write(&display, b"no profile here, just some words to fill the file up").unwrap();
    platesmith()
        .arg("proof")
        .arg(&input)
        .arg("--out")
        .arg(&out)
        .arg("--display-profile")
        .arg(&display)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("display.icc"));
    // CMYK without an embedded profile has no original to show.
    platesmith()
        .arg("proof")
        .arg(&input)
        .arg("--out")
        .arg(&out)
        .arg("--side-by-side")
        .assert()
        .code(2)
        .stderr(predicates::str::contains("no embedded profile"));
    // The reading limits apply, from the flags and from the ticket.
    platesmith()
        .arg("proof")
        .arg(&input)
        .arg("--out")
        .arg(&out)
        .args(["--max-side", "80"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("builds.tif"));
    let ticket = dir.path().join("job.toml");
    std::fs::write(&ticket, "[limits]\nmax_side = 80\n").unwrap();
    platesmith()
        .arg("proof")
        .arg(&input)
        .arg("--out")
        .arg(&out)
        .arg("--ticket")
        .arg(&ticket)
        .assert()
        .code(2)
        .stderr(predicates::str::contains("builds.tif"));
    assert!(!out.exists());
    platesmith()
        .arg("proof")
        .arg(&input)
        .arg("--out")
        .arg(&out)
        .args(["--max-side", "81"])
        .assert()
        .success();
}
