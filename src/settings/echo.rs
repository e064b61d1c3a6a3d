//! The one echo of the ink settings in percent: every report, summary,
//! ticket, condition file and profile description that shows the ink limit
//! and black generation takes its figures from [`InkEcho`] (each then rounds
//! or formats as its own layout needs).

use super::{BlackGeneration, Coverage, Percent};

/// The ink limit and black generation as people read them: percent, except
/// the shape (an exponent).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InkEcho {
    pub tac: Percent,
    pub gcr: Percent,
    pub black_start: Percent,
    pub black_max: Percent,
    pub black_shape: f64,
    pub uca: Percent,
}

impl InkEcho {
    /// From the ink limit (a coverage fraction, 3.0 = 300 %) and the black generation.
    pub fn new(tac: f64, black: &BlackGeneration) -> InkEcho {
        let p = |v: f64| Coverage(v).percent();
        InkEcho {
            tac: p(tac),
            gcr: p(black.gcr),
            black_start: p(black.black_start),
            black_max: p(black.black_max),
            black_shape: black.shape,
            uca: p(black.uca),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shows_percent_except_the_shape() {
        let e = InkEcho::new(
            3.2,
            &BlackGeneration {
                gcr: 0.6,
                black_start: 0.1,
                black_max: 0.95,
                shape: 1.5,
                uca: 0.05,
            },
        );
        assert_eq!(e.tac, Percent(3.2 * 100.0));
        assert_eq!(e.gcr, Percent(0.6 * 100.0));
        assert_eq!(e.black_start, Percent(0.1 * 100.0));
        assert_eq!(e.black_max, Percent(0.95 * 100.0));
        assert_eq!(e.black_shape, 1.5);
        assert_eq!(e.uca, Percent(0.05 * 100.0));
    }
}
