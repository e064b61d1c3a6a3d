//! The pictures `benches/picture_step.rs` and `examples/picture_step.rs`
//! measure the per-picture step on, shared so that both measure the same.

use platesmith::raster::{Limits, Samples, read_raster};

/// The demo picture (examples/harbour-lights.png) as 8-bit RGB.
pub fn demo() -> Vec<u8> {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/harbour-lights.png");
    let raster = read_raster(&path, &Limits::default()).expect("the demo picture");
    let mut notes = Vec::new();
    match &*platesmith::job::to_rgb(&raster, &mut notes).expect("RGB") {
        Samples::U8(v) => v.clone(),
        Samples::U16(v) => v.iter().map(|&x| (x >> 8) as u8).collect(),
    }
}

/// `rgb`'s colours pulled toward their gray, `keep` quarters of their chroma kept.
pub fn toward_gray(rgb: &[u8], keep: u32) -> Vec<u8> {
    rgb.chunks_exact(3)
        .flat_map(|p| {
            let m = (p[0] as u32 + p[1] as u32 + p[2] as u32) / 3;
            p.iter()
                .map(move |&v| ((v as u32 * keep + m * (4 - keep)) / 4) as u8)
                .collect::<Vec<_>>()
        })
        .collect()
}
