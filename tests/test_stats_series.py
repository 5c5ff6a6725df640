"""Correlation times, streaming averages and the dask route."""

import numpy as np
import pytest
from fluxfunnel import InputError, stats, synthetic
from scipy.integrate import quad
from scipy.optimize import brentq


def ar1(n, tau, rng, shape=()):
    # AR(1) process x_t = phi x_{t-1} + noise with phi = exp(-1/tau): autocorrelation phi^lag = exp(-lag/tau)
    # (Source: Box & Jenkins 1976, the first-order autoregressive process).
    phi = np.exp(-1.0 / tau)
    x = np.zeros((n, *shape))
    noise = rng.standard_normal((n, *shape))
    x[0] = noise[0] / np.sqrt(1 - phi**2)
    for i in range(1, n):
        x[i] = phi * x[i - 1] + noise[i]
    return x


def test_autocorrelation_matches_numpy_correlate():
    # Source: numpy.correlate (reference library) for the biased estimator.
    rng = np.random.default_rng(0)
    x = rng.standard_normal(200).cumsum()
    c = stats.autocorrelation(x)
    y = x - x.mean()
    want = np.correlate(y, y, mode="full")[y.size - 1 :] / (y @ y)
    np.testing.assert_allclose(c, want, atol=1e-12)
    # several series along another axis
    xs = np.stack([x, 2 * x + 1, x[::-1]], axis=1)
    cs = stats.autocorrelation(xs.T, axis=1)
    np.testing.assert_allclose(cs[:, 1], want, atol=1e-12)


def test_times_of_analytic_autocorrelations():
    # Derived: PHYSICS.md 8 / docs/stats.md section 5: for C = exp(-t/tau) cos(w t) the e-fold time solves
    # C = 1/e (scipy brentq) and the integral to the first zero t0 = pi/(2w) is scipy quad of C.
    tau, w = 3.0, 0.4
    errors = []
    for dt in (0.02, 0.01):
        t = np.arange(0, 40, dt)
        c = np.exp(-t / tau) * np.cos(w * t)
        efold, integral = stats.autocorrelation_times(c, dt)
        want_e = brentq(lambda s: np.exp(-s / tau) * np.cos(w * s) - np.exp(-1), 0, np.pi / (2 * w))
        want_i = quad(lambda s: np.exp(-s / tau) * np.cos(w * s), 0, np.pi / (2 * w))[0]
        t0 = np.pi / (2 * w)
        closed = (w * tau**2 * np.exp(-t0 / tau) + tau) / (1 + w**2 * tau**2)  # antiderivative, docs/stats.md 5
        np.testing.assert_allclose(want_i, closed, rtol=1e-12)
        errors.append(abs(integral - want_i))
        np.testing.assert_allclose(efold, want_e, rtol=1e-4)
        np.testing.assert_allclose(integral, want_i, rtol=1e-4)
    # trapezoid plus a linear last piece: second order (error falls about 4x when dt halves)
    assert 3.0 < errors[0] / errors[1] < 5.0
    t = np.arange(0, 200, 0.01)
    e, i = stats.autocorrelation_times(np.exp(-t / tau), 0.01)
    assert np.isfinite(e) and np.isnan(i)  # an exponential never reaches zero: no integral time, documented
    np.testing.assert_allclose(e, tau, rtol=1e-5)  # PHYSICS.md 9 row 29: e-fold time of exp(-t/tau) is tau
    e, i = stats.autocorrelation_times(np.exp(-t[:100] / tau), 0.01)  # record too short: NaN, documented
    assert np.isnan(e) and np.isnan(i)


def test_ar1_correlation_time_per_height():
    # Source: Box & Jenkins 1976 (AR(1) autocorrelation exp(-lag/tau)). Tolerance: the relative scatter of the
    # e-fold estimate over independent records is about 2 sqrt(tau / T) (measured over seeds; Common practice
    # (no single source)); three of those.
    rng = np.random.default_rng(1)
    tau, n = 8.0, 40000
    x = ar1(n, tau, rng, shape=(3,))
    got = stats.correlation_time(x, 0.5, method="efold")
    assert got.shape == (3,)
    tol = 3 * 2 * np.sqrt(tau / n)
    np.testing.assert_allclose(got, 0.5 * tau, rtol=tol)
    got_i = stats.correlation_time(x, 0.5, method="integral")
    # The integral to the first zero sums the noisy tail of the estimate out to that zero, several tau away, so
    # its scatter is larger. Common practice (no single source): 25 % for records of a few thousand tau.
    np.testing.assert_allclose(got_i, 0.5 * tau, rtol=0.25)
    np.testing.assert_allclose(got_i.mean(), 0.5 * tau, rtol=0.15)
    assert isinstance(stats.correlation_time(x[:, 0], 1.0), float)


def test_correlation_time_bad_input():
    with pytest.raises(InputError, match="^method"):
        stats.correlation_time(np.arange(10.0), 1.0, method="zero")
    with pytest.raises(InputError, match="^dt"):
        stats.correlation_time(np.sin(np.arange(10.0)), -1.0)
    with pytest.raises(InputError, match="^series: is constant"):
        stats.correlation_time(np.ones((10, 2)), 1.0)
    with pytest.raises(InputError, match="^series: must be finite"):
        stats.correlation_time(np.array([1.0, np.nan, 2.0, 3.0]), 1.0)
    with pytest.raises(InputError, match="^axis"):
        stats.correlation_time(np.ones(10), 1.0, axis=2)


def snapshots(n, shape=(8, 8, 6)):
    out = []
    for s in range(n):
        u = synthetic.solenoidal_field(shape, seed=2 * s)
        b = 0.5 * synthetic.solenoidal_field(shape, seed=2 * s + 1) + 0.3 * u
        rho = 1.0 + 0.1 * np.abs(u[0])
        out.append((u, b, rho))
    return out


def test_accumulator_mean_and_standard_error_match_numpy():
    # Source: numpy mean and std(ddof=1)/sqrt(n) of the stacked per-snapshot profiles (reference library).
    snaps = snapshots(5)
    res = stats.accumulate(snaps, spacing=1.0, progress=False)
    per = [stats.turbulence_profiles(u, b, rho=r, spacing=1.0) for u, b, r in snaps]
    assert res.count == 5 and "count=5" in repr(res)
    for name in ("maxwell", "u_shape4", "emf", "rho", "kinetic_helicity"):
        stack = np.stack([getattr(p, name) for p in per])
        np.testing.assert_allclose(getattr(res.mean, name), stack.mean(axis=0), atol=1e-13)
        np.testing.assert_allclose(getattr(res.stderr, name), stack.std(axis=0, ddof=1) / np.sqrt(5), atol=1e-13)
    # merging two partial accumulators equals one pass (Chan, Golub & LeVeque 1979)
    a = stats.ProfileAccumulator(spacing=1.0)
    c = stats.ProfileAccumulator(spacing=1.0)
    for u, b, r in snaps[:2]:
        a.add(u, b, rho=r)
    for u, b, r in snaps[2:]:
        c.add(u, b, rho=r)
    merged = a.merge(c).result()
    np.testing.assert_allclose(merged.stderr.maxwell, res.stderr.maxwell, atol=1e-13)
    # mapping items work the same
    res2 = stats.accumulate([{"u": u, "b": b, "rho": r} for u, b, r in snaps], spacing=1.0, progress=False)
    np.testing.assert_allclose(res2.mean.b_shape, res.mean.b_shape, atol=1e-14)


def test_accumulator_rejects_inconsistent_snapshots():
    snaps = snapshots(2)
    acc = stats.ProfileAccumulator(spacing=1.0)
    acc.add(*snaps[0][:2], rho=snaps[0][2])
    with pytest.raises(InputError, match="^rho"):
        acc.add(*snaps[1][:2])
    with pytest.raises(InputError, match="no snapshots"):
        stats.ProfileAccumulator(spacing=1.0).result()
    one = stats.ProfileAccumulator(spacing=1.0)
    one.add(*snaps[0][:2])
    assert np.all(np.isnan(one.result().stderr.maxwell))


# An in-process dask cluster can leave event-loop resources to the garbage collector when the machine is busy;
# those shutdown warnings say nothing about the results, which is what this test checks.
@pytest.mark.filterwarnings("ignore::ResourceWarning", "ignore::pytest.PytestUnraisableExceptionWarning")
def test_dask_route_on_a_local_cluster_matches_streaming():
    # Reference: the in-process streaming result above (itself checked against numpy).
    da = pytest.importorskip("dask.array")
    distributed = pytest.importorskip("distributed")
    snaps = snapshots(5)
    u = da.from_array(np.stack([s[0] for s in snaps]), chunks=(1, 3, 8, 8, 6))
    b = da.from_array(np.stack([s[1] for s in snaps]), chunks=(2, 3, 4, 8, 6))  # spatial split: rechunked
    rho = da.from_array(np.stack([s[2] for s in snaps]), chunks=(1, 8, 8, 6))
    want = stats.accumulate(snaps, spacing=1.0, progress=False)
    with (
        distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False, dashboard_address=None) as cluster,
        distributed.Client(cluster),
    ):
        got = stats.dask_profiles(u, b, rho=rho, spacing=1.0, split_every=2)
        got_a = stats.dask_profiles(u, b, rho=rho, spacing=1.0, alfven_units=True)
    assert got.count == 5
    for name in ("maxwell", "b_shape4", "rho", "current_helicity"):
        np.testing.assert_allclose(getattr(got.mean, name), getattr(want.mean, name), atol=1e-13)
        np.testing.assert_allclose(getattr(got.stderr, name), getattr(want.stderr, name), atol=1e-13)
    want_a = stats.accumulate(snaps, spacing=1.0, alfven_units=True, progress=False)
    np.testing.assert_allclose(got_a.mean.maxwell, want_a.mean.maxwell, atol=1e-13)
    with pytest.raises(InputError, match="^b: has 4 snapshots"):
        stats.dask_profiles(u, b[:4], spacing=1.0)
    with pytest.raises(InputError, match="^u: is a dask array"):
        stats.turbulence_profiles(u[0], b[0], spacing=1.0)
