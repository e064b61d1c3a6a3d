//! Image decoding from arbitrary bytes through the same path as reading a
//! file (`read_raster_bytes`): an input error, or an image whose buffer
//! matches its header. Small limits keep hostile headers cheap.
#![no_main]

use libfuzzer_sys::fuzz_target;
use platesmith::raster::{Limits, read_raster_bytes};
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let limits = Limits { max_width: 2048, max_height: 2048, max_bytes: 32 << 20 };
    match read_raster_bytes(data, Path::new("fuzz.img"), &limits) {
        Ok(r) => {
            assert_eq!(r.samples.len(), r.width as usize * r.height as usize * r.channels());
            assert_eq!(r.bits, r.samples.bits());
        }
        Err(platesmith::Error::Input { .. }) => {}
        Err(e) => panic!("not an input error: {e}"),
    }
});
