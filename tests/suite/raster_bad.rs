//! Bad input for the readers: each case must give `Error::Input` naming the file with a
//! one-line reason, never a panic, and limits must refuse a hostile header before the
//! pixel buffer is allocated. Fixtures are made here, in temporary folders.

use std::io::Cursor;
use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::{Path, PathBuf};

use platesmith::Error;
use platesmith::raster::{Limits, Raster, read_raster};

use crate::rng::SplitMix64;

fn save(dir: &Path, name: &str, bytes: &[u8]) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, bytes).unwrap();
    p
}

/// The input error's message, after checking it names the file and is one line.
fn input_error(path: &Path, limits: &Limits) -> String {
    match read_raster(path, limits) {
        Err(Error::Input { path: p, message }) => {
            assert_eq!(p, path);
            assert!(!message.contains('\n'), "one-line message: {message}");
            message
        }
        Err(other) => panic!("{}: expected an input error, got {other:?}", path.display()),
        Ok(r) => panic!("{}: expected an error, read {}×{}", path.display(), r.width, r.height),
    }
}

fn small_png() -> Vec<u8> {
    let mut out = Vec::new();
    let mut enc = png::Encoder::new(&mut out, 16, 16);
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Eight);
    let mut w = enc.write_header().unwrap();
    let data: Vec<u8> = (0..16 * 16 * 3).map(|i| (i * 7 % 251) as u8).collect();
    w.write_image_data(&data).unwrap();
    w.finish().unwrap();
    out
}

fn small_tiff(compression: tiff::encoder::Compression) -> Vec<u8> {
    let mut c = Cursor::new(Vec::new());
    let data: Vec<u8> = (0..16 * 16 * 4).map(|i| (i * 13 % 251) as u8).collect();
    tiff::encoder::TiffEncoder::new(&mut c)
        .unwrap()
        .with_compression(compression)
        .write_image::<tiff::encoder::colortype::CMYK8>(16, 16, &data)
        .unwrap();
    c.into_inner()
}

fn small_jpeg(ct: jpeg_encoder::ColorType, channels: usize) -> Vec<u8> {
    let mut out = Vec::new();
    let data: Vec<u8> = (0..24 * 16 * channels).map(|i| (i * 5 % 251) as u8).collect();
    jpeg_encoder::Encoder::new(&mut out, 90).encode(&data, 24, 16, ct).unwrap();
    out
}

#[test]
fn empty_text_folder_and_missing_files() {
    let dir = tempfile::tempdir().unwrap();
    let m = input_error(&save(dir.path(), "empty.png", b""), &Limits::default());
    assert!(m.contains("empty file"), "{m}");
    let m = input_error(
        &save(dir.path(), "notes.tif", b"Proof notes: check the cyan.\n"),
        &Limits::default(),
    );
    assert!(m.contains("not a PNG, TIFF or JPEG") && m.contains("text"), "{m}");
    let m = input_error(&save(dir.path(), "blob.jpg", &[0, 1, 2, 250, 251, 3]), &Limits::default());
    assert!(m.contains("not a PNG, TIFF or JPEG"), "{m}");
    let sub = dir.path().join("art.png");
    std::fs::create_dir(&sub).unwrap();
    assert!(input_error(&sub, &Limits::default()).contains("folder"));
    assert!(input_error(&dir.path().join("absent.png"), &Limits::default()).contains("no such file"));
}

#[test]
fn truncated_files_say_so() {
    let dir = tempfile::tempdir().unwrap();
    let cases = [
        ("cut.png", small_png(), "PNG"),
        ("cut.tif", small_tiff(tiff::encoder::Compression::Uncompressed), "TIFF"),
        ("cut.jpg", small_jpeg(jpeg_encoder::ColorType::Rgb, 3), "JPEG"),
    ];
    for (name, bytes, format) in cases {
        let p = save(dir.path(), name, &bytes[..bytes.len() / 2]);
        let m = input_error(&p, &Limits::default());
        assert!(m.contains(format), "{name}: {m}");
        assert!(m.contains("truncated") || m.contains("corrupt"), "{name}: {m}");
    }
}

/// Every prefix of a valid file either fails with an input error or, when only trailing
/// bytes the decoder does not need are missing, decodes to exactly the full image.
#[test]
fn every_prefix_errors_or_decodes_exactly_and_never_panics() {
    let dir = tempfile::tempdir().unwrap();
    let files = [
        ("p.png", small_png()),
        ("t.tif", small_tiff(tiff::encoder::Compression::Uncompressed)),
        ("l.tif", small_tiff(tiff::encoder::Compression::Lzw)),
        ("j.jpg", small_jpeg(jpeg_encoder::ColorType::Rgb, 3)),
        ("k.jpg", small_jpeg(jpeg_encoder::ColorType::Cmyk, 4)),
    ];
    for (name, bytes) in files {
        let full = read_raster(&save(dir.path(), name, &bytes), &Limits::default()).unwrap();
        let step = (bytes.len() / 400).max(1);
        for cut in (0..bytes.len()).step_by(step) {
            let p = save(dir.path(), name, &bytes[..cut]);
            let got = catch_unwind(AssertUnwindSafe(|| read_raster(&p, &Limits::default())));
            match got {
                Err(_) => panic!("{name}: panic on the first {cut} of {} bytes", bytes.len()),
                Ok(Ok(r)) => assert_same(&r, &full, name, cut),
                Ok(Err(Error::Input { .. })) => {}
                Ok(Err(e)) => panic!("{name} cut at {cut}: unexpected error kind {e:?}"),
            }
        }
    }
}

fn assert_same(r: &Raster, full: &Raster, name: &str, cut: usize) {
    assert!(
        r.samples == full.samples,
        "{name}: the first {cut} bytes decoded to different pixels without an error"
    );
}

/// Random byte changes in valid files: input errors or images, never a panic.
#[test]
fn corrupted_bytes_never_panic() {
    let dir = tempfile::tempdir().unwrap();
    let files = [
        ("p.png", small_png()),
        (
            "t.tif",
            small_tiff(tiff::encoder::Compression::Deflate(tiff::encoder::DeflateLevel::Balanced)),
        ),
        ("j.jpg", small_jpeg(jpeg_encoder::ColorType::Rgb, 3)),
        ("k.jpg", small_jpeg(jpeg_encoder::ColorType::CmykAsYcck, 4)),
    ];
    let mut rng = SplitMix64(2027);
    for (name, bytes) in files {
        for round in 0..150 {
            let mut b = bytes.clone();
            for _ in 0..1 + rng.next_u64() % 4 {
                let i = (rng.next_u64() as usize) % b.len();
                b[i] = rng.next_u64() as u8;
            }
            let p = save(dir.path(), name, &b);
            let limits = Limits {
                max_width: 4096,
                max_height: 4096,
                max_bytes: 64 << 20,
            };
            let got = catch_unwind(AssertUnwindSafe(|| read_raster(&p, &limits)));
            match got {
                Err(_) => {
                    let keep = dir.path().join(format!("crash-{round}-{name}"));
                    std::fs::copy(&p, &keep).unwrap();
                    panic!("{name}: panic on corrupted input round {round}");
                }
                Ok(Ok(_)) | Ok(Err(Error::Input { .. })) => {}
                Ok(Err(e)) => panic!("{name}: unexpected error kind {e:?}"),
            }
        }
    }
}

#[test]
fn limits_refuse_a_huge_png_header_before_allocating() {
    let dir = tempfile::tempdir().unwrap();
    // A valid IHDR claiming 100 000 × 100 000 RGB (30 GB decoded) and no image data.
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, 100_000, 100_000);
        enc.set_color(png::ColorType::Rgb);
        let w = enc.write_header().unwrap();
        std::mem::forget(w); // leave the file without IDAT/IEND, as a hostile one would be
    }
    let p = save(dir.path(), "huge.png", &out);
    assert!(out.len() < 100, "the fixture is only a header");
    let m = input_error(&p, &Limits::default());
    assert!(m.contains("100000 × 100000") && m.contains("limits"), "{m}");
    // Raised limits on the side still stop it on memory, with the size it would need.
    let wide = Limits {
        max_width: 200_000,
        max_height: 200_000,
        ..Limits::default()
    };
    let m = input_error(&p, &wide);
    assert!(m.contains("27.9 GiB") && m.contains("limits"), "{m}");
}

#[test]
fn limits_refuse_a_huge_tiff_header_before_allocating() {
    let dir = tempfile::tempdir().unwrap();
    let mut c = Cursor::new(Vec::new());
    {
        let mut enc = tiff::encoder::TiffEncoder::new(&mut c).unwrap();
        let img = enc.new_image::<tiff::encoder::colortype::CMYK8>(100_000, 100_000).unwrap();
        img.finish().unwrap(); // a directory with no strips
    }
    let bytes = c.into_inner();
    let p = save(dir.path(), "huge.tif", &bytes);
    let m = input_error(&p, &Limits::default());
    assert!(m.contains("100000 × 100000") && m.contains("limits"), "{m}");

    // The same claim in a BigTIFF (8-byte offsets).
    let mut c = Cursor::new(Vec::new());
    {
        let mut enc = tiff::encoder::TiffEncoder::new_big(&mut c).unwrap();
        let img = enc.new_image::<tiff::encoder::colortype::Gray16>(100_000, 100_000).unwrap();
        img.finish().unwrap();
    }
    let p = save(dir.path(), "huge-big.tif", &c.into_inner());
    let m = input_error(&p, &Limits::default());
    assert!(m.contains("100000 × 100000") && m.contains("limits"), "{m}");
}

#[test]
fn limits_refuse_a_jpeg_whose_frame_header_claims_too_much() {
    let dir = tempfile::tempdir().unwrap();
    let mut bytes = small_jpeg(jpeg_encoder::ColorType::Luma, 1);
    // Patch the SOF0 frame header (ISO/IEC 10918-1 B.2.2): height and width follow the precision byte.
    let sof = bytes.windows(2).position(|w| w == [0xFF, 0xC0]).expect("baseline SOF0");
    bytes[sof + 5..sof + 7].copy_from_slice(&65_000u16.to_be_bytes());
    bytes[sof + 7..sof + 9].copy_from_slice(&65_000u16.to_be_bytes());
    let p = save(dir.path(), "huge.jpg", &bytes);
    let m = input_error(&p, &Limits::default());
    assert!(m.contains("65000 × 65000") && m.contains("limits"), "{m}");
}

#[test]
fn memory_limit_applies_to_ordinary_images() {
    let dir = tempfile::tempdir().unwrap();
    let p = save(dir.path(), "small.png", &small_png());
    let tight = Limits {
        max_bytes: 100,
        ..Limits::default()
    };
    let m = input_error(&p, &tight);
    assert!(m.contains("limits"), "{m}");
    assert!(
        read_raster(
            &p,
            &Limits {
                max_bytes: 16 * 16 * 3,
                ..Limits::default()
            }
        )
        .is_ok()
    );
}

#[test]
fn unsupported_layouts_are_named() {
    let dir = tempfile::tempdir().unwrap();
    let mut c = Cursor::new(Vec::new());
    tiff::encoder::TiffEncoder::new(&mut c)
        .unwrap()
        .write_image::<tiff::encoder::colortype::RGB64Float>(2, 2, &[0.5f64; 12])
        .unwrap();
    // 32-bit float is read (raster_inputs.rs); 64-bit is not.
    let m = input_error(&save(dir.path(), "float.tif", &c.into_inner()), &Limits::default());
    assert!(m.contains("unsupported") && m.contains("64") && m.contains("32-bit"), "{m}");
}

#[test]
fn reading_never_changes_the_input() {
    let dir = tempfile::tempdir().unwrap();
    let bytes = small_tiff(tiff::encoder::Compression::Lzw);
    let p = save(dir.path(), "in.tif", &bytes);
    let before = std::fs::metadata(&p).unwrap().modified().unwrap();
    read_raster(&p, &Limits::default()).unwrap();
    assert_eq!(std::fs::read(&p).unwrap(), bytes);
    assert_eq!(std::fs::metadata(&p).unwrap().modified().unwrap(), before);
}
