//! Writes the synthetic coastal scene of the perceptual-intent tests
//! (tests/support/scene.rs: sky gradient, sea, meadow, skin tones, a
//! saturated emblem and a ramp that leaves the gamut) as an 8-bit sRGB PNG,
//! for the before-and-after proofs in docs/PERCEPTUAL.md.
//!
//! Usage: cargo run --release --example make_coast_scene -- OUT.png

#[path = "../tests/support/scene.rs"]
mod scene;

use std::fs::File;
use std::io::BufWriter;

fn main() -> std::io::Result<()> {
    let Some(out) = std::env::args().nth(1) else {
        eprintln!("usage: make_coast_scene OUT.png");
        std::process::exit(2);
    };
    let data = scene::scene();
    let file = BufWriter::new(File::create(&out)?);
    let mut enc = png::Encoder::new(file, scene::SCENE_W as u32, scene::SCENE_H as u32);
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Eight);
    enc.set_compression(png::Compression::High);
    let mut w = enc.write_header().map_err(std::io::Error::other)?;
    w.write_image_data(&data).map_err(std::io::Error::other)?;
    w.finish().map_err(std::io::Error::other)?;
    println!("wrote {out} ({} × {} px)", scene::SCENE_W, scene::SCENE_H);
    Ok(())
}
