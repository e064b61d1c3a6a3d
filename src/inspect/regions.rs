//! Connected regions of flagged pixels, 8-connected (a pixel touches the
//! eight around it), found from runs of flagged pixels row by row.
//!
//! [`Labeler`] takes the runs of one row at a time, top to bottom, and joins
//! each run to the regions of the runs above it that it touches (a small
//! union–find over the regions open in the previous row). A region is
//! finished as soon as a row has no run touching it, so what is held at any
//! time is the previous row's runs and their regions, bounded by the width
//! of the picture, plus the regions kept for the report: a region that
//! crosses any band of rows is one region, and memory does not grow with the
//! picture.

use std::cmp::Ordering;
use std::collections::BinaryHeap;

/// Consecutive flagged pixels `x0..x1` of one row, with the sum and the
/// largest of their values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Run {
    pub x0: u32,
    /// One past the last pixel.
    pub x1: u32,
    pub sum: f64,
    pub max: f32,
    /// Where `max` is (the first such pixel).
    pub max_x: u32,
    /// What the caller records of the pixel at `max_x` (inspect: the keys of
    /// its CMYK and of its source RGB), carried to the region's worst pixel.
    pub tag: [u64; 2],
}

/// Collects the runs of one row from flagged pixels given in increasing x.
#[derive(Debug, Default)]
pub struct RowRuns {
    pub runs: Vec<Run>,
    open: Option<Run>,
}

impl RowRuns {
    /// Adds flagged pixel `x` with its value.
    #[inline]
    pub fn push(&mut self, x: u32, value: f32) {
        if let Some(r) = &mut self.open {
            if r.x1 == x {
                r.x1 += 1;
                r.sum += value as f64;
                if value > r.max {
                    r.max = value;
                    r.max_x = x;
                }
                return;
            }
            self.runs.push(*r);
        }
        self.open = Some(Run {
            x0: x,
            x1: x + 1,
            sum: value as f64,
            max: value,
            max_x: x,
            tag: [0; 2],
        });
    }

    /// The row's runs, in order.
    pub fn finish(mut self) -> Vec<Run> {
        if let Some(r) = self.open.take() {
            self.runs.push(r);
        }
        self.runs
    }
}

/// One connected region.
#[derive(Debug, Clone, PartialEq)]
pub struct Region {
    /// Bounding box: first column and row, width and height, pixels.
    pub x: u32,
    pub y: u32,
    pub w: u32,
    pub h: u32,
    pub pixels: u64,
    pub sum: f64,
    pub max: f32,
    /// The first pixel (row-major) holding `max`.
    pub max_at: (u32, u32),
    /// The [`Run::tag`] of the pixel at `max_at`.
    pub tag: [u64; 2],
    /// The region's first pixel in row-major order (row, column): the last
    /// key of the report order, so that the order is total.
    pub start: (u32, u32),
}

impl Region {
    pub fn mean(&self) -> f64 {
        self.sum / self.pixels.max(1) as f64
    }

    fn of_run(run: &Run, y: u32) -> Region {
        Region {
            x: run.x0,
            y,
            // Inclusive ends while the region is open.
            w: run.x1 - 1,
            h: y,
            pixels: (run.x1 - run.x0) as u64,
            sum: run.sum,
            max: run.max,
            max_at: (run.max_x, y),
            tag: run.tag,
            start: (y, run.x0),
        }
    }

    /// Adds `o` (inclusive ends, as while open); the worst pixel is the
    /// larger value, the first in row-major order on a tie.
    fn absorb(&mut self, o: &Region) {
        self.x = self.x.min(o.x);
        self.y = self.y.min(o.y);
        self.w = self.w.max(o.w);
        self.h = self.h.max(o.h);
        self.pixels += o.pixels;
        self.sum += o.sum;
        let earlier = (o.max_at.1, o.max_at.0) < (self.max_at.1, self.max_at.0);
        if o.max > self.max || (o.max == self.max && earlier) {
            self.max = o.max;
            self.max_at = o.max_at;
            self.tag = o.tag;
        }
        self.start = self.start.min(o.start);
    }

    /// Report order: largest first, then top-most, then left-most, then by
    /// where the region starts.
    fn report_order(&self, o: &Region) -> Ordering {
        o.pixels
            .cmp(&self.pixels)
            .then(self.y.cmp(&o.y))
            .then(self.x.cmp(&o.x))
            .then(self.start.cmp(&o.start))
    }
}

/// A finished region in the kept set: a max-heap on report order, so its top
/// is the region listed last.
struct Kept(Region);

impl PartialEq for Kept {
    fn eq(&self, o: &Kept) -> bool {
        self.cmp(o) == Ordering::Equal
    }
}
impl Eq for Kept {}
impl PartialOrd for Kept {
    fn partial_cmp(&self, o: &Kept) -> Option<Ordering> {
        Some(self.cmp(o))
    }
}
impl Ord for Kept {
    fn cmp(&self, o: &Kept) -> Ordering {
        self.0.report_order(&o.0)
    }
}

/// Per column, the rows in a row in which the `side` pixels from that column
/// rightwards were all flagged: a `side` × `side` square of flagged pixels
/// has its bottom-left corner where such a streak reaches `side` rows. Such
/// a square lies in one region (its pixels touch one another), so a region
/// holds one exactly when a streak reaches `side` in one of its runs: the
/// morphological erosion by a square, one row at a time.
struct Squares {
    side: u32,
    /// Per column: the row the current streak started and the last row of it.
    since: Vec<u32>,
    last: Vec<u32>,
}

const NONE: u32 = u32::MAX;

/// Labels 8-connected regions from the runs of rows given top to bottom,
/// keeps the largest `keep` (in report order) of those of at least
/// `min_pixels`, and counts them all.
pub struct Labeler {
    min_pixels: u64,
    keep: usize,
    /// Keep only regions no square of this side fits into (fine detail).
    squares: Option<Squares>,
    /// The next row.
    y: u32,
    /// The previous row's runs and the slot of each one's region.
    prev: Vec<(Run, u32)>,
    /// Region slots: open regions, and those absorbed during the current row.
    slots: Vec<Region>,
    parent: Vec<u32>,
    /// Whether a square fits into the slot's region.
    thick: Vec<bool>,
    /// The last row with a run of the slot's region.
    seen: Vec<u32>,
    free: Vec<u32>,
    kept: BinaryHeap<Kept>,
    total: usize,
}

impl Labeler {
    /// A labeler for rows of `width` pixels; with `detail_side`, only
    /// regions into which no `detail_side` × `detail_side` square of their
    /// own pixels fits are counted and kept (fine lines, small type).
    pub fn new(width: u32, min_pixels: u64, keep: usize, detail_side: Option<u32>) -> Labeler {
        Labeler {
            min_pixels: min_pixels.max(1),
            keep,
            squares: detail_side.map(|side| Squares {
                side: side.max(1),
                since: vec![NONE; width as usize],
                last: vec![NONE; width as usize],
            }),
            y: 0,
            prev: Vec::new(),
            slots: Vec::new(),
            parent: Vec::new(),
            thick: Vec::new(),
            seen: Vec::new(),
            free: Vec::new(),
            kept: BinaryHeap::new(),
            total: 0,
        }
    }

    fn find(&mut self, mut i: u32) -> u32 {
        while self.parent[i as usize] != i {
            let p = self.parent[self.parent[i as usize] as usize];
            self.parent[i as usize] = p;
            i = p;
        }
        i
    }

    fn slot(&mut self, region: Region) -> u32 {
        match self.free.pop() {
            Some(i) => {
                self.slots[i as usize] = region;
                self.parent[i as usize] = i;
                self.thick[i as usize] = false;
                self.seen[i as usize] = NONE;
                i
            }
            None => {
                let i = self.slots.len() as u32;
                self.slots.push(region);
                self.parent.push(i);
                self.thick.push(false);
                self.seen.push(NONE);
                i
            }
        }
    }

    /// Adds the runs of the next row (ordered by x, not overlapping).
    pub fn push_row(&mut self, runs: &[Run]) {
        let y = self.y;
        self.y += 1;
        if runs.is_empty() && self.prev.is_empty() {
            return;
        }
        // Each run's region: that of a run above it that it touches (within
        // one column: 8-connected), the regions of all such runs joined.
        let mut label = vec![NONE; runs.len()];
        let mut absorbed = Vec::new();
        let (mut i, mut j) = (0, 0);
        while i < self.prev.len() && j < runs.len() {
            let (a, b) = (self.prev[i].0, runs[j]);
            if a.x0 <= b.x1 && b.x0 <= a.x1 {
                let ra = self.find(self.prev[i].1);
                if label[j] == NONE {
                    label[j] = ra;
                } else {
                    let rb = self.find(label[j]);
                    if ra != rb {
                        let (keep, gone) = if ra < rb { (ra, rb) } else { (rb, ra) };
                        let other = self.slots[gone as usize].clone();
                        self.slots[keep as usize].absorb(&other);
                        self.thick[keep as usize] |= self.thick[gone as usize];
                        self.parent[gone as usize] = keep;
                        absorbed.push(gone);
                    }
                }
            }
            if a.x1 < b.x1 { i += 1 } else { j += 1 }
        }
        let mut here = Vec::with_capacity(runs.len());
        for (run, l) in runs.iter().zip(label) {
            let root = if l == NONE {
                self.slot(Region::of_run(run, y))
            } else {
                let root = self.find(l);
                self.slots[root as usize].absorb(&Region::of_run(run, y));
                root
            };
            self.seen[root as usize] = y;
            here.push((*run, root));
        }
        if let Some(sq) = &mut self.squares {
            let side = sq.side;
            for &(run, root) in &here {
                if self.thick[root as usize] || run.x1 - run.x0 < side {
                    continue;
                }
                for x in run.x0..=run.x1 - side {
                    let x = x as usize;
                    if sq.last[x] == NONE || sq.last[x] + 1 != y {
                        sq.since[x] = y;
                    }
                    sq.last[x] = y;
                    if y - sq.since[x] + 1 >= side {
                        self.thick[root as usize] = true;
                    }
                }
            }
        }
        // Regions of the previous row that no run of this row touches are
        // finished; absorbed slots are free once this row's runs name their
        // roots.
        let prev = std::mem::replace(&mut self.prev, here);
        for (_, slot) in prev {
            let root = self.find(slot);
            if self.seen[root as usize] != y && self.seen[root as usize] != NONE {
                self.seen[root as usize] = NONE;
                self.finish(root);
            }
        }
        for gone in absorbed {
            self.free.push(gone);
        }
    }

    fn finish(&mut self, root: u32) {
        let mut r = self.slots[root as usize].clone();
        let thick = self.thick[root as usize];
        self.free.push(root);
        if r.pixels < self.min_pixels || (self.squares.is_some() && thick) {
            return;
        }
        r.w = r.w - r.x + 1;
        r.h = r.h - r.y + 1;
        self.total += 1;
        if self.keep == 0 {
            return;
        }
        self.kept.push(Kept(r));
        if self.kept.len() > self.keep {
            self.kept.pop();
        }
    }

    /// Finishes the regions still open and gives the kept ones in report
    /// order (largest first; ties: top-most, then left-most), with the
    /// number of all regions found.
    pub fn finish_all(mut self) -> (Vec<Region>, usize) {
        self.push_row(&[]);
        let total = self.total;
        (self.kept.into_sorted_vec().into_iter().map(|k| k.0).collect(), total)
    }
}

/// Labels the 8-connected regions of whole rows of runs (`rows[y]` holds the
/// runs of row `y`, ordered by x) and drops regions of fewer than
/// `min_pixels`. Regions come largest first (ties: top-most, then left-most).
pub fn label(rows: &[Vec<Run>], min_pixels: u64) -> Vec<Region> {
    let width = rows.iter().flat_map(|r| r.last()).map(|r| r.x1).max().unwrap_or(0);
    let mut labeler = Labeler::new(width, min_pixels, usize::MAX, None);
    for row in rows {
        labeler.push_row(row);
    }
    labeler.finish_all().0
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Runs of a picture drawn with '#' for flagged pixels (value 1 each,
    /// except digits, which give their value).
    fn rows_of(picture: &[&str]) -> Vec<Vec<Run>> {
        picture
            .iter()
            .map(|line| {
                let mut r = RowRuns::default();
                for (x, c) in line.chars().enumerate() {
                    match c {
                        '#' => r.push(x as u32, 1.0),
                        d if d.is_ascii_digit() => r.push(x as u32, d.to_digit(10).unwrap_or(0) as f32),
                        _ => {}
                    }
                }
                r.finish()
            })
            .collect()
    }

    #[test]
    fn diagonal_neighbours_join_but_a_gap_of_one_column_does_not() {
        let rows = rows_of(&["#...#.", ".#..#.", "..#...", "......", "#.#..."]);
        let regions = label(&rows, 1);
        // The diagonal (3 pixels), the vertical pair, and two lone pixels
        // in the last row (one column apart, not touching).
        assert_eq!(regions.len(), 4, "{regions:?}");
        assert_eq!(
            (regions[0].x, regions[0].y, regions[0].w, regions[0].h, regions[0].pixels),
            (0, 0, 3, 3, 3)
        );
        assert_eq!((regions[1].x, regions[1].y, regions[1].w, regions[1].h), (4, 0, 1, 2));
    }

    #[test]
    fn a_u_shape_is_one_region_and_specks_are_dropped() {
        let rows = rows_of(&["#..#", "#..#", "####", "....", "..#."]);
        let all = label(&rows, 1);
        assert_eq!(all.len(), 2);
        let kept = label(&rows, 2);
        assert_eq!(kept.len(), 1);
        assert_eq!((kept[0].x, kept[0].y, kept[0].w, kept[0].h, kept[0].pixels), (0, 0, 4, 3, 8));
    }

    #[test]
    fn values_give_max_mean_and_where_the_worst_is() {
        let rows = rows_of(&["129.", ".39."]);
        let r = &label(&rows, 1)[0];
        assert_eq!(r.pixels, 5);
        assert_eq!(r.max, 9.0);
        assert_eq!(r.max_at, (2, 0));
        assert!((r.mean() - (1.0 + 2.0 + 9.0 + 3.0 + 9.0) / 5.0).abs() < 1e-12);
    }

    /// The regions kept as fine detail for squares of `side`.
    fn fine(rows: &[Vec<Run>], side: u32) -> usize {
        let mut labeler = Labeler::new(20, 1, usize::MAX, Some(side));
        rows.iter().for_each(|r| labeler.push_row(r));
        labeler.finish_all().1
    }

    #[test]
    fn fine_detail_is_what_a_square_cannot_fit_into() {
        let line = rows_of(&["##########", "##########", "..........", ".........."]);
        assert_eq!(fine(&line, 3), 1);
        assert_eq!(fine(&line, 2), 0);
        let block = rows_of(&["#####", "#####", "#####", "#...."]);
        assert_eq!(fine(&block, 3), 0);
        assert_eq!(fine(&block, 4), 1);
        // A square only in the corner of a ring of thin lines, reached after
        // the parts were joined: the whole region is not fine detail.
        let joined = rows_of(&["#....#", "#....#", "#..###", "#..###", "######"]);
        assert_eq!(fine(&joined, 3), 0);
        assert_eq!(fine(&joined, 4), 1);
        // Two squares' worth of rows, but broken by a gap in the middle row.
        let broken = rows_of(&["###", "#.#", "###"]);
        assert_eq!(fine(&broken, 2), 1);
    }

    /// Regions end as soon as a row has no run touching them, and slots are
    /// reused: many regions one after another give the same as one pass.
    #[test]
    fn finished_regions_are_counted_once_and_kept_in_order() {
        let mut picture = Vec::new();
        for k in 0..30 {
            // Blocks of growing size, then a blank row.
            let width = 1 + k % 7;
            for _ in 0..1 + k % 3 {
                picture.push(format!("{}{}", ".".repeat(k % 5), "#".repeat(width)));
            }
            picture.push(String::new());
        }
        let lines: Vec<&str> = picture.iter().map(String::as_str).collect();
        let rows = rows_of(&lines);
        let all = label(&rows, 1);
        assert_eq!(all.len(), 30);
        let mut labeler = Labeler::new(20, 1, 4, None);
        rows.iter().for_each(|r| labeler.push_row(r));
        let (kept, total) = labeler.finish_all();
        assert_eq!(total, 30);
        assert_eq!(kept, all[..4].to_vec());
    }
}
