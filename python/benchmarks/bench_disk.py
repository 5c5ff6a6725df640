"""Benchmark: AlphaDisk methods on 10^6 radii against the same formulas written with NumPy.

Run by hand: ``python python/benchmarks/bench_disk.py``. Reports the best of a few repeats and the ratio
NumPy time / fluxfunnel time, measured in the same run (so > 1 means fluxfunnel is faster). The fluxfunnel
timings include its validity check (the assumption ratios computed in the same pass), which the NumPy
version does not do.
"""

from __future__ import annotations

import math
import time
import warnings

import numpy as np
from fluxfunnel import constants as k
from fluxfunnel.disk import AlphaDisk, AssumptionWarning

N = 1_000_000
REPEATS = 5
MASS, MDOT, ALPHA, R_IN = k.M_SUN, 1e16, 0.1, 1e9
G_MID = math.sqrt(2 * math.pi)


def numpy_state(r):
    """The disk equations written out with NumPy, as a user would (Gaussian midplane convention)."""
    omega = np.sqrt(k.G * MASS / r**3)
    mf4 = MDOT * (1 - np.sqrt(R_IN / r))
    gas = k.K_B / (0.615 * k.M_P)
    t = (5e24 * omega**5 * mf4**3 / (32 * math.pi**3 * k.SIGMA_SB * G_MID * ALPHA**2 * gas**2.5)) ** 0.1
    cs = np.sqrt(gas * t)
    h = cs / omega
    sigma = mf4 / (3 * math.pi * ALPHA * cs * h)
    return sigma, h, t


def numpy_density(r, z):
    sigma, h, _ = numpy_state(r)
    return sigma / (G_MID * h) * np.exp(-0.5 * (z / h) ** 2)


def best_of(fn):
    times = []
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    rng = np.random.default_rng(7)
    r = R_IN * 10 ** rng.uniform(0.01, 1.3, N)  # where the faint disk's assumptions hold
    z = rng.normal(size=N) * 1e7
    disk = AlphaDisk(MASS, MDOT, ALPHA, r_in=R_IN)
    with warnings.catch_warnings():
        warnings.simplefilter("error", AssumptionWarning)
        cases = [
            ("surface_density", lambda: disk.surface_density(r), lambda: numpy_state(r)[0]),
            ("midplane_temperature", lambda: disk.midplane_temperature(r), lambda: numpy_state(r)[2]),
            ("scale_height", lambda: disk.scale_height(r), lambda: numpy_state(r)[1]),
            ("density(r, z)", lambda: disk.density(r, z), lambda: numpy_density(r, z)),
        ]
        print(f"AlphaDisk on {N:,} radii, best of {REPEATS}")
        print(f"{'method':<22} {'fluxfunnel [ms]':>16} {'NumPy [ms]':>11} {'ratio':>7}")
        for name, ours, theirs in cases:
            np.testing.assert_allclose(ours(), theirs(), rtol=1e-12)
            t_ours, t_np = best_of(ours), best_of(theirs)
            print(f"{name:<22} {1e3 * t_ours:16.1f} {1e3 * t_np:11.1f} {t_np / t_ours:7.2f}")


if __name__ == "__main__":
    main()
