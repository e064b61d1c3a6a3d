//! ICC profiles from arbitrary bytes, both ways the program reads them: as the
//! RGB source embedded in an image, and as a CMYK printing condition.
#![no_main]

use libfuzzer_sys::fuzz_target;
use platesmith::press::icc_model::{IccModelOptions, IccPressModel};
use platesmith::source::RgbSource;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let path = Path::new("fuzz.icc");
    if let Ok(source) = RgbSource::from_icc(data, path) {
        // The table nodes go through the profile's transforms.
        let labs = source.node_labs(3);
        assert_eq!(labs.len(), 27);
        let _ = source.describe();
    }
    // A small sampling grid keeps each execution short.
    let options = IccModelOptions { grid: 3, ..IccModelOptions::default() };
    if let Err(e) = IccPressModel::from_bytes(data, path, options) {
        let line = e.to_string();
        assert!(!line.contains('\n'), "{line}");
    }
});
