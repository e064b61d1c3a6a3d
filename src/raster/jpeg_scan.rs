//! A walk through a JPEG's entropy-coded data that decodes the Huffman codes
//! but no pixel: it tells whether every scan holds all of its blocks, before
//! the real decoder (zune-jpeg, which pads a stream that ends early with
//! zeros and reports success) runs.
//!
//! ISO/IEC 10918-1: markers and segments (annex B), Huffman table
//! specification and decoding (annex C, F.2.2.3, figure F.16), sequential
//! block coding (F.2.2), progressive DC and AC scans with spectral selection
//! and successive approximation (G.1.2, G.1.2.3 for the AC refinement pass,
//! whose bit count depends on the coefficients already nonzero), restart
//! intervals (B.2.4.4, F.2.2.4).
//!
//! The claimed size is checked against the data first ([`min_entropy_bytes`]):
//! every block of every component has a Huffman-coded DC value in some scan,
//! and a Huffman code is at least one bit long (C.2: the codes are 1 to 16
//! bits), so the data after the first start-of-scan marker holds at least one
//! bit per block. A header claiming 20 000 × 20 000 px over 72 KB is refused
//! before anything is allocated.

/// What the walk found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) enum Walk {
    /// Every scan holds all its blocks, and every coefficient of every component is coded.
    Complete,
    /// The data is damaged or cut short; the text says where.
    Damaged(String),
    /// A coding the walk does not follow (arithmetic coding, lossless, hierarchical);
    /// the decoder alone judges the file.
    NotChecked,
}

/// Frame header facts the size guard needs.
#[derive(Debug, Clone)]
pub(crate) struct Frame {
    pub width: u32,
    pub height: u32,
    progressive: bool,
    /// (id, h, v) per component.
    comps: Vec<(u8, u8, u8)>,
    /// Bytes from the first SOS marker to the end of the file.
    pub data_after_first_scan: u64,
}

impl Frame {
    fn hmax(&self) -> u32 {
        self.comps.iter().map(|c| u32::from(c.1)).max().unwrap_or(1)
    }

    fn vmax(&self) -> u32 {
        self.comps.iter().map(|c| u32::from(c.2)).max().unwrap_or(1)
    }

    fn mcus(&self) -> (u64, u64) {
        (
            u64::from(self.width.div_ceil(8 * self.hmax())),
            u64::from(self.height.div_ceil(8 * self.vmax())),
        )
    }

    /// Blocks of component `c` in its own (unpadded) grid: (across, down).
    fn comp_blocks(&self, c: usize) -> (u64, u64) {
        let (_, h, v) = self.comps[c];
        let w = (u64::from(self.width) * u64::from(h)).div_ceil(u64::from(self.hmax()));
        let ht = (u64::from(self.height) * u64::from(v)).div_ceil(u64::from(self.vmax()));
        (w.div_ceil(8), ht.div_ceil(8))
    }

    /// The fewest bytes of entropy-coded data that can hold this frame: one bit per block
    /// of every component (see the module notes).
    pub fn min_entropy_bytes(&self) -> u64 {
        let blocks: u64 = (0..self.comps.len())
            .map(|c| {
                let (a, d) = self.comp_blocks(c);
                a * d
            })
            .sum();
        blocks.div_ceil(8)
    }
}

/// The frame header (SOF0/1/2 only: Huffman-coded DCT) and where the first scan starts.
pub(crate) fn frame(data: &[u8]) -> Option<Frame> {
    let mut i = 2;
    let mut out: Option<Frame> = None;
    while i + 4 <= data.len() {
        if data[i] != 0xFF {
            return None;
        }
        let marker = data[i + 1];
        if marker == 0xFF {
            i += 1;
            continue;
        }
        let len = usize::from(u16::from_be_bytes([data[i + 2], data[i + 3]]));
        if len < 2 || i + 2 + len > data.len() {
            return None;
        }
        let seg = &data[i + 4..i + 2 + len];
        match marker {
            0xC0..=0xC2 => {
                if seg.len() < 6 {
                    return None;
                }
                let height = u32::from(u16::from_be_bytes([seg[1], seg[2]]));
                let width = u32::from(u16::from_be_bytes([seg[3], seg[4]]));
                let n = usize::from(seg[5]);
                if n == 0 || seg.len() < 6 + 3 * n {
                    return None;
                }
                let comps = (0..n)
                    .map(|k| {
                        let c = &seg[6 + 3 * k..9 + 3 * k];
                        (c[0], (c[1] >> 4).clamp(1, 4), (c[1] & 15).clamp(1, 4))
                    })
                    .collect();
                out = Some(Frame {
                    width,
                    height,
                    progressive: marker == 0xC2,
                    comps,
                    data_after_first_scan: 0,
                });
            }
            0xC3 | 0xC5..=0xC7 | 0xC9..=0xCB | 0xCD..=0xCF => return None,
            0xDA => {
                let mut f = out?;
                f.data_after_first_scan = (data.len() - i) as u64;
                return Some(f);
            }
            _ => {}
        }
        i += 2 + len;
    }
    None
}

/// A Huffman table as lookups by code length (figure F.16's MAXCODE, VALPTR, MINCODE).
#[derive(Clone, Default)]
struct Huffman {
    maxcode: [i32; 17],
    valptr: [i32; 17],
    mincode: [i32; 17],
    values: Vec<u8>,
    /// (code length, value) for every `FAST_BITS`-bit prefix of a short code; length 0 otherwise.
    fast: Vec<(u8, u8)>,
    defined: bool,
}

impl Huffman {
    fn new(counts: &[u8], values: &[u8]) -> Huffman {
        let mut h = Huffman {
            maxcode: [-1; 17],
            valptr: [0; 17],
            mincode: [0; 17],
            values: values.to_vec(),
            fast: vec![(0, 0); 1 << FAST_BITS],
            defined: true,
        };
        let (mut code, mut k) = (0i32, 0i32);
        for l in 1..=16 {
            let n = i32::from(counts[l - 1]);
            if n > 0 {
                h.valptr[l] = k;
                h.mincode[l] = code;
                code += n;
                k += n;
                h.maxcode[l] = code - 1;
            }
            code <<= 1;
        }
        let mut k = 0usize;
        let mut code = 0u32;
        for l in 1..=FAST_BITS {
            for _ in 0..counts[l as usize - 1] {
                if let Some(&v) = values.get(k) {
                    let shift = FAST_BITS - l;
                    for fill in 0..(1u32 << shift) {
                        if let Some(e) = h.fast.get_mut(((code << shift) | fill) as usize) {
                            *e = (l as u8, v);
                        }
                    }
                }
                k += 1;
                code += 1;
            }
            code <<= 1;
        }
        h
    }
}

/// Bits of one scan's entropy-coded segment, with 0xFF00 unstuffed (F.1.2.3). Bytes are
/// loaded ahead into `acc`; at a marker, zero bits are appended as padding, and taking a
/// padding bit means the data ran out.
struct Bits<'a> {
    data: &'a [u8],
    /// The next byte to load.
    pos: usize,
    acc: u64,
    /// Bits held in `acc` (the low `n` bits), padding included.
    n: u32,
    /// How many of the held bits are padding.
    pad: u32,
    /// A marker was reached (`pos` is at its 0xFF).
    at_marker: bool,
}

#[derive(Debug)]
enum Stop {
    /// More bits were needed than the segment holds.
    OutOfData,
    /// A code that is in no table, or a run past the end of a block.
    Invalid(&'static str),
}

/// Codes of up to this many bits are decoded by one table lookup.
const FAST_BITS: u32 = 9;

impl<'a> Bits<'a> {
    fn new(data: &'a [u8]) -> Bits<'a> {
        Bits {
            data,
            pos: 0,
            acc: 0,
            n: 0,
            pad: 0,
            at_marker: false,
        }
    }

    fn fill(&mut self) {
        while self.n <= 56 {
            let mut byte = None;
            if !self.at_marker && self.pos < self.data.len() {
                let b = self.data[self.pos];
                if b != 0xFF {
                    self.pos += 1;
                    byte = Some(b);
                } else if self.data.get(self.pos + 1) == Some(&0x00) {
                    self.pos += 2;
                    byte = Some(0xFF);
                } else {
                    self.at_marker = true;
                }
            }
            self.acc = (self.acc << 8) | u64::from(byte.unwrap_or(0));
            self.n += 8;
            if byte.is_none() {
                self.pad += 8;
            }
        }
    }

    fn peek(&mut self, k: u32) -> u32 {
        if self.n < k {
            self.fill();
        }
        ((self.acc >> (self.n - k)) & ((1u64 << k) - 1)) as u32
    }

    fn consume(&mut self, k: u32) -> Result<(), Stop> {
        if k > self.n - self.pad {
            return Err(Stop::OutOfData);
        }
        self.n -= k;
        Ok(())
    }

    fn bits(&mut self, count: u8) -> Result<u32, Stop> {
        if count == 0 {
            return Ok(0);
        }
        let v = self.peek(u32::from(count));
        self.consume(u32::from(count))?;
        Ok(v)
    }

    fn bit(&mut self) -> Result<u32, Stop> {
        self.bits(1)
    }

    fn decode(&mut self, h: &Huffman) -> Result<u8, Stop> {
        if !h.defined {
            return Err(Stop::Invalid("a scan uses a Huffman table that was never defined"));
        }
        let look = self.peek(FAST_BITS);
        let (len, value) = h.fast[look as usize];
        if len > 0 {
            self.consume(u32::from(len))?;
            return Ok(value);
        }
        let word = self.peek(16) as i32;
        for l in FAST_BITS as usize + 1..=16 {
            let code = word >> (16 - l);
            if code <= h.maxcode[l] {
                self.consume(l as u32)?;
                let at = (h.valptr[l] + code - h.mincode[l]) as usize;
                return h.values.get(at).copied().ok_or(Stop::Invalid("a Huffman table is inconsistent"));
            }
        }
        // A code that needs padding bits is data that ran out, not a bad code.
        if self.n - self.pad < 16 {
            return Err(Stop::OutOfData);
        }
        Err(Stop::Invalid("a code matches no Huffman table entry"))
    }

    /// Drops the bits held and moves to the next marker: the end of this scan's data or of a
    /// restart interval (bytes before it are passed over, as libjpeg does with a warning).
    fn skip_to_marker(&mut self) {
        self.n = 0;
        self.pad = 0;
        self.acc = 0;
        while self.pos + 1 < self.data.len() {
            if self.data[self.pos] == 0xFF && self.data[self.pos + 1] != 0x00 && self.data[self.pos + 1] != 0xFF {
                break;
            }
            self.pos += 1;
        }
        self.at_marker = false;
    }
}

/// One block's worth of coefficient knowledge for AC refinement: bit k set when coefficient k is nonzero.
struct Nonzero {
    /// Per component: the padded block grid (MCU columns × h across).
    grids: Vec<Vec<u64>>,
    strides: Vec<usize>,
}

/// Walks every scan of a baseline, extended or progressive Huffman JPEG.
pub(crate) fn walk(data: &[u8]) -> Walk {
    match walk_inner(data) {
        Ok(w) => w,
        Err(message) => Walk::Damaged(message),
    }
}

fn walk_inner(data: &[u8]) -> Result<Walk, String> {
    let Some(frame) = frame(data) else {
        return Ok(Walk::NotChecked);
    };
    if frame.width == 0 || frame.height == 0 {
        return Ok(Walk::NotChecked); // height by DNL: not followed
    }
    let (mcux, mcuy) = frame.mcus();
    let mut nonzero = if frame.progressive {
        let mut grids = Vec::new();
        let mut strides = Vec::new();
        for &(_, h, v) in &frame.comps {
            let stride = (mcux * u64::from(h)) as usize;
            let n = stride * (mcuy * u64::from(v)) as usize;
            let mut g = Vec::new();
            g.try_reserve_exact(n)
                .map_err(|_| "not enough memory to check the JPEG data".to_string())?;
            g.resize(n, 0u64);
            grids.push(g);
            strides.push(stride);
        }
        Some(Nonzero { grids, strides })
    } else {
        None
    };
    // Per component and coefficient: coded down to the last bit (Al = 0).
    let mut coded = vec![[false; 64]; frame.comps.len()];
    let mut dc = [Huffman::default(), Huffman::default(), Huffman::default(), Huffman::default()];
    let mut ac = dc.clone();
    let mut restart = 0u32;
    let mut scans = 0usize;
    let mut i = 2;
    while i + 2 <= data.len() {
        if data[i] != 0xFF {
            return Err(format!("damaged JPEG data: stray bytes at offset {i} between segments"));
        }
        let marker = data[i + 1];
        if marker == 0xFF {
            i += 1;
            continue;
        }
        if marker == 0xD9 {
            break;
        }
        if (0xD0..=0xD7).contains(&marker) {
            i += 2;
            continue;
        }
        if i + 4 > data.len() {
            break;
        }
        let len = usize::from(u16::from_be_bytes([data[i + 2], data[i + 3]]));
        if len < 2 || i + 2 + len > data.len() {
            return Err(format!("damaged JPEG data: a segment at offset {i} runs past the end of the file"));
        }
        let seg = &data[i + 4..i + 2 + len];
        i += 2 + len;
        match marker {
            0xC4 => {
                let mut s = seg;
                while s.len() >= 17 {
                    let (class, id) = (s[0] >> 4, usize::from(s[0] & 15));
                    let counts = &s[1..17];
                    let total: usize = counts.iter().map(|&c| usize::from(c)).sum();
                    if s.len() < 17 + total || id > 3 {
                        return Err("damaged JPEG data: a Huffman table is cut short".into());
                    }
                    let table = Huffman::new(counts, &s[17..17 + total]);
                    if class == 0 {
                        dc[id] = table
                    } else {
                        ac[id] = table
                    }
                    s = &s[17 + total..];
                }
            }
            0xDD if seg.len() >= 2 => restart = u32::from(u16::from_be_bytes([seg[0], seg[1]])),
            0xDA => {
                scans += 1;
                let ns = usize::from(*seg.first().unwrap_or(&0));
                if ns == 0 || seg.len() < 1 + 2 * ns + 3 {
                    return Err("damaged JPEG data: a scan header is cut short".into());
                }
                let mut comps = Vec::with_capacity(ns);
                for k in 0..ns {
                    let id = seg[1 + 2 * k];
                    let t = seg[2 + 2 * k];
                    let c = frame
                        .comps
                        .iter()
                        .position(|c| c.0 == id)
                        .ok_or_else(|| format!("damaged JPEG data: scan {scans} names a component the frame lacks"))?;
                    comps.push((c, usize::from(t >> 4) & 3, usize::from(t & 15) & 3));
                }
                let p = &seg[1 + 2 * ns..];
                let (ss, se, ah, al) = (p[0], p[1], p[2] >> 4, p[2] & 15);
                if !frame.progressive {
                    if ss != 0 || se != 63 {
                        return Err("damaged JPEG data: a sequential scan with spectral selection".into());
                    }
                } else if se > 63 || ss > se || (ss == 0 && se != 0) || (ss > 0 && ns != 1) {
                    return Err(format!("damaged JPEG data: scan {scans} has an invalid spectral band {ss}..{se}"));
                }
                let scan = Scan {
                    comps,
                    ss,
                    se,
                    ah,
                    restart,
                };
                let mut bits = Bits::new(&data[i..]);
                walk_scan(&frame, &scan, &dc, &ac, nonzero.as_mut(), &mut bits)
                    .map_err(|m| format!("damaged JPEG data: scan {scans} {m}"))?;
                for &(c, _, _) in &scan.comps {
                    if al == 0 {
                        for k in usize::from(ss)..=usize::from(se) {
                            coded[c][k] = true;
                        }
                    }
                }
                bits.skip_to_marker();
                i += bits.pos;
            }
            _ => {}
        }
    }
    if let Some(c) = coded.iter().position(|c| c.iter().any(|&k| !k)) {
        return Ok(Walk::Damaged(format!(
            "damaged JPEG data: the file ends after {scans} scan(s), before component {} is fully coded (scans are missing)",
            c + 1
        )));
    }
    Ok(Walk::Complete)
}

struct Scan {
    /// (component index, DC table, AC table)
    comps: Vec<(usize, usize, usize)>,
    ss: u8,
    se: u8,
    ah: u8,
    restart: u32,
}

fn walk_scan(
    frame: &Frame,
    scan: &Scan,
    dc: &[Huffman; 4],
    ac: &[Huffman; 4],
    mut nonzero: Option<&mut Nonzero>,
    bits: &mut Bits,
) -> Result<(), String> {
    let (mcux, mcuy) = frame.mcus();
    // Blocks in scan order: (component, block x, block y) per MCU.
    let (units_x, units_y) = if scan.comps.len() == 1 {
        frame.comp_blocks(scan.comps[0].0)
    } else {
        (mcux, mcuy)
    };
    let total = units_x * units_y;
    let mut eobrun = 0u32;
    let mut next_rst = 0u8;
    let describe = |unit: u64, e: Stop| -> String {
        let row = unit / units_x.max(1);
        match e {
            Stop::OutOfData => format!(
                "ends after {unit} of {total} coded units (about {} % of the rows); the file was cut short or the data is corrupt",
                row * 100 / units_y.max(1)
            ),
            Stop::Invalid(what) => format!("is corrupt at coded unit {unit} of {total}: {what}"),
        }
    };
    for unit in 0..total {
        if scan.restart > 0 && unit > 0 && unit % u64::from(scan.restart) == 0 {
            // B.2.4.4: the data is byte-aligned and an RSTm marker follows, m counting modulo 8.
            bits.skip_to_marker();
            let at = bits.pos;
            if bits.data.get(at) != Some(&0xFF) || bits.data.get(at + 1) != Some(&(0xD0 + next_rst)) {
                return Err(describe(unit, Stop::OutOfData));
            }
            bits.pos += 2;
            next_rst = (next_rst + 1) % 8;
            eobrun = 0;
        }
        let (ux, uy) = (unit % units_x, unit / units_x);
        for &(c, td, ta) in &scan.comps {
            // One block per unit in a scan of one component; h × v blocks per MCU otherwise (A.2.3).
            let (h, v) = if scan.comps.len() == 1 {
                (1, 1)
            } else {
                (u64::from(frame.comps[c].1), u64::from(frame.comps[c].2))
            };
            for by in 0..v {
                for bx in 0..h {
                    let (x, y) = (ux * h + bx, uy * v + by);
                    let nz = nonzero
                        .as_deref_mut()
                        .map(|n| &mut n.grids[c][y as usize * n.strides[c] + x as usize]);
                    block(scan, &dc[td], &ac[ta], nz, &mut eobrun, bits).map_err(|e| describe(unit, e))?;
                }
            }
        }
    }
    Ok(())
}

/// One block of one scan (F.2.2.1–F.2.2.2 sequential, G.1.2.1–G.1.2.3 progressive).
fn block(scan: &Scan, dc: &Huffman, ac: &Huffman, nz: Option<&mut u64>, eobrun: &mut u32, bits: &mut Bits) -> Result<(), Stop> {
    let (ss, se) = (usize::from(scan.ss), usize::from(scan.se));
    if ss == 0 {
        if scan.ah == 0 {
            let s = bits.decode(dc)?;
            if s > 16 {
                return Err(Stop::Invalid("a DC difference category over 16"));
            }
            bits.bits(s)?;
        } else {
            bits.bit()?;
        }
        if se == 0 {
            return Ok(());
        }
        // Sequential: the AC coefficients follow in the same block.
        let mut k = 1;
        while k <= 63 {
            let rs = bits.decode(ac)?;
            let (r, s) = (usize::from(rs >> 4), rs & 15);
            if s == 0 {
                if r == 15 {
                    k += 16;
                    continue;
                }
                break;
            }
            k += r;
            bits.bits(s)?;
            k += 1;
        }
        return if k > 64 {
            Err(Stop::Invalid("a run of zeros past the end of a block"))
        } else {
            Ok(())
        };
    }
    let mut none = 0u64;
    let nz = nz.unwrap_or(&mut none);
    if scan.ah == 0 {
        // AC first pass (G.1.2.2).
        if *eobrun > 0 {
            *eobrun -= 1;
            return Ok(());
        }
        let mut k = ss;
        while k <= se {
            let rs = bits.decode(ac)?;
            let (r, s) = (u32::from(rs >> 4), rs & 15);
            if s == 0 {
                if r < 15 {
                    *eobrun = (1 << r) - 1;
                    if r > 0 {
                        *eobrun += bits.bits(r as u8)?;
                    }
                    break;
                }
                k += 16;
                continue;
            }
            k += r as usize;
            if k > se {
                return Err(Stop::Invalid("a run of zeros past the end of the band"));
            }
            bits.bits(s)?;
            *nz |= 1 << k;
            k += 1;
        }
        return Ok(());
    }
    // AC refinement (G.1.2.3, as libjpeg's decode_mcu_AC_refine).
    let mut k = ss;
    if *eobrun == 0 {
        while k <= se {
            let rs = bits.decode(ac)?;
            let (mut r, s) = (i32::from(rs >> 4), rs & 15);
            if s != 0 {
                bits.bit()?; // the sign of the newly nonzero coefficient
            } else if r != 15 {
                *eobrun = 1 << r;
                if r > 0 {
                    *eobrun += bits.bits(r as u8)?;
                }
                break;
            }
            while k <= se {
                if *nz & (1 << k) != 0 {
                    bits.bit()?; // correction bit
                } else {
                    r -= 1;
                    if r < 0 {
                        break;
                    }
                }
                k += 1;
            }
            if s != 0 && k <= se {
                *nz |= 1 << k;
            }
            k += 1;
        }
    }
    if *eobrun > 0 {
        while k <= se {
            if *nz & (1 << k) != 0 {
                bits.bit()?;
            }
            k += 1;
        }
        *eobrun -= 1;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use jpeg_encoder::{ColorType, Encoder, SamplingFactor};

    /// A noisy picture, so every block carries AC data.
    fn picture(w: usize, h: usize, channels: usize) -> Vec<u8> {
        let mut state = 0x2545_f491_4f6c_dd1du64;
        (0..w * h * channels)
            .map(|i| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                ((i % (w * channels)) as u64 * 3 + (state & 63)) as u8
            })
            .collect()
    }

    fn encode(progressive: bool, restart: u16, sampling: SamplingFactor, ct: ColorType, channels: usize) -> Vec<u8> {
        let (w, h) = (61u16, 37u16);
        let mut out = Vec::new();
        let mut enc = Encoder::new(&mut out, 85);
        enc.set_progressive(progressive);
        enc.set_restart_interval(restart);
        enc.set_sampling_factor(sampling);
        enc.encode(&picture(61, 37, channels), w, h, ct).unwrap();
        out
    }

    fn variants() -> Vec<(String, Vec<u8>)> {
        let mut v = Vec::new();
        for progressive in [false, true] {
            for restart in [0u16, 3] {
                for (name, s) in [
                    ("444", SamplingFactor::R_4_4_4),
                    ("420", SamplingFactor::R_4_2_0),
                    ("422", SamplingFactor::R_4_2_2),
                ] {
                    v.push((
                        format!("rgb {name} progressive {progressive} restart {restart}"),
                        encode(progressive, restart, s, ColorType::Rgb, 3),
                    ));
                }
                v.push((
                    format!("gray progressive {progressive} restart {restart}"),
                    encode(progressive, restart, SamplingFactor::R_4_4_4, ColorType::Luma, 1),
                ));
            }
        }
        v
    }

    #[test]
    fn valid_streams_walk_complete() {
        for (name, jpeg) in variants() {
            assert_eq!(walk(&jpeg), Walk::Complete, "{name}");
        }
    }

    #[test]
    fn streams_cut_anywhere_in_their_data_are_damaged() {
        for (name, jpeg) in variants() {
            let sos = jpeg.windows(2).position(|w| w == [0xFF, 0xDA]).unwrap();
            let data = sos + 2 + usize::from(u16::from_be_bytes([jpeg[sos + 2], jpeg[sos + 3]]));
            for percent in [5, 30, 60, 90, 99] {
                let cut = data + (jpeg.len() - 2 - data) * percent / 100;
                let damaged = [&jpeg[..cut], &[0xFF, 0xD9][..]].concat();
                assert!(matches!(walk(&damaged), Walk::Damaged(_)), "{name} cut at {percent} %");
            }
        }
    }

    #[test]
    fn the_least_data_is_one_bit_per_block() {
        let mut jpeg = encode(false, 0, SamplingFactor::R_4_4_4, ColorType::Luma, 1);
        let sof = jpeg.windows(2).position(|w| w == [0xFF, 0xC0]).unwrap();
        jpeg[sof + 5..sof + 9].copy_from_slice(&[0x4E, 0x20, 0x4E, 0x20]); // 20 000 × 20 000
        let f = frame(&jpeg).unwrap();
        assert_eq!((f.width, f.height), (20_000, 20_000));
        assert_eq!(f.min_entropy_bytes(), 2500 * 2500 / 8);
        // 4:2:0 colour: 4 luma blocks and one of each chroma per 16 × 16 MCU.
        let jpeg = encode(false, 0, SamplingFactor::R_4_2_0, ColorType::Rgb, 3);
        let f = frame(&jpeg).unwrap();
        let luma = 61usize.div_ceil(8) * 37usize.div_ceil(8);
        let chroma = 31usize.div_ceil(8) * 19usize.div_ceil(8);
        assert_eq!(f.min_entropy_bytes(), ((luma + 2 * chroma) as u64).div_ceil(8));
    }
}
