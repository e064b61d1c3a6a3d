//! Reading PNG, TIFF and JPEG: every layout and bit depth, resolution and ICC profile.
//! Fixtures are encoded here by the reference encoders of each format in Rust (png, tiff,
//! jpeg-encoder crates) into temporary folders, and read back through `read_raster`.

use std::borrow::Cow;
use std::io::Cursor;
use std::path::{Path, PathBuf};

use platesmith::raster::{Format, Layout, Limits, Raster, Resolution, Samples, read_raster};

use crate::jpeg::without_app14;
use crate::rng::SplitMix64;

fn random_u8(n: usize, seed: u64) -> Vec<u8> {
    let mut r = SplitMix64(seed);
    (0..n).map(|_| r.next_u64() as u8).collect()
}

fn random_u16(n: usize, seed: u64) -> Vec<u16> {
    let mut r = SplitMix64(seed);
    (0..n).map(|_| r.next_u64() as u16).collect()
}

fn save(dir: &Path, name: &str, bytes: &[u8]) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, bytes).unwrap();
    p
}

fn read(path: &Path) -> Raster {
    read_raster(path, &Limits::default()).unwrap_or_else(|e| panic!("{e}"))
}

// ---------------------------------------------------------------- PNG

fn png_bytes(
    w: u32,
    h: u32,
    color: png::ColorType,
    depth: png::BitDepth,
    data: &[u8],
    edit: impl FnOnce(&mut png::Info<'static>),
) -> Vec<u8> {
    let mut out = Vec::new();
    let mut info = png::Info::with_size(w, h);
    info.color_type = color;
    info.bit_depth = depth;
    edit(&mut info);
    let enc = png::Encoder::with_info(&mut out, info).unwrap();
    let mut wr = enc.write_header().unwrap();
    wr.write_image_data(data).unwrap();
    wr.finish().unwrap();
    out
}

#[test]
fn png_every_layout_at_8_and_16_bit() {
    let dir = tempfile::tempdir().unwrap();
    let (w, h) = (19u32, 7u32);
    let cases = [
        (png::ColorType::Grayscale, Layout::Gray),
        (png::ColorType::GrayscaleAlpha, Layout::GrayAlpha),
        (png::ColorType::Rgb, Layout::Rgb),
        (png::ColorType::Rgba, Layout::Rgba),
    ];
    for (i, (color, layout)) in cases.into_iter().enumerate() {
        let n = (w * h) as usize * layout.channels();
        let v8 = random_u8(n, i as u64);
        let p = save(
            dir.path(),
            &format!("{i}-8.png"),
            &png_bytes(w, h, color, png::BitDepth::Eight, &v8, |_| {}),
        );
        let r = read(&p);
        assert_eq!((r.width, r.height, r.layout, r.bits, r.format), (w, h, layout, 8, Format::Png));
        assert_eq!(r.samples, Samples::U8(v8));
        assert_eq!(r.resolution, None);
        assert_eq!(r.icc_profile, None);

        let v16 = random_u16(n, 100 + i as u64);
        // PNG stores 16-bit samples big-endian (ISO/IEC 15948 §7.1).
        let be: Vec<u8> = v16.iter().flat_map(|s| s.to_be_bytes()).collect();
        let p = save(
            dir.path(),
            &format!("{i}-16.png"),
            &png_bytes(w, h, color, png::BitDepth::Sixteen, &be, |_| {}),
        );
        let r = read(&p);
        assert_eq!((r.layout, r.bits), (layout, 16));
        let row_len = w as usize * layout.channels();
        assert_eq!(r.row(3), platesmith::raster::SampleRow::U16(&v16[3 * row_len..4 * row_len]));
        assert_eq!(r.samples, Samples::U16(v16));
    }
}

#[test]
fn png_palette_expands_to_rgb_and_rgba() {
    let dir = tempfile::tempdir().unwrap();
    let palette: Vec<u8> = vec![255, 0, 0, 0, 255, 0, 0, 0, 255, 10, 20, 30];
    let idx: Vec<u8> = (0..12u8).map(|i| i % 4).collect();
    let pal = palette.clone();
    let bytes = png_bytes(4, 3, png::ColorType::Indexed, png::BitDepth::Eight, &idx, |info| {
        info.palette = Some(Cow::Owned(pal));
    });
    let r = read(&save(dir.path(), "pal.png", &bytes));
    assert_eq!((r.layout, r.bits), (Layout::Rgb, 8));
    let want: Vec<u8> = idx
        .iter()
        .flat_map(|&i| palette[i as usize * 3..i as usize * 3 + 3].to_vec())
        .collect();
    assert_eq!(r.samples, Samples::U8(want));

    // A tRNS chunk gives the palette alpha (ISO/IEC 15948 §11.3.2.1); entries past its end are opaque.
    let pal = palette.clone();
    let bytes = png_bytes(4, 3, png::ColorType::Indexed, png::BitDepth::Eight, &idx, |info| {
        info.palette = Some(Cow::Owned(pal));
        info.trns = Some(Cow::Owned(vec![0, 128]));
    });
    let r = read(&save(dir.path(), "pal-trns.png", &bytes));
    assert_eq!(r.layout, Layout::Rgba);
    let alpha = [0u8, 128, 255, 255];
    let want: Vec<u8> = idx
        .iter()
        .flat_map(|&i| {
            let c = &palette[i as usize * 3..i as usize * 3 + 3];
            [c[0], c[1], c[2], alpha[i as usize]]
        })
        .collect();
    assert_eq!(r.samples, Samples::U8(want));
}

#[test]
fn png_resolution_and_icc_profile() {
    let dir = tempfile::tempdir().unwrap();
    let icc = random_u8(4000, 9);
    let icc2 = icc.clone();
    let bytes = png_bytes(2, 2, png::ColorType::Grayscale, png::BitDepth::Eight, &[0, 1, 2, 3], |info| {
        // 11811 px/m = 299.9994 ppi (ISO/IEC 15948 §11.3.5.3).
        info.pixel_dims = Some(png::PixelDimensions {
            xppu: 11811,
            yppu: 5906,
            unit: png::Unit::Meter,
        });
        info.icc_profile = Some(Cow::Owned(icc2));
    });
    let r = read(&save(dir.path(), "res.png", &bytes));
    let res = r.resolution.unwrap();
    assert!((res.x_ppi - 11811.0 * 0.0254).abs() < 1e-9);
    assert!((res.y_ppi - 5906.0 * 0.0254).abs() < 1e-9);
    assert_eq!(r.icc_profile.as_deref(), Some(&icc[..]));
}

#[test]
fn low_bit_gray_png_expands_to_8_bit() {
    let dir = tempfile::tempdir().unwrap();
    // 1-bit gray, 8 px per byte: 0b1010_0000 → white, black, white, black.
    let bytes = png_bytes(4, 1, png::ColorType::Grayscale, png::BitDepth::One, &[0b1010_0000], |_| {});
    let r = read(&save(dir.path(), "g1.png", &bytes));
    assert_eq!((r.layout, r.bits), (Layout::Gray, 8));
    assert_eq!(r.samples, Samples::U8(vec![255, 0, 255, 0]));
}

// ---------------------------------------------------------------- TIFF

/// A gray colour type stored WhiteIsZero (TIFF 6.0 §3), to check the reader turns it into gray levels.
struct GrayWhiteIsZero8;
impl tiff::encoder::colortype::ColorType for GrayWhiteIsZero8 {
    type Inner = u8;
    const TIFF_VALUE: tiff::tags::PhotometricInterpretation = tiff::tags::PhotometricInterpretation::WhiteIsZero;
    const BITS_PER_SAMPLE: &'static [u16] = &[8];
    const SAMPLE_FORMAT: &'static [tiff::tags::SampleFormat] = &[tiff::tags::SampleFormat::Uint];
    fn horizontal_predict(row: &[u8], result: &mut Vec<u8>) {
        result.extend_from_slice(row);
    }
}

fn tiff_bytes<C: tiff::encoder::colortype::ColorType>(
    w: u32,
    h: u32,
    data: &[C::Inner],
    edit: impl FnOnce(&mut tiff::encoder::ImageEncoder<'_, &mut Cursor<Vec<u8>>, C, tiff::encoder::TiffKindStandard>),
) -> Vec<u8>
where
    [C::Inner]: tiff::encoder::TiffValue,
{
    let mut c = Cursor::new(Vec::new());
    {
        let mut enc = tiff::encoder::TiffEncoder::new(&mut c).unwrap();
        let mut img = enc.new_image::<C>(w, h).unwrap();
        edit(&mut img);
        img.write_data(data).unwrap();
    }
    c.into_inner()
}

#[test]
fn tiff_every_layout_at_8_and_16_bit() {
    use tiff::encoder::colortype as ct;
    let dir = tempfile::tempdir().unwrap();
    let (w, h) = (23u32, 11u32);
    let px = (w * h) as usize;
    let check8 = |name: &str, bytes: Vec<u8>, layout: Layout, want: Vec<u8>| {
        let r = read(&save(dir.path(), name, &bytes));
        assert_eq!(
            (r.width, r.height, r.layout, r.bits, r.format),
            (w, h, layout, 8, Format::Tiff),
            "{name}"
        );
        assert_eq!(r.samples, Samples::U8(want), "{name}");
    };
    let g = random_u8(px, 1);
    check8("g8.tif", tiff_bytes::<ct::Gray8>(w, h, &g, |_| {}), Layout::Gray, g.clone());
    let rgb = random_u8(px * 3, 2);
    check8("rgb8.tif", tiff_bytes::<ct::RGB8>(w, h, &rgb, |_| {}), Layout::Rgb, rgb.clone());
    let rgba = random_u8(px * 4, 3);
    check8(
        "rgba8.tif",
        tiff_bytes::<ct::RGBA8>(w, h, &rgba, |_| {}),
        Layout::Rgba,
        rgba.clone(),
    );
    let cmyk = random_u8(px * 4, 4);
    check8(
        "cmyk8.tif",
        tiff_bytes::<ct::CMYK8>(w, h, &cmyk, |_| {}),
        Layout::Cmyk,
        cmyk.clone(),
    );
    let ga = random_u8(px * 2, 5);
    let ga_bytes = tiff_bytes::<ct::Gray8>(w, h, &ga, |img| {
        img.extra_samples(&[tiff::tags::ExtraSamples::UnassociatedAlpha]).unwrap();
    });
    check8("ga8.tif", ga_bytes, Layout::GrayAlpha, ga.clone());
    // WhiteIsZero is returned as gray level: 255 − stored.
    let inverted: Vec<u8> = g.iter().map(|v| 255 - v).collect();
    check8("wiz8.tif", tiff_bytes::<GrayWhiteIsZero8>(w, h, &g, |_| {}), Layout::Gray, inverted);

    let check16 = |name: &str, bytes: Vec<u8>, layout: Layout, want: Vec<u16>| {
        let r = read(&save(dir.path(), name, &bytes));
        assert_eq!((r.layout, r.bits), (layout, 16), "{name}");
        assert_eq!(r.samples, Samples::U16(want), "{name}");
    };
    let g = random_u16(px, 11);
    check16("g16.tif", tiff_bytes::<ct::Gray16>(w, h, &g, |_| {}), Layout::Gray, g.clone());
    let rgb = random_u16(px * 3, 12);
    check16("rgb16.tif", tiff_bytes::<ct::RGB16>(w, h, &rgb, |_| {}), Layout::Rgb, rgb.clone());
    let rgba = random_u16(px * 4, 13);
    check16(
        "rgba16.tif",
        tiff_bytes::<ct::RGBA16>(w, h, &rgba, |_| {}),
        Layout::Rgba,
        rgba.clone(),
    );
    let cmyk = random_u16(px * 4, 14);
    check16(
        "cmyk16.tif",
        tiff_bytes::<ct::CMYK16>(w, h, &cmyk, |_| {}),
        Layout::Cmyk,
        cmyk.clone(),
    );
    let ga = random_u16(px * 2, 15);
    let ga_bytes = tiff_bytes::<ct::Gray16>(w, h, &ga, |img| {
        // Unassociated: the samples come back as stored (associated alpha is un-premultiplied,
        // raster_inputs.rs checks it).
        img.extra_samples(&[tiff::tags::ExtraSamples::UnassociatedAlpha]).unwrap();
    });
    check16("ga16.tif", ga_bytes, Layout::GrayAlpha, ga);
}

#[test]
fn tiff_resolution_in_centimetres_and_icc_profile() {
    use tiff::encoder::{Rational, colortype::RGB8};
    let dir = tempfile::tempdir().unwrap();
    let icc = random_u8(2500, 21);
    let bytes = tiff_bytes::<RGB8>(2, 2, &[0; 12], |img| {
        // 118 px/cm × 2.54 = 299.72 ppi (TIFF 6.0 §8, ResolutionUnit 3).
        img.resolution(tiff::tags::ResolutionUnit::Centimeter, Rational { n: 118, d: 1 });
        img.encoder().write_tag(tiff::tags::Tag::IccProfile, &icc[..]).unwrap();
    });
    let r = read(&save(dir.path(), "res.tif", &bytes));
    let res = r.resolution.unwrap();
    assert!((res.x_ppi - 299.72).abs() < 1e-9 && (res.y_ppi - 299.72).abs() < 1e-9);
    assert_eq!(r.icc_profile.as_deref(), Some(&icc[..]));

    // The tiff crate writes ResolutionUnit 1 (none) by default: no physical resolution.
    let bytes = tiff_bytes::<RGB8>(2, 2, &[0; 12], |_| {});
    assert_eq!(read(&save(dir.path(), "nores.tif", &bytes)).resolution, None);
}

// ---------------------------------------------------------------- JPEG

/// Image of flat 16 × 16 blocks, so that JPEG's loss stays within a level or two.
fn blocks(w: usize, h: usize, channels: usize, seed: u64) -> Vec<u8> {
    let mut r = SplitMix64(seed);
    let colours: Vec<u8> = (0..(w / 16 + 1) * (h / 16 + 1) * channels).map(|_| r.next_u64() as u8).collect();
    let mut out = Vec::with_capacity(w * h * channels);
    for y in 0..h {
        for x in 0..w {
            let b = (y / 16) * (w / 16 + 1) + x / 16;
            out.extend_from_slice(&colours[b * channels..(b + 1) * channels]);
        }
    }
    out
}

fn jpeg(w: u16, h: u16, data: &[u8], ct: jpeg_encoder::ColorType, edit: impl FnOnce(&mut jpeg_encoder::Encoder<&mut Vec<u8>>)) -> Vec<u8> {
    let mut out = Vec::new();
    let mut enc = jpeg_encoder::Encoder::new(&mut out, 100);
    enc.set_sampling_factor(jpeg_encoder::SamplingFactor::R_4_4_4);
    edit(&mut enc);
    enc.encode(data, w, h, ct).unwrap();
    out
}

fn assert_close(got: &Samples, want: &[u8], tol: u8, what: &str) {
    let Samples::U8(got) = got else {
        panic!("{what}: expected 8-bit samples")
    };
    assert_eq!(got.len(), want.len(), "{what}");
    let worst = got.iter().zip(want).map(|(a, b)| a.abs_diff(*b)).max().unwrap_or(0);
    assert!(worst <= tol, "{what}: samples differ by up to {worst}");
}

#[test]
fn jpeg_gray_rgb_with_density_and_multi_chunk_icc() {
    let dir = tempfile::tempdir().unwrap();
    let (w, h) = (48u16, 32u16);
    let g = blocks(w.into(), h.into(), 1, 1);
    let bytes = jpeg(w, h, &g, jpeg_encoder::ColorType::Luma, |e| {
        e.set_density(jpeg_encoder::PixelDensity::dpi(200))
    });
    let r = read(&save(dir.path(), "g.jpg", &bytes));
    assert_eq!(
        (r.width, r.height, r.layout, r.bits, r.format),
        (48, 32, Layout::Gray, 8, Format::Jpeg)
    );
    assert_close(&r.samples, &g, 2, "gray");
    assert_eq!(
        r.resolution,
        Some(Resolution {
            x_ppi: 200.0,
            y_ppi: 200.0
        })
    );

    // A profile larger than one APP2 segment (65 519 bytes) is split into numbered chunks (ICC.1 annex B.4).
    let icc = random_u8(150_000, 5);
    let rgb = blocks(w.into(), h.into(), 3, 2);
    let bytes = jpeg(w, h, &rgb, jpeg_encoder::ColorType::Rgb, |e| e.add_icc_profile(&icc).unwrap());
    let r = read(&save(dir.path(), "rgb.jpg", &bytes));
    assert_eq!(r.layout, Layout::Rgb);
    assert_close(&r.samples, &rgb, 3, "rgb");
    assert_eq!(r.icc_profile.as_deref(), Some(&icc[..]));
}

#[test]
fn jpeg_adobe_cmyk_and_ycck_come_back_as_ink_amounts() {
    let dir = tempfile::tempdir().unwrap();
    let (w, h) = (64u16, 32u16);
    let ink = blocks(w.into(), h.into(), 4, 3);
    // jpeg-encoder stores CMYK the Adobe way: inverted samples and an APP14 marker.
    let cmyk = jpeg(w, h, &ink, jpeg_encoder::ColorType::Cmyk, |_| {});
    let r = read(&save(dir.path(), "cmyk.jpg", &cmyk));
    assert_eq!((r.layout, r.bits), (Layout::Cmyk, 8));
    assert_close(&r.samples, &ink, 2, "Adobe CMYK");

    let ycck = jpeg(w, h, &ink, jpeg_encoder::ColorType::CmykAsYcck, |_| {});
    let r = read(&save(dir.path(), "ycck.jpg", &ycck));
    assert_eq!(r.layout, Layout::Cmyk);
    assert_close(&r.samples, &ink, 4, "Adobe YCCK");

    // Without APP14 a four-component JPEG is plain CMYK: samples are taken as stored,
    // which here are the inverted values the encoder wrote.
    let plain = without_app14(&cmyk);
    let r = read(&save(dir.path(), "plain.jpg", &plain));
    assert_eq!(r.layout, Layout::Cmyk);
    let stored: Vec<u8> = ink.iter().map(|v| 255 - v).collect();
    assert_close(&r.samples, &stored, 2, "CMYK without APP14");
}

#[test]
fn content_decides_the_format_not_the_extension() {
    let dir = tempfile::tempdir().unwrap();
    let png = png_bytes(2, 1, png::ColorType::Grayscale, png::BitDepth::Eight, &[7, 9], |_| {});
    let r = read(&save(dir.path(), "really-a-png.jpg", &png));
    assert_eq!((r.format, r.samples.clone()), (Format::Png, Samples::U8(vec![7, 9])));
    let g = blocks(16, 16, 1, 4);
    let j = jpeg(16, 16, &g, jpeg_encoder::ColorType::Luma, |_| {});
    assert_eq!(read(&save(dir.path(), "photo.tif", &j)).format, Format::Jpeg);
    let t = tiff_bytes::<tiff::encoder::colortype::Gray8>(1, 1, &[3], |_| {});
    assert_eq!(read(&save(dir.path(), "noext", &t)).format, Format::Tiff);
}

#[test]
fn one_by_one_images() {
    let dir = tempfile::tempdir().unwrap();
    let p = png_bytes(1, 1, png::ColorType::Rgb, png::BitDepth::Eight, &[1, 2, 3], |_| {});
    let r = read(&save(dir.path(), "1.png", &p));
    assert_eq!((r.width, r.height, r.samples), (1, 1, Samples::U8(vec![1, 2, 3])));
    let t = tiff_bytes::<tiff::encoder::colortype::CMYK16>(1, 1, &[1, 2, 3, 65535], |_| {});
    assert_eq!(read(&save(dir.path(), "1.tif", &t)).samples, Samples::U16(vec![1, 2, 3, 65535]));
    let j = jpeg(1, 1, &[200], jpeg_encoder::ColorType::Luma, |_| {});
    assert_close(&read(&save(dir.path(), "1.jpg", &j)).samples, &[200], 2, "1×1 JPEG");
}

#[test]
fn demo_poster_is_an_8_bit_rgb_png_at_300_ppi() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/harbour-lights.png");
    let r = read(&path);
    assert_eq!(
        (r.width, r.height, r.layout, r.bits, r.format),
        (1800, 1200, Layout::Rgb, 8, Format::Png)
    );
    let res = r.resolution.expect("pHYs");
    // 11 811 px/m × 0.0254 m/in = 299.9994 ppi.
    assert!((res.x_ppi - 300.0).abs() < 0.01 && (res.y_ppi - 300.0).abs() < 0.01);
    assert_eq!(r.icc_profile, None, "untagged: sRGB is assumed");
}
