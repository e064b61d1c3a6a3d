//! Seed inputs for the fuzz targets, made here by the reference encoders
//! (png, tiff, jpeg-encoder, lcms2, the program's own ICC writer): small valid
//! files of every kind each target reads, written to `corpus/<target>/seed-*`.
//! Inputs the fuzzer finds are kept beside them under their hash names.

use platesmith::colour::Lab;
use platesmith::icc::{IccVersion, OutputProfileSpec, build_output_profile};
use platesmith::ink::Cmyk;
use std::path::Path;

/// `seed [DIR]`: writes into DIR/<target>/ (default: this crate's corpus folder).
fn main() {
    let root = match std::env::args_os().nth(1) {
        Some(dir) => std::path::PathBuf::from(dir),
        None => Path::new(env!("CARGO_MANIFEST_DIR")).join("corpus"),
    };
    let mut written = 0;
    let mut put = |target: &str, name: &str, bytes: &[u8]| {
        let dir = root.join(target);
        std::fs::create_dir_all(&dir).expect("corpus folder");
        std::fs::write(dir.join(format!("seed-{name}")), bytes).expect("seed file");
        written += 1;
    };
    for (name, text) in tickets() {
        put("ticket", name, text.as_bytes());
    }
    for (name, text) in cgats() {
        put("cgats", name, text.as_bytes());
    }
    for (name, bytes) in profiles() {
        put("icc", name, &bytes);
    }
    for (name, bytes) in rasters() {
        put("raster", name, &bytes);
    }
    eprintln!("{written} seed files under {}", root.display());
}

fn tickets() -> Vec<(&'static str, String)> {
    vec![
        ("full.toml", "[model]\ncondition = \"coated-offset\"\nintent = \"perceptual\"\nbpc = false\ntac = 300\ngcr = 60\nblack_start = 20\nblack_max = 95\nblack_shape = 2.0\nuca = 0\nkeep_pure_black = true\ntable_grid = 33\nsource_space = \"srgb\"\ngray = \"neutral\"\n\n[output]\nout_dir = \"separated\"\nbits = 8\nplates = \"tiff\"\ncompression = \"lzw\"\n\n[limits]\nmax_side = 40000\nmax_memory_mib = 4096\n\n[checks]\nfail_if = [\"tac > 300\"]\n".into()),
        ("small.toml", "[model]\ntac = 280\nintent = \"relative\"\n".into()),
        ("output.toml", "[output]\nbits = 16\nplates = \"png\"\n".into()),
    ]
}

fn cgats() -> Vec<(&'static str, String)> {
    let mut lab = String::from(
        "CGATS.17\nORIGINATOR \"seed\"\n# comment\nNUMBER_OF_FIELDS 8\nBEGIN_DATA_FORMAT\nSAMPLE_ID CMYK_C CMYK_M CMYK_Y CMYK_K LAB_L LAB_A LAB_B\nEND_DATA_FORMAT\nNUMBER_OF_SETS 6\nBEGIN_DATA\n",
    );
    let rows = [
        [0, 0, 0, 0],
        [100, 0, 0, 0],
        [0, 100, 0, 0],
        [0, 0, 100, 0],
        [0, 0, 0, 100],
        [50, 50, 50, 0],
    ];
    let labs = [
        [95.0, 0.0, -2.0],
        [55.0, -37.0, -50.0],
        [48.0, 74.0, -3.0],
        [89.0, -5.0, 93.0],
        [16.0, 0.0, 0.0],
        [40.0, 2.0, 1.0],
    ];
    for (i, (c, l)) in rows.iter().zip(labs).enumerate() {
        lab.push_str(&format!(
            "{} {} {} {} {} {} {} {}\n",
            i + 1,
            c[0],
            c[1],
            c[2],
            c[3],
            l[0],
            l[1],
            l[2]
        ));
    }
    lab.push_str("END_DATA\n");
    let xyz = "CGATS.17\nBEGIN_DATA_FORMAT\nSAMPLE_ID SAMPLE_NAME CMYK_C CMYK_M CMYK_Y CMYK_K XYZ_X XYZ_Y XYZ_Z\nEND_DATA_FORMAT\nBEGIN_DATA\n1 \"paper white\" 0 0 0 0 84.0 87.0 72.0\n2 \"say \"\"k\"\"\" 0 0 0 100 2.0 2.1 1.8\nEND_DATA\nKEYWORD \"NEXT\"\nBEGIN_DATA_FORMAT\nA B\nEND_DATA_FORMAT\nBEGIN_DATA\n1 2 3 4\nEND_DATA\n";
    vec![("lab.txt", lab), ("xyz.txt", xyz.to_string())]
}

fn profiles() -> Vec<(&'static str, Vec<u8>)> {
    use lcms2::{CIExyY, CIExyYTRIPLE, Profile, ToneCurve};
    let mut out = vec![("srgb.icc", Profile::new_srgb().icc().expect("sRGB profile"))];
    let white = CIExyY {
        x: 0.3127,
        y: 0.3290,
        Y: 1.0,
    };
    let primaries = CIExyYTRIPLE {
        Red: CIExyY { x: 0.68, y: 0.32, Y: 1.0 },
        Green: CIExyY { x: 0.265, y: 0.69, Y: 1.0 },
        Blue: CIExyY { x: 0.15, y: 0.06, Y: 1.0 },
    };
    let curve = ToneCurve::new(2.2);
    out.push((
        "wide-rgb.icc",
        Profile::new_rgb(&white, &primaries, &[&curve, &curve, &curve])
            .expect("RGB profile")
            .icc()
            .expect("bytes"),
    ));
    out.push((
        "gray.icc",
        Profile::new_gray(&CIExyY::d50(), &curve)
            .expect("gray profile")
            .icc()
            .expect("bytes"),
    ));
    // A CMYK output profile from a built-in condition, with the smallest tables.
    let condition = platesmith::press::builtin::by_name("coated-offset").expect("built-in condition");
    let model = condition.model.clone();
    let white_xyz = model.paper_xyz();
    let a2b = move |c: Cmyk| model.lab(c);
    let b2a = |lab: Lab| {
        let v = (1.0 - lab.l / 100.0).clamp(0.0, 1.0);
        Cmyk::new(0.0, 0.0, 0.0, v)
    };
    let gamut = |_: Lab| 0.0;
    for (name, version) in [("cmyk-v4.icc", IccVersion::V4), ("cmyk-v2.icc", IccVersion::V2)] {
        let spec = OutputProfileSpec {
            description: "seed CMYK".into(),
            copyright: "seed".into(),
            version,
            media_white: white_xyz,
            a2b: &a2b,
            a2b_perceptual: None,
            b2a: [&b2a, &b2a, &b2a],
            gamut: &gamut,
            a2b_grid: 2,
            b2a_grid: 2,
            float_b2d: None,
        };
        out.push((name, build_output_profile(&spec).expect("CMYK profile")));
    }
    out
}

fn rasters() -> Vec<(&'static str, Vec<u8>)> {
    let (w, h) = (6u32, 4u32);
    let ramp = |n: usize, k: usize| -> Vec<u8> { (0..n).map(|i| ((i * k * 37) % 256) as u8).collect() };
    let png = |color: png::ColorType, depth: png::BitDepth, data: &[u8], palette: Option<Vec<u8>>| {
        let mut bytes = Vec::new();
        let mut enc = png::Encoder::new(&mut bytes, w, h);
        enc.set_color(color);
        enc.set_depth(depth);
        if let Some(p) = palette {
            enc.set_palette(p);
            enc.set_trns(vec![0u8, 128]);
        }
        enc.set_pixel_dims(Some(png::PixelDimensions {
            xppu: 11811,
            yppu: 11811,
            unit: png::Unit::Meter,
        }));
        let mut wr = enc.write_header().expect("png header");
        wr.write_image_data(data).expect("png data");
        wr.finish().expect("png end");
        bytes
    };
    let n = (w * h) as usize;
    let mut out = vec![
        ("rgb8.png", png(png::ColorType::Rgb, png::BitDepth::Eight, &ramp(n * 3, 1), None)),
        (
            "graya16.png",
            png(png::ColorType::GrayscaleAlpha, png::BitDepth::Sixteen, &ramp(n * 4, 3), None),
        ),
        (
            "palette.png",
            png(
                png::ColorType::Indexed,
                png::BitDepth::Eight,
                &ramp(n, 1).iter().map(|v| v % 4).collect::<Vec<_>>(),
                Some(ramp(12, 5)),
            ),
        ),
        ("gray1.png", png(png::ColorType::Grayscale, png::BitDepth::One, &[0xA5; 4], None)),
    ];
    let tiff = |cmyk: bool, compression: tiff::encoder::Compression| {
        let mut bytes = std::io::Cursor::new(Vec::new());
        let mut enc = tiff::encoder::TiffEncoder::new(&mut bytes)
            .expect("tiff")
            .with_compression(compression);
        if cmyk {
            enc.write_image::<tiff::encoder::colortype::CMYK8>(w, h, &ramp(n * 4, 2))
                .expect("tiff cmyk");
        } else {
            enc.write_image::<tiff::encoder::colortype::RGB16>(w, h, &(0..n * 3).map(|i| (i * 2011) as u16).collect::<Vec<_>>())
                .expect("tiff rgb");
        }
        bytes.into_inner()
    };
    out.push(("cmyk8.tif", tiff(true, tiff::encoder::Compression::Lzw)));
    out.push(("rgb16.tif", tiff(false, tiff::encoder::Compression::Uncompressed)));
    let jpeg = |ct: jpeg_encoder::ColorType, channels: usize| {
        let mut bytes = Vec::new();
        let enc = jpeg_encoder::Encoder::new(&mut bytes, 90);
        enc.encode(&ramp(n * channels, 4), w as u16, h as u16, ct).expect("jpeg");
        bytes
    };
    out.push(("gray.jpg", jpeg(jpeg_encoder::ColorType::Luma, 1)));
    out.push(("rgb.jpg", jpeg(jpeg_encoder::ColorType::Rgb, 3)));
    out.push(("cmyk.jpg", jpeg(jpeg_encoder::ColorType::Cmyk, 4)));
    out.push(("ycck.jpg", jpeg(jpeg_encoder::ColorType::Ycck, 4)));
    out.extend(newer_inputs(w, h, &ramp(n * 4, 3)));
    out
}

/// Seeds for the input paths added with orientation, pages, associated alpha,
/// PNG colour chunks, truncated JPEG data and headers that claim a huge size.
fn newer_inputs(w: u32, h: u32, data: &[u8]) -> Vec<(&'static str, Vec<u8>)> {
    use tiff::encoder::colortype::{RGB8, RGBA8};
    use tiff::tags::Tag;
    let n = (w * h) as usize;
    let rgb = &data[..n * 3];
    let mut out = Vec::new();

    // JPEG with an EXIF APP1 segment holding Orientation 6 (rotate 90° clockwise to view).
    let exif = {
        let mut e = b"Exif\0\0II*\0\x08\0\0\0\x01\0".to_vec();
        e.extend([0x12, 0x01, 3, 0, 1, 0, 0, 0, 6, 0, 0, 0]); // tag 274, SHORT, count 1, value 6
        e.extend([0, 0, 0, 0]); // no next IFD
        e
    };
    let jpeg = |app1: Option<Vec<u8>>| {
        let mut bytes = Vec::new();
        let mut enc = jpeg_encoder::Encoder::new(&mut bytes, 90);
        if let Some(seg) = app1 {
            enc.add_app_segment(1, seg).expect("APP1");
        }
        enc.encode(rgb, w as u16, h as u16, jpeg_encoder::ColorType::Rgb).expect("jpeg");
        bytes
    };
    out.push(("exif-orientation.jpg", jpeg(Some(exif))));
    // A JPEG cut short with its end marker appended (an interrupted transfer).
    let whole = jpeg(None);
    let mut cut = whole[..whole.len() * 2 / 3].to_vec();
    cut.extend([0xFF, 0xD9]);
    out.push(("truncated.jpg", cut));
    // A JPEG whose frame header (SOF0) claims 20000 × 20000 px.
    let mut huge = whole.clone();
    if let Some(i) = huge.windows(2).position(|m| m == [0xFF, 0xC0]) {
        huge[i + 5..i + 9].copy_from_slice(&[0x4E, 0x20, 0x4E, 0x20]);
    }
    out.push(("claims-huge.jpg", huge));

    let tiff = |pages: &dyn Fn(&mut tiff::encoder::TiffEncoder<&mut std::io::Cursor<Vec<u8>>>)| {
        let mut bytes = std::io::Cursor::new(Vec::new());
        let mut enc = tiff::encoder::TiffEncoder::new(&mut bytes).expect("tiff");
        pages(&mut enc);
        bytes.into_inner()
    };
    out.push((
        "orientation.tif",
        tiff(&|enc| {
            let mut img = enc.new_image::<RGB8>(w, h).expect("image");
            img.encoder().write_tag(Tag::Orientation, 6u16).expect("tag");
            img.write_data(rgb).expect("data");
        }),
    ));
    // Two pages: a reduced-resolution thumbnail first (NewSubfileType 1), then the full image.
    out.push((
        "thumbnail-first.tif",
        tiff(&|enc| {
            let mut thumb = enc.new_image::<RGB8>(w / 2, h / 2).expect("thumbnail");
            thumb.encoder().write_tag(Tag::NewSubfileType, 1u32).expect("tag");
            thumb.write_data(&rgb[..n * 3 / 4]).expect("data");
            enc.write_image::<RGB8>(w, h, rgb).expect("full page");
        }),
    ));
    // RGBA with associated (premultiplied) alpha: ExtraSamples 1, colour ≤ alpha.
    let premultiplied: Vec<u8> = data
        .chunks_exact(4)
        .flat_map(|p| {
            let a = p[3] as u16;
            [0, 1, 2].map(|i| (p[i] as u16 * a / 255) as u8).into_iter().chain([p[3]])
        })
        .collect();
    out.push((
        "associated-alpha.tif",
        tiff(&|enc| {
            let mut img = enc.new_image::<RGBA8>(w, h).expect("image");
            img.encoder().write_tag(Tag::ExtraSamples, 1u16).expect("tag");
            img.write_data(&premultiplied).expect("data");
        }),
    ));
    out.push(("claims-huge.tif", tiff_claiming(20000, 20000, rgb)));

    // PNG with each colour chunk of the order of precedence.
    let png = |setup: &dyn Fn(&mut png::Info<'static>)| {
        let mut info = png::Info::with_size(w, h);
        info.color_type = png::ColorType::Rgb;
        info.bit_depth = png::BitDepth::Eight;
        setup(&mut info);
        let mut bytes = Vec::new();
        let enc = png::Encoder::with_info(&mut bytes, info).expect("png info");
        let mut wr = enc.write_header().expect("png header");
        wr.write_image_data(rgb).expect("png data");
        wr.finish().expect("png end");
        bytes
    };
    let srgb_icc = lcms2::Profile::new_srgb().icc().expect("sRGB profile");
    out.push(("iccp.png", png(&|i| i.icc_profile = Some(srgb_icc.clone().into()))));
    out.push(("srgb-chunk.png", png(&|i| i.srgb = Some(png::SrgbRenderingIntent::Perceptual))));
    out.push((
        "gama-chrm.png",
        png(&|i| {
            i.source_gamma = Some(png::ScaledFloat::new(1.0));
            i.source_chromaticities = Some(png::SourceChromaticities::new(
                (0.3127, 0.329),
                (0.68, 0.31),
                (0.2, 0.72),
                (0.15, 0.05),
            ));
        }),
    ));
    // A PNG whose header (IHDR) claims 20000 × 20000 px, its CRC made right.
    let mut huge = png(&|_| {});
    huge[16..24].copy_from_slice(&[0, 0, 0x4E, 0x20, 0, 0, 0x4E, 0x20]);
    let crc = crc32(&huge[12..29]);
    huge[29..33].copy_from_slice(&crc.to_be_bytes());
    out.push(("claims-huge.png", huge));
    out
}

/// A little-endian baseline RGB TIFF (one strip) whose tags claim `width` × `height`
/// while the strip holds only `data`.
fn tiff_claiming(width: u32, height: u32, data: &[u8]) -> Vec<u8> {
    let entries: [(u16, u16, u32, u32); 10] = [
        (256, 4, 1, width),             // ImageWidth, LONG
        (257, 4, 1, height),            // ImageLength
        (258, 3, 1, 8),                 // BitsPerSample (one value stands for all three)
        (259, 3, 1, 1),                 // Compression: none
        (262, 3, 1, 2),                 // PhotometricInterpretation: RGB
        (273, 4, 1, 0),                 // StripOffsets (patched below)
        (277, 3, 1, 3),                 // SamplesPerPixel
        (278, 4, 1, height),            // RowsPerStrip
        (279, 4, 1, data.len() as u32), // StripByteCounts
        (284, 3, 1, 1),                 // PlanarConfiguration: chunky
    ];
    let ifd_len = 2 + entries.len() * 12 + 4;
    let data_at = (8 + ifd_len) as u32;
    let mut b = b"II*\0\x08\0\0\0".to_vec();
    b.extend((entries.len() as u16).to_le_bytes());
    for (tag, kind, count, value) in entries {
        let value = if tag == 273 { data_at } else { value };
        b.extend(tag.to_le_bytes());
        b.extend(kind.to_le_bytes());
        b.extend(count.to_le_bytes());
        if kind == 3 {
            b.extend((value as u16).to_le_bytes());
            b.extend([0, 0]);
        } else {
            b.extend(value.to_le_bytes());
        }
    }
    b.extend([0, 0, 0, 0]);
    b.extend(data);
    b
}

/// CRC-32 of PNG chunks (ISO/IEC 15948 Annex D: polynomial 0xEDB88320, reflected).
fn crc32(bytes: &[u8]) -> u32 {
    let mut crc = !0u32;
    for &byte in bytes {
        crc ^= u32::from(byte);
        for _ in 0..8 {
            crc = if crc & 1 == 1 { (crc >> 1) ^ 0xEDB8_8320 } else { crc >> 1 };
        }
    }
    !crc
}
