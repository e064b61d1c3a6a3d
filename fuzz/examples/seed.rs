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
    let mut lab = String::from("CGATS.17\nORIGINATOR \"seed\"\n# comment\nNUMBER_OF_FIELDS 8\nBEGIN_DATA_FORMAT\nSAMPLE_ID CMYK_C CMYK_M CMYK_Y CMYK_K LAB_L LAB_A LAB_B\nEND_DATA_FORMAT\nNUMBER_OF_SETS 6\nBEGIN_DATA\n");
    let rows = [[0, 0, 0, 0], [100, 0, 0, 0], [0, 100, 0, 0], [0, 0, 100, 0], [0, 0, 0, 100], [50, 50, 50, 0]];
    let labs = [[95.0, 0.0, -2.0], [55.0, -37.0, -50.0], [48.0, 74.0, -3.0], [89.0, -5.0, 93.0], [16.0, 0.0, 0.0], [40.0, 2.0, 1.0]];
    for (i, (c, l)) in rows.iter().zip(labs).enumerate() {
        lab.push_str(&format!("{} {} {} {} {} {} {} {}\n", i + 1, c[0], c[1], c[2], c[3], l[0], l[1], l[2]));
    }
    lab.push_str("END_DATA\n");
    let xyz = "CGATS.17\nBEGIN_DATA_FORMAT\nSAMPLE_ID SAMPLE_NAME CMYK_C CMYK_M CMYK_Y CMYK_K XYZ_X XYZ_Y XYZ_Z\nEND_DATA_FORMAT\nBEGIN_DATA\n1 \"paper white\" 0 0 0 0 84.0 87.0 72.0\n2 \"say \"\"k\"\"\" 0 0 0 100 2.0 2.1 1.8\nEND_DATA\nKEYWORD \"NEXT\"\nBEGIN_DATA_FORMAT\nA B\nEND_DATA_FORMAT\nBEGIN_DATA\n1 2 3 4\nEND_DATA\n";
    vec![("lab.txt", lab), ("xyz.txt", xyz.to_string())]
}

fn profiles() -> Vec<(&'static str, Vec<u8>)> {
    use lcms2::{CIExyY, CIExyYTRIPLE, Profile, ToneCurve};
    let mut out = vec![("srgb.icc", Profile::new_srgb().icc().expect("sRGB profile"))];
    let white = CIExyY { x: 0.3127, y: 0.3290, Y: 1.0 };
    let primaries = CIExyYTRIPLE {
        Red: CIExyY { x: 0.68, y: 0.32, Y: 1.0 },
        Green: CIExyY { x: 0.265, y: 0.69, Y: 1.0 },
        Blue: CIExyY { x: 0.15, y: 0.06, Y: 1.0 },
    };
    let curve = ToneCurve::new(2.2);
    out.push(("wide-rgb.icc", Profile::new_rgb(&white, &primaries, &[&curve, &curve, &curve]).expect("RGB profile").icc().expect("bytes")));
    out.push(("gray.icc", Profile::new_gray(&CIExyY::d50(), &curve).expect("gray profile").icc().expect("bytes")));
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
        enc.set_pixel_dims(Some(png::PixelDimensions { xppu: 11811, yppu: 11811, unit: png::Unit::Meter }));
        let mut wr = enc.write_header().expect("png header");
        wr.write_image_data(data).expect("png data");
        wr.finish().expect("png end");
        bytes
    };
    let n = (w * h) as usize;
    let mut out = vec![
        ("rgb8.png", png(png::ColorType::Rgb, png::BitDepth::Eight, &ramp(n * 3, 1), None)),
        ("graya16.png", png(png::ColorType::GrayscaleAlpha, png::BitDepth::Sixteen, &ramp(n * 4, 3), None)),
        ("palette.png", png(png::ColorType::Indexed, png::BitDepth::Eight, &ramp(n, 1).iter().map(|v| v % 4).collect::<Vec<_>>(), Some(ramp(12, 5)))),
        ("gray1.png", png(png::ColorType::Grayscale, png::BitDepth::One, &[0xA5; 4], None)),
    ];
    let tiff = |cmyk: bool, compression: tiff::encoder::Compression| {
        let mut bytes = std::io::Cursor::new(Vec::new());
        let mut enc = tiff::encoder::TiffEncoder::new(&mut bytes).expect("tiff").with_compression(compression);
        if cmyk {
            enc.write_image::<tiff::encoder::colortype::CMYK8>(w, h, &ramp(n * 4, 2)).expect("tiff cmyk");
        } else {
            enc.write_image::<tiff::encoder::colortype::RGB16>(w, h, &(0..n * 3).map(|i| (i * 2011) as u16).collect::<Vec<_>>()).expect("tiff rgb");
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
    out
}
