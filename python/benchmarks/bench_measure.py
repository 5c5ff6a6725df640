"""Benchmark fit_emf (nz = 256, nt = 10^4, 200 block-bootstrap resamples) against a NumPy loop of lstsq.

The NumPy side is what a user would otherwise write: per height, build the design matrix, solve it with
numpy.linalg.lstsq, then for each resample draw a moving-block bootstrap series and solve again. It takes
well over a minute for all 256 heights, so it is timed on a subset of heights and scaled linearly (heights
are independent problems of identical size). Both sides use the same block length. Run by hand:

    python python/benchmarks/bench_measure.py [--heights-numpy 6]
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from fluxfunnel.measure import fit_emf


def invented_series(nt: int, nz: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """An invented mean-field history with known coefficients and correlated noise (demo data only)."""
    rng = np.random.default_rng(seed)
    z = np.linspace(-1.0, 1.0, nz)
    modes = np.stack([np.ones(nz), z, np.sin(np.pi * z), np.cos(1.5 * np.pi * z)])
    amps = np.cumsum(rng.normal(size=(nt, 2, 4)), axis=0) * 0.05
    amps -= amps.mean(axis=0)
    b = np.zeros((nt, nz, 3))
    b[..., :2] = np.einsum("tcm,mz->tzc", amps, modes)
    j = np.stack(
        [-np.gradient(b[..., 1], z, axis=1, edge_order=2), np.gradient(b[..., 0], z, axis=1, edge_order=2)], -1
    )
    e = np.zeros_like(b)
    e[..., :2] = 0.4 * b[..., :2] - 0.2 * j + 0.1 * rng.normal(size=(nt, nz, 2))
    return b, e, z


def numpy_fit(b, e, z, heights, n_resamples, block, rng):
    """Per-height lstsq fit plus moving-block bootstrap errors, written with NumPy."""
    nt = b.shape[0]
    j = np.stack(
        [-np.gradient(b[..., 1], z, axis=1, edge_order=2), np.gradient(b[..., 0], z, axis=1, edge_order=2)], -1
    )
    n_blocks = -(-nt // block)
    out = []
    for k in heights:
        a = np.column_stack([np.ones(nt), b[:, k, 0], b[:, k, 1], j[:, k, 0], j[:, k, 1]])
        y = e[:, k, :2]
        x = np.linalg.lstsq(a, y, rcond=None)[0]
        reps = np.empty((n_resamples, 5, 2))
        for r in range(n_resamples):
            starts = rng.integers(0, nt - block + 1, size=n_blocks)
            idx = (starts[:, None] + np.arange(block)).ravel()[:nt]
            reps[r] = np.linalg.lstsq(a[idx], y[idx], rcond=None)[0]
        out.append((x, reps.std(axis=0, ddof=1)))
    return out


def main() -> None:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--nt", type=int, default=10_000)
    p.add_argument("--nz", type=int, default=256)
    p.add_argument("--resamples", type=int, default=200)
    p.add_argument("--heights-numpy", type=int, default=6, help="heights timed on the NumPy side")
    args = p.parse_args()
    b, e, z = invented_series(args.nt, args.nz)

    t0 = time.perf_counter()
    fit = fit_emf(b, e, z, n_resamples=args.resamples, seed=1)
    t_rust = time.perf_counter() - t0
    block = int(np.median(fit.block_length))

    heights = np.linspace(0, args.nz - 1, args.heights_numpy).astype(int)
    t0 = time.perf_counter()
    ref = numpy_fit(b, e, z, heights, args.resamples, block, np.random.default_rng(2))
    t_np = (time.perf_counter() - t0) * args.nz / len(heights)

    dev = max(np.max(np.abs(fit.alpha[k] - x[1:3].T)) for k, (x, _) in zip(heights, ref, strict=True))
    err_ratio = np.median([fit.alpha_err[k] / s[1:3].T for k, (_, s) in zip(heights, ref, strict=True)])
    print(f"fit_emf: nt={args.nt}, nz={args.nz}, {args.resamples} resamples, block length {block}")
    print(f"  fluxfunnel (Rust, all heights):          {t_rust:8.3f} s")
    print(f"  NumPy lstsq loop ({len(heights)} heights, scaled): {t_np:8.1f} s")
    print(f"  speed-up: {t_np / t_rust:.0f}x")
    print(f"  max |alpha difference| on timed heights: {dev:.2e}; median error ratio Rust/NumPy: {err_ratio:.3f}")


if __name__ == "__main__":
    main()
