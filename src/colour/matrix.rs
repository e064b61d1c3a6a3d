//! A small 3 × 3 matrix for colour-space conversions.

/// Row-major 3 × 3 matrix acting on column vectors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mat3(pub [[f64; 3]; 3]);

impl Mat3 {
    pub const IDENTITY: Mat3 = Mat3([[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]]);

    /// Matrix × column vector.
    #[inline]
    pub fn apply(&self, v: [f64; 3]) -> [f64; 3] {
        let m = &self.0;
        [
            m[0][0] * v[0] + m[0][1] * v[1] + m[0][2] * v[2],
            m[1][0] * v[0] + m[1][1] * v[1] + m[1][2] * v[2],
            m[2][0] * v[0] + m[2][1] * v[1] + m[2][2] * v[2],
        ]
    }

    /// Matrix product `self × rhs`.
    pub fn mul(&self, rhs: &Mat3) -> Mat3 {
        let mut out = [[0.0; 3]; 3];
        for (i, row) in out.iter_mut().enumerate() {
            for (j, cell) in row.iter_mut().enumerate() {
                *cell = (0..3).map(|k| self.0[i][k] * rhs.0[k][j]).sum();
            }
        }
        Mat3(out)
    }

    pub fn determinant(&self) -> f64 {
        let m = &self.0;
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1]) - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    }

    /// Inverse by the adjugate; `None` when the matrix is singular.
    pub fn inverse(&self) -> Option<Mat3> {
        let det = self.determinant();
        if det.abs() < 1e-300 || !det.is_finite() {
            return None;
        }
        let m = &self.0;
        let inv = |a: f64| a / det;
        Some(Mat3([
            [
                inv(m[1][1] * m[2][2] - m[1][2] * m[2][1]),
                inv(m[0][2] * m[2][1] - m[0][1] * m[2][2]),
                inv(m[0][1] * m[1][2] - m[0][2] * m[1][1]),
            ],
            [
                inv(m[1][2] * m[2][0] - m[1][0] * m[2][2]),
                inv(m[0][0] * m[2][2] - m[0][2] * m[2][0]),
                inv(m[0][2] * m[1][0] - m[0][0] * m[1][2]),
            ],
            [
                inv(m[1][0] * m[2][1] - m[1][1] * m[2][0]),
                inv(m[0][1] * m[2][0] - m[0][0] * m[2][1]),
                inv(m[0][0] * m[1][1] - m[0][1] * m[1][0]),
            ],
        ]))
    }

    /// Diagonal matrix.
    pub fn diagonal(d: [f64; 3]) -> Mat3 {
        Mat3([[d[0], 0.0, 0.0], [0.0, d[1], 0.0], [0.0, 0.0, d[2]]])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn inverse_times_matrix_is_identity() {
        let m = Mat3([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]]);
        let p = m.mul(&m.inverse().unwrap());
        for i in 0..3 {
            for j in 0..3 {
                let want = if i == j { 1.0 } else { 0.0 };
                assert!((p.0[i][j] - want).abs() < 1e-12);
            }
        }
    }

    #[test]
    fn singular_matrix_has_no_inverse() {
        let m = Mat3([[1.0, 2.0, 3.0], [2.0, 4.0, 6.0], [0.0, 1.0, 1.0]]);
        assert!(m.inverse().is_none());
    }
}
