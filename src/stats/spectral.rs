//! Per-height spectral moments of one vector field: the fourth-rank moments `<(K_jm f_n) f_k>` (K_jm with
//! Fourier symbol `k_j k_m / k^2`), the fluctuation energy `<f . f>` and the helicity `<f . curl f>`.
//!
//! Method. Horizontal transforms give `F_c(kx, ky, z)`; the horizontal mean (or the volume mean) is
//! removed there. For each `(kx, ky)` column the z line is transformed (zero-padded to `2 nz` when z is not
//! periodic), multiplied by the symbol, transformed back, and multiplied with the column itself; by
//! Parseval's theorem in x and y, `<g h>_xy(z) = sum_{kx,ky} w_ky Re[G conj(H)] / (nx ny)^2` with
//! `w_ky = 2` for the interior `ky > 0` of the half spectrum and 1 at `ky = 0` and the y Nyquist mode.
//! Odd powers of a wavenumber use zero at its Nyquist mode (`wavenumbers_odd`), even powers the full value.

use ndarray::{Array1, Array4, Array5, ArrayView4, Axis};
use rayon::prelude::*;
use realfft::num_complex::Complex;

use super::point::PAIRS;
use super::{check_vector_field, locate_non_finite};
use crate::error::{CoreError, CoreResult};
use crate::numerics::fft::{wavenumbers, wavenumbers_odd, Fft3, Real};
use crate::numerics::Cancel;

/// Which mean is removed before the spectral moments are taken.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MeanRemoval {
    /// The horizontal (x-y) mean at each height: the fluctuation of mean-field theory.
    Horizontal,
    /// Only the volume mean (k = 0): keeps modes with wavevector along z.
    Volume,
}

/// Options of [`spectral_profiles`].
#[derive(Debug, Clone, Copy)]
pub struct SpectralOptions {
    /// Grid spacings `(dx, dy, dz)` in cm.
    pub spacing: [f64; 3],
    /// Periodic z; otherwise the z transforms are zero-padded to twice the length.
    pub periodic_z: bool,
    /// Which mean to remove.
    pub mean: MeanRemoval,
    /// Compute the fourth-rank moments.
    pub moments: bool,
    /// Compute `<f . curl f>`.
    pub helicity: bool,
}

/// Per-height spectral profiles of one field (unnormalised horizontal averages).
#[derive(Debug, Clone)]
pub struct SpectralProfiles {
    /// `<f' . f'>`, `(nz,)`.
    pub energy: Array1<f64>,
    /// `<(K_jm f'_n) f'_k>` at `[z, j, m, n, k]`, `(nz, 3, 3, 3, 3)`.
    pub moments: Option<Array5<f64>>,
    /// `<f' . curl f'>`, `(nz,)`, in field units squared per cm.
    pub helicity: Option<Array1<f64>>,
}

struct Wavenumbers {
    kx: Vec<f64>,
    kx_odd: Vec<f64>,
    ky: Vec<f64>,
    ky_odd: Vec<f64>,
    kz: Vec<f64>,
    kz_odd: Vec<f64>,
}

/// Accumulators of one worker: energy, moments (6 pairs x 3 x 3 per height), helicity.
struct Acc {
    energy: Vec<f64>,
    moments: Vec<f64>,
    helicity: Vec<f64>,
}

impl Acc {
    fn new(nz: usize, moments: bool, helicity: bool) -> Self {
        Self {
            energy: vec![0.0; nz],
            moments: if moments {
                vec![0.0; nz * 54]
            } else {
                Vec::new()
            },
            helicity: if helicity { vec![0.0; nz] } else { Vec::new() },
        }
    }
    fn add(mut self, other: Acc) -> Acc {
        for (a, b) in [
            (&mut self.energy, other.energy),
            (&mut self.moments, other.moments),
            (&mut self.helicity, other.helicity),
        ] {
            a.iter_mut().zip(b).for_each(|(x, y)| *x += y);
        }
        self
    }
}

#[inline]
fn re_dot<T: Real>(a: Complex<T>, b: Complex<T>) -> f64 {
    a.re.widen() * b.re.widen() + a.im.widen() * b.im.widen()
}

/// Energy, fourth-rank moments and helicity of the fluctuations of `f`, per height; see the module docs.
pub fn spectral_profiles<T: Real>(
    f: ArrayView4<'_, T>,
    opts: &SpectralOptions,
    cancel: &Cancel,
) -> CoreResult<SpectralProfiles> {
    check_vector_field("field", &f)?;
    for (name, d) in ["dx", "dy", "dz"].iter().zip(opts.spacing) {
        if !d.is_finite() || d <= 0.0 {
            return Err(CoreError::input(
                "spacing",
                format!("{name} must be finite and positive, got {d}"),
            ));
        }
    }
    let (nx, ny, nz) = (f.shape()[1], f.shape()[2], f.shape()[3]);
    let plan = Fft3::<T>::new(nx, ny, nz, !opts.periodic_z)?;
    let nky = plan.nky();
    let nzt = plan.nz_transform();
    let zero = Complex::new(T::zero(), T::zero());
    let mut mixed = Array4::from_elem((3, nx, nky, nz), zero);
    for c in 0..3 {
        plan.forward_xy(f.index_axis(Axis(0), c), mixed.index_axis_mut(Axis(0), c))?;
        cancel.check()?;
    }
    // Remove the mean from the (kx, ky) = (0, 0) column.
    for c in 0..3 {
        let mut col = mixed.slice_mut(ndarray::s![c, 0, 0, ..]);
        if col.iter().any(|v| !(v.re.is_finite() && v.im.is_finite())) {
            locate_non_finite("field", &f)?;
        }
        match opts.mean {
            MeanRemoval::Horizontal => col.fill(zero),
            MeanRemoval::Volume => {
                let m = col.iter().map(|v| v.re.widen()).sum::<f64>() / nz as f64;
                let m = T::narrow(m);
                col.iter_mut().for_each(|v| v.re = v.re - m);
            }
        }
    }
    let [dx, dy, dz] = opts.spacing;
    let k = Wavenumbers {
        kx: wavenumbers(nx, dx, false),
        kx_odd: wavenumbers_odd(nx, dx, false),
        ky: wavenumbers(ny, dy, true),
        ky_odd: wavenumbers_odd(ny, dy, true),
        kz: wavenumbers(nzt, dz, false),
        kz_odd: wavenumbers_odd(nzt, dz, false),
    };
    let chunk = (4 * rayon::current_num_threads()).max(1);
    let mut total = Acc::new(nz, opts.moments, opts.helicity);
    let mut start = 0;
    while start < nx {
        let end = (start + chunk).min(nx);
        let part = (start..end)
            .into_par_iter()
            .fold(
                || Acc::new(nz, opts.moments, opts.helicity),
                |acc, ix| slab(&plan, &mixed, ix, &k, opts, acc),
            )
            .reduce(|| Acc::new(nz, opts.moments, opts.helicity), Acc::add);
        total = total.add(part);
        cancel.advance(end - start);
        cancel.check()?;
        start = end;
    }
    let norm_xy = 1.0 / ((nx * ny) as f64).powi(2);
    let norm = norm_xy / nzt as f64;
    let energy = Array1::from_iter(total.energy.iter().map(|v| v * norm_xy));
    if energy.iter().any(|v| !v.is_finite()) {
        locate_non_finite("field", &f)?;
    }
    let moments = opts.moments.then(|| {
        let mut m = Array5::zeros((nz, 3, 3, 3, 3));
        for iz in 0..nz {
            for (p, (j, mm)) in PAIRS.iter().enumerate() {
                for n in 0..3 {
                    for kk in 0..3 {
                        let v = total.moments[((iz * 6 + p) * 3 + n) * 3 + kk] * norm;
                        m[[iz, *j, *mm, n, kk]] = v;
                        m[[iz, *mm, *j, n, kk]] = v;
                    }
                }
            }
        }
        m
    });
    let helicity = opts
        .helicity
        .then(|| Array1::from_iter(total.helicity.iter().map(|v| v * norm)));
    Ok(SpectralProfiles {
        energy,
        moments,
        helicity,
    })
}

/// Work on one kx slab: every ky column of the three components.
fn slab<T: Real>(
    plan: &Fft3<T>,
    mixed: &Array4<Complex<T>>,
    ix: usize,
    k: &Wavenumbers,
    opts: &SpectralOptions,
    mut acc: Acc,
) -> Acc {
    let nz = mixed.shape()[3];
    let nky = mixed.shape()[2];
    let ny_even_nyq = k.ky_odd.last().is_some_and(|v| *v == 0.0) && nky > 1;
    let nzt = plan.nz_transform();
    let zero = Complex::new(T::zero(), T::zero());
    let mut scratch = plan.z_scratch();
    let mut g = vec![vec![zero; nz]; 3];
    let mut spec = vec![vec![zero; nzt]; 3];
    let mut tmp = vec![zero; nzt];
    let mut symbol = vec![T::zero(); nzt];
    let (kx, kxo) = (k.kx[ix], k.kx_odd[ix]);
    for iy in 0..nky {
        let w = if iy == 0 || (ny_even_nyq && iy == nky - 1) {
            1.0
        } else {
            2.0
        };
        for c in 0..3 {
            for (iz, v) in g[c].iter_mut().enumerate() {
                *v = mixed[[c, ix, iy, iz]];
            }
            for (iz, v) in g[c].iter().enumerate() {
                acc.energy[iz] += w * re_dot(*v, *v);
            }
        }
        if !(opts.moments || opts.helicity) {
            continue;
        }
        if ix == 0 && iy == 0 && opts.mean == MeanRemoval::Horizontal {
            continue; // the column is zero
        }
        for c in 0..3 {
            plan.z_forward(&g[c], &mut spec[c], &mut scratch);
        }
        let (ky, kyo) = (k.ky[iy], k.ky_odd[iy]);
        let full = [kx, ky];
        let odd = [kxo, kyo];
        if opts.moments {
            for (p, (j, m)) in PAIRS.iter().enumerate() {
                for (iz, s) in symbol.iter_mut().enumerate() {
                    let kv = [full[0], full[1], k.kz[iz]];
                    let ko = [odd[0], odd[1], k.kz_odd[iz]];
                    let k2 = kv[0] * kv[0] + kv[1] * kv[1] + kv[2] * kv[2];
                    let num = if j == m {
                        kv[*j] * kv[*j]
                    } else {
                        ko[*j] * ko[*m]
                    };
                    *s = T::narrow(if k2 > 0.0 { num / k2 } else { 0.0 });
                }
                for (n, spec_n) in spec.iter().enumerate() {
                    for ((t, s), sym) in tmp.iter_mut().zip(spec_n).zip(&symbol) {
                        *t = *s * *sym;
                    }
                    plan.z_inverse(&mut tmp, &mut scratch);
                    for (kk, g_k) in g.iter().enumerate() {
                        let base = (p * 3 + n) * 3 + kk;
                        for iz in 0..nz {
                            acc.moments[iz * 54 + base] += w * re_dot(tmp[iz], g_k[iz]);
                        }
                    }
                }
            }
        }
        if opts.helicity {
            // curl_i = i (k_j F_l - k_l F_j), (i, j, l) cyclic; odd wavenumbers throughout.
            for (i, j, l) in [(0usize, 1usize, 2usize), (1, 2, 0), (2, 0, 1)] {
                for (iz, t) in tmp.iter_mut().enumerate() {
                    let ko = [odd[0], odd[1], k.kz_odd[iz]];
                    let v = spec[l][iz] * T::narrow(ko[j]) - spec[j][iz] * T::narrow(ko[l]);
                    *t = Complex::new(-v.im, v.re);
                }
                plan.z_inverse(&mut tmp, &mut scratch);
                for iz in 0..nz {
                    acc.helicity[iz] += w * re_dot(tmp[iz], g[i][iz]);
                }
            }
        }
    }
    acc
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn opts(periodic_z: bool, mean: MeanRemoval) -> SpectralOptions {
        SpectralOptions {
            spacing: [1.0, 1.0, 1.0],
            periodic_z,
            mean,
            moments: true,
            helicity: true,
        }
    }

    #[test]
    fn abc_flow_is_beltrami() {
        // Source: Arnold 1965 / Dombre et al. 1986: the ABC flow satisfies curl u = k u, so <u . curl u> =
        // k <u^2>. With A = B = C = 1 and k = 1 on a 2 pi box the horizontal fluctuation keeps the B and C
        // parts (the A part is a horizontal mean): <u'^2> = B^2 + C^2 = 2 at every height.
        let n = 16;
        let h = 2.0 * std::f64::consts::PI / n as f64;
        let u = Array4::from_shape_fn((3, n, n, n), |(c, i, j, l)| {
            let (x, y, z) = (i as f64 * h, j as f64 * h, l as f64 * h);
            [z.sin() + y.cos(), x.sin() + z.cos(), y.sin() + x.cos()][c]
        });
        let mut o = opts(true, MeanRemoval::Horizontal);
        o.spacing = [h, h, h];
        let s = spectral_profiles(u.view(), &o, &Cancel::new()).unwrap();
        let hel = s.helicity.unwrap();
        let m = s.moments.unwrap();
        for iz in 0..n {
            assert_relative_eq!(s.energy[iz], 2.0, epsilon = 1e-12);
            assert_relative_eq!(hel[iz], 2.0, epsilon = 1e-12);
            // trace of K over j = m, contracted n = k, is the energy (K_jj = identity for k != 0)
            let tr: f64 = (0..3)
                .flat_map(|j| (0..3).map(move |q| (j, q)))
                .map(|(j, q)| m[[iz, j, j, q, q]])
                .sum();
            assert_relative_eq!(tr, 2.0, epsilon = 1e-12);
        }
    }

    #[test]
    fn vertical_wavevectors_give_szz_one_even_zero_padded() {
        // A field varying only along z: every wavevector is along z, so K_zz = 1 on it (definition of K).
        let n = 8;
        let f = Array4::from_shape_fn((3, 4, 4, n), |(c, _, _, l)| {
            let z = 2.0 * std::f64::consts::PI * l as f64 / n as f64;
            [z.sin() + 0.3 * (2.0 * z).cos(), (3.0 * z).cos(), 0.0][c]
        });
        for periodic in [true, false] {
            let s = spectral_profiles(
                f.view(),
                &opts(periodic, MeanRemoval::Volume),
                &Cancel::new(),
            )
            .unwrap();
            let m = s.moments.unwrap();
            for iz in 0..n {
                let szz: f64 = (0..3).map(|q| m[[iz, 2, 2, q, q]]).sum();
                if s.energy[iz] > 1e-12 {
                    assert_relative_eq!(szz / s.energy[iz], 1.0, epsilon = 1e-12);
                }
            }
        }
    }

    #[test]
    fn rejects_bad_spacing_and_cancels() {
        let f = Array4::<f32>::zeros((3, 4, 4, 4));
        let mut o = opts(true, MeanRemoval::Horizontal);
        o.spacing = [1.0, 0.0, 1.0];
        assert!(spectral_profiles(f.view(), &o, &Cancel::new())
            .unwrap_err()
            .to_string()
            .starts_with("spacing"));
        let c = Cancel::new();
        c.request();
        assert_eq!(
            spectral_profiles(f.view(), &opts(true, MeanRemoval::Horizontal), &c).unwrap_err(),
            CoreError::Interrupted
        );
    }
}
