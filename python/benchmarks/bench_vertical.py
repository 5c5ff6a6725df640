"""Benchmark: bend_profile over 10^4 radii x 256 heights against the NumPy/SciPy way, in the same run.

The NumPy/SciPy version is what a user would write by hand: the integrating factor and the three
integrals with ``scipy.integrate.cumulative_simpson`` / ``simpson`` along the last axis, then the profile
with one more cumulative integral. Both compute the split and the full ``B_r/B_z`` profile for a given
surface ratio. Run with ``python python/benchmarks/bench_vertical.py``.
"""

from __future__ import annotations

import time

import numpy as np
from fluxfunnel.vertical import bend_profile
from scipy import integrate

N_RADII = 10_000
NZ = 256
REPEATS = 3


def numpy_way(z, eta, vz, vr, grad, bs):
    ln_mu = -integrate.cumulative_simpson(vz / eta, x=z, axis=-1, initial=0.0)
    top = ln_mu.max(axis=-1, keepdims=True)
    mu = np.exp(ln_mu - top)
    i_inv = integrate.simpson(mu / eta, x=z, axis=-1)
    u_adv = integrate.simpson(mu * vr / eta, x=z, axis=-1) / i_inv
    u_dif = mu[..., -1] / i_inv
    u_grad = -grad * integrate.simpson(mu, x=z, axis=-1) / i_inv
    u_psi = u_adv + u_grad + u_dif * bs
    source = mu * ((u_psi[..., None] - vr) / eta + grad[..., None])
    profile = integrate.cumulative_simpson(source, x=z, axis=-1, initial=0.0) / mu
    return u_adv, u_dif, u_grad, profile


def best_of(fn):
    times = []
    out = None
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def main() -> None:
    rng = np.random.default_rng(7)
    h = 1.0
    z = np.linspace(0.0, h, NZ)
    c1 = rng.uniform(0.5, 2.0, (N_RADII, 1))
    c2 = rng.uniform(-1.0, 2.0, (N_RADII, 1))
    eta = c1 + np.exp(-((z / h) ** 2))
    vz = c2 * z / h
    vr = -(1.0 + c1 * (z / h) ** 2)
    grad = rng.uniform(-0.1, 0.1, N_RADII)
    bs = rng.uniform(0.0, 1.0, N_RADII)

    t_ff, res = best_of(lambda: bend_profile(z, eta=eta, v_z=vz, v_r=vr, d_bz_dr=grad, surface_ratio=bs))
    t_np, ref = best_of(lambda: numpy_way(z, eta, vz, vr, grad, bs))
    diff = max(
        float(np.max(np.abs(res.u_psi - (ref[0] + ref[2] + ref[1] * bs)) / np.abs(ref[0]))),
        float(np.max(np.abs(res.b_r_over_b_z - ref[3]))),
    )
    print(f"bend_profile, {N_RADII} radii x {NZ} heights (best of {REPEATS})")
    print(f"  fluxfunnel (Rust, rayon) : {t_ff * 1e3:8.1f} ms")
    print(f"  NumPy/SciPy (Simpson)    : {t_np * 1e3:8.1f} ms")
    print(f"  ratio NumPy/fluxfunnel   : {t_np / t_ff:8.2f}x")
    print(f"  max difference (u_psi rel., profile abs.): {diff:.2e}")


if __name__ == "__main__":
    main()
