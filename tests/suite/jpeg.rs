//! JPEG stream surgery shared by the tests that read JPEG files.

/// Removes the Adobe APP14 segment (marker FF EE) from a JPEG stream (ISO/IEC 10918-1 B.1.1.4).
pub fn without_app14(jpeg: &[u8]) -> Vec<u8> {
    let mut i = 2;
    while jpeg[i] == 0xFF && jpeg[i + 1] != 0xDA {
        let len = u16::from_be_bytes([jpeg[i + 2], jpeg[i + 3]]) as usize;
        if jpeg[i + 1] == 0xEE {
            return [&jpeg[..i], &jpeg[i + 2 + len..]].concat();
        }
        i += 2 + len;
    }
    panic!("no APP14 segment");
}
