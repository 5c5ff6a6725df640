"""Benchmark: jet-capability sweep on 200 radii per system, fluxfunnel's Rust engine vs the SciPy way,
measured in the same run. Run by hand: ``python python/benchmarks/bench_population.py [n_rust] [n_scipy]``
(defaults 2000 and 10; the issue's 1e4 systems take about five times the 2000-system time, so the script
extrapolates both sides to 1e4 and says so).

The SciPy reference does per system what a user would write with SciPy: the same alpha-disk profiles,
the vertical integrals u_adv, u_dif with scipy.integrate.cumulative_trapezoid on the same heights, the
kernel matrix from scipy.special (``bench_flux.operator_scipy``, every interval integrated) and the steady
system solved with scipy.linalg.solve (``bench_flux.steady_scipy``), then the same critical-radius rule.
"""

from __future__ import annotations

import sys
import time
import warnings
from pathlib import Path

import numpy as np
from scipy.integrate import cumulative_trapezoid, trapezoid

sys.path.insert(0, str(Path(__file__).parent))
from bench_flux import steady_scipy  # noqa: E402
from fluxfunnel import constants as k  # noqa: E402
from fluxfunnel.disk import AlphaDisk, AssumptionWarning  # noqa: E402
from fluxfunnel.objects import CompactObject  # noqa: E402
from fluxfunnel.population import jet_capability  # noqa: E402

N_R, ALPHA, PM, AMP = 200, 0.02, 1.0, 0.3


def scipy_system(mass, mdot, r_in, b_ext, r_out=1e11):
    disk = AlphaDisk(mass, mdot, ALPHA, r_in=r_in)
    r = np.geomspace(1.1 * r_in, r_out, N_R)
    c_s, h, nu, v_r = disk.sound_speed(r), disk.scale_height(r), disk.viscosity(r), disk.radial_velocity(r)
    beta = 8 * np.pi * disk.midplane_pressure(r) / b_ext**2
    zeta = np.linspace(0, 1, 129)
    eta = (nu / (PM * c_s * h))[:, None] * np.ones_like(zeta)
    vz = AMP * zeta[None, :] ** 3 / (1 + 10.0 / beta[:, None])
    mu = np.exp(-cumulative_trapezoid(vz / eta, zeta, axis=1, initial=0))
    norm = trapezoid(mu / eta, zeta, axis=1)
    u_adv = trapezoid(mu * (v_r / c_s)[:, None] / eta, zeta, axis=1) / norm * c_s
    u_dif = mu[:, -1] / norm * c_s
    psi = steady_scipy(r, u_adv, u_dif, 0.5 * b_ext * r**2)
    b_z = np.gradient(psi, r) / r
    return r, b_z, u_adv, u_dif


def main() -> int:
    n_rust = int(sys.argv[1]) if len(sys.argv) > 1 else 2000
    n_scipy = int(sys.argv[2]) if len(sys.argv) > 2 else 10
    rng = np.random.default_rng(11)
    mass = 10 ** rng.uniform(0.5, 1.5, n_rust) * k.M_SUN
    mdot = 10 ** rng.uniform(16, 18, n_rust)
    bh = CompactObject.black_hole(mass, 0.5)
    warnings.simplefilter("ignore", AssumptionWarning)
    t0 = time.perf_counter()
    res = jet_capability(bh, mdot, 1.0, alpha=ALPHA, n_r=N_R, engine="rust")
    t_rust = time.perf_counter() - t0
    r_in = np.asarray(bh.inner_edge(mdot).radius)
    t0 = time.perf_counter()
    for i in range(n_scipy):
        scipy_system(mass[i], mdot[i], r_in[i], 1.0)
    t_scipy = time.perf_counter() - t0
    per_rust, per_scipy = t_rust / n_rust, t_scipy / n_scipy
    print(f"Rust engine: {n_rust} systems in {t_rust:.2f} s ({per_rust * 1e3:.2f} ms per system)")
    print(f"SciPy way:   {n_scipy} systems in {t_scipy:.2f} s ({per_scipy * 1e3:.1f} ms per system)")
    print(
        f"ratio {per_scipy / per_rust:.0f}x; extrapolated to 1e4 systems: {per_rust * 1e4:.0f} s vs "
        f"{per_scipy * 1e4:.0f} s; systems that can launch: {int(res.can_launch.sum())}/{n_rust}"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
