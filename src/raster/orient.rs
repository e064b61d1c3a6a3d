//! The Orientation tag (TIFF 6.0 tag 274; the same tag and values in a JPEG's EXIF IFD0,
//! EXIF 2.3 §4.6.4): how the stored rows and columns map onto the picture as it is meant
//! to be seen. Readers turn the raster round so that the plates come out upright.

use super::{Raster, Resolution, Samples};

/// The eight values of the Orientation tag, named by where the stored row 0 and column 0 lie.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Orientation {
    /// 1: row 0 at the top, column 0 on the left (nothing to do).
    Upright,
    /// 2: row 0 at the top, column 0 on the right.
    MirroredAcross,
    /// 3: row 0 at the bottom, column 0 on the right.
    HalfTurn,
    /// 4: row 0 at the bottom, column 0 on the left.
    MirroredDown,
    /// 5: row 0 on the left, column 0 at the top.
    Transposed,
    /// 6: row 0 on the right, column 0 at the top (turn a quarter clockwise to view).
    QuarterClockwise,
    /// 7: row 0 on the right, column 0 at the bottom.
    Transverse,
    /// 8: row 0 on the left, column 0 at the bottom (turn a quarter anticlockwise to view).
    QuarterAnticlockwise,
}

impl Orientation {
    /// The tag value's meaning; `None` for values outside 1–8.
    pub fn from_tag(v: u16) -> Option<Orientation> {
        Some(match v {
            1 => Orientation::Upright,
            2 => Orientation::MirroredAcross,
            3 => Orientation::HalfTurn,
            4 => Orientation::MirroredDown,
            5 => Orientation::Transposed,
            6 => Orientation::QuarterClockwise,
            7 => Orientation::Transverse,
            8 => Orientation::QuarterAnticlockwise,
            _ => return None,
        })
    }

    /// Whether width and height (and the two resolutions) trade places.
    pub fn swaps_axes(self) -> bool {
        matches!(
            self,
            Orientation::Transposed | Orientation::QuarterClockwise | Orientation::Transverse | Orientation::QuarterAnticlockwise
        )
    }

    /// What the summary says was done.
    pub fn describe(self) -> &'static str {
        match self {
            Orientation::Upright => "upright",
            Orientation::MirroredAcross => "mirrored left to right",
            Orientation::HalfTurn => "turned half round",
            Orientation::MirroredDown => "mirrored top to bottom",
            Orientation::Transposed => "mirrored across the main diagonal",
            Orientation::QuarterClockwise => "turned a quarter clockwise",
            Orientation::Transverse => "mirrored across the other diagonal",
            Orientation::QuarterAnticlockwise => "turned a quarter anticlockwise",
        }
    }

    /// The stored pixel shown at (x, y) of the upright picture, for a stored image `w` × `h`.
    fn source(self, x: usize, y: usize, w: usize, h: usize) -> (usize, usize) {
        match self {
            Orientation::Upright => (x, y),
            Orientation::MirroredAcross => (w - 1 - x, y),
            Orientation::HalfTurn => (w - 1 - x, h - 1 - y),
            Orientation::MirroredDown => (x, h - 1 - y),
            Orientation::Transposed => (y, x),
            Orientation::QuarterClockwise => (y, h - 1 - x),
            Orientation::Transverse => (w - 1 - y, h - 1 - x),
            Orientation::QuarterAnticlockwise => (w - 1 - y, x),
        }
    }

    /// Applies the tag value `v` read from a file (`tag_name`: where it was found); a value
    /// outside 1–8 is noted and the raster read as stored.
    pub(crate) fn apply_tag(raster: &mut Raster, v: Option<u16>, tag_name: &str) {
        match v.map(|v| (v, Orientation::from_tag(v))) {
            Some((_, Some(o))) => o.apply(raster, tag_name),
            Some((v, None)) => raster
                .notes
                .push(format!("{tag_name} orientation {v} is not a defined value (1–8); read as stored")),
            None => {}
        }
    }

    /// Turns the raster upright and notes it; the resolutions trade places with the axes.
    pub(crate) fn apply(self, raster: &mut Raster, tag_name: &str) {
        if self == Orientation::Upright {
            return;
        }
        let (w, h, ch) = (raster.width as usize, raster.height as usize, raster.channels());
        let (nw, nh) = if self.swaps_axes() { (h, w) } else { (w, h) };
        fn turn<T: Copy + Default>(v: &[T], o: Orientation, w: usize, h: usize, nw: usize, nh: usize, ch: usize) -> Vec<T> {
            let mut out = vec![T::default(); v.len()];
            for y in 0..nh {
                for x in 0..nw {
                    let (sx, sy) = o.source(x, y, w, h);
                    let from = (sy * w + sx) * ch;
                    let to = (y * nw + x) * ch;
                    out[to..to + ch].copy_from_slice(&v[from..from + ch]);
                }
            }
            out
        }
        raster.samples = match &raster.samples {
            Samples::U8(v) => Samples::U8(turn(v, self, w, h, nw, nh, ch)),
            Samples::U16(v) => Samples::U16(turn(v, self, w, h, nw, nh, ch)),
        };
        raster.width = nw as u32;
        raster.height = nh as u32;
        if self.swaps_axes() {
            raster.resolution = raster.resolution.map(|r| Resolution {
                x_ppi: r.y_ppi,
                y_ppi: r.x_ppi,
            });
        }
        raster.notes.push(format!(
            "{tag_name} orientation {}: {}, so the plates are upright ({nw} × {nh} px)",
            self as u8 + 1,
            self.describe()
        ));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The corners of a 3 × 2 picture after each orientation, against the drawings of
    /// TIFF 6.0 (Orientation, p. 36) read as "where row 0 / column 0 go".
    #[test]
    fn each_orientation_puts_the_first_stored_pixel_where_the_tag_says() {
        let (w, h) = (3, 2);
        // (upright size, where stored (0,0) lands in the upright picture)
        let cases = [
            (1, (3, 2), (0, 0)),
            (2, (3, 2), (2, 0)),
            (3, (3, 2), (2, 1)),
            (4, (3, 2), (0, 1)),
            (5, (2, 3), (0, 0)),
            (6, (2, 3), (1, 0)),
            (7, (2, 3), (1, 2)),
            (8, (2, 3), (0, 2)),
        ];
        for (tag, (nw, nh), at) in cases {
            let o = Orientation::from_tag(tag).unwrap();
            assert_eq!(o.swaps_axes(), nw != w, "tag {tag}");
            let found = (0..nh)
                .flat_map(|y| (0..nw).map(move |x| (x, y)))
                .find(|&(x, y)| o.source(x, y, w, h) == (0, 0));
            assert_eq!(found, Some(at), "tag {tag}");
        }
    }

    #[test]
    fn a_quarter_turn_swaps_size_and_resolution_and_says_so() {
        let mut r = Raster {
            width: 3,
            height: 2,
            layout: crate::raster::Layout::Gray,
            bits: 8,
            samples: Samples::U8(vec![1, 2, 3, 4, 5, 6]),
            icc_profile: None,
            resolution: Some(Resolution {
                x_ppi: 300.0,
                y_ppi: 150.0,
            }),
            colour_chunks: None,
            format: crate::raster::Format::Tiff,
            notes: Vec::new(),
            line_art: false,
        };
        Orientation::apply_tag(&mut r, Some(6), "TIFF");
        assert_eq!((r.width, r.height), (2, 3));
        assert_eq!(
            r.resolution,
            Some(Resolution {
                x_ppi: 150.0,
                y_ppi: 300.0
            })
        );
        // Row 0 (1 2 3) stands on the right, read downwards.
        assert_eq!(r.samples, Samples::U8(vec![4, 1, 5, 2, 6, 3]));
        assert!(r.notes[0].contains("orientation 6"), "{:?}", r.notes);
    }
}
