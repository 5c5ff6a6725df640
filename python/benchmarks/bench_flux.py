"""Benchmark: steady flux state on 1000 radii, fluxfunnel vs the SciPy way (scipy.special kernel +
scipy.linalg.solve), measured in the same run, plus a sweep of many systems on 200 radii. Run by hand:
``python python/benchmarks/bench_flux.py [n_systems]`` (default 50; 1e4 systems would take minutes, so
the script extrapolates from a smaller sweep).

The SciPy reference builds the same hat-function operator with vectorised NumPy over all (i, j, node)
triples (12-point Gauss-Legendre per interval, the s^2 substitution clustering nodes toward the field point),
the kernel from scipy.special.ellipkm1 / ellipe near the ring and hyp2f1 in the far field, and solves the
steady system with scipy.linalg.solve.
"""

from __future__ import annotations

import sys
import time

import numpy as np
import scipy.linalg as la
import scipy.special as sc
from fluxfunnel.flux import FluxModel

N = 1000
GL = 12


def kernel_log(d: np.ndarray) -> np.ndarray:
    """G(1, e^d) with scipy.special."""
    chi = np.cosh(d)
    far = chi >= 1.5
    out = np.empty_like(d)
    c = chi[far]
    out[far] = np.exp(0.5 * d[far]) / np.pi * (np.pi / 2) * (2 * c) ** -1.5 * sc.hyp2f1(1.25, 0.75, 2.0, c**-2)
    t = np.tanh(0.5 * d[~far])
    p = t * t
    out[~far] = (1 + np.exp(d[~far])) / (2 * np.pi) * ((1 + p) * sc.ellipkm1(p) - 2 * sc.ellipe(1 - p))
    return out


def operator_scipy(r: np.ndarray) -> np.ndarray:
    x = np.log(r)
    n = r.size
    s, w = np.polynomial.legendre.leggauss(GL)
    s, w = 0.5 * (s + 1), 0.5 * w
    W = np.zeros((n, n))
    for lo in range(0, n, 50):  # rows in chunks to bound memory
        rows = np.arange(lo, min(lo + 50, n))
        xi = x[rows][:, None, None]
        for left in (True, False):
            j = np.arange(1, n) if left else np.arange(0, n - 1)
            xa = (x[j - 1] if left else x[j])[None, :, None]
            xb = (x[j] if left else x[j + 1])[None, :, None]
            length = xb - xa
            toward_b = xb <= xi  # cluster the nodes at the end nearest the field point
            xp = np.where(toward_b, xb - length * s**2, xa + length * s**2)
            jac = 2 * length * s
            hat = (xp - xa) / length if left else (xb - xp) / length
            d = xp - xi
            f = kernel_log(d.ravel()).reshape(d.shape) * np.exp(d) * hat * jac * w
            W[np.ix_(rows, j)] += (r[rows] ** 2)[:, None] * f.sum(axis=2)
    return W


def steady_scipy(r, u_adv, u_dif, psi_ext):
    n = r.size
    D = np.zeros((n, n))
    for i in range(n):
        lo = min(max(i - 1, 0), n - 3)
        a, b, c = r[lo : lo + 3]
        x0 = r[i]
        wts = [
            (2 * x0 - b - c) / ((a - b) * (a - c)),
            (2 * x0 - a - c) / ((b - a) * (b - c)),
            (2 * x0 - a - b) / ((c - a) * (c - b)),
        ]
        D[i, lo : lo + 3] = np.array(wts) / r[i]
    W = operator_scipy(r)
    L = (r * u_adv)[:, None] * D
    M = L @ W + np.diag(r * u_dif)
    rhs = -L @ psi_ext
    M[-1] = W[-1]  # anchored outer edge
    rhs[-1] = 0.0
    b = la.solve(M, rhs)
    return W @ b + psi_ext


def sweep(n_systems: int) -> float:
    """Steady states of n systems on 200 radii (Pm and H/R varied), both ways; returns the worst mismatch."""
    rng = np.random.default_rng(3)
    pms, hs = 10 ** rng.uniform(0, 1.3, n_systems), rng.uniform(0.01, 0.1, n_systems)
    r = np.geomspace(1.0, 1e4, 200)
    nu = 1e-2 * np.sqrt(r)
    cases = [(-1.5 * nu / r, (nu / pm) / (h * r)) for pm, h in zip(pms, hs, strict=True)]
    t0 = time.perf_counter()
    ours = [FluxModel(r, u_adv=a, u_dif=d, external_field=1.0).steady_state().psi[0] for a, d in cases]
    t_ours = time.perf_counter() - t0
    psi_ext = 0.5 * r**2
    t0 = time.perf_counter()
    ref = [steady_scipy(r, a, d, psi_ext) for a, d in cases]
    t_ref = time.perf_counter() - t0
    print(
        f"sweep of {n_systems} systems on 200 radii: fluxfunnel {t_ours:.3f} s, SciPy {t_ref:.3f} s, "
        f"ratio {t_ref / t_ours:.1f}x; extrapolated to 1e4 systems: {t_ours / n_systems * 1e4:.0f} s vs "
        f"{t_ref / n_systems * 1e4:.0f} s"
    )
    sel = (r > 10) & (r < 1e3)
    return max(float(np.max(np.abs(o[sel] / f[sel] - 1))) for o, f in zip(ours, ref, strict=True))


def main() -> int:
    n_systems = int(sys.argv[1]) if len(sys.argv) > 1 else 50
    worst = sweep(n_systems)
    print(f"max relative difference of psi in the sweep: {worst:.2e}")
    r = np.geomspace(1.0, 1e4, N)
    nu = 1e-2 * np.sqrt(r)
    u_adv, u_dif = -1.5 * nu / r, (nu / 10.0) / (0.05 * r)  # Pm = 10, H/R = 0.05
    t0 = time.perf_counter()
    model = FluxModel(r, u_adv=u_adv, u_dif=u_dif, external_field=1.0)
    ours = model.steady_state().psi[0]
    t_ours = time.perf_counter() - t0
    t0 = time.perf_counter()
    ref = steady_scipy(r, u_adv, u_dif, model.psi_ext)
    t_ref = time.perf_counter() - t0
    sel = (r > 10) & (r < 1e3)
    diff = np.max(np.abs(ours[sel] / ref[sel] - 1))
    print(f"steady state, N = {N}: fluxfunnel {t_ours:.3f} s, SciPy {t_ref:.3f} s, ratio {t_ref / t_ours:.1f}x")
    print(f"max relative difference of psi in the interior: {diff:.2e}")
    return 0 if max(diff, worst) < 1e-6 else 1


if __name__ == "__main__":
    sys.exit(main())
