//! Connected regions of flagged pixels, 8-connected (a pixel touches the
//! eight around it), found from runs of flagged pixels per row with a
//! union–find over the runs: memory grows with the flagged runs, not with
//! the image.

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
    /// The region's runs as (row, x0, x1), rows ascending.
    pub spans: Vec<(u32, u32, u32)>,
}

impl Region {
    pub fn mean(&self) -> f64 {
        self.sum / self.pixels.max(1) as f64
    }
}

fn find(parent: &mut [u32], mut i: u32) -> u32 {
    while parent[i as usize] != i {
        let p = parent[parent[i as usize] as usize];
        parent[i as usize] = p;
        i = p;
    }
    i
}

/// Labels the 8-connected regions of the runs (`rows[y]` holds the runs of
/// row `y`, ordered by x) and drops regions of fewer than `min_pixels`.
/// Regions come largest first (ties: top-most, then left-most).
pub fn label(rows: &[Vec<Run>], min_pixels: u64) -> Vec<Region> {
    let mut offsets = Vec::with_capacity(rows.len() + 1);
    let mut n = 0usize;
    for r in rows {
        offsets.push(n);
        n += r.len();
    }
    offsets.push(n);
    if n == 0 {
        return Vec::new();
    }
    let mut parent: Vec<u32> = (0..n as u32).collect();
    for y in 1..rows.len() {
        let (above, here) = (&rows[y - 1], &rows[y]);
        let (mut i, mut j) = (0, 0);
        while i < above.len() && j < here.len() {
            let (a, b) = (above[i], here[j]);
            // 8-connected: some pixel of one is within one column of the other.
            if a.x0 <= b.x1 && b.x0 <= a.x1 {
                let ra = find(&mut parent, (offsets[y - 1] + i) as u32);
                let rb = find(&mut parent, (offsets[y] + j) as u32);
                if ra != rb {
                    let (lo, hi) = if ra < rb { (ra, rb) } else { (rb, ra) };
                    parent[hi as usize] = lo;
                }
            }
            if a.x1 < b.x1 { i += 1 } else { j += 1 }
        }
    }
    let mut slot = vec![u32::MAX; n];
    let mut regions: Vec<Region> = Vec::new();
    for (y, row) in rows.iter().enumerate() {
        for (k, run) in row.iter().enumerate() {
            let root = find(&mut parent, (offsets[y] + k) as u32) as usize;
            let y = y as u32;
            if slot[root] == u32::MAX {
                slot[root] = regions.len() as u32;
                regions.push(Region {
                    x: run.x0,
                    y,
                    w: 0,
                    h: 0,
                    pixels: 0,
                    sum: 0.0,
                    max: f32::NEG_INFINITY,
                    max_at: (run.max_x, y),
                    spans: Vec::new(),
                });
            }
            let r = &mut regions[slot[root] as usize];
            // Stored as inclusive ends until the end.
            if r.pixels == 0 {
                r.w = run.x1 - 1;
                r.h = y;
            }
            r.x = r.x.min(run.x0);
            r.w = r.w.max(run.x1 - 1);
            r.h = r.h.max(y);
            r.pixels += (run.x1 - run.x0) as u64;
            r.sum += run.sum;
            if run.max > r.max {
                r.max = run.max;
                r.max_at = (run.max_x, y);
            }
            r.spans.push((y, run.x0, run.x1));
        }
    }
    let mut out: Vec<Region> = regions
        .into_iter()
        .filter(|r| r.pixels >= min_pixels.max(1))
        .map(|mut r| {
            r.w = r.w - r.x + 1;
            r.h = r.h - r.y + 1;
            r
        })
        .collect();
    out.sort_by(|a, b| b.pixels.cmp(&a.pixels).then(a.y.cmp(&b.y)).then(a.x.cmp(&b.x)));
    out
}

/// True when no `side` × `side` square of the region's own pixels fits in
/// it: every part of the region is narrower than `side` (fine lines, small
/// type). The square test is a morphological erosion by a square.
pub fn is_fine_detail(region: &Region, side: u32) -> bool {
    let side = side.max(1);
    if region.w < side || region.h < side {
        return true;
    }
    let (w, h) = (region.w as usize, region.h as usize);
    let s = side as usize;
    // Per column: how many rows in a row each column's horizontal window
    // (side wide, starting at that column) has been fully inside.
    let mut column_run = vec![0u32; w + 1 - s];
    let mut mask = vec![false; w];
    let mut prefix = vec![0u32; w + 1];
    let mut spans = region.spans.iter().peekable();
    for row in 0..h {
        mask.iter_mut().for_each(|m| *m = false);
        let y = region.y + row as u32;
        while let Some(&&(sy, x0, x1)) = spans.peek() {
            if sy != y {
                break;
            }
            for x in x0..x1 {
                mask[(x - region.x) as usize] = true;
            }
            spans.next();
        }
        for x in 0..w {
            prefix[x + 1] = prefix[x] + mask[x] as u32;
        }
        for (x0, run) in column_run.iter_mut().enumerate() {
            if prefix[x0 + s] - prefix[x0] == side {
                *run += 1;
                if *run >= side {
                    return false;
                }
            } else {
                *run = 0;
            }
        }
    }
    true
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

    #[test]
    fn fine_detail_is_what_a_square_cannot_fit_into() {
        let line = rows_of(&["##########", "##########", "..........", ".........."]);
        let r = &label(&line, 1)[0];
        assert!(is_fine_detail(r, 3));
        assert!(!is_fine_detail(r, 2));
        let block = rows_of(&["#####", "#####", "#####", "#...."]);
        let b = &label(&block, 1)[0];
        assert!(!is_fine_detail(b, 3));
        assert!(is_fine_detail(b, 4));
    }
}
