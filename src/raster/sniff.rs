//! Format detection from the first bytes of a file, and the small JPEG header
//! scan for what the decoder does not report (JFIF density, EXIF resolution,
//! the Adobe APP14 marker that flags inverted CMYK).

use super::{Format, Resolution};

/// The format named by the file's signature, if any.
/// PNG: ISO/IEC 15948 §5.2; TIFF: TIFF 6.0 §2 ("II*\0" / "MM\0*") and BigTIFF (43);
/// JPEG: ISO/IEC 10918-1 SOI marker followed by another marker.
pub(crate) fn detect(head: &[u8]) -> Option<Format> {
    const PNG: &[u8] = b"\x89PNG\r\n\x1a\n";
    if head.starts_with(PNG) {
        return Some(Format::Png);
    }
    if head.starts_with(b"II*\0") || head.starts_with(b"MM\0*") || head.starts_with(b"II+\0") || head.starts_with(b"MM\0+") {
        return Some(Format::Tiff);
    }
    if head.len() >= 3 && head[0] == 0xFF && head[1] == 0xD8 && head[2] == 0xFF {
        return Some(Format::Jpeg);
    }
    None
}

/// The format a file name's extension suggests (for messages only).
pub(crate) fn format_from_extension(path: &std::path::Path) -> Option<Format> {
    let ext = path.extension()?.to_str()?.to_ascii_lowercase();
    match ext.as_str() {
        "png" => Some(Format::Png),
        "tif" | "tiff" => Some(Format::Tiff),
        "jpg" | "jpeg" | "jpe" => Some(Format::Jpeg),
        _ => None,
    }
}

/// What the JPEG header says beyond the decoder's report.
#[derive(Debug, Default, Clone, PartialEq)]
pub(crate) struct JpegHeader {
    pub resolution: Option<Resolution>,
    /// An Adobe APP14 segment is present: CMYK samples are stored inverted (0 = solid ink).
    pub adobe: bool,
    /// The Adobe transform flag (0 none/CMYK, 1 YCbCr, 2 YCCK).
    pub adobe_transform: Option<u8>,
    /// An end-of-image marker follows the first scan: the entropy-coded data is complete.
    /// (Entropy-coded bytes stuff every 0xFF with 0x00, so FF D9 after the first SOS is the EOI.)
    pub complete: bool,
    /// The EXIF Orientation tag (274) of IFD0, if present.
    pub orientation: Option<u16>,
}

/// Walks the markers before the first scan (ISO/IEC 10918-1 annex B).
pub(crate) fn scan_jpeg(data: &[u8]) -> JpegHeader {
    let mut out = JpegHeader::default();
    let mut jfif: Option<Resolution> = None;
    let mut exif: Option<Resolution> = None;
    let mut i = 2;
    while i + 4 <= data.len() {
        if data[i] != 0xFF {
            break;
        }
        let marker = data[i + 1];
        if marker == 0xFF {
            i += 1; // fill byte
            continue;
        }
        if marker == 0xDA {
            out.complete = data[i..].windows(2).any(|w| w == [0xFF, 0xD9]);
            break;
        }
        if marker == 0xD9 {
            break;
        }
        if (0xD0..=0xD7).contains(&marker) || marker == 0x01 {
            i += 2;
            continue;
        }
        let len = usize::from(u16::from_be_bytes([data[i + 2], data[i + 3]]));
        if len < 2 || i + 2 + len > data.len() {
            break;
        }
        let seg = &data[i + 4..i + 2 + len];
        match marker {
            // JFIF APP0: "JFIF\0", version (2), units (1), Xdensity (2), Ydensity (2). JFIF 1.02.
            0xE0 if seg.len() >= 12 && seg.starts_with(b"JFIF\0") => {
                let units = seg[7];
                let x = f64::from(u16::from_be_bytes([seg[8], seg[9]]));
                let y = f64::from(u16::from_be_bytes([seg[10], seg[11]]));
                jfif = match units {
                    1 => Resolution { x_ppi: x, y_ppi: y }.valid(),
                    2 => Resolution {
                        x_ppi: x * 2.54,
                        y_ppi: y * 2.54,
                    }
                    .valid(),
                    _ => None,
                };
            }
            0xE1 if seg.starts_with(b"Exif\0\0") => {
                let (resolution, orientation) = exif_ifd0(&seg[6..]);
                exif = resolution;
                out.orientation = orientation;
            }
            // Adobe APP14: "Adobe", version (2), flags0 (2), flags1 (2), transform (1).
            0xEE if seg.starts_with(b"Adobe") => {
                out.adobe = true;
                out.adobe_transform = seg.get(11).copied();
            }
            _ => {}
        }
        i += 2 + len;
    }
    out.resolution = jfif.or(exif);
    out
}

/// Width, height, samples per pixel and bits per sample claimed by a PNG's IHDR chunk
/// (ISO/IEC 15948 §11.2.2), read before the decoder runs. Palette images count 4 channels
/// (the most they expand to).
pub(crate) fn png_header(head: &[u8]) -> Option<(u32, u32, u8, u8)> {
    if head.len() < 26 || &head[12..16] != b"IHDR" {
        return None;
    }
    let width = u32::from_be_bytes(head[16..20].try_into().ok()?);
    let height = u32::from_be_bytes(head[20..24].try_into().ok()?);
    let depth = head[24];
    let channels = match head[25] {
        0 => 1,
        2 => 3,
        3 => 4,
        4 => 2,
        6 => 4,
        _ => return None,
    };
    Some((width, height, channels, depth.max(8)))
}

/// Width, height, samples per pixel and bits per sample claimed by the first IFD of a TIFF
/// or BigTIFF (TIFF 6.0 §2; BigTIFF: 8-byte offsets, 20-byte entries), read before the
/// decoder runs so that a hostile header is refused before anything is allocated.
pub(crate) fn tiff_header<R: std::io::Read + std::io::Seek>(r: &mut R) -> Option<(u32, u32, u8, u8)> {
    use std::io::SeekFrom;
    let mut head = [0u8; 16];
    r.seek(SeekFrom::Start(0)).ok()?;
    r.read_exact(&mut head[..8]).ok()?;
    let le = match &head[0..2] {
        b"II" => true,
        b"MM" => false,
        _ => return None,
    };
    let u16v = |b: &[u8]| {
        if le {
            u16::from_le_bytes([b[0], b[1]])
        } else {
            u16::from_be_bytes([b[0], b[1]])
        }
    };
    let u32v = |b: &[u8]| {
        let a = [b[0], b[1], b[2], b[3]];
        if le { u32::from_le_bytes(a) } else { u32::from_be_bytes(a) }
    };
    let u64v = |b: &[u8]| {
        let a: [u8; 8] = b[..8].try_into().unwrap_or([0; 8]);
        if le { u64::from_le_bytes(a) } else { u64::from_be_bytes(a) }
    };
    let big = u16v(&head[2..4]) == 43;
    let ifd = if big {
        r.read_exact(&mut head[8..16]).ok()?;
        u64v(&head[8..16])
    } else {
        u64::from(u32v(&head[4..8]))
    };
    r.seek(SeekFrom::Start(ifd)).ok()?;
    let (count, entry_len) = if big {
        let mut b = [0u8; 8];
        r.read_exact(&mut b).ok()?;
        (u64v(&b), 20usize)
    } else {
        let mut b = [0u8; 2];
        r.read_exact(&mut b).ok()?;
        (u64::from(u16v(&b)), 12usize)
    };
    let (mut width, mut height, mut spp, mut bits) = (None, None, 1u8, 1u8);
    let mut bits_at: Option<u64> = None;
    let mut entry = [0u8; 20];
    let value_at = if big { 12 } else { 8 };
    let inline_len: u64 = if big { 8 } else { 4 };
    for _ in 0..count.min(4096) {
        r.read_exact(&mut entry[..entry_len]).ok()?;
        let tag = u16v(&entry[0..2]);
        let ty = u16v(&entry[2..4]);
        let n = if big { u64v(&entry[4..12]) } else { u64::from(u32v(&entry[4..8])) };
        let width_of = match ty {
            3 => 2,
            4 => 4,
            _ => continue,
        };
        if n.saturating_mul(width_of) > inline_len {
            // The values do not fit in the entry: it holds their offset. Only BitsPerSample
            // (one value per sample) is a list among the tags read here.
            if tag == 258 && ty == 3 {
                bits_at = Some(if big {
                    u64v(&entry[value_at..])
                } else {
                    u64::from(u32v(&entry[value_at..]))
                });
            }
            continue;
        }
        let first = if ty == 3 {
            u32::from(u16v(&entry[value_at..]))
        } else {
            u32v(&entry[value_at..])
        };
        match tag {
            256 => width = Some(first),
            257 => height = Some(first),
            258 => bits = u8::try_from(first).unwrap_or(u8::MAX),
            277 => spp = u8::try_from(first).unwrap_or(u8::MAX),
            _ => {}
        }
    }
    if let Some(at) = bits_at {
        let mut b = [0u8; 2];
        r.seek(SeekFrom::Start(at)).ok()?;
        r.read_exact(&mut b).ok()?;
        bits = u8::try_from(u16v(&b)).unwrap_or(u8::MAX);
    }
    Some((width?, height?, spp, bits))
}

/// Sets PhotometricInterpretation (262) of the directory `page` (from 0) of a TIFF or
/// BigTIFF held in memory to `value`; `None` when the directory or the tag is not there.
pub(crate) fn set_tiff_photometric(bytes: &mut [u8], page: usize, value: u16) -> Option<()> {
    let le = match bytes.get(0..2)? {
        b"II" => true,
        b"MM" => false,
        _ => return None,
    };
    let get = |b: &[u8], at: usize, n: usize| -> Option<u64> {
        let s = b.get(at..at.checked_add(n)?)?;
        let mut v = 0u64;
        for k in 0..n {
            let byte = if le { s[n - 1 - k] } else { s[k] };
            v = (v << 8) | u64::from(byte);
        }
        Some(v)
    };
    let big = get(bytes, 2, 2)? == 43;
    let (off_len, count_len, entry_len, value_at) = if big { (8, 8, 20, 12) } else { (4, 2, 12, 8) };
    let mut ifd = usize::try_from(get(bytes, if big { 8 } else { 4 }, off_len)?).ok()?;
    for _ in 0..page {
        let count = usize::try_from(get(bytes, ifd, count_len)?).ok()?;
        let next_at = ifd.checked_add(count_len)?.checked_add(count.checked_mul(entry_len)?)?;
        ifd = usize::try_from(get(bytes, next_at, off_len)?).ok()?;
    }
    let count = usize::try_from(get(bytes, ifd, count_len)?).ok()?;
    for k in 0..count.min(4096) {
        let e = ifd + count_len + k * entry_len;
        if get(bytes, e, 2)? == 262 {
            let at = e + value_at;
            let v = if le { value.to_le_bytes() } else { value.to_be_bytes() };
            bytes.get_mut(at..at + 2)?.copy_from_slice(&v);
            return Some(());
        }
    }
    None
}

/// Where the value of PhotometricInterpretation (262) of the directory `page` (from 0) of a
/// TIFF or BigTIFF file lies, and whether the file is little-endian: the directories are
/// walked as [`set_tiff_photometric`] walks them in memory, reading only their entries.
/// `None` when the directory or the tag is not there.
pub(crate) fn tiff_photometric_at<R: std::io::Read + std::io::Seek>(r: &mut R, page: usize) -> Option<(u64, bool)> {
    let mut get_bytes = |at: u64, n: usize| -> Option<Vec<u8>> {
        let mut b = vec![0u8; n];
        r.seek(std::io::SeekFrom::Start(at)).ok()?;
        r.read_exact(&mut b).ok()?;
        Some(b)
    };
    let order = get_bytes(0, 2)?;
    let le = match order.as_slice() {
        b"II" => true,
        b"MM" => false,
        _ => return None,
    };
    let value = |s: &[u8]| {
        let mut v = 0u64;
        for k in 0..s.len() {
            let byte = if le { s[s.len() - 1 - k] } else { s[k] };
            v = (v << 8) | u64::from(byte);
        }
        v
    };
    let big = value(&get_bytes(2, 2)?) == 43;
    let (off_len, count_len, entry_len, value_at) = if big { (8, 8, 20u64, 12u64) } else { (4, 2, 12, 8) };
    let mut ifd = value(&get_bytes(if big { 8 } else { 4 }, off_len)?);
    for _ in 0..page {
        let count = value(&get_bytes(ifd, count_len)?);
        let next_at = ifd.checked_add(count_len as u64)?.checked_add(count.checked_mul(entry_len)?)?;
        ifd = value(&get_bytes(next_at, off_len)?);
    }
    let count = value(&get_bytes(ifd, count_len)?).min(4096);
    let entries = get_bytes(ifd + count_len as u64, usize::try_from(count * entry_len).ok()?)?;
    (0..count as usize).find_map(|k| {
        let e = k * entry_len as usize;
        (value(&entries[e..e + 2]) == 262).then_some((ifd + count_len as u64 + e as u64 + value_at, le))
    })
}

/// XResolution (282), YResolution (283), ResolutionUnit (296) and Orientation (274, EXIF 2.3
/// §4.6.4) from IFD0 of an EXIF block, which is laid out as a TIFF file (EXIF 2.3 §4.6).
fn exif_ifd0(tiff: &[u8]) -> (Option<Resolution>, Option<u16>) {
    let mut orientation = None;
    let resolution = exif_walk(tiff, &mut orientation);
    (resolution, orientation)
}

fn exif_walk(tiff: &[u8], orientation: &mut Option<u16>) -> Option<Resolution> {
    let big = match tiff.get(0..2)? {
        b"II" => false,
        b"MM" => true,
        _ => return None,
    };
    let u16_at = |o: usize| -> Option<u16> {
        let b: [u8; 2] = tiff.get(o..o + 2)?.try_into().ok()?;
        Some(if big { u16::from_be_bytes(b) } else { u16::from_le_bytes(b) })
    };
    let u32_at = |o: usize| -> Option<u32> {
        let b: [u8; 4] = tiff.get(o..o + 4)?.try_into().ok()?;
        Some(if big { u32::from_be_bytes(b) } else { u32::from_le_bytes(b) })
    };
    let rational_at = |o: usize| -> Option<f64> {
        let (n, d) = (u32_at(o)?, u32_at(o + 4)?);
        (d != 0).then(|| f64::from(n) / f64::from(d))
    };
    let ifd = u32_at(4)? as usize;
    let count = usize::from(u16_at(ifd)?);
    let (mut x, mut y, mut unit) = (None, None, 2u16);
    for k in 0..count {
        let e = ifd + 2 + 12 * k;
        let tag = u16_at(e)?;
        match tag {
            282 => x = rational_at(u32_at(e + 8)? as usize),
            283 => y = rational_at(u32_at(e + 8)? as usize),
            296 => unit = u16_at(e + 8)?,
            274 => *orientation = u16_at(e + 8),
            _ => {}
        }
    }
    let scale = match unit {
        2 => 1.0,
        3 => 2.54,
        _ => return None,
    };
    Resolution {
        x_ppi: x? * scale,
        y_ppi: y? * scale,
    }
    .valid()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn signatures() {
        assert_eq!(detect(b"\x89PNG\r\n\x1a\nrest"), Some(Format::Png));
        assert_eq!(detect(b"II*\0\x08\0\0\0"), Some(Format::Tiff));
        assert_eq!(detect(b"MM\0*\0\0\0\x08"), Some(Format::Tiff));
        assert_eq!(detect(&[0xFF, 0xD8, 0xFF, 0xE0]), Some(Format::Jpeg));
        assert_eq!(detect(b"hello"), None);
        assert_eq!(detect(b""), None);
    }

    #[test]
    fn tiff_header_reads_a_bits_per_sample_list_through_its_offset() {
        use tiff::encoder::colortype::{CMYK16, Gray8, RGB8};
        fn claim<C: tiff::encoder::colortype::ColorType>(data: &[C::Inner]) -> Option<(u32, u32, u8, u8)>
        where
            [C::Inner]: tiff::encoder::TiffValue,
        {
            let mut c = std::io::Cursor::new(Vec::new());
            tiff::encoder::TiffEncoder::new(&mut c)
                .unwrap()
                .write_image::<C>(3, 2, data)
                .unwrap();
            tiff_header(&mut c)
        }
        // RGB: three SHORTs (6 bytes) do not fit the 4-byte value field (TIFF 6.0 §2).
        assert_eq!(claim::<RGB8>(&[0; 18]), Some((3, 2, 3, 8)));
        assert_eq!(claim::<CMYK16>(&[0; 24]), Some((3, 2, 4, 16)));
        assert_eq!(claim::<Gray8>(&[0; 6]), Some((3, 2, 1, 8)));
    }

    #[test]
    fn jfif_density_in_dots_per_cm() {
        // SOI, APP0 JFIF with units 2 (dots per cm), 118 × 118 → 299.72 ppi.
        let mut jpeg = vec![0xFF, 0xD8, 0xFF, 0xE0, 0x00, 0x10];
        jpeg.extend_from_slice(b"JFIF\0\x01\x02\x02\x00\x76\x00\x76\x00\x00");
        jpeg.extend_from_slice(&[0xFF, 0xD9]);
        let h = scan_jpeg(&jpeg);
        let r = h.resolution.unwrap();
        assert!((r.x_ppi - 299.72).abs() < 1e-9 && (r.y_ppi - 299.72).abs() < 1e-9);
        assert!(!h.adobe);
    }

    #[test]
    fn exif_resolution_big_endian() {
        // IFD0 with XResolution 240/1, YResolution 240/1, unit inch.
        let mut t = b"MM\0*\0\0\0\x08".to_vec();
        t.extend_from_slice(&3u16.to_be_bytes());
        let data_at = 8 + 2 + 3 * 12 + 4;
        for (tag, ty, val) in [(282u16, 5u16, data_at as u32), (283, 5, data_at as u32 + 8), (296, 3, 2 << 16)] {
            t.extend_from_slice(&tag.to_be_bytes());
            t.extend_from_slice(&ty.to_be_bytes());
            t.extend_from_slice(&1u32.to_be_bytes());
            t.extend_from_slice(&val.to_be_bytes());
        }
        t.extend_from_slice(&0u32.to_be_bytes());
        for _ in 0..2 {
            t.extend_from_slice(&240u32.to_be_bytes());
            t.extend_from_slice(&1u32.to_be_bytes());
        }
        assert_eq!(
            exif_ifd0(&t).0,
            Some(Resolution {
                x_ppi: 240.0,
                y_ppi: 240.0
            })
        );
        assert_eq!(exif_ifd0(&t[..20]).0, None);
    }
}
