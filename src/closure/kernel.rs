//! The one-point tau-closure kernel: every coefficient at every grid point in one parallel pass.
//!
//! Per point, with `4 pi rho` written `q` and `<b^2> = tr M`:
//!
//! * kinetic alpha `alpha^K = -tau <u.w> N^u` (helicity spectrum with the angular shape of the energy);
//! * magnetic alpha `alpha^M = +tau <b.curl b> N^b / q`;
//! * pumping `gamma^K = -(tau/2) div R`, `gamma^M = +(tau/2) m` with `m` the divergence of the Maxwell
//!   tensor over `q` (the caller decides where the density sits);
//! * diffusion `b_iml = -tau eps_ijm R_jl + (tau/q)(eps_imk M_lk - s W_iml)`, `W_iml = eps_ijk S_jmlk`,
//!   `S_jmlk = <(K_jm b_l) b_k>`, `s = 2, 1, 0` for the consistent, partial and no pressure treatment;
//! * buoyancy `a^B_il = tau g/(q c*^2) (eps_izk M_lk - p W_izl)` with `p = 1` when the force response is
//!   projected; its symmetric part is a buoyancy alpha, its axial vector a vertical drift;
//! * stable stratification (`N^2 > 0`) multiplies every vertical transport that rests on `u_z`
//!   correlations (the `l = z` kinetic diffusion entries and the vertical drifts) by `1/(1 + N^2 tau^2)`;
//!   the change of the drifts is reported on its own as the entropy drift.
//!
//! Results are written as one record of `record_len` numbers per point, laid out by [`Layout`].

// Tensor algebra reads best with explicit indices i, j, k as in the formulas.
#![allow(clippy::needless_range_loop)]

use ndarray::{Array2, ArrayView1, ArrayView2, ArrayView3, ArrayView5, ArrayViewMut2, Axis};
use rayon::prelude::*;

use super::tensor::{axial, cross, levi, sym, Mat3, Ten3, Vec3};
use crate::error::{CoreError, CoreResult};
use crate::numerics::Cancel;

/// Where the fourth-rank magnetic shape moments come from.
#[derive(Debug, Clone, Copy)]
pub enum ShapeSource<'a> {
    /// Only the second-rank shape tensor `N^b` (n, 3, 3): the moments of a projected spectrum
    /// `phi(k) P(k)` are used, for which `eps_ijk S_jmlk = (<b^2>/2) eps_ijl N_jm` exactly.
    Second(ArrayView3<'a, f64>),
    /// The normalised moments `S_jmnk / <b^2>` (n, 3, 3, 3, 3); `N^b_jm = sum_n S_jmnn / <b^2>`.
    Fourth(ArrayView5<'a, f64>),
}

/// How the pressure part of the Lorentz-force response is treated (see `docs/theory.md`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PressureTreatment {
    /// The whole linear force is projected with the Leray operator (the consistent treatment).
    Projected,
    /// Only the `(b.grad)B` term is projected; the buoyancy force is projected.
    Partial,
    /// No projection at all (tension terms only; buoyancy unprojected).
    Unprojected,
}

impl PressureTreatment {
    fn diffusion_weight(self) -> f64 {
        match self {
            PressureTreatment::Projected => 2.0,
            PressureTreatment::Partial => 1.0,
            PressureTreatment::Unprojected => 0.0,
        }
    }
    fn buoyancy_weight(self) -> f64 {
        match self {
            PressureTreatment::Unprojected => 0.0,
            _ => 1.0,
        }
    }
}

/// Knobs of the kernel.
#[derive(Debug, Clone, Copy)]
pub struct Settings {
    /// Pressure treatment of the Lorentz-force response.
    pub pressure: PressureTreatment,
    /// Horizontal unit vector of the mean field whose buoyant drift is reported.
    pub field_direction: Vec3,
    /// Apply the stable-stratification factor `1/(1 + N^2 tau^2)`.
    pub stratification: bool,
    /// Also write the full `b_ijk` tensor (27 numbers per point).
    pub with_b_tensor: bool,
    /// `magnetic_div` holds the divergence of the Maxwell tensor itself \[G^2 cm^-1\]; the kernel divides
    /// it by `4 pi rho` (saves the caller a pass over the grid when the density sits outside the derivative).
    pub divide_magnetic_div: bool,
}

/// Per-point inputs, first axis the flattened grid (length n). Zero strides (broadcast inputs) are fine.
#[derive(Debug, Clone, Copy)]
pub struct PointInputs<'a> {
    /// Reynolds tensor `<u_i u_j>` \[cm^2 s^-2\], (n, 3, 3).
    pub reynolds: ArrayView3<'a, f64>,
    /// Maxwell tensor `<b_i b_j>` \[G^2\], (n, 3, 3).
    pub maxwell: ArrayView3<'a, f64>,
    /// Kinetic helicity `<u . curl u>` \[cm s^-2\], (n,).
    pub kinetic_helicity: ArrayView1<'a, f64>,
    /// Current helicity `<b . curl b>` \[G^2 cm^-1\], (n,).
    pub current_helicity: ArrayView1<'a, f64>,
    /// Shape tensor of u, (n, 3, 3), trace 1.
    pub u_shape: ArrayView3<'a, f64>,
    /// Magnetic shape moments.
    pub b_shape: ShapeSource<'a>,
    /// Correlation time \[s\], (n,).
    pub tau: ArrayView1<'a, f64>,
    /// Density \[g cm^-3\], (n,).
    pub rho: ArrayView1<'a, f64>,
    /// Signed gravity `g = -g_z` \[cm s^-2\] (positive where gravity points to -z), (n,).
    pub gravity: ArrayView1<'a, f64>,
    /// Brunt-Vaisala frequency squared \[s^-2\], (n,).
    pub brunt_vaisala2: ArrayView1<'a, f64>,
    /// Squared signal speed of the thermal response `c*^2` \[cm^2 s^-2\], (n,); may be 0 where g = 0.
    pub response_speed2: ArrayView1<'a, f64>,
    /// `div R`, `(div R)_i = d_j R_ij` \[cm s^-2\], (n, 3).
    pub div_reynolds: ArrayView2<'a, f64>,
    /// Divergence of the Maxwell tensor over `4 pi rho` \[cm s^-2\], (n, 3); with
    /// [`Settings::divide_magnetic_div`] the divergence itself \[G^2 cm^-1\].
    pub magnetic_div: ArrayView2<'a, f64>,
}

/// Offsets of each field in a per-point record.
#[derive(Debug, Clone, Copy)]
pub struct Layout;

impl Layout {
    /// Total alpha (3x3).
    pub const ALPHA: usize = 0;
    /// Kinetic alpha (3x3).
    pub const ALPHA_K: usize = 9;
    /// Magnetic alpha (3x3).
    pub const ALPHA_M: usize = 18;
    /// Buoyancy alpha, the symmetric part of the buoyancy tensor (3x3).
    pub const ALPHA_B: usize = 27;
    /// Kinetic pumping velocity (3).
    pub const PUMP_K: usize = 36;
    /// Magnetic pumping velocity (3).
    pub const PUMP_M: usize = 39;
    /// Buoyant drift for the chosen field direction (3).
    pub const BUOY: usize = 42;
    /// Axial vector of the buoyancy tensor (3).
    pub const GAMMA_B: usize = 45;
    /// Change of the vertical drifts by stable stratification (3).
    pub const ENTROPY: usize = 48;
    /// Total gamma (3).
    pub const GAMMA: usize = 51;
    /// Total diffusion tensor for horizontally averaged fields (3x3, horizontal block).
    pub const ETA: usize = 54;
    /// Kinetic part (3x3).
    pub const ETA_K: usize = 63;
    /// Magnetic part (3x3).
    pub const ETA_M: usize = 72;
    /// 1 where the symmetric horizontal diffusion tensor has a negative eigenvalue.
    pub const NEGATIVE: usize = 81;
    /// 1 where `N^2 < 0` (convectively unstable: the closure's relaxation picture fails).
    pub const UNSTABLE: usize = 82;
    /// Number of numbers without the b tensor.
    pub const BASE: usize = 83;
    /// Full `b_ijk` (27), only with `with_b_tensor`.
    pub const B_TENSOR: usize = 83;
}

/// Length of a record for the given settings.
pub fn record_len(settings: &Settings) -> usize {
    Layout::BASE + if settings.with_b_tensor { 27 } else { 0 }
}

/// Matrix `p` of an (n, 3, 3) view.
///
/// Only called from [`point`], after [`coefficients_into`] has checked every view's shape against n, so the
/// indices are in bounds; the unchecked reads keep index arithmetic out of the per-point cost.
#[inline(always)]
fn read_mat(v: &ArrayView3<'_, f64>, p: usize) -> Mat3 {
    assert!(p < v.len_of(Axis(0)) && v.shape()[1] == 3 && v.shape()[2] == 3);
    let st = v.strides();
    if st[1] == 3 && st[2] == 1 {
        // Each matrix is nine contiguous numbers (C order): read them at constant offsets.
        // SAFETY: the assertion above and the strides put elements p*st[0] .. p*st[0] + 8 inside the view.
        let row = unsafe { std::slice::from_raw_parts(v.as_ptr().offset(p as isize * st[0]), 9) };
        return [
            [row[0], row[1], row[2]],
            [row[3], row[4], row[5]],
            [row[6], row[7], row[8]],
        ];
    }
    let mut m = [[0.0; 3]; 3];
    for (i, row) in m.iter_mut().enumerate() {
        for (j, x) in row.iter_mut().enumerate() {
            // SAFETY: the assertion above puts (p, i, j) inside the view.
            *x = unsafe { *v.uget([p, i, j]) };
        }
    }
    m
}

/// Tolerance scale of the symmetry test: the sum of the entries' magnitudes (finite exactly when every
/// entry is finite and the sum does not overflow).
#[inline(always)]
fn abs_sum(m: &Mat3) -> f64 {
    // Summed as a shallow tree (not one chain of nine dependent additions): this runs four times per point.
    let row = |r: &Vec3| (r[0].abs() + r[1].abs()) + r[2].abs();
    (row(&m[0]) + row(&m[1])) + row(&m[2])
}

/// The test of [`check_stress`] without early exits or messages (the per-point fast path; the detailed
/// check runs only when this fails, to name what is wrong).
#[inline(always)]
fn stress_ok(m: &Mat3) -> bool {
    // The trace bounds the tolerance scale of `check_stress` from below (diagonal entries are >= 0 here),
    // so passing this test implies passing that one; the plain sum is finite exactly when every entry is
    // (or it overflows, and the detailed check then decides).
    let trace = m[0][0] + m[1][1] + m[2][2];
    let all = (trace + (m[0][1] + m[1][0])) + ((m[0][2] + m[2][0]) + (m[1][2] + m[2][1]));
    let tol = 1e-10 * trace;
    all.is_finite()
        & (m[0][0] >= 0.0)
        & (m[1][1] >= 0.0)
        & (m[2][2] >= 0.0)
        & ((m[0][1] - m[1][0]).abs() <= tol)
        & ((m[0][2] - m[2][0]).abs() <= tol)
        & ((m[1][2] - m[2][1]).abs() <= tol)
}

#[inline(always)]
fn shape_ok(n: &Mat3) -> bool {
    stress_ok(n) & ((n[0][0] + n[1][1] + n[2][2] - 1.0).abs() <= 1e-6)
}

#[cold]
#[inline(never)]
fn check_stress(arg: &str, m: &Mat3, p: usize) -> CoreResult<()> {
    for i in 0..3 {
        for j in 0..3 {
            if !m[i][j].is_finite() {
                return Err(CoreError::input(
                    arg,
                    format!("must be finite, found {} at point {p}", m[i][j]),
                ));
            }
        }
    }
    for i in 0..3 {
        if m[i][i] < 0.0 {
            return Err(CoreError::input(
                arg,
                format!(
                    "diagonal entries are energies and must be non-negative, found {} at point {p}",
                    m[i][i]
                ),
            ));
        }
        for j in 0..i {
            if (m[i][j] - m[j][i]).abs() > 1e-10 * abs_sum(m) {
                return Err(CoreError::input(
                    arg,
                    format!("must be symmetric, but entries ({i},{j}) and ({j},{i}) differ at point {p}"),
                ));
            }
        }
    }
    Ok(())
}

#[cold]
#[inline(never)]
fn check_shape(arg: &str, n: &Mat3, p: usize) -> CoreResult<()> {
    check_stress(arg, n, p)?;
    let tr = n[0][0] + n[1][1] + n[2][2];
    if (tr - 1.0).abs() > 1e-6 {
        return Err(CoreError::input(
            arg,
            format!("a shape tensor has trace 1, found {tr} at point {p}"),
        ));
    }
    Ok(())
}

#[cold]
#[inline(never)]
fn scalar(arg: &str, v: &ArrayView1<'_, f64>, p: usize, rule: Rule) -> CoreResult<f64> {
    let x = v[p];
    let ok = x.is_finite()
        && match rule {
            Rule::Any => true,
            Rule::Positive => x > 0.0,
            Rule::NonNegative => x >= 0.0,
        };
    if ok {
        Ok(x)
    } else {
        let want = match rule {
            Rule::Any => "finite",
            Rule::Positive => "finite and positive",
            Rule::NonNegative => "finite and non-negative",
        };
        Err(CoreError::input(
            arg,
            format!("must be {want}, found {x} at point {p}"),
        ))
    }
}

/// Name what is wrong with the scalar and vector inputs at point `p` (the slow path of [`point`]).
#[cold]
#[inline(never)]
fn explain_scalars(inp: &PointInputs<'_>, p: usize) -> CoreResult<()> {
    scalar("kinetic_helicity", &inp.kinetic_helicity, p, Rule::Any)?;
    scalar("current_helicity", &inp.current_helicity, p, Rule::Any)?;
    scalar("tau", &inp.tau, p, Rule::Positive)?;
    scalar("rho", &inp.rho, p, Rule::Positive)?;
    let g = scalar("gravity", &inp.gravity, p, Rule::Any)?;
    scalar("brunt_vaisala2", &inp.brunt_vaisala2, p, Rule::Any)?;
    let c2 = scalar("sound_speed", &inp.response_speed2, p, Rule::NonNegative)?;
    if g != 0.0 && c2 <= 0.0 {
        return Err(CoreError::input(
            "sound_speed",
            format!("must be given and positive where gravity is non-zero (point {p})"),
        ));
    }
    for i in 0..3 {
        if !inp.div_reynolds[[p, i]].is_finite() {
            return Err(CoreError::input(
                "div_reynolds",
                format!("must be finite at point {p}"),
            ));
        }
        if !inp.magnetic_div[[p, i]].is_finite() {
            return Err(CoreError::input(
                "div_maxwell",
                format!("must be finite at point {p}"),
            ));
        }
    }
    Ok(())
}

#[derive(Clone, Copy)]
enum Rule {
    Any,
    Positive,
    NonNegative,
}

/// All coefficients at point `p`, written into `rec`.
fn point(inp: &PointInputs<'_>, set: &Settings, p: usize, rec: &mut [f64]) -> CoreResult<()> {
    assert!(rec.len() >= record_len(set));
    let r = read_mat(&inp.reynolds, p);
    if !stress_ok(&r) {
        check_stress("reynolds", &r, p)?;
    }
    let m = read_mat(&inp.maxwell, p);
    if !stress_ok(&m) {
        check_stress("maxwell", &m, p)?;
    }
    let nu = read_mat(&inp.u_shape, p);
    // A shape tensor broadcast along the grid (stride 0) was checked once, at point 0.
    if (p == 0 || inp.u_shape.strides()[0] != 0) && !shape_ok(&nu) {
        check_shape("u_shape", &nu, p)?;
    }
    let (hk, hc) = (inp.kinetic_helicity[p], inp.current_helicity[p]);
    let (tau, rho, g) = (inp.tau[p], inp.rho[p], inp.gravity[p]);
    let (n2, c2) = (inp.brunt_vaisala2[p], inp.response_speed2[p]);
    let scalars_ok = hk.is_finite()
        & hc.is_finite()
        & (tau.is_finite() & (tau > 0.0))
        & (rho.is_finite() & (rho > 0.0))
        & g.is_finite()
        & n2.is_finite()
        & (c2.is_finite() & (c2 >= 0.0));
    let mut div_r = [0.0; 3];
    let mut mdiv = [0.0; 3];
    let mut divs_ok = true;
    for i in 0..3 {
        div_r[i] = inp.div_reynolds[[p, i]];
        mdiv[i] = inp.magnetic_div[[p, i]];
        divs_ok &= div_r[i].is_finite() & mdiv[i].is_finite();
    }
    if !(scalars_ok & divs_ok & !(g != 0.0 && c2 <= 0.0)) {
        explain_scalars(inp, p)?;
    }
    let b2 = m[0][0] + m[1][1] + m[2][2];
    let q = 4.0 * std::f64::consts::PI * rho;
    let tau_q = tau / q;
    let tau_hc_q = tau * hc / q;

    // W_iml = eps_ijk S_jmlk and the magnetic shape tensor N^b.
    let mut w: Ten3 = [[[0.0; 3]; 3]; 3];
    let second = matches!(inp.b_shape, ShapeSource::Second(_));
    let nb: Mat3 = match inp.b_shape {
        ShapeSource::Second(v) => {
            let nb = read_mat(&v, p);
            if (p == 0 || v.strides()[0] != 0) && !shape_ok(&nb) {
                check_shape("b_shape", &nb, p)?;
            }
            // W is built entry by entry where it is used (`w_of` below).
            nb
        }
        ShapeSource::Fourth(v) => {
            let mut nb = [[0.0; 3]; 3];
            for (j, row) in nb.iter_mut().enumerate() {
                for (mm, x) in row.iter_mut().enumerate() {
                    for n in 0..3 {
                        let s = v[[p, j, mm, n, n]];
                        if !s.is_finite() {
                            return Err(CoreError::input(
                                "b_shape4",
                                format!("must be finite at point {p}"),
                            ));
                        }
                        *x += s;
                    }
                }
            }
            check_shape("b_shape4 (contracted over its last pair)", &nb, p)?;
            for (i, wi) in w.iter_mut().enumerate() {
                for (mm, wim) in wi.iter_mut().enumerate() {
                    for (l, wiml) in wim.iter_mut().enumerate() {
                        // eps_ijk S_jmlk: the two (j, k) with j, k, i all different.
                        let (j1, j2) = ((i + 1) % 3, (i + 2) % 3);
                        let s = v[[p, j1, mm, l, j2]] - v[[p, j2, mm, l, j1]];
                        if !s.is_finite() {
                            return Err(CoreError::input(
                                "b_shape4",
                                format!("must be finite at point {p}"),
                            ));
                        }
                        *wiml = b2 * s;
                    }
                }
            }
            nb
        }
    };

    let half_b2 = 0.5 * b2;
    let w_of = |i: usize, mm: usize, l: usize| -> f64 {
        if !second {
            w[i][mm][l]
        } else if i == l {
            0.0
        } else {
            // eps_ijl N_jm: only j = 3 - i - l contributes.
            let j = 3 - i - l;
            half_b2 * levi(i, j, l) * nb[j][mm]
        }
    };

    let strat = if set.stratification && n2 > 0.0 {
        1.0 / (1.0 + n2 * tau * tau)
    } else {
        1.0
    };

    // Alpha, kinetic and magnetic.
    let mut alpha_k = [[0.0; 3]; 3];
    let mut alpha_m = [[0.0; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            alpha_k[i][j] = -tau * hk * nu[i][j];
            alpha_m[i][j] = tau_hc_q * nb[i][j];
        }
    }

    // Buoyancy tensor.
    let cb = if g != 0.0 { tau * g / (q * c2) } else { 0.0 };
    let pw = set.pressure.buoyancy_weight();
    let mut ab = [[0.0; 3]; 3];
    if cb != 0.0 {
        for (i, row) in ab.iter_mut().enumerate() {
            for (l, x) in row.iter_mut().enumerate() {
                let mut s = -pw * w_of(i, 2, l);
                if i != 2 {
                    let k = 1 - i; // eps_izk M_lk with k = 3 - i - 2
                    s += levi(i, 2, k) * m[l][k];
                }
                *x = cb * s;
            }
        }
    }
    let alpha_b = sym(&ab);
    let gamma_b = axial(&ab);
    let e_b = set.field_direction;
    let mut emf_b = [0.0; 3];
    for (i, e) in emf_b.iter_mut().enumerate() {
        *e = (0..3).map(|l| ab[i][l] * e_b[l]).sum();
    }
    let drift_b = cross(&e_b, &emf_b);

    // Pumping.
    let mut pump_k = [0.0; 3];
    let mut pump_m = [0.0; 3];
    for i in 0..3 {
        pump_k[i] = -0.5 * tau * div_r[i];
        pump_m[i] = if set.divide_magnetic_div {
            0.5 * tau_q * mdiv[i]
        } else {
            0.5 * tau * mdiv[i]
        };
    }
    let mut entropy = [0.0; 3];
    entropy[2] = (strat - 1.0) * (pump_k[2] + pump_m[2] + gamma_b[2]);

    // Diffusion: b_iml multiplies d_l B_m; kinetic and magnetic parts of one entry.
    let sw = set.pressure.diffusion_weight();
    let b_entry = |i: usize, mm: usize, l: usize| -> (f64, f64) {
        let mut sk = 0.0;
        let mut sm = -sw * w_of(i, mm, l);
        if i != mm {
            // -eps_ijm R_jl and eps_imj M_lj: only j = 3 - i - m contributes.
            let j = 3 - i - mm;
            sk = -levi(i, j, mm) * r[j][l];
            sm += levi(i, mm, j) * m[l][j];
        }
        let f = if l == 2 { strat } else { 1.0 };
        (tau * sk * f, tau_q * sm)
    };
    // Horizontally averaged fields: E_i = b_imz d_z B_m, J = (-d_z B_y, d_z B_x, 0), E_i = -eta_ij J_j;
    // only these eight entries of b are needed unless the full tensor is asked for.
    let mut eta_k = [[0.0; 3]; 3];
    let mut eta_m = [[0.0; 3]; 3];
    for i in 0..2 {
        let (k1, m1) = b_entry(i, 1, 2);
        let (k0, m0) = b_entry(i, 0, 2);
        eta_k[i][0] = k1;
        eta_m[i][0] = m1;
        eta_k[i][1] = -k0;
        eta_m[i][1] = -m0;
    }

    let mut eta = [[0.0; 3]; 3];
    let mut alpha = [[0.0; 3]; 3];
    for i in 0..3 {
        for j in 0..3 {
            eta[i][j] = eta_k[i][j] + eta_m[i][j];
            alpha[i][j] = alpha_k[i][j] + alpha_m[i][j] + alpha_b[i][j];
        }
    }
    let mut gamma = [0.0; 3];
    for i in 0..3 {
        gamma[i] = pump_k[i] + pump_m[i] + gamma_b[i] + entropy[i];
    }
    let (a, c, d) = (eta[0][0], 0.5 * (eta[0][1] + eta[1][0]), eta[1][1]);
    let min_eig = 0.5 * (a + d) - (0.25 * (a - d) * (a - d) + c * c).sqrt();

    let (base, extra) = rec.split_at_mut(Layout::BASE);
    let rec: &mut [f64; Layout::BASE] = base.try_into().expect("record length checked above");
    let put_mat = |rec: &mut [f64; Layout::BASE], off: usize, x: &Mat3| {
        for i in 0..3 {
            for j in 0..3 {
                rec[off + 3 * i + j] = x[i][j];
            }
        }
    };
    let put_vec = |rec: &mut [f64; Layout::BASE], off: usize, x: &Vec3| {
        rec[off..off + 3].copy_from_slice(x);
    };
    put_mat(rec, Layout::ALPHA, &alpha);
    put_mat(rec, Layout::ALPHA_K, &alpha_k);
    put_mat(rec, Layout::ALPHA_M, &alpha_m);
    put_mat(rec, Layout::ALPHA_B, &alpha_b);
    put_vec(rec, Layout::PUMP_K, &pump_k);
    put_vec(rec, Layout::PUMP_M, &pump_m);
    put_vec(rec, Layout::BUOY, &drift_b);
    put_vec(rec, Layout::GAMMA_B, &gamma_b);
    put_vec(rec, Layout::ENTROPY, &entropy);
    put_vec(rec, Layout::GAMMA, &gamma);
    put_mat(rec, Layout::ETA, &eta);
    put_mat(rec, Layout::ETA_K, &eta_k);
    put_mat(rec, Layout::ETA_M, &eta_m);
    rec[Layout::NEGATIVE] = if min_eig < 0.0 { 1.0 } else { 0.0 };
    rec[Layout::UNSTABLE] = if n2 < 0.0 { 1.0 } else { 0.0 };
    if set.with_b_tensor {
        for i in 0..3 {
            for mm in 0..3 {
                for l in 0..3 {
                    let (bk, bm) = b_entry(i, mm, l);
                    extra[9 * i + 3 * mm + l] = bk + bm;
                }
            }
        }
    }
    Ok(())
}

fn check_len(arg: &str, len: usize, n: usize) -> CoreResult<()> {
    if len != n {
        return Err(CoreError::input(
            arg,
            format!("has {len} grid points but reynolds has {n}"),
        ));
    }
    Ok(())
}

fn check_tail(arg: &str, shape: &[usize], tail: &[usize]) -> CoreResult<()> {
    if &shape[1..] != tail {
        return Err(CoreError::input(
            arg,
            format!("must end in {tail:?}, got shape {shape:?}"),
        ));
    }
    Ok(())
}

/// Every coefficient at every point: an (n, [`record_len`]) array laid out by [`Layout`].
pub fn coefficients(
    inp: &PointInputs<'_>,
    set: &Settings,
    cancel: &Cancel,
) -> CoreResult<Array2<f64>> {
    let n = inp.reynolds.len_of(Axis(0));
    let mut out = Array2::<f64>::zeros((n, record_len(set)));
    let (mut negative, mut unstable) = (vec![false; n], vec![false; n]);
    coefficients_into(
        inp,
        set,
        cancel,
        out.view_mut(),
        &mut negative,
        &mut unstable,
    )?;
    Ok(out)
}

/// [`coefficients`] written into `out`, an (n, [`record_len`]) array in standard (C) order that the caller
/// allocated (the Python binding hands in NumPy's own buffer, so no second copy of the record is made).
/// The two flags of the record are also written as booleans into `negative` and `unstable` (length n), so
/// that a caller need not read them back out of the record.
pub fn coefficients_into(
    inp: &PointInputs<'_>,
    set: &Settings,
    cancel: &Cancel,
    mut out: ArrayViewMut2<'_, f64>,
    negative: &mut [bool],
    unstable: &mut [bool],
) -> CoreResult<()> {
    let n = inp.reynolds.len_of(Axis(0));
    check_tail("reynolds", inp.reynolds.shape(), &[3, 3])?;
    check_tail("maxwell", inp.maxwell.shape(), &[3, 3])?;
    check_tail("u_shape", inp.u_shape.shape(), &[3, 3])?;
    check_tail("div_reynolds", inp.div_reynolds.shape(), &[3])?;
    check_tail("div_maxwell", inp.magnetic_div.shape(), &[3])?;
    check_len("maxwell", inp.maxwell.len_of(Axis(0)), n)?;
    check_len("u_shape", inp.u_shape.len_of(Axis(0)), n)?;
    check_len("div_reynolds", inp.div_reynolds.len_of(Axis(0)), n)?;
    check_len("div_maxwell", inp.magnetic_div.len_of(Axis(0)), n)?;
    match inp.b_shape {
        ShapeSource::Second(v) => {
            check_tail("b_shape", v.shape(), &[3, 3])?;
            check_len("b_shape", v.len_of(Axis(0)), n)?;
        }
        ShapeSource::Fourth(v) => {
            check_tail("b_shape4", v.shape(), &[3, 3, 3, 3])?;
            check_len("b_shape4", v.len_of(Axis(0)), n)?;
        }
    }
    for (arg, v) in [
        ("kinetic_helicity", &inp.kinetic_helicity),
        ("current_helicity", &inp.current_helicity),
        ("tau", &inp.tau),
        ("rho", &inp.rho),
        ("gravity", &inp.gravity),
        ("brunt_vaisala2", &inp.brunt_vaisala2),
        ("sound_speed", &inp.response_speed2),
    ] {
        check_len(arg, v.len(), n)?;
    }
    let e = set.field_direction;
    let norm = (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt();
    if !norm.is_finite() || (norm - 1.0).abs() > 1e-12 || e[2] != 0.0 {
        return Err(CoreError::input(
            "field_direction",
            format!("must be a horizontal unit vector, got {e:?}"),
        ));
    }
    let k = record_len(set);
    if out.dim() != (n, k) {
        return Err(CoreError::input(
            "out",
            format!("must have shape ({n}, {k}), got {:?}", out.dim()),
        ));
    }
    let Some(buf) = out.as_slice_mut() else {
        return Err(CoreError::input("out", "must be C-contiguous"));
    };
    if negative.len() != n || unstable.len() != n {
        return Err(CoreError::input(
            "negative/unstable",
            format!("flag buffers must have {n} entries"),
        ));
    }
    const CHUNK: usize = 8192;
    buf.par_chunks_mut(CHUNK * k)
        .zip(negative.par_chunks_mut(CHUNK))
        .zip(unstable.par_chunks_mut(CHUNK))
        .enumerate()
        .try_for_each(|(c, ((block, neg), unst))| {
            cancel.check()?;
            for (o, rec) in block.chunks_mut(k).enumerate() {
                point(inp, set, c * CHUNK + o, rec)?;
                neg[o] = rec[Layout::NEGATIVE] != 0.0;
                unst[o] = rec[Layout::UNSTABLE] != 0.0;
            }
            Ok(())
        })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use ndarray::{Array1, Array3};

    struct Owned {
        r: Array3<f64>,
        m: Array3<f64>,
        nu: Array3<f64>,
        nb: Array3<f64>,
        hk: Array1<f64>,
        hc: Array1<f64>,
        tau: Array1<f64>,
        rho: Array1<f64>,
        g: Array1<f64>,
        n2: Array1<f64>,
        c2: Array1<f64>,
        dr: Array2<f64>,
        dm: Array2<f64>,
    }

    fn iso(n: usize, u2: f64, b2: f64) -> Owned {
        let eye = |s: f64| {
            let mut a = Array3::<f64>::zeros((n, 3, 3));
            for p in 0..n {
                for i in 0..3 {
                    a[[p, i, i]] = s;
                }
            }
            a
        };
        Owned {
            r: eye(u2 / 3.0),
            m: eye(b2 / 3.0),
            nu: eye(1.0 / 3.0),
            nb: eye(1.0 / 3.0),
            hk: Array1::zeros(n),
            hc: Array1::zeros(n),
            tau: Array1::from_elem(n, 10.0),
            rho: Array1::from_elem(n, 1e-9),
            g: Array1::zeros(n),
            n2: Array1::zeros(n),
            c2: Array1::zeros(n),
            dr: Array2::zeros((n, 3)),
            dm: Array2::zeros((n, 3)),
        }
    }

    fn run(o: &Owned, set: &Settings) -> CoreResult<Array2<f64>> {
        coefficients(&inputs(o), set, &Cancel::new())
    }

    fn inputs(o: &Owned) -> PointInputs<'_> {
        PointInputs {
            reynolds: o.r.view(),
            maxwell: o.m.view(),
            kinetic_helicity: o.hk.view(),
            current_helicity: o.hc.view(),
            u_shape: o.nu.view(),
            b_shape: ShapeSource::Second(o.nb.view()),
            tau: o.tau.view(),
            rho: o.rho.view(),
            gravity: o.g.view(),
            brunt_vaisala2: o.n2.view(),
            response_speed2: o.c2.view(),
            div_reynolds: o.dr.view(),
            magnetic_div: o.dm.view(),
        }
    }

    fn settings() -> Settings {
        Settings {
            pressure: PressureTreatment::Projected,
            field_direction: [0.0, 1.0, 0.0],
            stratification: true,
            with_b_tensor: true,
            divide_magnetic_div: false,
        }
    }

    #[test]
    fn isotropic_limits() {
        // Source: Krause & Raedler 1980 (alpha_K = -(tau/3)<u.w>, eta_t = tau<u^2>/3);
        // PHYSICS.md section 9 rows 3, 4 and 9 (tau = 10 s, <u.w> = 2, <u^2> = 100, rho = 1e-9,
        // <b.curl b> = 1e-6).
        let mut o = iso(2, 100.0, 5.0);
        o.hk.fill(2.0);
        o.hc.fill(1e-6);
        let out = run(&o, &settings()).unwrap();
        assert_relative_eq!(out[[0, Layout::ALPHA_K]], -20.0 / 3.0, max_relative = 1e-14);
        assert_relative_eq!(
            out[[1, Layout::ALPHA_M + 4]],
            265.258_238_486_490_5,
            max_relative = 1e-12
        );
        assert_relative_eq!(out[[0, Layout::ETA_K]], 1000.0 / 3.0, max_relative = 1e-14);
        assert_relative_eq!(
            out[[0, Layout::ETA_K + 4]],
            1000.0 / 3.0,
            max_relative = 1e-14
        );
        // Derived: docs/theory.md section 4, isotropic magnetic fluctuations leave eta unchanged.
        let scale = 10.0 * 5.0 / (4.0 * std::f64::consts::PI * 1e-9);
        for k in 0..9 {
            assert!(out[[0, Layout::ETA_M + k]].abs() < 1e-14 * scale);
        }
        assert_eq!(out[[0, Layout::NEGATIVE]], 0.0);
    }

    #[test]
    fn isotropic_buoyancy_is_half_the_unprojected_drift() {
        // Derived: docs/theory.md section 5; PHYSICS.md section 9 row 17: tau = 100 s, g = 1,
        // <b^2>/(8 pi rho c^2) = 0.01, N = 1/3 gives 0.3333 cm/s.
        let mut o = iso(1, 1.0, 0.0);
        o.tau.fill(100.0);
        o.g.fill(1.0);
        o.c2.fill(1.0);
        let b2 = 0.01 * 8.0 * std::f64::consts::PI * 1e-9;
        o.m.fill(0.0);
        for i in 0..3 {
            o.m[[0, i, i]] = b2 / 3.0;
        }
        let mut set = settings();
        let out = run(&o, &set).unwrap();
        assert_relative_eq!(out[[0, Layout::BUOY + 2]], 1.0 / 3.0, max_relative = 1e-12);
        assert_relative_eq!(
            out[[0, Layout::GAMMA_B + 2]],
            1.0 / 3.0,
            max_relative = 1e-12
        );
        set.pressure = PressureTreatment::Unprojected;
        let out = run(&o, &set).unwrap();
        assert_relative_eq!(out[[0, Layout::BUOY + 2]], 2.0 / 3.0, max_relative = 1e-12);
    }

    #[test]
    fn kernel_side_division_and_flag_buffers_match_the_record() {
        // Derived: gamma^M = (tau/2) div M / (4 pi rho) whether the caller or the kernel divides.
        let mut o = iso(3, 1.0, 1.0);
        o.dm[[1, 2]] = 2.5;
        o.n2[2] = -1.0;
        let q = 4.0 * std::f64::consts::PI * 1e-9;
        let mut pre = Owned {
            dm: o.dm.mapv(|x| x / q),
            ..iso(3, 1.0, 1.0)
        };
        pre.n2[2] = -1.0;
        let a = run(&pre, &settings()).unwrap();
        let mut set = settings();
        set.divide_magnetic_div = true;
        let inp = inputs(&o);
        let mut b = Array2::<f64>::zeros((3, record_len(&set)));
        let (mut neg, mut unst) = (vec![true; 3], vec![true; 3]);
        coefficients_into(
            &inp,
            &set,
            &Cancel::new(),
            b.view_mut(),
            &mut neg,
            &mut unst,
        )
        .unwrap();
        assert_relative_eq!(
            b[[1, Layout::PUMP_M + 2]],
            a[[1, Layout::PUMP_M + 2]],
            max_relative = 1e-14
        );
        assert_relative_eq!(
            b[[1, Layout::PUMP_M + 2]],
            0.5 * 10.0 * 2.5 / q,
            max_relative = 1e-14
        );
        for p in 0..3 {
            assert_eq!(neg[p], b[[p, Layout::NEGATIVE]] != 0.0);
            assert_eq!(unst[p], b[[p, Layout::UNSTABLE]] != 0.0);
        }
        assert_eq!(unst, vec![false, false, true]);
        // A wrong output shape is an input error, not a panic.
        let mut short = Array2::<f64>::zeros((2, record_len(&set)));
        let e = coefficients_into(
            &inp,
            &set,
            &Cancel::new(),
            short.view_mut(),
            &mut neg,
            &mut unst,
        );
        assert!(e.unwrap_err().to_string().starts_with("out"));
    }

    #[test]
    fn rejects_bad_input_with_the_argument_name() {
        let mut o = iso(3, 1.0, 1.0);
        o.r[[1, 0, 1]] = 0.1;
        let e = run(&o, &settings()).unwrap_err();
        assert!(
            e.to_string().starts_with("reynolds: must be symmetric"),
            "{e}"
        );
        let mut o = iso(3, 1.0, 1.0);
        o.m[[2, 2, 2]] = -1.0;
        assert!(run(&o, &settings())
            .unwrap_err()
            .to_string()
            .starts_with("maxwell"));
        let mut o = iso(3, 1.0, 1.0);
        o.tau[0] = 0.0;
        assert!(run(&o, &settings())
            .unwrap_err()
            .to_string()
            .starts_with("tau"));
        let mut o = iso(3, 1.0, 1.0);
        o.g[0] = 1.0;
        assert!(run(&o, &settings())
            .unwrap_err()
            .to_string()
            .starts_with("sound_speed"));
        let mut o = iso(3, 1.0, 1.0);
        o.nu[[0, 0, 0]] = 0.5;
        assert!(run(&o, &settings())
            .unwrap_err()
            .to_string()
            .starts_with("u_shape"));
        let o = iso(3, 1.0, 1.0);
        let mut set = settings();
        set.field_direction = [0.0, 0.0, 1.0];
        assert!(run(&o, &set)
            .unwrap_err()
            .to_string()
            .starts_with("field_direction"));
    }
}
