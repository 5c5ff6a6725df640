"""Test-field method: Roberts flow against the SOCA closed form, convergence as Rm drops, time dependence."""

import signal
import time

import numpy as np
import pytest
from conftest import sigint_after
from fluxfunnel import InputError, measure
from fluxfunnel.flows import roberts_flow

SQRT2 = np.sqrt(2.0)


def roberts_soca(u0, k, eta, q):
    """Roberts-flow SOCA coefficients at test wavenumber q.

    Source: PHYSICS.md section 6.1 eq. (6.2) (G.O. Roberts 1972; Radler, Rheinhardt, Apstein & Fuchs 2002;
    scale dependence in the form of Brandenburg, Radler & Schrinner 2008).
    """
    k_f = SQRT2 * k
    alpha = -(u0**2 / (2 * eta * k_f)) * k_f**2 / (k_f**2 + q**2)
    eta_t = (u0**2 / (2 * eta * k_f**2)) * k_f**2 / (k_f**2 + q**2)
    return alpha, eta_t


def box(n, nz, k, lz):
    return (2 * np.pi / k / n, 2 * np.pi / k / n, lz / nz)


def test_check_values_of_the_physics_table():
    # Source: PHYSICS.md section 9, rows 23-24: u0 = 10 cm/s, k = 1 cm^-1, eta = 100 cm^2/s gives
    # alpha0 = -0.353553 cm/s (q -> 0) and -0.176777 cm/s at q = k_f; eta_t0 = 0.25 cm^2/s.
    a0, e0 = roberts_soca(10.0, 1.0, 100.0, 0.0)
    assert a0 == pytest.approx(-0.353553, abs=1e-6) and e0 == pytest.approx(0.25, rel=1e-12)
    nz = 4
    h = box(8, nz, 1.0, 2 * np.pi / SQRT2)  # box height 2 pi / k_f so that q = k_f is its first harmonic
    u = roberts_flow((8, 8, nz), u0=10.0, k=1.0, spacing=h)
    r = measure.test_field(u, eta=100.0, k_test=SQRT2, spacing=h, t_end=0.2, soca=True)
    assert r.alpha.shape == (nz, 2, 2) and r.eta.shape == (nz, 2, 2)
    np.testing.assert_allclose(r.alpha[:, 0, 0], -0.176777, atol=1e-6)
    np.testing.assert_allclose(r.alpha[:, 1, 1], -0.176777, atol=1e-6)
    np.testing.assert_allclose(r.eta[:, 0, 0], 0.125, rtol=1e-10)
    np.testing.assert_allclose(r.eta[:, 1, 1], 0.125, rtol=1e-10)
    # Source: same section: alpha_xy = alpha_yx = eta_xy = eta_yx = 0.
    np.testing.assert_allclose(r.alpha[:, 0, 1], 0.0, atol=1e-12)
    np.testing.assert_allclose(r.eta[:, 1, 0], 0.0, atol=1e-12)


@pytest.mark.parametrize("q_index", [1, 2])
def test_soca_steady_state_equals_the_closed_form(q_index):
    # Source: PHYSICS.md section 6.1 eq. (6.2): steady SOCA is exact for this flow, so only rounding remains.
    k, eta, u0, nz = 1.0, 1.0, 0.3, 8
    h = box(8, nz, k, 2 * np.pi)
    u = roberts_flow((8, 8, nz), u0=u0, k=k, spacing=h)
    r = measure.test_field(u, eta=eta, k_test=float(q_index), spacing=h, t_end=15.0, soca=True, profile=False)
    a_ref, e_ref = roberts_soca(u0, k, eta, float(q_index))
    np.testing.assert_allclose(np.diag(r.alpha), a_ref, rtol=1e-10)
    np.testing.assert_allclose(np.diag(r.eta), e_ref, rtol=1e-10)
    assert r.alpha.shape == (2, 2)
    assert "TestFieldResult(k_test=" in repr(r)


def test_full_equations_converge_to_soca_as_rm_drops():
    # Source: SOCA is the Rm -> 0 limit of the test-field equations (Krause & Radler 1980; PHYSICS.md 2.1);
    # the issue asks for agreement to a few per cent at low Rm and convergence as Rm drops.
    k, eta, nz, n = 1.0, 1.0, 6, 16
    h = box(n, nz, k, 2 * np.pi)
    errs_a, errs_e = [], []
    for u0 in (0.4, 0.2, 0.1):  # Rm = u0 / (eta k_f) = 0.28, 0.14, 0.07
        u = roberts_flow((n, n, nz), u0=u0, k=k, spacing=h)
        r = measure.test_field(u, eta=eta, k_test=1.0, spacing=h, t_end=15.0, profile=False)
        a_ref, e_ref = roberts_soca(u0, k, eta, 1.0)
        errs_a.append(abs(r.alpha[0, 0] / a_ref - 1))
        errs_e.append(abs(r.eta[1, 1] / e_ref - 1))
        np.testing.assert_allclose(r.alpha[0, 0], r.alpha[1, 1], rtol=1e-10)  # x <-> y symmetry of the flow
    assert errs_a[0] < 0.05 and errs_e[0] < 0.05  # a few per cent at Rm = 0.28
    assert errs_a[-1] < 0.005 and errs_e[-1] < 0.005
    # at least first-order convergence in Rm (the error at least halves each time Rm halves)
    assert all(e1 < 0.5 * e0 for e0, e1 in zip(errs_a, errs_a[1:], strict=False))
    assert all(e1 < 0.5 * e0 for e0, e1 in zip(errs_e, errs_e[1:], strict=False))


def test_profiles_are_uniform_for_a_flow_without_z_dependence():
    # Derived: the Roberts flow does not depend on z, so the coefficients cannot either.
    h = box(8, 6, 1.0, 2 * np.pi)
    u = roberts_flow((8, 8, 6), u0=0.3, k=1.0, spacing=h)
    r = measure.test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=10.0)
    np.testing.assert_allclose(r.alpha, np.broadcast_to(r.alpha[0], r.alpha.shape), atol=1e-12)
    np.testing.assert_allclose(r.z, np.arange(6) * h[2])


def test_oscillating_flow_averages_to_the_damped_soca_value():
    # Derived: docs/measure.md section 3, from the SOCA equation of PHYSICS.md 7.3 with u(t) = u cos(w t):
    # every driven mode decays at lam = eta (k_f^2 + q^2), and the periodic response gives the time average
    # <alpha> = alpha0 lam^2 / (2 (lam^2 + w^2)), the same factor for eta_t. With w = lam it is alpha0 / 4.
    k, eta, q, nz = 1.0, 1.0, 1.0, 6
    h = box(8, nz, k, 2 * np.pi)
    u_static = roberts_flow((8, 8, nz), u0=0.3, k=k, spacing=h)
    lam = eta * (2 * k**2 + q**2)
    w = lam
    period = 2 * np.pi / w
    n_per = 100
    r = measure.test_field(
        lambda t: u_static * np.cos(w * t),
        eta=eta,
        k_test=q,
        spacing=h,
        t_end=8 * period,
        dt=period / n_per,
        soca=True,
        profile=False,
        n_records=8 * n_per,
        average_from=4 * period + 0.5 * period / n_per,
    )
    a0, e0 = roberts_soca(0.3, k, eta, q)
    np.testing.assert_allclose(np.diag(r.alpha), a0 / 4, rtol=2e-3)
    np.testing.assert_allclose(np.diag(r.eta), e0 / 4, rtol=2e-3)


def test_callable_returning_a_steady_flow_matches_the_array_path():
    # Derived: a callable that ignores time describes the same problem as the array.
    h = box(8, 6, 1.0, 2 * np.pi)
    u = roberts_flow((8, 8, 6), u0=0.5, k=1.0, spacing=h)
    r1 = measure.test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=3.0, dt=0.1)
    r2 = measure.test_field(lambda t: u, eta=1.0, k_test=1.0, spacing=h, t_end=3.0, dt=0.1)
    np.testing.assert_allclose(r2.alpha, r1.alpha, rtol=1e-12)
    np.testing.assert_allclose(r2.eta, r1.eta, rtol=1e-12)
    assert r1.n_steps == 30 and r1.dt == pytest.approx(0.1)


def test_horizontal_mean_flow_is_removed_and_reported():
    h = box(8, 6, 1.0, 2 * np.pi)
    u = roberts_flow((8, 8, 6), u0=0.3, k=1.0, spacing=h)
    shifted = u.copy()
    shifted[0] += 0.05
    r1 = measure.test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=10.0, soca=True)
    r2 = measure.test_field(shifted, eta=1.0, k_test=1.0, spacing=h, t_end=10.0, soca=True)
    assert r1.mean_flow_rms < 1e-15 and r2.mean_flow_rms == pytest.approx(0.05)
    np.testing.assert_allclose(r2.alpha, r1.alpha, rtol=1e-10, atol=1e-15)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(k_test=0.7), "k_test: must be 2 pi m / L_z"),
        (dict(k_test=3.0), "not resolved"),
        (dict(eta=-1.0), "eta"),
        (dict(t_end=0.0), "t_end"),
        (dict(spacing=(0.1, 0.1)), "spacing"),
        (dict(dt=-0.1), "dt"),
        (dict(average_from=20.0), "average_from"),
    ],
)
def test_bad_test_field_arguments_are_named(kwargs, match):
    h = box(8, 6, 1.0, 2 * np.pi)
    u = roberts_flow((8, 8, 6), u0=0.3, k=1.0, spacing=h)
    args = dict(eta=1.0, k_test=1.0, spacing=h, t_end=1.0)
    args.update(kwargs)
    with pytest.raises(InputError, match=match):
        measure.test_field(u, **args)


def test_bad_flows_are_named():
    h = box(8, 6, 1.0, 2 * np.pi)
    u = roberts_flow((8, 8, 6), u0=0.3, k=1.0, spacing=h)
    with pytest.raises(InputError, match="u: must have shape"):
        measure.test_field(u[:2], eta=1.0, k_test=1.0, spacing=h, t_end=1.0)
    bad = u.copy()
    bad[1, 2, 3, 4] = np.nan
    with pytest.raises(InputError, match="u: must be finite"):
        measure.test_field(bad, eta=1.0, k_test=1.0, spacing=h, t_end=1.0)
    with pytest.raises(InputError, match="zero everywhere"):
        measure.test_field(0 * u, eta=1.0, k_test=1.0, spacing=h, t_end=1.0)
    with pytest.raises(InputError, match="changed shape"):
        measure.test_field(lambda t: u if t == 0 else u[:, :4], eta=1.0, k_test=1.0, spacing=h, t_end=1.0, dt=0.5)


@pytest.mark.skipif(not hasattr(signal, "SIGINT"), reason="needs POSIX signals")
def test_ctrl_c_stops_a_long_test_field_run():
    # A SIGINT 0.3 s into a run of many thousand steps must stop it promptly with KeyboardInterrupt.
    h = box(16, 6, 1.0, 2 * np.pi)
    u = roberts_flow((16, 16, 6), u0=0.3, k=1.0, spacing=h)
    start = time.monotonic()
    with sigint_after(0.3):
        with pytest.raises(KeyboardInterrupt):
            measure.test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=1e4, dt=0.01, n_records=2)
    assert time.monotonic() - start < 3.0


def test_float32_flow_gives_the_float64_answer_to_single_precision():
    # Source: PHYSICS.md section 6.1 eq. (6.2); inputs are promoted to float64 at the edge, so only the
    # rounding of the float32 input itself (relative 6e-8) remains.
    h = box(8, 6, 1.0, 2 * np.pi)
    u = roberts_flow((8, 8, 6), u0=0.3, k=1.0, spacing=h)
    r64 = measure.test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=10.0, soca=True, profile=False)
    r32 = measure.test_field(u.astype(np.float32), eta=1.0, k_test=1.0, spacing=h, t_end=10.0, soca=True, profile=False)
    a_ref, _ = roberts_soca(0.3, 1.0, 1.0, 1.0)
    np.testing.assert_allclose(np.diag(r32.alpha), a_ref, rtol=1e-6)
    np.testing.assert_allclose(r32.alpha, r64.alpha, rtol=1e-6, atol=1e-12)
    assert r32.alpha.dtype == np.float64


def test_grid_refinement_converges_spectrally_at_moderate_rm():
    # Source: Fourier pseudo-spectral solutions of smooth periodic problems converge faster than any power
    # of the grid spacing (Boyd 2001, Chebyshev and Fourier Spectral Methods, ch. 2). Rm = 0.71 here.
    values = {}
    for n in (8, 12, 16, 24):
        h = box(n, 6, 1.0, 2 * np.pi)
        u = roberts_flow((n, n, 6), u0=1.0, k=1.0, spacing=h)
        r = measure.test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=12.0, dt=0.1, profile=False)
        values[n] = r.alpha[0, 0]
    err = [abs(values[n] - values[24]) for n in (8, 12, 16)]
    assert err[0] > 1e-5  # the coarsest grid is visibly under-resolved ...
    assert err[1] < 1e-3 * err[0] and err[2] < 0.1 * err[1] and err[2] < 1e-8  # ... and then error collapses
