//! Small fixed-size tensor helpers for the per-point closure kernels.

// Tensor algebra reads best with explicit indices i, j, k as in the formulas.
#![allow(clippy::needless_range_loop)]

/// 3 x 3 matrix, row-major.
pub type Mat3 = [[f64; 3]; 3];
/// 3-vector.
pub type Vec3 = [f64; 3];
/// Rank-3 tensor `t[i][j][k]`.
pub type Ten3 = [[[f64; 3]; 3]; 3];

const fn levi_entry(i: usize, j: usize, k: usize) -> f64 {
    // (i - j)(j - k)(k - i)/2 gives +1, -1, 0 for i, j, k in {0, 1, 2}.
    let (i, j, k) = (i as i64, j as i64, k as i64);
    ((i - j) * (j - k) * (k - i)) as f64 / 2.0
}

const fn levi_table() -> Ten3 {
    let mut t = [[[0.0; 3]; 3]; 3];
    let mut i = 0;
    while i < 3 {
        let mut j = 0;
        while j < 3 {
            let mut k = 0;
            while k < 3 {
                t[i][j][k] = levi_entry(i, j, k);
                k += 1;
            }
            j += 1;
        }
        i += 1;
    }
    t
}

/// The Levi-Civita symbol as a table, `LEVI[i][j][k]`.
pub const LEVI: Ten3 = levi_table();

/// The Levi-Civita symbol `epsilon_ijk`.
#[inline(always)]
pub fn levi(i: usize, j: usize, k: usize) -> f64 {
    LEVI[i][j][k]
}

/// Symmetric part `(a + a^T)/2`.
pub fn sym(a: &Mat3) -> Mat3 {
    let mut s = [[0.0; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            s[i][j] = 0.5 * (a[i][j] + a[j][i]);
        }
    }
    s
}

/// The vector `gamma_i = -(1/2) epsilon_ijk a_jk` of the antisymmetric part of `a`, so that the
/// antisymmetric part acts on `B` as `gamma x B`.
pub fn axial(a: &Mat3) -> Vec3 {
    let mut g = [0.0; 3];
    for (i, gi) in g.iter_mut().enumerate() {
        // Only the two (j, k) with i, j, k all different: eps_i,i+1,i+2 = +1.
        let (j, k) = ((i + 1) % 3, (i + 2) % 3);
        *gi = -0.5 * (a[j][k] - a[k][j]);
    }
    g
}

/// Cross product.
pub fn cross(a: &Vec3, b: &Vec3) -> Vec3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn levi_civita_values() {
        assert_eq!(levi(0, 1, 2), 1.0);
        assert_eq!(levi(1, 2, 0), 1.0);
        assert_eq!(levi(2, 1, 0), -1.0);
        assert_eq!(levi(0, 0, 2), 0.0);
        // Identity eps_ijk eps_ijk = 6 (any tensor-calculus handbook).
        let mut s = 0.0;
        for i in 0..3 {
            for j in 0..3 {
                for k in 0..3 {
                    s += levi(i, j, k) * levi(i, j, k);
                }
            }
        }
        assert_eq!(s, 6.0);
    }

    #[test]
    fn axial_vector_reproduces_cross_product() {
        // a_ij = -eps_ijm g_m acts as g x B.
        let g = [0.3, -1.2, 2.5];
        let b = [1.1, 0.4, -0.7];
        let mut a = [[0.0; 3]; 3];
        for (i, row) in a.iter_mut().enumerate() {
            for (j, aij) in row.iter_mut().enumerate() {
                for (m, gm) in g.iter().enumerate() {
                    *aij -= levi(i, j, m) * gm;
                }
            }
        }
        let back = axial(&a);
        let gxb = cross(&g, &b);
        for i in 0..3 {
            assert_abs_diff_eq!(back[i], g[i], epsilon = 1e-15);
            let ab: f64 = (0..3).map(|j| a[i][j] * b[j]).sum();
            assert_abs_diff_eq!(ab, gxb[i], epsilon = 1e-15);
        }
        assert_eq!(sym(&a), [[0.0; 3]; 3]);
    }
}
