# ruff: noqa: E741  (tensor indices as in the formulas)
"""The closure stage against published formulas, the sympy re-derivation and FFT statistics of random fields."""

from __future__ import annotations

import importlib.util
import math
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
from fluxfunnel import InputError
from fluxfunnel import closure as cl
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from scipy.spatial.transform import Rotation

ROOT = Path(__file__).resolve().parents[1]
_spec = importlib.util.spec_from_file_location("derive_closure", ROOT / "docs" / "derive_closure.py")
assert _spec is not None and _spec.loader is not None
derive = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(derive)

EYE = np.eye(3)
FOUR_PI = 4.0 * math.pi


def iso_state(**kw):
    base = dict(reynolds=EYE * 100.0 / 3.0, tau=10.0, rho=1e-9)
    base.update(kw)
    return cl.TurbulenceState(**base)


# --- PHYSICS.md section 9 check values ----------------------------------------------------------------------


def test_isotropic_kinetic_alpha_and_eta():
    # Source: Steenbeck, Krause & Raedler 1966; Krause & Raedler 1980: alpha_K = -(tau/3)<u.w>,
    # eta_t = tau<u^2>/3. Worked example (PHYSICS.md section 9 rows 3, 4): tau = 10 s, <u.w> = 2 cm s^-2,
    # <u^2> = 100 cm^2 s^-2 -> alpha = -6.6667 cm/s, eta_t = 333.33 cm^2/s.
    c = cl.emf_coefficients(iso_state(kinetic_helicity=2.0))
    np.testing.assert_allclose(np.diag(c.alpha_kinetic), -20.0 / 3.0, rtol=1e-14)
    np.testing.assert_allclose(c.alpha_kinetic - np.diag(np.diag(c.alpha_kinetic)), 0.0, atol=1e-15)
    np.testing.assert_allclose([c.eta[0, 0], c.eta[1, 1]], 1000.0 / 3.0, rtol=1e-14)
    assert c.eta[0, 1] == 0.0 and c.eta[1, 0] == 0.0
    assert not c.negative_diffusion


def test_isotropic_magnetic_alpha_opposes_kinetic():
    # Source: Pouquet, Frisch & Leorat 1976: alpha_M = +(tau/3)<b.curl b>/(4 pi rho); PHYSICS.md row 9:
    # tau = 10 s, rho = 1e-9 g/cm^3, <b.curl b> = 1e-6 G^2/cm -> +265.26 cm/s.
    c = cl.emf_coefficients(iso_state(current_helicity=1e-6, maxwell=EYE * 1e-3))
    np.testing.assert_allclose(np.diag(c.alpha_magnetic), 10.0 / 3.0 * 1e-6 / (FOUR_PI * 1e-9), rtol=1e-13)
    assert c.alpha_magnetic[0, 0] == pytest.approx(265.26, abs=0.01)
    # Source: Raedler, Kleeorin & Rogachevskii 2003: same-sign helicities reduce alpha.
    both = cl.emf_coefficients(iso_state(kinetic_helicity=2.0, current_helicity=1e-8))
    assert abs(both.alpha[0, 0]) < abs(both.alpha_kinetic[0, 0])


def test_eta_t_reynolds_tensor_beta_and_one_dimensional_eta():
    # Derived: docs/theory.md section 2 (PHYSICS.md rows 7, 8): R = diag(1, 2, 3), tau = 1 ->
    # beta = diag(2.5, 2, 1.5), delta = 0; tau = 2, R_zz = 0.5 -> eta_xx = eta_yy = 1, eta_xy = 0
    # (convection test-field results give eta_t ~ <u_z^2>: Kaepylae, Korpi & Brandenburg 2009).
    c = cl.emf_coefficients(cl.TurbulenceState(reynolds=np.diag([1.0, 2.0, 3.0]), tau=1.0, rho=1.0), full_tensor=True)
    d = cl.decompose(c.a_tensor, c.b_tensor)
    np.testing.assert_allclose(d.beta, np.diag([2.5, 2.0, 1.5]), atol=1e-15)
    np.testing.assert_allclose(d.delta, 0.0, atol=1e-15)
    r = np.array([[0.7, 0.2, 0.1], [0.2, 0.4, -0.3], [0.1, -0.3, 0.5]])
    c = cl.emf_coefficients(cl.TurbulenceState(reynolds=r, tau=2.0, rho=1.0))
    np.testing.assert_allclose(c.eta[:2, :2], EYE[:2, :2], atol=1e-15)


def pumping_case(n, placement="outside", magnetic=False):
    # Source: Raedler 1968 (turbulent diamagnetism), PHYSICS.md row 5: eta_t = eta0 e^{z/H},
    # eta0 = 1e15 cm^2/s, H = 1e11 cm -> gamma_z(0) = -(1/2) d eta_t/dz = -5000 cm/s.
    tau, eta0, h = 1e5, 1e15, 1e11
    sgrid = np.linspace(-1.0, 1.0, n)
    z = 1e11 * (sgrid + 0.3 * sgrid**3) / 1.3  # smooth non-uniform grid, z = 0 at the centre
    u2 = 3.0 * eta0 * np.exp(z / h) / tau
    rho = 1e-9
    energy = u2[:, None, None] * EYE / 3.0
    if magnetic:
        # Row 10: magnetic fluctuations with the same profile (in Alfven units) pump the other way.
        state = cl.TurbulenceState(z=z, reynolds=np.zeros((n, 3, 3)), maxwell=energy * FOUR_PI * rho, tau=tau, rho=rho)
    else:
        state = cl.TurbulenceState(z=z, reynolds=energy, tau=tau, rho=rho)
    c = cl.emf_coefficients(state, density_placement=placement)
    return z, c


def test_diamagnetic_pumping_value_and_second_order_convergence():
    errs = []
    for n in (41, 81, 161):
        z, c = pumping_case(n)
        g0 = c.gamma[n // 2, 2]
        errs.append(abs(g0 + 5000.0))
        assert c.gradients == "grid"
        np.testing.assert_allclose(c.gamma[:, :2], 0.0, atol=1e-12)
    assert errs[-1] / 5000.0 < 1e-4
    # Second order on a non-uniform grid: error ratio near 4 per halving.
    order = math.log2(errs[0] / errs[1]), math.log2(errs[1] / errs[2])
    assert 1.7 < order[0] < 2.3 and 1.7 < order[1] < 2.3, order


def test_magnetic_pumping_is_paramagnetic():
    # Source: Raedler, Kleeorin & Rogachevskii 2003 / Rogachevskii & Kleeorin 2006 ("paramagnetic velocity");
    # PHYSICS.md row 10: opposite sign to row 5 for equal profiles.
    n = 81
    _, ck = pumping_case(n)
    _, cm = pumping_case(n, magnetic=True)
    np.testing.assert_allclose(cm.pumping_magnetic, -ck.pumping_kinetic, rtol=1e-12, atol=1e-9)


def test_density_gradient_alone_gives_no_pumping():
    # Source: Rogachevskii, Kleeorin & Brandenburg 2018 (no density-gradient pumping of magnetic field);
    # PHYSICS.md row 6: gamma unchanged when only rho(z) varies (tau constant, isotropic).
    z = np.linspace(-2.0, 2.0, 33)
    r = np.broadcast_to(EYE, (33, 3, 3))
    flat = cl.emf_coefficients(cl.TurbulenceState(z=z, reynolds=r, tau=1.0, rho=1.0))
    strat = cl.emf_coefficients(cl.TurbulenceState(z=z, reynolds=r, tau=1.0, rho=np.exp(-(z**2) / 2)))
    np.testing.assert_array_equal(flat.gamma, strat.gamma)
    np.testing.assert_array_equal(strat.gamma, 0.0)


def test_density_placement_differs_by_the_density_gradient_term():
    # Derived: docs/theory.md section 3: div(M/q) = div(M)/q - M.grad(rho)/(q rho).
    z = np.linspace(-3.0, 3.0, 201)
    rho = np.exp(-(z**2) / 2)
    m = np.broadcast_to(EYE * 0.5, (201, 3, 3))
    kw = dict(z=z, reynolds=np.zeros((201, 3, 3)), maxwell=m, tau=2.0, rho=rho)
    out = cl.emf_coefficients(cl.TurbulenceState(**kw), density_placement="outside")
    ins = cl.emf_coefficients(cl.TurbulenceState(**kw), density_placement="inside")
    np.testing.assert_allclose(out.pumping_magnetic, 0.0, atol=1e-12)
    expected = 0.5 * 2.0 * 0.5 * z / (FOUR_PI * rho)  # (tau/2) * M_zz * (z rho)/(q rho), d rho/dz = -z rho
    np.testing.assert_allclose(ins.pumping_magnetic[5:-5, 2], expected[5:-5], rtol=2e-3)


def test_buoyancy_isotropic_half_of_unprojected_and_signed_gravity():
    # Derived: docs/theory.md section 5 (PHYSICS.md row 17): tau = 100 s, g = 1 cm/s^2,
    # <b^2>/(8 pi rho c^2) = 0.01, isotropic eddies -> drift 0.3333 cm/s; unprojected twice that.
    rho, cs = 1e-9, 1.0
    b2 = 0.01 * 8.0 * math.pi * rho * cs**2
    kw = dict(reynolds=np.zeros((3, 3)), maxwell=EYE * b2 / 3, tau=100.0, rho=rho, sound_speed=cs)
    up = cl.emf_coefficients(cl.TurbulenceState(gravity=1.0, **kw))
    assert up.buoyancy[2] == pytest.approx(1.0 / 3.0, rel=1e-12)
    assert up.gamma[2] == pytest.approx(1.0 / 3.0, rel=1e-12)
    np.testing.assert_allclose(up.alpha_buoyancy, 0.0, atol=1e-16)
    down = cl.emf_coefficients(cl.TurbulenceState(gravity=-1.0, **kw))
    assert down.buoyancy[2] == pytest.approx(-1.0 / 3.0, rel=1e-12)  # away from the midplane below it too
    raw = cl.emf_coefficients(cl.TurbulenceState(gravity=1.0, **kw), closure="unprojected")
    assert raw.buoyancy[2] == pytest.approx(2.0 / 3.0, rel=1e-12)
    adi = cl.emf_coefficients(cl.TurbulenceState(gravity=1.0, **kw), thermal_response="adiabatic")
    assert adi.buoyancy[2] == pytest.approx(1.0 / 3.0 / (5.0 / 3.0), rel=1e-12)


def test_buoyancy_depends_on_field_direction_for_elongated_eddies():
    # Derived: docs/theory.md section 5 for phi P spectra: B_x rises at C N_yy, B_y at C N_xx,
    # buoyancy alpha_xx = -alpha_yy = C N_xy, C = tau g <b^2>/(8 pi rho c^2).
    nb = np.array([[0.5, 0.1, 0.0], [0.1, 0.2, 0.0], [0.0, 0.0, 0.3]])
    b2, tau, g, rho = 2.0, 3.0, 0.7, 0.2
    m = 0.5 * b2 * (EYE - nb)  # a phi P spectrum with this shape tensor
    kw = dict(reynolds=np.zeros((3, 3)), maxwell=m, b_shape=nb, tau=tau, rho=rho, gravity=g, sound_speed=1.0)
    c = tau * g * b2 / (8 * math.pi * rho)
    along_y = cl.emf_coefficients(cl.TurbulenceState(**kw))
    along_x = cl.emf_coefficients(cl.TurbulenceState(**kw), field_direction=(1.0, 0.0, 0.0))
    assert along_y.buoyancy[2] == pytest.approx(c * nb[0, 0], rel=1e-12)
    assert along_x.buoyancy[2] == pytest.approx(c * nb[1, 1], rel=1e-12)
    assert along_y.alpha_buoyancy[0, 0] == pytest.approx(c * nb[0, 1], rel=1e-12)
    assert along_y.alpha_buoyancy[1, 1] == pytest.approx(-c * nb[0, 1], rel=1e-12)


def test_stable_stratification_suppression_and_unstable_flag():
    # Derived heuristic: docs/theory.md section 6 from Taylor's diffusion formula, PHYSICS.md row 18:
    # tau = 1, N = 1 -> half the unstratified vertical transport.
    z = np.linspace(0.0, 1.0, 21)
    r = (1.0 + z)[:, None, None] * EYE
    base = cl.emf_coefficients(cl.TurbulenceState(z=z, reynolds=r, tau=1.0, rho=1.0))
    strat = cl.emf_coefficients(cl.TurbulenceState(z=z, reynolds=r, tau=1.0, rho=1.0, brunt_vaisala2=1.0))
    np.testing.assert_allclose(strat.gamma[:, 2], 0.5 * base.gamma[:, 2], rtol=1e-14)
    np.testing.assert_allclose(strat.entropy_drift[:, 2], -0.5 * base.gamma[:, 2], rtol=1e-14)
    np.testing.assert_allclose(strat.eta_kinetic, 0.5 * base.eta_kinetic, rtol=1e-14)
    assert not strat.convectively_unstable.any()
    unstable = cl.emf_coefficients(cl.TurbulenceState(z=z, reynolds=r, tau=1.0, rho=1.0, brunt_vaisala2=-1.0))
    assert unstable.convectively_unstable.all()
    np.testing.assert_array_equal(unstable.gamma, base.gamma)
    # The factor itself, from sympy: int_0^inf exp(-t/tau) cos(N t) dt = tau/(1 + N^2 tau^2).
    t, n = derive.sp.symbols("tau N", positive=True)
    assert derive.sp.simplify(derive.stratification_factor() - t / (1 + n**2 * t**2)) == 0


# --- against the sympy re-derivation (docs/derive_closure.py) -----------------------------------------------


def random_point(rng, *, anisotropic_b=True):
    a = rng.normal(size=(3, 3))
    r = a @ a.T
    k = rng.normal(size=(5, 3))
    w = rng.uniform(0.2, 1.0, 5)
    mom = derive.phi_p_moments(k, w, b2=rng.uniform(0.5, 2.0))
    ku = rng.normal(size=(4, 3))
    ku /= np.linalg.norm(ku, axis=1)[:, None]
    nu = np.einsum("aj,am->jm", ku, ku) / 4.0
    return dict(
        tau=rng.uniform(0.5, 2.0),
        rho=rng.uniform(0.5, 2.0),
        reynolds=r,
        maxwell=mom["maxwell"],
        kinetic_helicity=rng.normal(),
        current_helicity=rng.normal(),
        u_shape=nu,
        b_shape=mom["b_shape"],
        s4=mom["s4"],
        div_reynolds=rng.normal(size=3),
        div_maxwell=rng.normal(size=3),
        gravity=rng.normal(),
        c2=rng.uniform(0.5, 2.0),
    )


@pytest.mark.parametrize(("closure", "weights"), [("projected", (2.0, 1.0)), ("partial", (1.0, 1.0)),
                                                  ("unprojected", (0.0, 0.0))])
def test_kernel_matches_sympy_derivation(closure, weights):
    # Derived: docs/theory.md sections 2-5; docs/derive_closure.py reads each coefficient off the explicit EMF.
    rng = np.random.default_rng(7)
    p = random_point(rng)
    ref = derive.closure_coefficients(**p, pressure_weight=weights[0], buoyancy_weight=weights[1])
    b2 = np.trace(p["maxwell"])
    common = dict(
        reynolds=p["reynolds"], maxwell=p["maxwell"], kinetic_helicity=p["kinetic_helicity"],
        current_helicity=p["current_helicity"], u_shape=p["u_shape"], tau=p["tau"], rho=p["rho"],
        gravity=p["gravity"], sound_speed=math.sqrt(p["c2"]), div_reynolds=p["div_reynolds"],
        div_maxwell=p["div_maxwell"],
    )
    for shape_kw in (dict(b_shape=p["b_shape"]), dict(b_shape4=p["s4"] / b2)):
        c = cl.emf_coefficients(cl.TurbulenceState(**common, **shape_kw), closure=closure, full_tensor=True)
        scale_a = max(np.abs(ref["alpha_kinetic"]).max(), 1.0)
        for name in ("alpha_kinetic", "alpha_magnetic", "alpha_buoyancy", "pumping_kinetic", "pumping_magnetic",
                     "buoyancy_gamma", "eta_kinetic", "eta_magnetic", "b_tensor"):
            np.testing.assert_allclose(getattr(c, name), ref[name], rtol=1e-12, atol=1e-13 * scale_a, err_msg=name)
        e_b = np.array([0.0, 1.0, 0.0])
        drift = np.cross(e_b, ref["buoyancy_tensor"] @ e_b)
        np.testing.assert_allclose(c.buoyancy, drift, rtol=1e-12, atol=1e-14)


def test_isotropic_limits_symbolic():
    # Derived: docs/theory.md sections 2-5 (PHYSICS.md rows 3, 4, 9, 12, 17), symbolic.
    sp = derive.sp
    out = derive.isotropic_statements()
    tau, u2, b2, q, hk, hc, g, c2 = sp.symbols("tau u2 b2 q H_K H_C g c2", positive=True)
    assert sp.simplify(out["eta_xx[projected]"] - tau * u2 / 3) == 0
    assert sp.simplify(out["eta_xx[partial]"] - (tau * u2 / 3 + tau * b2 / (6 * q))) == 0
    assert sp.simplify(out["eta_xx[unprojected]"] - (tau * u2 / 3 + tau * b2 / (3 * q))) == 0
    assert sp.simplify(out["alpha_xx"] - (-tau / 3) * (hk - hc / q)) == 0
    assert sp.simplify(out["buoyant_rise[projected]"] - tau * g * b2 / (6 * q * c2)) == 0
    assert sp.simplify(out["buoyant_rise[unprojected]"] - 2 * out["buoyant_rise[projected]"]) == 0
    lemma = derive.helical_wave_lemma()
    assert lemma["helicity_residual"] == 0 and lemma["c_tensor_residual"] == 0


def test_phi_p_shape_moments_reduce_to_second_rank():
    # Derived: docs/theory.md section 4: for phi P spectra eps_ijk S_jmlk = (<b^2>/2) eps_ijl N_jm, so the
    # fourth-rank and second-rank inputs give the same coefficients; (3.5): eta^M traceless, set by N_x - N_y.
    rng = np.random.default_rng(3)
    k = rng.normal(size=(6, 3))
    mom = derive.phi_p_moments(k, rng.uniform(0.1, 1.0, 6), b2=1.3)
    kw = dict(reynolds=np.zeros((3, 3)), maxwell=mom["maxwell"], tau=2.0, rho=0.3)
    c2 = cl.emf_coefficients(cl.TurbulenceState(b_shape=mom["b_shape"], **kw), full_tensor=True)
    c4 = cl.emf_coefficients(cl.TurbulenceState(b_shape4=mom["s4"] / 1.3, **kw), full_tensor=True)
    np.testing.assert_allclose(c2.b_tensor, c4.b_tensor, rtol=1e-12, atol=1e-14)
    n = mom["b_shape"]
    expected = 2.0 * 1.3 / (8 * math.pi * 0.3) * np.array([[n[0, 0] - n[1, 1], 2 * n[0, 1]],
                                                           [2 * n[0, 1], n[1, 1] - n[0, 0]]])
    np.testing.assert_allclose(c2.eta_magnetic[:2, :2], expected, rtol=1e-12, atol=1e-14)


# --- the isotropic fourth-rank average and magnetic diffusion from FFT fields -------------------------------


def test_isotropic_fourth_moment_by_sympy_and_closed_form():
    # Derived: docs/theory.md section 4, sphere average by sympy against the closed form (PHYSICS.md row 11):
    # S_xxzz = 2/15, S_zyzy = -1/30, S_xxxx = 1/15 per <b^2>.
    s = derive.isotropic_fourth_moment()
    closed = np.array(derive.isotropic_fourth_moment_closed_form().tolist(), dtype=float)
    np.testing.assert_array_equal(np.array(s.tolist(), dtype=float), closed)
    np.testing.assert_allclose(cl.isotropic_shape_moments(), closed, rtol=0, atol=1e-16)
    m = cl.isotropic_shape_moments()
    assert m[0, 0, 2, 2] == pytest.approx(2 / 15) and m[2, 1, 2, 1] == pytest.approx(-1 / 30)
    # Contractions: j = m gives delta_lk/3, l = k gives delta_jm/3, j = l gives 0 (solenoidality).
    np.testing.assert_allclose(np.einsum("jjlk->lk", m), EYE / 3, atol=1e-16)
    np.testing.assert_allclose(np.einsum("jmll->jm", m), EYE / 3, atol=1e-16)
    np.testing.assert_allclose(np.einsum("jmjk->mk", m), 0.0, atol=1e-16)


def random_field(rng, n, stretch=(1.0, 1.0, 1.0), shell=(4.0, 7.0)):
    """Real solenoidal field b = F^-1[P(k) xi(k)] in a shell of the stretched wavenumber (phi P spectrum)."""
    k1 = np.fft.fftfreq(n, 1.0 / n)
    kx, ky, kz = np.meshgrid(k1, k1, k1, indexing="ij")
    kk = np.stack([kx, ky, kz])
    kmag = np.sqrt((kx * stretch[0]) ** 2 + (ky * stretch[1]) ** 2 + (kz * stretch[2]) ** 2)
    mask = (kmag >= shell[0]) & (kmag < shell[1])
    k2 = np.where(kx**2 + ky**2 + kz**2 == 0, 1.0, kx**2 + ky**2 + kz**2)
    xi = rng.normal(size=(3, n, n, n)) + 1j * rng.normal(size=(3, n, n, n))
    xi = xi * mask
    xi = xi - kk * np.einsum("iabc,iabc->abc", kk, xi) / k2
    b = np.real(np.fft.ifftn(xi, axes=(1, 2, 3)))
    b -= b.mean(axis=(1, 2, 3), keepdims=True)
    return b, kk, k2


def fft_moments(b, kk, k2):
    """M_lk and S_jmlk = <(K_jm b_l) b_k> by numpy.fft (K_jm has symbol k_j k_m/k^2)."""
    bh = np.fft.fftn(b, axes=(1, 2, 3))
    m = np.einsum("lxyz,kxyz->lk", b, b) / b[0].size
    s = np.zeros((3, 3, 3, 3))
    for j in range(3):
        for mm in range(j, 3):
            kb = np.real(np.fft.ifftn(kk[j] * kk[mm] / k2 * bh, axes=(1, 2, 3)))
            s[j, mm] = s[mm, j] = np.einsum("lxyz,kxyz->lk", kb, b) / b[0].size
    return m, s


def test_fourth_moment_and_zero_magnetic_eta_for_isotropic_fft_fields():
    # Derived: docs/theory.md section 4, checked against random isotropic solenoidal fields made with numpy.fft
    # (32^3, shell 4 <= k < 7, 16 realisations): S/<b^2> matches (4 d d - d d - d d)/30 within 3 standard
    # errors for S_xxzz and within 4 for every component at once (Bonferroni for 21 simultaneous
    # comparisons), and the consistent-pressure magnetic eta vanishes within 3 standard errors.
    rng = np.random.default_rng(123)
    closed = cl.isotropic_shape_moments()
    samples, etas = [], []
    for _ in range(16):
        b, kk, k2 = random_field(rng, 32)
        m, s = fft_moments(b, kk, k2)
        b2 = np.trace(m)
        samples.append(s / b2)
        c = cl.emf_coefficients(
            cl.TurbulenceState(reynolds=np.zeros((3, 3)), maxwell=m, b_shape4=s / b2, tau=1.0, rho=1.0 / FOUR_PI)
        )
        etas.append(c.eta_magnetic[:2, :2].ravel() / b2)
        # Trace of eta^M is zero for every solenoidal realisation (exact identity of section 4).
        assert abs(np.trace(c.eta_magnetic)) < 1e-12
    samples = np.array(samples)
    mean, se = samples.mean(0), samples.std(0, ddof=1) / math.sqrt(len(samples))
    assert np.all(np.abs(mean - closed) <= 4 * se + 1e-12)
    assert np.abs(mean[0, 0, 2, 2] - 2 / 15) <= 3 * se[0, 0, 2, 2]
    etas = np.array(etas)
    emean, ese = etas.mean(0), etas.std(0, ddof=1) / math.sqrt(len(etas))
    assert np.all(np.abs(emean) <= 3 * ese + 1e-12)


def test_anisotropic_fft_fields_give_traceless_nonzero_magnetic_eta():
    # Derived: docs/theory.md section 4, eq. (3.5) of the project physics notes: for phi P spectra
    # eta^M_xx = (tau <b^2>/(8 pi rho)) (N_x - N_y); eddies elongated along y (small k_y) give N_x > N_y,
    # so eta^M_xx > 0 and eta^M_yy < 0. FFT fields: 32^3, stretch 2.5 in k_y, 6 realisations, 3 SE.
    rng = np.random.default_rng(5)
    diffs, etaxx = [], []
    for _ in range(6):
        b, kk, k2 = random_field(rng, 32, stretch=(1.0, 2.5, 1.0), shell=(4.0, 8.0))
        m, s = fft_moments(b, kk, k2)
        b2 = np.trace(m)
        c = cl.emf_coefficients(
            cl.TurbulenceState(reynolds=np.zeros((3, 3)), maxwell=m, b_shape4=s / b2, tau=1.0, rho=1.0 / FOUR_PI)
        )
        n = np.einsum("jmll->jm", s) / b2
        unit = b2 / 2.0  # tau <b^2>/(8 pi rho) with tau = 1, 4 pi rho = 1
        assert abs(c.eta_magnetic[0, 0] + c.eta_magnetic[1, 1]) < 1e-12 * b2
        etaxx.append(c.eta_magnetic[0, 0] / unit)
        diffs.append(c.eta_magnetic[0, 0] / unit - (n[0, 0] - n[1, 1]))
    etaxx, diffs = np.array(etaxx), np.array(diffs)
    assert etaxx.mean() > 0.1  # clearly non-zero
    assert abs(diffs.mean()) <= 3 * diffs.std(ddof=1) / math.sqrt(len(diffs)) + 1e-12


# --- decomposition, covariance, broadcasting ----------------------------------------------------------------


def test_decomposition_round_trip():
    # Derived: PHYSICS.md section 1, eq. (1.3) then (1.2) gives back a_ij B_j + b_ijk d_k B_j (row 1).
    rng = np.random.default_rng(1)
    a = rng.normal(size=(10, 3, 3))
    b = rng.normal(size=(10, 3, 3, 3))
    field = rng.normal(size=(10, 3))
    grad = rng.normal(size=(10, 3, 3))
    grad -= np.trace(grad, axis1=1, axis2=2)[:, None, None] * EYE / 3  # div B = 0
    d = cl.decompose(a, b)
    direct = cl.emf_from_tensors(a, b, field, grad)
    np.testing.assert_allclose(d.emf(field, grad), direct, rtol=0, atol=1e-14 * np.abs(direct).max())
    # Raedler's all-minus layout: alpha^R = -alpha, gamma^R = -gamma (PHYSICS.md row 2) is a sign flip only.
    np.testing.assert_allclose(d.alpha, 0.5 * (a + np.swapaxes(a, 1, 2)), atol=1e-15)


def test_emf_method_full_and_horizontal_forms_agree():
    rng = np.random.default_rng(2)
    z = np.linspace(-1.0, 1.0, 7)
    a = rng.normal(size=(7, 3, 3))
    r = np.einsum("zij,zkj->zik", a, a)
    state = cl.TurbulenceState(z=z, reynolds=r, maxwell=0.3 * r, kinetic_helicity=0.2, tau=1.5, rho=0.4)
    full = cl.emf_coefficients(state, full_tensor=True)
    horiz = cl.emf_coefficients(state)
    field = rng.normal(size=(7, 3))
    grad = np.zeros((7, 3, 3))
    grad[:, 0, 2], grad[:, 1, 2] = rng.normal(size=7), rng.normal(size=7)
    # The horizontal form leaves out the z-component of b_ijk d_k B_j (irrelevant for horizontally averaged fields).
    np.testing.assert_allclose(horiz.emf(field, grad)[:, :2], full.emf(field, grad)[:, :2], rtol=1e-12, atol=1e-14)
    with pytest.raises(InputError, match="grad_mean_b"):
        horiz.emf(field, np.ones((7, 3, 3)))


def rotate(q, t, rank):
    letters = "abcd"[:rank]
    spec = ",".join(f"{x.upper()}{x}" for x in letters) + "," + letters + "->" + letters.upper()
    return np.einsum(spec, *([q] * rank), t)


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1))
def test_rotation_covariance(seed):
    # Tensor covariance (any tensor-calculus text): rotating every input tensor rotates every output.
    # Gravity fixes a direction, so it is off here; divergences are given explicitly and rotated too.
    rng = np.random.default_rng(seed)
    q = Rotation.random(random_state=rng).as_matrix()
    p = random_point(rng)
    b2 = np.trace(p["maxwell"])

    def run(rot):
        c = cl.emf_coefficients(
            cl.TurbulenceState(
                reynolds=rot(p["reynolds"], 2), maxwell=rot(p["maxwell"], 2), u_shape=rot(p["u_shape"], 2),
                b_shape4=rot(p["s4"] / b2, 4), kinetic_helicity=p["kinetic_helicity"],
                current_helicity=p["current_helicity"], tau=p["tau"], rho=p["rho"],
                div_reynolds=rot(p["div_reynolds"], 1), div_maxwell=rot(p["div_maxwell"], 1),
            ),
            full_tensor=True,
        )
        return c

    base = run(lambda t, k: t)
    turned = run(lambda t, k: rotate(q, t, k))
    scale = max(1.0, np.abs(base.b_tensor).max(), np.abs(base.a_tensor).max())
    np.testing.assert_allclose(turned.alpha, rotate(q, base.alpha, 2), atol=1e-12 * scale)
    np.testing.assert_allclose(turned.gamma, rotate(q, base.gamma, 1), atol=1e-12 * scale)
    np.testing.assert_allclose(turned.b_tensor, rotate(q, base.b_tensor, 3), atol=1e-12 * scale)


grid_shapes = st.lists(st.integers(1, 4), min_size=0, max_size=3).map(tuple)


@settings(max_examples=30, deadline=None)
@given(shape=grid_shapes, dtype=st.sampled_from([np.float32, np.float64]), seed=st.integers(0, 2**31))
def test_any_grid_shape_and_dtype_equals_pointwise(shape, dtype, seed):
    # Broadcasting like a ufunc: every grid point equals the same point computed alone (float64 results).
    rng = np.random.default_rng(seed)
    a = rng.normal(size=shape + (3, 3)).astype(dtype)
    r = np.einsum("...ij,...kj->...ik", a, a)
    hk = rng.normal(size=shape).astype(dtype)
    tau = rng.uniform(0.5, 2.0, size=shape).astype(dtype)
    c = cl.emf_coefficients(cl.TurbulenceState(reynolds=r, maxwell=0.5 * r, kinetic_helicity=hk, tau=tau, rho=1.0))
    assert c.alpha.dtype == np.float64 and c.alpha.shape == shape + (3, 3)
    assert c.negative_diffusion.shape == shape
    for idx in np.ndindex(*shape):
        one = cl.emf_coefficients(cl.TurbulenceState(reynolds=r[idx], maxwell=0.5 * r[idx],
                                                     kinetic_helicity=hk[idx], tau=tau[idx], rho=1.0))
        np.testing.assert_array_equal(c.alpha[idx], one.alpha)
        np.testing.assert_array_equal(c.eta[idx], one.eta)
        np.testing.assert_array_equal(c.negative_diffusion[idx], one.negative_diffusion)


def test_gradients_on_two_dimensional_grid_match_numpy_gradient():
    # Reference: numpy.gradient(edge_order=2), the same second-order non-uniform stencils.
    x = np.cumsum(np.linspace(1.0, 2.0, 12))
    z = np.cumsum(np.linspace(0.5, 1.5, 9))
    xx, zz = np.meshgrid(x, z, indexing="ij")
    r = np.zeros((12, 9, 3, 3))
    r[..., 0, 0] = np.sin(xx / 7) * np.cos(zz / 5) + 2
    r[..., 2, 2] = np.exp(-zz / 10) + 1
    r[..., 0, 2] = r[..., 2, 0] = 0.1 * xx * zz / 100
    c = cl.emf_coefficients(cl.TurbulenceState(coords=(x, z), reynolds=r, tau=2.0, rho=1.0))
    div = np.zeros((12, 9, 3))
    for i in range(3):
        div[..., i] = np.gradient(r[..., i, 0], x, axis=0, edge_order=2) + np.gradient(
            r[..., i, 2], z, axis=1, edge_order=2
        )
    np.testing.assert_allclose(c.pumping_kinetic, -div, rtol=1e-12, atol=1e-13)
    assert c.negative_diffusion.shape == (12, 9)


def test_negative_diffusion_flag():
    # Derived: docs/theory.md section 4: total eta_yy = tau R_zz - (tau<b^2>/8 pi rho)(N_x - N_y) < 0 when the
    # magnetic eddies are azimuthally elongated and strong enough.
    nb = np.diag([0.6, 0.1, 0.3])
    m = 0.5 * 3.0 * (EYE - nb)
    c = cl.emf_coefficients(cl.TurbulenceState(reynolds=EYE * 0.1, maxwell=m, b_shape=nb, tau=1.0,
                                               rho=1.0 / FOUR_PI))
    assert c.eta[1, 1] < 0 < c.eta[0, 0]
    assert bool(c.negative_diffusion)
    assert c.eta_magnetic[1, 1] == pytest.approx(-1.5 * 0.5, rel=1e-12)


def test_from_profiles_reads_attributes_by_name():
    z = np.linspace(-1.0, 1.0, 11)
    r = np.broadcast_to(EYE * 3.0, (11, 3, 3)).copy()
    prof = SimpleNamespace(
        z=z, reynolds=r, maxwell=0.5 * r, kinetic_helicity=np.full(11, 0.3), current_helicity=np.zeros(11),
        u_shape=np.broadcast_to(EYE / 3, (11, 3, 3)), b_shape=np.broadcast_to(EYE / 3, (11, 3, 3)),
        b_shape4=None, rho=np.full(11, 2.0),
    )
    s = cl.TurbulenceState.from_profiles(prof, tau=0.5)
    direct = cl.TurbulenceState(z=z, reynolds=r, maxwell=0.5 * r, kinetic_helicity=0.3, tau=0.5, rho=2.0)
    a, b = cl.emf_coefficients(s), cl.emf_coefficients(direct)
    np.testing.assert_array_equal(a.alpha, b.alpha)
    np.testing.assert_array_equal(a.eta, b.eta)
    prof.rho = None
    with pytest.raises(InputError, match="rho"):
        cl.TurbulenceState.from_profiles(prof, tau=0.5)
    assert cl.TurbulenceState.from_profiles(prof, tau=0.5, rho=1.0).grid_shape == (11,)


def test_to_xarray_has_units_and_coordinates():
    pytest.importorskip("xarray")
    z = np.linspace(0.0, 1.0, 5)
    c = cl.emf_coefficients(cl.TurbulenceState(z=z, reynolds=np.broadcast_to(EYE, (5, 3, 3)), tau=1.0, rho=1.0))
    ds = c.to_xarray()
    assert ds["eta"].dims == ("z", "i", "j") and ds["eta"].attrs["units"] == "cm2 / s"
    np.testing.assert_array_equal(ds["z"].values, z)
    assert "model predictions" in ds.attrs["note"]


# --- bad input ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("kw", "arg"),
    [
        (dict(reynolds=np.array([[1.0, 0.2, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]])), "reynolds"),
        (dict(reynolds=-EYE), "reynolds"),
        (dict(maxwell=np.diag([1.0, -1.0, 1.0])), "maxwell"),
        (dict(tau=0.0), "tau"),
        (dict(tau=-1.0), "tau"),
        (dict(rho=np.nan), "rho"),
        (dict(kinetic_helicity=np.nan), "kinetic_helicity"),
        (dict(u_shape=EYE / 2), "u_shape"),
        (dict(gravity=1.0), "sound_speed"),
        (dict(reynolds=np.ones((3, 2))), "reynolds"),
    ],
)
def test_bad_input_names_the_argument(kw, arg):
    base = dict(reynolds=EYE, tau=1.0, rho=1.0)
    base.update(kw)
    with pytest.raises(InputError, match=arg):
        cl.emf_coefficients(cl.TurbulenceState(**base))


def test_bad_grids_and_options():
    with pytest.raises(InputError, match="z"):
        cl.TurbulenceState(z=[0.0, 2.0, 1.0], reynolds=np.broadcast_to(EYE, (3, 3, 3)), tau=1.0, rho=1.0)
    with pytest.raises(InputError, match="reynolds"):
        cl.TurbulenceState(z=[0.0, 1.0, 2.0], reynolds=np.broadcast_to(EYE, (4, 3, 3)), tau=1.0, rho=1.0)
    with pytest.raises(InputError, match="axes"):
        cl.TurbulenceState(coords=([0, 1, 2], [0, 1, 2]), axes=("z", "z"),
                           reynolds=np.broadcast_to(EYE, (3, 3, 3, 3)), tau=1.0, rho=1.0)
    s = cl.TurbulenceState(reynolds=EYE, tau=1.0, rho=1.0)
    with pytest.raises(InputError, match="closure"):
        cl.emf_coefficients(s, closure="nonsense")  # type: ignore[arg-type]
    with pytest.raises(InputError, match="field_direction"):
        cl.emf_coefficients(s, field_direction=(0.0, 0.0, 1.0))


# --- helicity back-reaction ---------------------------------------------------------------------------------


def test_catastrophic_quenching_values():
    # Source: Vainshtein & Cattaneo 1992; Gruzinov & Diamond 1994 (PHYSICS.md row 19):
    # R_m = 1e3, B/B_eq = 0.1 -> alpha/alpha_K = 1/11.
    assert cl.steady_quenched_alpha(1.0, 0.1, 1.0, 1e3) == pytest.approx(1 / 11, rel=1e-14)
    # Source: Blackman & Brandenburg 2002 form (row 20): J.B = 0.005, eta_t = 1 -> 6/11.
    assert cl.steady_quenched_alpha(1.0, 0.1, 1.0, 1e3, current_dot_field=0.005, eta_t=1.0) == pytest.approx(
        6 / 11, rel=1e-14
    )
    out = cl.steady_quenched_alpha(np.ones((2, 3)), np.array([0.0, 0.1, 1.0]), 1.0, 1e3)
    assert out.shape == (2, 3) and out[0, 0] == 1.0
    with pytest.raises(InputError, match="eta_t"):
        cl.steady_quenched_alpha(1.0, 0.1, 1.0, 1e3, current_dot_field=0.1)
    with pytest.raises(InputError, match="magnetic_reynolds"):
        cl.steady_quenched_alpha(1.0, 0.1, 1.0, -1.0)


def test_dynamical_quenching_relaxes_to_the_steady_state():
    # Derived: docs/theory.md section 7 (sympy steady state of the quenching equation), PHYSICS.md row 21:
    # eta_t = k_f = 1, B/B_eq = 0.1, R_m = 1e3 -> e-folding time 45.45, final alpha 0.0909091.
    ak, b, et, kf, beq, rm = 1.0, 0.1, 1.0, 1.0, 1.0, 1e3

    def rhs(t, y):
        emf_b = (ak + y[0]) * b**2  # E = alpha B with J.B = 0
        return [cl.quenching_rhs(y[0], emf_b, et, kf, beq, rm)]

    tq = cl.quenching_relaxation_time(et, kf, b, beq, rm)
    assert tq == pytest.approx(1.0 / (2.0 * (0.01 + 1e-3)), rel=1e-14)
    assert tq == pytest.approx(45.45, abs=0.01)
    sol = solve_ivp(rhs, (0.0, 40 * tq), [0.0], rtol=1e-11, atol=1e-13, dense_output=True)
    assert ak + sol.y[0, -1] == pytest.approx(cl.steady_quenched_alpha(ak, b, beq, rm), rel=1e-8)
    # The deviation decays by e over one relaxation time.
    final = sol.y[0, -1]
    ratio = (sol.sol(2 * tq)[0] - final) / (sol.sol(tq)[0] - final)
    assert ratio == pytest.approx(math.exp(-1.0), rel=1e-6)
    sym = derive.quenching_steady_state()
    sp = derive.sp
    values = dict(alpha_K=ak, B=b, eta_t=et, k_f=kf, B_eq=beq, R_m=rm, JB=0.0)
    s = {sp.Symbol(n, real=True): v for n, v in values.items()}
    assert float(sym["alpha_steady"].subs(s)) == pytest.approx(1 / 11, rel=1e-14)
    assert float(1 / sym["relaxation_rate"].subs(s)) == pytest.approx(tq, rel=1e-14)


def test_helicity_flux_divergence_against_analytic_profile():
    # Analytic derivative: F = -kappa d_z alpha + U alpha with alpha = sin z, kappa = 2, U = 0.5.
    z = np.linspace(0.0, 3.0, 301)
    out = cl.helicity_flux_divergence(np.sin(z), z, diffusivity=2.0, velocity=0.5)
    exact = 2.0 * np.sin(z) + 0.5 * np.cos(z)
    np.testing.assert_allclose(out[3:-3], exact[3:-3], atol=1e-4)


@settings(max_examples=30, deadline=None)
@given(
    n=st.integers(3, 40),
    extra=st.integers(1, 3),
    axis_last=st.booleans(),
    seed=st.integers(0, 2**31),
)
def test_grid_derivative_matches_numpy_gradient(n, extra, axis_last, seed):
    # Reference: numpy.gradient(edge_order=2) on random strictly increasing grids, on either axis of a
    # non-contiguous (transposed) array: the kernel honours strides.
    from fluxfunnel import _core

    rng = np.random.default_rng(seed)
    x = np.cumsum(rng.uniform(0.1, 2.0, n))
    f = rng.normal(size=(n, extra)) if not axis_last else rng.normal(size=(extra, n)).T.copy().T
    axis = 1 if axis_last else 0
    got = _core._closure_gradient(f, x, axis)
    ref = np.gradient(f, x, axis=axis, edge_order=2)
    np.testing.assert_allclose(got, ref, rtol=1e-10, atol=1e-10 * np.abs(ref).max())
    view = np.asfortranarray(f)[..., ::1]
    np.testing.assert_allclose(_core._closure_gradient(view, x, axis), ref, rtol=1e-10, atol=1e-10 * np.abs(ref).max())


def test_memory_layout_does_not_change_the_numbers():
    # Derived: the kernel reads C-ordered matrices at constant offsets and anything else through its strides;
    # Fortran order, a strided view and a broadcast shape tensor must give bit-identical coefficients.
    rng = np.random.default_rng(11)
    n = 40
    a = rng.normal(size=(2 * n, 3, 3))
    r = np.einsum("nij,nkj->nik", a, a)
    shape = np.abs(rng.normal(size=(2 * n, 3))) + 0.1
    nb = np.zeros((2 * n, 3, 3))
    nb[:, [0, 1, 2], [0, 1, 2]] = shape / shape.sum(axis=1, keepdims=True)
    kw = dict(kinetic_helicity=rng.normal(size=n), current_helicity=rng.normal(size=n), tau=1.5, rho=2.0,
              gravity=rng.normal(size=n), sound_speed=1.0, brunt_vaisala2=0.3,
              div_reynolds=rng.normal(size=(n, 3)), div_maxwell=rng.normal(size=(n, 3)))
    ref = cl.emf_coefficients(cl.TurbulenceState(reynolds=r[:n].copy(), maxwell=0.5 * r[n:].copy(),
                                                 b_shape=nb[:n].copy(), **kw))
    every_other = np.zeros((2 * n, 3, 3))
    every_other[::2] = 0.5 * r[n:]
    variants = [
        # Fortran order (read through the strides).
        dict(reynolds=np.asfortranarray(r[:n]), maxwell=np.asfortranarray(0.5 * r[n:]), b_shape=nb[:n]),
        # every second matrix of a larger array (constant offsets, a longer step); transposed views of the
        # symmetric tensors (same numbers, other strides).
        dict(reynolds=np.swapaxes(r[:n], 1, 2), maxwell=every_other[::2], b_shape=np.swapaxes(nb[:n], 1, 2)),
    ]
    assert not variants[0]["reynolds"].flags.c_contiguous and not variants[1]["maxwell"].flags.c_contiguous
    for v in variants:
        got = cl.emf_coefficients(cl.TurbulenceState(**v, **kw))
        for name in ("alpha", "gamma", "buoyancy", "eta", "eta_magnetic", "entropy_drift"):
            np.testing.assert_array_equal(getattr(got, name), getattr(ref, name), err_msg=name)
        np.testing.assert_array_equal(got.negative_diffusion, ref.negative_diffusion)
    # A broadcast shape tensor is checked once; a bad one is still rejected, and a bad point of a full one
    # is found wherever it sits.
    bad = np.broadcast_to(np.diag([0.5, 0.3, 0.3]), (n, 3, 3))
    with pytest.raises(InputError, match="u_shape"):
        cl.emf_coefficients(cl.TurbulenceState(reynolds=r[:n], u_shape=bad, tau=1.0, rho=1.0))
    nb_bad = nb[:n].copy()
    nb_bad[n - 3, 0, 0] += 0.2
    with pytest.raises(InputError, match=f"b_shape: a shape tensor has trace 1, found .* at point {n - 3}"):
        cl.emf_coefficients(cl.TurbulenceState(reynolds=r[:n], b_shape=nb_bad, tau=1.0, rho=1.0))
