//! The composite CMYK TIFF, plate TIFFs and plate PNGs, checked against TIFF 6.0 and
//! ISO/IEC 15948 (PNG) by three readers: a field-level IFD parse written here from the
//! TIFF 6.0 text (§2 "Image File Directory"), the tiff crate's decoder, and, when Python
//! tifffile is installed, scripts/check_tiff.py.

use std::io::Cursor;
use std::path::Path;
use std::process::Command;

use platesmith::raster::{
    CmykImage, Compression, Ink, Layout, Limits, Resolution, Samples, TiffOptions, read_raster, write_cmyk_tiff, write_plate_png,
    write_plate_tiff,
};

use crate::rng::SplitMix64;

/// A CMYK image whose samples mix smooth ramps (which the predictor helps) with noise.
fn cmyk(width: u32, height: u32, bits: u8, seed: u64) -> CmykImage {
    let mut rng = SplitMix64(seed);
    let n = width as usize * height as usize * 4;
    let samples = if bits == 8 {
        Samples::U8(
            (0..n)
                .map(|i| if i % 3 == 0 { (i / 4 % 256) as u8 } else { rng.next_u64() as u8 })
                .collect(),
        )
    } else {
        Samples::U16(
            (0..n)
                .map(|i| {
                    if i % 3 == 0 {
                        (i * 37 % 65536) as u16
                    } else {
                        rng.next_u64() as u16
                    }
                })
                .collect(),
        )
    };
    CmykImage::new(width, height, samples).unwrap()
}

fn fake_profile(len: usize) -> Vec<u8> {
    // Content is irrelevant to the container: the tag must carry these exact bytes.
    let mut rng = SplitMix64(7);
    (0..len).map(|_| rng.next_u64() as u8).collect()
}

/// One IFD entry as stored: tag, field type, count and the value bytes (inline or pointed to).
#[derive(Debug)]
struct Field {
    tag: u16,
    ty: u16,
    count: u32,
    bytes: Vec<u8>,
}

/// Parses the first IFD of a classic TIFF (TIFF 6.0 §2), with its own reading of the bytes.
fn parse_ifd(file: &[u8]) -> Vec<Field> {
    let le = match &file[0..4] {
        b"II*\0" => true,
        b"MM\0*" => false,
        other => panic!("not a classic TIFF header: {other:?}"),
    };
    let u16_at = |o: usize| {
        let b = [file[o], file[o + 1]];
        if le { u16::from_le_bytes(b) } else { u16::from_be_bytes(b) }
    };
    let u32_at = |o: usize| {
        let b = [file[o], file[o + 1], file[o + 2], file[o + 3]];
        if le { u32::from_le_bytes(b) } else { u32::from_be_bytes(b) }
    };
    let ifd = u32_at(4) as usize;
    let n = u16_at(ifd) as usize;
    let mut out = Vec::new();
    let mut last_tag = 0;
    for i in 0..n {
        let e = ifd + 2 + 12 * i;
        let (tag, ty, count) = (u16_at(e), u16_at(e + 2), u32_at(e + 4));
        assert!(tag > last_tag, "IFD entries must be sorted ascending (TIFF 6.0 §2)");
        last_tag = tag;
        let size = match ty {
            1 | 2 | 6 | 7 => 1,
            3 | 8 => 2,
            4 | 9 | 11 => 4,
            5 | 10 | 12 => 8,
            other => panic!("unknown field type {other}"),
        } * count as usize;
        let bytes = if size <= 4 {
            file[e + 8..e + 8 + size].to_vec()
        } else {
            let off = u32_at(e + 8) as usize;
            file[off..off + size].to_vec()
        };
        out.push(Field { tag, ty, count, bytes });
    }
    out
}

fn field(fields: &[Field], tag: u16) -> Option<&Field> {
    fields.iter().find(|f| f.tag == tag)
}

fn short(fields: &[Field], tag: u16) -> u16 {
    let f = field(fields, tag).unwrap_or_else(|| panic!("tag {tag} missing"));
    assert_eq!(f.ty, 3, "tag {tag} should be SHORT");
    u16::from_ne_bytes([f.bytes[0], f.bytes[1]])
}

fn rational(fields: &[Field], tag: u16) -> f64 {
    let f = field(fields, tag).unwrap_or_else(|| panic!("tag {tag} missing"));
    assert_eq!(f.ty, 5, "tag {tag} should be RATIONAL");
    let n = u32::from_ne_bytes(f.bytes[0..4].try_into().unwrap());
    let d = u32::from_ne_bytes(f.bytes[4..8].try_into().unwrap());
    f64::from(n) / f64::from(d)
}

fn write_to_vec(f: impl FnOnce(&mut Cursor<Vec<u8>>) -> std::io::Result<()>) -> Vec<u8> {
    let mut c = Cursor::new(Vec::new());
    f(&mut c).unwrap();
    c.into_inner()
}

fn decode_tiff(bytes: &[u8]) -> (tiff::ColorType, tiff::decoder::DecodingResult) {
    let mut d = tiff::decoder::Decoder::new(Cursor::new(bytes)).unwrap();
    let ct = d.colortype().unwrap();
    (ct, d.read_image().unwrap())
}

fn channel(image: &CmykImage, ink: Ink) -> Vec<u32> {
    match &image.samples {
        Samples::U8(v) => v.chunks_exact(4).map(|p| u32::from(p[ink.index()])).collect(),
        Samples::U16(v) => v.chunks_exact(4).map(|p| u32::from(p[ink.index()])).collect(),
    }
}

fn as_u32(r: &tiff::decoder::DecodingResult) -> Vec<u32> {
    match r {
        tiff::decoder::DecodingResult::U8(v) => v.iter().map(|&x| u32::from(x)).collect(),
        tiff::decoder::DecodingResult::U16(v) => v.iter().map(|&x| u32::from(x)).collect(),
        _ => panic!("unexpected sample type"),
    }
}

fn all(image: &CmykImage) -> Vec<u32> {
    match &image.samples {
        Samples::U8(v) => v.iter().map(|&x| u32::from(x)).collect(),
        Samples::U16(v) => v.iter().map(|&x| u32::from(x)).collect(),
    }
}

#[test]
fn composite_tags_follow_tiff_6_separated_cmyk() {
    let image = cmyk(37, 23, 8, 1);
    let icc = fake_profile(3001);
    let opts = TiffOptions {
        compression: Compression::None,
        resolution: None,
        icc_profile: Some(&icc),
    };
    let file = write_to_vec(|w| write_cmyk_tiff(w, &image, &opts));
    let f = parse_ifd(&file);
    // TIFF 6.0 §16: PhotometricInterpretation 5 = Separated, InkSet 1 = CMYK.
    assert_eq!(short(&f, 262), 5);
    assert_eq!(short(&f, 332), 1);
    assert_eq!(short(&f, 277), 4);
    assert_eq!(short(&f, 259), 1);
    assert_eq!(short(&f, 284), 1, "chunky (interleaved) planar configuration");
    let bits = field(&f, 258).unwrap();
    assert_eq!((bits.ty, bits.count), (3, 4));
    assert!(bits.bytes.chunks(2).all(|b| u16::from_ne_bytes([b[0], b[1]]) == 8));
    // ICC.1:2022 annex B.4: tag 34675, type UNDEFINED (7), the profile bytes unchanged.
    let iccf = field(&f, 34675).expect("ICC profile tag");
    assert_eq!(iccf.ty, 7);
    assert_eq!(iccf.count as usize, icc.len());
    assert_eq!(iccf.bytes, icc);
    // No resolution given: 300 ppi (the project's default), unit inch (2).
    assert_eq!(short(&f, 296), 2);
    assert_eq!(rational(&f, 282), 300.0);
    assert_eq!(rational(&f, 283), 300.0);
}

#[test]
fn composite_keeps_the_input_resolution_and_omits_absent_profile() {
    let image = cmyk(5, 4, 16, 2);
    let res = Resolution {
        x_ppi: 254.0,
        y_ppi: 127.5,
    };
    let opts = TiffOptions {
        compression: Compression::Lzw,
        resolution: Some(res),
        icc_profile: None,
    };
    let file = write_to_vec(|w| write_cmyk_tiff(w, &image, &opts));
    let f = parse_ifd(&file);
    assert_eq!(rational(&f, 282), 254.0);
    assert_eq!(rational(&f, 283), 127.5);
    assert!(field(&f, 34675).is_none());
    assert_eq!(short(&f, 259), 5);
    assert_eq!(short(&f, 317), 2, "horizontal predictor with LZW");
}

#[test]
fn composite_round_trips_through_the_tiff_crate_for_every_compression_and_depth() {
    for bits in [8, 16] {
        // 300 × 700 at 16 bit spans several strips.
        for (w, h) in [(1, 1), (300, 700), (33, 9)] {
            let image = cmyk(w, h, bits, u64::from(w * h) + u64::from(bits));
            for compression in [Compression::None, Compression::Lzw, Compression::Deflate] {
                let opts = TiffOptions {
                    compression,
                    ..Default::default()
                };
                let file = write_to_vec(|wr| write_cmyk_tiff(wr, &image, &opts));
                let (ct, data) = decode_tiff(&file);
                assert_eq!(ct, tiff::ColorType::CMYK(bits), "{compression:?} {bits} bit");
                assert_eq!(as_u32(&data), all(&image), "{compression:?} {bits} bit {w}×{h}");
            }
        }
    }
}

#[test]
fn composite_reads_back_through_read_raster() {
    let dir = tempfile::tempdir().unwrap();
    let image = cmyk(64, 48, 16, 3);
    let icc = fake_profile(500);
    let opts = TiffOptions {
        compression: Compression::Deflate,
        resolution: Some(Resolution {
            x_ppi: 600.0,
            y_ppi: 600.0,
        }),
        icc_profile: Some(&icc),
    };
    let path = dir.path().join("job.cmyk.tif");
    std::fs::write(&path, write_to_vec(|w| write_cmyk_tiff(w, &image, &opts))).unwrap();
    let r = read_raster(&path, &Limits::default()).unwrap();
    assert_eq!((r.width, r.height, r.layout, r.bits), (64, 48, Layout::Cmyk, 16));
    assert_eq!(r.samples, image.samples);
    assert_eq!(r.icc_profile.as_deref(), Some(&icc[..]));
    assert_eq!(
        r.resolution,
        Some(Resolution {
            x_ppi: 600.0,
            y_ppi: 600.0
        })
    );
}

#[test]
fn plates_store_the_ink_value_as_white_is_zero() {
    for bits in [8u8, 16] {
        let image = cmyk(300, 700, bits, 11);
        let max = if bits == 8 { 255 } else { 65535 };
        for compression in [Compression::None, Compression::Lzw, Compression::Deflate] {
            for ink in Ink::ALL {
                let icc = fake_profile(100);
                let opts = TiffOptions {
                    compression,
                    resolution: None,
                    icc_profile: Some(&icc),
                };
                let file = write_to_vec(|w| write_plate_tiff(w, &image, ink, &opts));
                let f = parse_ifd(&file);
                assert_eq!(short(&f, 262), 0, "TIFF 6.0 §3: WhiteIsZero");
                assert_eq!(short(&f, 277), 1);
                assert!(field(&f, 332).is_none(), "no InkSet on a single-ink image");
                assert!(field(&f, 34675).is_none(), "a CMYK profile does not describe one ink");
                let want = channel(&image, ink);
                if compression == Compression::None {
                    // Stored samples read straight from the strips: the ink value itself.
                    let offs = field(&f, 273).unwrap();
                    let counts = field(&f, 279).unwrap();
                    let mut stored = Vec::new();
                    for (o, c) in offs.bytes.chunks(4).zip(counts.bytes.chunks(4)) {
                        let o = u32::from_ne_bytes(o.try_into().unwrap()) as usize;
                        let c = u32::from_ne_bytes(c.try_into().unwrap()) as usize;
                        stored.extend_from_slice(&file[o..o + c]);
                    }
                    let stored: Vec<u32> = if bits == 8 {
                        stored.iter().map(|&b| u32::from(b)).collect()
                    } else {
                        stored.chunks(2).map(|b| u32::from(u16::from_ne_bytes([b[0], b[1]]))).collect()
                    };
                    assert_eq!(stored, want, "{ink:?} {bits} bit");
                }
                // The tiff crate turns WhiteIsZero into gray levels: max − stored.
                let (ct, data) = decode_tiff(&file);
                assert_eq!(ct, tiff::ColorType::Gray(bits));
                let gray = as_u32(&data);
                assert!(
                    gray.iter().zip(&want).all(|(g, i)| g + i == max),
                    "{ink:?} {compression:?} {bits} bit"
                );
            }
        }
    }
}

#[test]
fn png_plate_shows_ink_dark_on_white_with_phys() {
    for bits in [8u8, 16] {
        let image = cmyk(40, 30, bits, 5);
        let res = Resolution {
            x_ppi: 300.0,
            y_ppi: 150.0,
        };
        let file = write_to_vec(|w| write_plate_png(w, &image, Ink::Magenta, Some(res)));
        let mut dec = png::Decoder::new(Cursor::new(&file)).read_info().unwrap();
        let info = dec.info();
        assert_eq!((info.color_type, info.bit_depth), (png::ColorType::Grayscale, png::BitDepth::Eight));
        // pHYs in pixels per metre: 300 ppi / 0.0254 m = 11811.02 → 11811.
        let dims = info.pixel_dims.unwrap();
        assert_eq!((dims.xppu, dims.yppu, dims.unit), (11811, 5906, png::Unit::Meter));
        let mut buf = vec![0; dec.output_buffer_size().unwrap()];
        dec.next_frame(&mut buf).unwrap();
        let ink = channel(&image, Ink::Magenta);
        for (g, i) in buf.iter().zip(&ink) {
            let i8 = if bits == 8 { *i } else { (f64::from(*i) / 257.0).round() as u32 };
            assert_eq!(u32::from(*g), 255 - i8);
        }
    }
}

#[test]
fn independent_reader_tifffile_agrees() {
    if !crate::tifffile_available() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let icc = fake_profile(777);
    let icc_path = dir.path().join("profile.icc");
    std::fs::write(&icc_path, &icc).unwrap();
    let mut files = Vec::new();
    let raw = |path: &Path, values: &[u32], bits: u8| {
        let bytes: Vec<u8> = if bits == 8 {
            values.iter().map(|&v| v as u8).collect()
        } else {
            values.iter().flat_map(|&v| (v as u16).to_ne_bytes()).collect()
        };
        std::fs::write(path, bytes).unwrap();
    };
    for (bits, compression, code) in [(8u8, Compression::None, 1), (16, Compression::Lzw, 5), (8, Compression::Deflate, 8)] {
        let image = cmyk(123, 45, bits, u64::from(bits) * 3 + code);
        let res = Resolution {
            x_ppi: 300.0,
            y_ppi: 300.0,
        };
        let opts = TiffOptions {
            compression,
            resolution: Some(res),
            icc_profile: Some(&icc),
        };
        let name = format!("c{bits}_{code}");
        let path = dir.path().join(format!("{name}.cmyk.tif"));
        std::fs::write(&path, write_to_vec(|w| write_cmyk_tiff(w, &image, &opts))).unwrap();
        let samples = dir.path().join(format!("{name}.raw"));
        raw(&samples, &all(&image), bits);
        files.push(serde_json::json!({
            "path": path, "photometric": 5, "samples_per_pixel": 4, "bits": bits, "compression": code,
            "inkset": 1, "icc_path": icc_path, "x_ppi": 300.0, "y_ppi": 300.0, "samples_path": samples,
        }));
        for ink in Ink::ALL {
            let path = dir.path().join(format!("{name}.{}.tif", ink.letter()));
            std::fs::write(&path, write_to_vec(|w| write_plate_tiff(w, &image, ink, &opts))).unwrap();
            let samples = dir.path().join(format!("{name}.{}.raw", ink.letter()));
            raw(&samples, &channel(&image, ink), bits);
            files.push(serde_json::json!({
                "path": path, "photometric": 0, "samples_per_pixel": 1, "bits": bits, "compression": code,
                "icc_path": null, "x_ppi": 300.0, "y_ppi": 300.0, "samples_path": samples,
            }));
        }
    }
    let spec = dir.path().join("spec.json");
    std::fs::write(&spec, serde_json::to_vec(&serde_json::json!({ "files": files })).unwrap()).unwrap();
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("scripts/check_tiff.py");
    let out = Command::new("python3").arg(script).arg(&spec).output().unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    println!("{text}{}", String::from_utf8_lossy(&out.stderr));
    assert!(out.status.success(), "tifffile disagrees:\n{text}");
    assert_eq!(text.lines().filter(|l| l.starts_with("ok")).count(), 15);
}
