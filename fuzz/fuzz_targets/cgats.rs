//! CGATS.17 text from arbitrary bytes (lossy UTF-8, as `cgats::read` does),
//! then the measurement columns `fit` takes from it.
#![no_main]

use libfuzzer_sys::fuzz_target;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    let path = Path::new("fuzz.cgats.txt");
    match platesmith::cgats::parse(&text, path) {
        Ok(file) => {
            for t in &file.tables {
                assert_eq!(t.rows.len(), t.row_lines.len());
                assert!(t.rows.iter().all(|r| r.len() == t.fields.len()));
            }
            if let Err(e) = platesmith::press::fit::patches_from_cgats(&file, path) {
                let line = e.to_string();
                assert!(line.starts_with("fuzz.cgats.txt") && !line.contains('\n'), "{line}");
            }
        }
        Err(e) => {
            let line = e.to_string();
            assert!(line.starts_with("fuzz.cgats.txt") && !line.contains('\n'), "{line}");
        }
    }
});
