//! Writes the picture of the scale benchmark (`scripts/scale.sh`): the
//! photo-like harbour of `benches/support/photo.rs` at 4000 × 3000 (12
//! megapixels), tiled to the size asked for, as an uncompressed 8-bit RGB
//! TIFF written a strip at a time by the tiff crate, so even the
//! 768-megapixel picture (2.3 GB) never sits in memory.
//!
//!   make_scale_picture MEGAPIXELS OUT.tif     MEGAPIXELS: 12, 48, 192 or 768 (4:3, a whole number of tiles)

#[path = "../benches/support/photo.rs"]
mod photo;

use std::process::ExitCode;

const TILE_W: usize = 4000;
const TILE_H: usize = 3000;
const ROWS_PER_STRIP: usize = 16;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [mp, out] = args.as_slice() else {
        eprintln!("usage: make_scale_picture MEGAPIXELS OUT.tif");
        return ExitCode::from(2);
    };
    // 12 · 4^k megapixels: 2^k tiles a side.
    let side = match mp.as_str() {
        "12" => 1,
        "48" => 2,
        "192" => 4,
        "768" => 8,
        _ => {
            eprintln!("make_scale_picture: MEGAPIXELS is 12, 48, 192 or 768");
            return ExitCode::from(2);
        }
    };
    match write(side, std::path::Path::new(out)) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("make_scale_picture: {out}: {e}");
            ExitCode::from(1)
        }
    }
}

fn write(side: usize, path: &std::path::Path) -> Result<(), tiff::TiffError> {
    let tile = photo::harbour_rgb8_sized(TILE_W, TILE_H);
    let (width, height) = (TILE_W * side, TILE_H * side);
    let file = std::io::BufWriter::with_capacity(1 << 20, std::fs::File::create(path)?);
    let mut enc = tiff::encoder::TiffEncoder::new(file)?;
    let mut image = enc.new_image::<tiff::encoder::colortype::RGB8>(width as u32, height as u32)?;
    image.rows_per_strip(ROWS_PER_STRIP as u32)?;
    let mut strip = Vec::with_capacity(width * 3 * ROWS_PER_STRIP);
    for y0 in (0..height).step_by(ROWS_PER_STRIP) {
        strip.clear();
        for y in y0..(y0 + ROWS_PER_STRIP).min(height) {
            let row = &tile[(y % TILE_H) * TILE_W * 3..][..TILE_W * 3];
            for _ in 0..side {
                strip.extend_from_slice(row);
            }
        }
        image.write_strip(&strip)?;
    }
    image.finish()
}
