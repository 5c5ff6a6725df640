"""Benchmark: per-height shape-tensor moments of a float32 vector field, fluxfunnel vs the same transforms in SciPy.

Run by hand:  python python/benchmarks/bench_stats.py [--n 256] [--repeat 1]

Both sides compute the fourth-rank moments <(K_jm f_n) f_k>_xy(z) (whose contraction is the shape tensor) with
the same method: real transform along y, complex along x, remove the horizontal mean, then per (kx, ky) column
a z transform, the symbol k_j k_m / k^2, the inverse z transform and Parseval in x and y. SciPy uses
scipy.fft with workers = all cores, fully vectorised over the grid. Peak memory is the growth of the process's
maximum resident set during the fluxfunnel call, added to the input size, over the input size.
"""

from __future__ import annotations

import argparse
import os
import resource
import time

import numpy as np
import scipy.fft as sfft
from fluxfunnel import _core

PAIRS = [(0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2)]


def scipy_moments(f: np.ndarray, workers: int) -> tuple[np.ndarray, np.ndarray]:
    _, nx, ny, nz = f.shape
    mixed = sfft.rfft(f, axis=2, workers=workers)
    mixed = sfft.fft(mixed, axis=1, workers=workers, overwrite_x=True)
    mixed[:, 0, 0, :] = 0.0
    spec = sfft.fft(mixed, axis=3, workers=workers)
    kx = 2 * np.pi * np.fft.fftfreq(nx)
    ky = 2 * np.pi * np.fft.rfftfreq(ny)
    kz = 2 * np.pi * np.fft.fftfreq(nz)
    kxo, kyo, kzo = kx.copy(), ky.copy(), kz.copy()
    kxo[nx // 2] = kyo[-1] = kzo[nz // 2] = 0.0
    full = np.meshgrid(kx, ky, kz, indexing="ij", sparse=True)
    odd = np.meshgrid(kxo, kyo, kzo, indexing="ij", sparse=True)
    k2 = full[0] ** 2 + full[1] ** 2 + full[2] ** 2
    k2[0, 0, 0] = 1.0
    w = np.full(ky.size, 2.0, dtype=np.float32)
    w[0] = w[-1] = 1.0
    w = w[None, :, None]
    norm = 1.0 / (nx * ny) ** 2
    energy = (w * (mixed.real**2 + mixed.imag**2)).sum(axis=(0, 1, 2), dtype=np.float64) * norm
    out = np.zeros((nz, 6, 3, 3))
    for p, (j, m) in enumerate(PAIRS):
        sym = ((full[j] ** 2 if j == m else odd[j] * odd[m]) / k2).astype(np.float32)
        for n in range(3):
            g = sfft.ifft(spec[n] * sym, axis=-1, workers=workers, overwrite_x=True)
            for k in range(3):
                prod = w * (g.real * mixed[k].real + g.imag * mixed[k].imag)
                out[:, p, n, k] = prod.sum(axis=(0, 1), dtype=np.float64) * norm
    return energy, out


def maxrss_bytes() -> int:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=256)
    ap.add_argument("--repeat", type=int, default=1)
    args = ap.parse_args()
    n = args.n
    rng = np.random.default_rng(0)
    f = rng.standard_normal((3, n, n, n), dtype=np.float32)
    input_bytes = f.nbytes
    base = maxrss_bytes()
    t_ff = []
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        energy, moments, _ = _core._stats_spectral(f, (1.0, 1.0, 1.0), True, False, True, False)
        t_ff.append(time.perf_counter() - t0)
    extra = max(maxrss_bytes() - base, 0)
    workers = os.cpu_count() or 1
    t_sp = []
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        e_ref, m_ref = scipy_moments(f, workers)
        t_sp.append(time.perf_counter() - t0)
    assert moments is not None
    got = np.stack([moments[:, j, m] for j, m in PAIRS], axis=1)
    err = np.abs(got - m_ref).max() / np.abs(e_ref).max()
    print(f"grid {n}^3 float32 vector field ({input_bytes / 2**20:.0f} MiB), {workers} cores")
    peak = (input_bytes + extra) / input_bytes
    print(f"fluxfunnel : {min(t_ff):8.3f} s   peak memory (input + growth) / input = {peak:.2f}")
    print(f"scipy.fft  : {min(t_sp):8.3f} s")
    print(f"ratio scipy / fluxfunnel = {min(t_sp) / min(t_ff):.2f}  (> 1: fluxfunnel faster)")
    print(
        f"max |difference| / max energy = {err:.2e}; energy difference {np.abs(energy - e_ref).max() / e_ref.max():.2e}"
    )


if __name__ == "__main__":
    main()
