//! Tridiagonal solvers for the column model: 2x2-block (the two field components at each node) and
//! scalar, each with an optional periodic wrap handled by the Woodbury (Sherman-Morrison) identity.

use crate::error::{CoreError, CoreResult};

/// A 2x2 block, row major.
pub type M2 = [[f64; 2]; 2];
/// A 2-vector.
pub type V2 = [f64; 2];

/// Identity block.
pub const I2: M2 = [[1.0, 0.0], [0.0, 1.0]];

fn mul(a: &M2, b: &M2) -> M2 {
    std::array::from_fn(|i| std::array::from_fn(|j| a[i][0] * b[0][j] + a[i][1] * b[1][j]))
}

fn mulv(a: &M2, v: &V2) -> V2 {
    [
        a[0][0] * v[0] + a[0][1] * v[1],
        a[1][0] * v[0] + a[1][1] * v[1],
    ]
}

fn inv(a: &M2) -> CoreResult<M2> {
    let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
    let scale = a.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs()));
    if !det.is_finite() || det.abs() <= 1e-14 * scale * scale {
        return Err(CoreError::convergence(
            "block tridiagonal elimination met a singular pivot block (time step matrix not invertible)",
            det,
        ));
    }
    Ok([
        [a[1][1] / det, -a[0][1] / det],
        [-a[1][0] / det, a[0][0] / det],
    ])
}

/// A factored block tridiagonal matrix: row `i` is `lower[i] x[i-1] + diag[i] x[i] + upper[i] x[i+1]`;
/// with `periodic`, `lower[0]` couples to `x[n-1]` and `upper[n-1]` to `x[0]`.
pub struct BlockTridiag {
    lower: Vec<M2>,
    pivot_inv: Vec<M2>,
    upper_red: Vec<M2>,
    wrap: Option<Wrap>,
}

struct Wrap {
    /// Solutions of the open (non-periodic) system for the four columns of the corner coupling.
    z: Vec<[V2; 4]>,
    /// Inverse of the 4x4 capacitance matrix, row major.
    cap_inv: [[f64; 4]; 4],
}

impl BlockTridiag {
    /// Factor the matrix; `n >= 3` when `periodic`.
    pub fn new(lower: Vec<M2>, diag: Vec<M2>, upper: Vec<M2>, periodic: bool) -> CoreResult<Self> {
        let n = diag.len();
        let mut pivot_inv = Vec::with_capacity(n);
        let mut upper_red = Vec::with_capacity(n);
        for i in 0..n {
            let mut piv = diag[i];
            if i > 0 {
                let lc = mul(&lower[i], &upper_red[i - 1]);
                for r in 0..2 {
                    for c in 0..2 {
                        piv[r][c] -= lc[r][c];
                    }
                }
            }
            let pinv = inv(&piv)?;
            upper_red.push(mul(&pinv, &upper[i]));
            pivot_inv.push(pinv);
        }
        let mut me = Self {
            lower,
            pivot_inv,
            upper_red,
            wrap: None,
        };
        if periodic {
            // M = T + U V^T with U = [E_0 lower_0, E_{n-1} upper_{n-1}], V = [E_{n-1}, E_0].
            let a0 = me.lower[0];
            let cn = upper[n - 1];
            let mut cols: Vec<Vec<V2>> = Vec::with_capacity(4);
            for k in 0..4 {
                let mut rhs = vec![[0.0; 2]; n];
                if k < 2 {
                    rhs[0] = [a0[0][k], a0[1][k]];
                } else {
                    rhs[n - 1] = [cn[0][k - 2], cn[1][k - 2]];
                }
                me.solve_open(&mut rhs);
                cols.push(rhs);
            }
            let z: Vec<[V2; 4]> = (0..n)
                .map(|i| std::array::from_fn(|k| cols[k][i]))
                .collect();
            let mut cap = [[0.0; 4]; 4];
            for (k, row) in cap.iter_mut().enumerate() {
                for (c, v) in row.iter_mut().enumerate() {
                    let vz = if k < 2 {
                        z[n - 1][c][k]
                    } else {
                        z[0][c][k - 2]
                    };
                    *v = vz + if k == c { 1.0 } else { 0.0 };
                }
            }
            me.wrap = Some(Wrap {
                z,
                cap_inv: invert4(cap)?,
            });
        }
        Ok(me)
    }

    fn solve_open(&self, x: &mut [V2]) {
        let n = x.len();
        for i in 0..n {
            let mut r = x[i];
            if i > 0 {
                let l = mulv(&self.lower[i], &x[i - 1]);
                r = [r[0] - l[0], r[1] - l[1]];
            }
            x[i] = mulv(&self.pivot_inv[i], &r);
        }
        for i in (0..n - 1).rev() {
            let u = mulv(&self.upper_red[i], &x[i + 1]);
            x[i] = [x[i][0] - u[0], x[i][1] - u[1]];
        }
    }

    /// Solve in place: `x` holds the right-hand side on entry and the solution on exit.
    pub fn solve(&self, x: &mut [V2]) {
        self.solve_open(x);
        if let Some(w) = &self.wrap {
            let n = x.len();
            let vy = [x[n - 1][0], x[n - 1][1], x[0][0], x[0][1]];
            let coef: [f64; 4] =
                std::array::from_fn(|k| (0..4).map(|c| w.cap_inv[k][c] * vy[c]).sum());
            for (xi, zi) in x.iter_mut().zip(&w.z) {
                for (k, ck) in coef.iter().enumerate() {
                    xi[0] -= zi[k][0] * ck;
                    xi[1] -= zi[k][1] * ck;
                }
            }
        }
    }
}

fn invert4(mut a: [[f64; 4]; 4]) -> CoreResult<[[f64; 4]; 4]> {
    let mut inv = [[0.0; 4]; 4];
    for (i, row) in inv.iter_mut().enumerate() {
        row[i] = 1.0;
    }
    for c in 0..4 {
        let p = (c..4)
            .max_by(|&i, &j| a[i][c].abs().total_cmp(&a[j][c].abs()))
            .unwrap_or(c);
        if a[p][c].abs() < 1e-300 || !a[p][c].is_finite() {
            return Err(CoreError::convergence(
                "periodic wrap: singular capacitance matrix",
                a[p][c],
            ));
        }
        a.swap(c, p);
        inv.swap(c, p);
        let d = a[c][c];
        for k in 0..4 {
            a[c][k] /= d;
            inv[c][k] /= d;
        }
        for r in 0..4 {
            if r != c {
                let f = a[r][c];
                for k in 0..4 {
                    a[r][k] -= f * a[c][k];
                    inv[r][k] -= f * inv[c][k];
                }
            }
        }
    }
    Ok(inv)
}

/// Solve the scalar tridiagonal system `a[i] x[i-1] + b[i] x[i] + c[i] x[i+1] = r[i]` in place (`r` becomes
/// `x`); with `periodic`, `a[0]` couples to `x[n-1]` and `c[n-1]` to `x[0]`. Uses the block solver with
/// diagonal blocks (second component decoupled and zero), so both solvers share one elimination.
pub fn solve_scalar(
    a: &[f64],
    b: &[f64],
    c: &[f64],
    r: &mut [f64],
    periodic: bool,
) -> CoreResult<()> {
    let blk = |v: f64, d: f64| [[v, 0.0], [0.0, d]];
    let lower = a.iter().map(|&v| blk(v, 0.0)).collect();
    let diag = b.iter().map(|&v| blk(v, 1.0)).collect();
    let upper = c.iter().map(|&v| blk(v, 0.0)).collect();
    let t = BlockTridiag::new(lower, diag, upper, periodic)?;
    let mut x: Vec<V2> = r.iter().map(|&v| [v, 0.0]).collect();
    t.solve(&mut x);
    for (ri, xi) in r.iter_mut().zip(&x) {
        *ri = xi[0];
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn dense_apply(lower: &[M2], diag: &[M2], upper: &[M2], x: &[V2], periodic: bool) -> Vec<V2> {
        let n = x.len();
        (0..n)
            .map(|i| {
                let mut y = mulv(&diag[i], &x[i]);
                if i > 0 || periodic {
                    let l = mulv(&lower[i], &x[(i + n - 1) % n]);
                    y = [y[0] + l[0], y[1] + l[1]];
                }
                if i + 1 < n || periodic {
                    let u = mulv(&upper[i], &x[(i + 1) % n]);
                    y = [y[0] + u[0], y[1] + u[1]];
                }
                y
            })
            .collect()
    }

    #[test]
    fn block_solver_inverts_open_and_periodic_systems() {
        let n = 7;
        let lower: Vec<M2> = (0..n)
            .map(|i| [[-0.3, 0.1 * i as f64], [0.2, -0.4]])
            .collect();
        let upper: Vec<M2> = (0..n)
            .map(|i| [[-0.25, -0.1], [0.05 * i as f64, -0.35]])
            .collect();
        let diag: Vec<M2> = (0..n)
            .map(|i| [[2.0 + 0.1 * i as f64, 0.3], [-0.7, 1.9]])
            .collect();
        let x_true: Vec<V2> = (0..n)
            .map(|i| [(i as f64).sin(), (0.5 * i as f64).cos()])
            .collect();
        for periodic in [false, true] {
            let mut rhs = dense_apply(&lower, &diag, &upper, &x_true, periodic);
            let t =
                BlockTridiag::new(lower.clone(), diag.clone(), upper.clone(), periodic).unwrap();
            t.solve(&mut rhs);
            for (a, b) in rhs.iter().zip(&x_true) {
                assert_relative_eq!(a[0], b[0], epsilon = 1e-13);
                assert_relative_eq!(a[1], b[1], epsilon = 1e-13);
            }
        }
    }

    #[test]
    fn scalar_periodic_solver() {
        let n = 6;
        let (a, b, c) = (vec![-1.0; n], vec![3.0; n], vec![-0.5; n]);
        let x: Vec<f64> = (0..n).map(|i| i as f64 + 1.0).collect();
        let mut r: Vec<f64> = (0..n)
            .map(|i| a[i] * x[(i + n - 1) % n] + b[i] * x[i] + c[i] * x[(i + 1) % n])
            .collect();
        solve_scalar(&a, &b, &c, &mut r, true).unwrap();
        for (ri, xi) in r.iter().zip(&x) {
            assert_relative_eq!(*ri, *xi, epsilon = 1e-13);
        }
    }
}
