"""Time evolution, steady states, diagnostics and the critical radius of the ``flux`` stage."""

import math
import signal
import time

import numpy as np
import pytest
from astropy import constants as ac
from conftest import sigint_after
from fluxfunnel import ConvergenceError, InputError
from fluxfunnel.flux import FluxModel, FluxSolution, critical_radius, power_law_ratio
from scipy.optimize import brentq

# --- the point-source solution of pure nonlocal diffusion --------------------------------------------------
# Derived: docs/theory.md "Global flux" section 4: with u_adv = 0 and uniform u_dif = U, each Hankel mode
# decays as exp(-k U t), so the field of a point source at depth h stays that field with h(t) = h0 + U t:
# psi = 1 - h/sqrt(R^2 + h^2), B_z = h/(R^2 + h^2)^(3/2).


def _psi_ps(r, h):
    return 1 - h / np.sqrt(r * r + h * h)


def _bz_ps(r, h):
    return h / (r * r + h * h) ** 1.5


def _diffusion_model(n):
    r = np.geomspace(1e-3, 1e3, n)
    return r, FluxModel(r, u_adv=0.0, u_dif=1.0, inner_edge="same", outer_edge="same")


def test_nonlocal_diffusion_follows_exact_solution():
    sel_errs = []
    for n in (121, 241):
        r, model = _diffusion_model(n)
        sol = model.evolve(1.0, n_steps=80, psi0=_psi_ps(r, 1.0))
        sel = (r > 0.1) & (r < 10)
        assert sol.t[-1] == pytest.approx(1.0)
        err_psi = np.max(np.abs(sol.psi[-1, sel] / _psi_ps(r[sel], 2.0) - 1))
        sel_errs.append(np.max(np.abs(sol.b_z[-1, sel] / _bz_ps(r[sel], 2.0) - 1)))
    assert err_psi < 1e-3
    assert sel_errs[-1] < 4e-3
    assert sel_errs[0] / sel_errs[1] > 3.5  # second order in space


@pytest.mark.parametrize(("method", "order"), [("be", 1), ("cn", 2), ("bdf2", 2)])
def test_time_stepping_orders(method, order):
    # Self-convergence on one grid (removes the spatial error), together with the exact check above.
    r, model = _diffusion_model(121)
    psi0 = _psi_ps(r, 1.0)
    ref = model.evolve(1.0, method="bdf2", n_steps=1280, n_save=2, psi0=psi0).psi[-1]
    runs = [model.evolve(1.0, method=method, n_steps=k, n_save=2, psi0=psi0).psi[-1] for k in (20, 40)]
    errs = [np.max(np.abs(p - ref)) for p in runs]
    assert math.log2(errs[0] / errs[1]) == pytest.approx(order, abs=0.3)


# --- null test and flux bookkeeping --------------------------------------------------------------------------


def test_uniform_field_without_flow_stays_exactly_steady():
    # Source: a uniform field is current-free (B_rs = 0); with no advection nothing can move it.
    r = np.geomspace(1e10, 1e14, 101)
    model = FluxModel(r, u_adv=0.0, u_dif=3e4, external_field=2e-5)
    sol = model.evolve(1e12, n_steps=50, n_save=5)
    assert np.array_equal(sol.psi[-1], model.psi_ext)
    assert np.all(sol.b_rs == 0.0)
    np.testing.assert_allclose(sol.b_z[-1], 2e-5, rtol=1e-13)
    steady = model.steady_state()
    np.testing.assert_allclose(steady.psi[0], model.psi_ext, rtol=1e-13)


def test_closed_edges_conserve_total_flux_exactly():
    # Source: flux conservation of the induction equation; with both edges held, 2 pi [psi_out - psi_in]
    # may not change at all while flux is moved around inside.
    r = np.geomspace(1.0, 1e3, 81)
    model = FluxModel(r, u_adv=-0.5 / r, u_dif=1.0 / r, external_field=1.0, inner_edge="closed")
    sol = model.evolve(300.0, n_steps=60, n_save=7)
    total = 2 * np.pi * (sol.psi[:, -1] - sol.psi[:, 0])
    assert np.all(total == total[0])
    assert np.max(np.abs(sol.psi[-1] / sol.psi[0] - 1)) > 0.5  # the interior did change


def test_flux_through_open_inner_edge_is_the_boundary_rate():
    # Discrete bookkeeping: with backward Euler the change of the enclosed flux over each step equals the
    # transport rate at the inner edge at the new time (to rounding).
    r = np.geomspace(1.0, 1e3, 81)
    model = FluxModel(r, u_adv=-0.5 / r, u_dif=1.0 / r, external_field=1.0, inner_edge="same")
    sol = model.evolve(20.0, method="be", n_steps=10, n_save=11)
    dt = sol.t[1] - sol.t[0]
    for k in range(10):
        rate = model._system.dpsi_dt(np.ascontiguousarray(sol.psi[k + 1]))
        assert sol.psi[k + 1, 0] - sol.psi[k, 0] == pytest.approx(dt * rate[0], rel=1e-9)
    assert sol.flux_inner[-1] > sol.flux_inner[0]  # inflow drags flux across the inner edge


# --- steady advection against diffusion ----------------------------------------------------------------------


def _disk_model(pm, h=0.05, n=201, radial=False):
    r = np.geomspace(1.0, 1e4, n)
    nu = 1e-2 * np.sqrt(r)  # any nu(R): the balance is local in the ratio nu/eta
    eta = nu / pm
    model = FluxModel(
        r, u_adv=-1.5 * nu / r, u_dif=eta / (h * r), external_field=1.0, radial_diffusivity=eta if radial else None
    )
    return r, model.steady_state()


@pytest.mark.parametrize(("pm", "radial"), [(1.0, False), (10.0, False), (20.0, False), (1.0, True), (10.0, True)])
def test_steady_power_law_index_solves_gamma_ratio_balance(pm, radial):
    # Derived: docs/theory.md "Global flux" section 5 (self-similar steady state): with v_R = -3 nu/(2R),
    # u_dif = eta/H, H = h R, B_z ~ R^-n with f(n) = (3/2) Pm h (surface term only) or f(n) + n h = (3/2) Pm h
    # (radial diffusion kept); f from the Gamma-function ratio. Slope tolerance 1e-3 (PHYSICS.md 8.7 test 4).
    h = 0.05
    r, sol = _disk_model(pm, h=h, radial=radial)
    lam = 1.5 * pm * h
    n_exact = brentq(lambda n: power_law_ratio(n) + (n * h if radial else 0.0) - lam, 1e-9, 2 - 1e-9)
    sel = (r > 10) & (r < 1e3)
    slope = -np.polyfit(np.log(r[sel]), np.log(sol.b_z[0, sel]), 1)[0]
    assert slope == pytest.approx(n_exact, abs=1e-3)
    np.testing.assert_allclose(sol.tan_inclination[0, sel], lam - (n_exact * h if radial else 0.0), rtol=2e-3)


def test_lpp94_bending_and_compression():
    # Source: Lubow, Papaloizou & Pringle 1994 (abstract): steady tan i = 1.52 / D, D = (R/H)/Pm; our
    # self-similar analogue gives 1.5/D, so agreement to 2 % is expected (PHYSICS.md 8.7 test 5).
    h = 0.05
    for pm in (1.0, 10.0):
        r, sol = _disk_model(pm, h=h)
        sel = (r > 10) & (r < 1e3)
        d_lpp = (1 / h) / pm
        assert np.median(sol.tan_inclination[0, sel]) == pytest.approx(1.52 / d_lpp, rel=0.02)
    # Common practice (no single source): Pm ~ 1 bends field lines by an angle of order H/R and barely
    # compresses the field; Pm of order R/H concentrates it strongly.
    r, weak = _disk_model(1.0, h=h)
    r, strong = _disk_model(1.0 / h, h=h)
    i_weak = np.radians(np.median(weak.inclination[0, (r > 10) & (r < 1e3)]))
    assert 0.5 < i_weak / h < 3
    k = np.searchsorted(r, 10.0)
    assert weak.b_z[0, k] < 3.0  # B_inf = 1
    assert strong.b_z[0, k] > 100.0


# --- critical radius ------------------------------------------------------------------------------------------


def test_critical_radius_inclination_threshold():
    # Source: Blandford & Payne 1982, launching needs i > 30 deg; in the self-similar state tan i = 1.5 Pm h,
    # so the threshold is Pm = tan(30 deg) / (1.5 h) = 0.385 / h (PHYSICS.md 1.4, derived).
    h = 0.05
    pm_crit = math.tan(math.radians(30)) / (1.5 * h)
    _, below = _disk_model(0.9 * pm_crit, h=h)
    r, above = _disk_model(1.1 * pm_crit, h=h)
    assert not critical_radius(below).reached and math.isnan(critical_radius(below).radius)
    cr = critical_radius(above)
    assert cr.reached and cr.criterion == "inclination" and cr.threshold == 30.0
    assert cr.radius > 0.9 * r[-1] * 0.95  # holds across the whole interior up to the outer buffer
    assert not critical_radius(above, threshold=45.0).reached


def test_critical_radius_beta_and_callable():
    r, sol = _disk_model(10.0)
    b_z = sol.b_z[0]
    k = np.searchsorted(r, 100.0)
    # Pressure falling as 1/R while B_z^2 falls faster than that only in the outer part: beta = 1 at r[k].
    p_mid = b_z[k] ** 2 / (8 * np.pi) * (r / r[k]) ** -1.0
    beta = sol.midplane_beta(p_mid)[0]
    assert beta[k] == pytest.approx(1.0)
    cr = critical_radius(sol, criterion="beta", p_mid=p_mid)
    assert cr.reached and cr.radius == pytest.approx(r[k], rel=0.05)
    cr2 = critical_radius(sol, criterion=lambda rr, bz, brs: rr < 300.0)
    assert cr2.criterion == "callable" and cr2.radius == r[r < 300.0][-1]
    with pytest.raises(InputError, match="p_mid"):
        critical_radius(sol, criterion="beta")
    with pytest.raises(InputError, match="criterion"):
        critical_radius(sol, criterion="magic")
    with pytest.raises(InputError, match="time_index"):
        critical_radius(sol, time_index=5)


# --- diagnostics -------------------------------------------------------------------------------------------


def test_dimensionless_flux_against_astropy_units():
    # Source: Tchekhovskoy, Narayan & McKinney 2011 definition phi = Phi / (Mdot r_g^2 c)^(1/2) (Gaussian);
    # reference computed here with astropy constants (CODATA 2018 / IAU 2015).
    mass, mdot, phi_flux = 10 * ac.M_sun.cgs.value, 1e16, 1.28e21
    r = np.geomspace(1e7, 1e9, 5)
    psi = np.full((1, 5), phi_flux / (2 * np.pi))
    sol = FluxSolution(r=r, t=np.array([0.0]), psi=psi, b_z=np.ones((1, 5)), b_rs=np.zeros((1, 5)), method="be")
    r_g = ac.G.cgs.value * mass / ac.c.cgs.value ** 2
    ref = phi_flux / math.sqrt(mdot * r_g**2 * ac.c.cgs.value)
    assert sol.dimensionless_flux(mass, mdot)[0] == pytest.approx(ref, rel=1e-6)
    # From memory / PHYSICS.md 6.3 worked example: Phi = 1.28e21 G cm^2 is phi ~ 50 for these numbers.
    assert ref == pytest.approx(50, rel=0.02)
    assert "FluxSolution(method='be'" in repr(sol)


def test_to_xarray_carries_units():
    r, sol = _disk_model(1.0, n=41)
    ds = sol.to_xarray()
    assert ds["b_z"].attrs["units"] == "G" and ds["r"].attrs["units"] == "cm"
    np.testing.assert_array_equal(ds["psi"].values, sol.psi)


# --- bad input and failures ------------------------------------------------------------------------------------


def test_bad_input_names_the_argument():
    r = np.geomspace(1.0, 10.0, 10)
    with pytest.raises(InputError, match="r: must be strictly increasing"):
        FluxModel(r[::-1], u_adv=0.0, u_dif=1.0)
    with pytest.raises(InputError, match="r: must be positive"):
        FluxModel(np.linspace(-1, 1, 10), u_adv=0.0, u_dif=1.0)
    with pytest.raises(InputError, match="u_dif: must be non-negative"):
        FluxModel(r, u_adv=0.0, u_dif=-1.0)
    with pytest.raises(InputError, match="u_adv: must be finite"):
        FluxModel(r, u_adv=np.where(r > 3, np.nan, 0.0), u_dif=1.0)
    with pytest.raises(InputError, match="u_adv: shape"):
        FluxModel(r, u_adv=np.zeros(3), u_dif=1.0)
    with pytest.raises(InputError, match="radial_diffusivity"):
        FluxModel(r, u_adv=0.0, u_dif=1.0, radial_diffusivity=-1.0)
    with pytest.raises(InputError, match="inner_edge"):
        FluxModel(r, u_adv=0.0, u_dif=1.0, inner_edge="open")  # type: ignore[arg-type]
    model = FluxModel(r, u_adv=0.0, u_dif=1.0)
    with pytest.raises(InputError, match="method"):
        model.evolve(1.0, method="rk4")  # type: ignore[arg-type]
    with pytest.raises(InputError, match="t_end"):
        model.evolve(-1.0)
    with pytest.raises(InputError, match="psi0: must be finite"):
        model.evolve(1.0, psi0=np.full(10, np.nan))


def test_steady_state_without_transport_raises_convergence_error():
    r = np.geomspace(1.0, 10.0, 10)
    model = FluxModel(r, u_adv=0.0, u_dif=0.0, external_field=1.0)
    with pytest.raises(ConvergenceError) as info:
        model.steady_state()
    assert not info.value.residual < 1e-8  # the residual (here infinite: singular system) is reported


def test_progress_bar_quiet_when_not_a_terminal(capsys):
    r, model = _diffusion_model(41)
    model.evolve(1.0, n_steps=20, psi0=_psi_ps(r, 1.0))
    captured = capsys.readouterr()
    assert captured.err == "" and captured.out == ""


@pytest.mark.skipif(not hasattr(signal, "SIGINT"), reason="needs POSIX signals")
def test_ctrl_c_stops_a_long_evolution():
    r = np.geomspace(1.0, 1e4, 300)
    model = FluxModel(r, u_adv=-0.5 / r, u_dif=1.0 / r, external_field=1.0)
    start = time.monotonic()
    with sigint_after(0.5):
        with pytest.raises(KeyboardInterrupt):
            model.evolve(1e6, n_steps=10_000_000, n_save=2)
    assert time.monotonic() - start < 5.0


def test_steady_power_law_on_a_non_uniform_grid():
    # Derived: docs/theory.md "Global flux" section 5, f(n) = (3/2) Pm h; the general (non-Toeplitz) operator
    # path on a grid whose log spacing varies smoothly by about 30 per cent.
    h, pm = 0.05, 10.0
    s = np.linspace(0.0, 1.0, 241)
    r = 10 ** (4 * (s + 0.15 * np.sin(np.pi * s) ** 2 * (s - 0.5)))
    assert np.all(np.diff(r) > 0)
    nu = 1e-2 * np.sqrt(r)
    model = FluxModel(r, u_adv=-1.5 * nu / r, u_dif=(nu / pm) / (h * r), external_field=1.0)
    sol = model.steady_state()
    n_exact = brentq(lambda n: power_law_ratio(n) - 1.5 * pm * h, 1e-9, 2 - 1e-9)
    sel = (r > 10) & (r < 1e3)
    slope = -np.polyfit(np.log(r[sel]), np.log(sol.b_z[0, sel]), 1)[0]
    assert slope == pytest.approx(n_exact, abs=2e-3)
