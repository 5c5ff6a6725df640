"""Steady field-line bending and flux transport speed (fluxfunnel.vertical.bend_profile).

Every check names its outside reference: a published result, a SciPy routine on the same profiles, or a
closed form derived in docs/theory.md ("Vertical structure") from the published thin-disk balance.
"""

import math

import astropy.units as u
import numpy as np
import pytest
from fluxfunnel import InputError
from fluxfunnel.vertical import BendResult, bend_profile, midplane_grid
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, special

# An invented column: surface height 2e10 cm, diffusivity of order 1e16 cm^2/s, inflow of order 1e4 cm/s.
H = 2.0e10
ETA0 = 1.0e16
V0 = 1.0e4


def stretched(n, h=H):
    """Heights 0..h, denser near the surface (exercises the non-uniform quadrature)."""
    s = np.linspace(0.0, 1.0, n)
    return h * (s + 0.4 * s**2) / 1.4


def eta_fn(z):
    return ETA0 * (1.0 + 0.8 * np.exp(-((z / H) ** 2) * 2.0))


def vr_fn(z):
    return -V0 * (0.4 + 1.6 * (z / H) ** 2)


def vz_fn(z):
    return 0.9 * ETA0 / H * (z / H) * (1.0 + z / H)


def scipy_split(eta, vz, vr, grad, h):
    """u_adv, u_dif, u_grad by integrating (ln mu, int mu/eta, int mu v_r/eta, int mu) with solve_ivp.

    Integrated in zeta = z/h with the integrals scaled by eta0 and v0, so every component is of order one.
    """

    def rhs(zeta, y):
        x = zeta * h
        mu = math.exp(y[0])
        return [-h * vz(x) / eta(x), mu * ETA0 / eta(x), mu * ETA0 / eta(x) * vr(x) / V0, mu]

    sol = integrate.solve_ivp(rhs, (0.0, 1.0), [0.0, 0.0, 0.0, 0.0], method="DOP853", rtol=1e-13, atol=1e-16)
    ln_mu, i_inv, i_adv, i_mu = sol.y[:, -1]
    i_inv, i_adv, i_mu = i_inv * h / ETA0, i_adv * h * V0 / ETA0, i_mu * h
    return i_adv / i_inv, math.exp(ln_mu) / i_inv, -grad * i_mu / i_inv


# --- the classic diffusion argument ---------------------------------------------------------------------


@pytest.mark.parametrize("pm", [0.5, 1.0, 3.0])
@pytest.mark.parametrize("aspect", [0.01, 0.05, 0.1])
def test_uniform_diffusion_gives_the_lpp94_bending(pm, aspect):
    radius = 1.0e12
    h = aspect * radius
    nu = 3.0e15
    z = midplane_grid(h, n=32)
    res = bend_profile(z, eta=nu / pm, v_r=-1.5 * nu / radius, surface_ratio="steady")
    # Derived: docs/theory.md section "Vertical structure 4", from the thin-disk balance of Lubow, Papaloizou &
    # Pringle 1994: B_rs/B_z = |v_r| H/eta = 1.5 Pm H/R.
    assert res.steady_surface_ratio == pytest.approx(1.5 * pm * aspect, rel=1e-12)
    # Source: Lubow, Papaloizou & Pringle 1994 (MNRAS 267, 235, abstract): steady tan i = 1.52/D with
    # D = (R/H)(eta/nu); the local balance agrees within 2 %.
    d = (1.0 / aspect) / pm
    assert res.steady_surface_ratio == pytest.approx(1.52 / d, rel=0.02)
    assert res.u_psi == pytest.approx(0.0, abs=1e-12 * abs(res.u_adv))
    # Uniform eta, no vertical transport: B_r grows linearly with height.
    np.testing.assert_allclose(res.b_r_over_b_z, res.steady_surface_ratio * z / h, rtol=1e-12, atol=1e-15)


def test_field_lines_stay_near_vertical_for_unit_prandtl_number():
    # Common practice (no single source): with Pm ~ 1 the field lines bend by an angle of order H/R.
    for aspect in (0.01, 0.03, 0.1):
        radius, nu = 1.0e12, 1.0e15
        res = bend_profile(midplane_grid(aspect * radius, n=16), eta=nu, v_r=-1.5 * nu / radius, surface_ratio="steady")
        angle = math.radians(res.surface_inclination_deg)
        assert 0.3 * aspect < angle < 3.0 * aspect


def test_uniform_split_is_the_vertically_averaged_formula():
    # Derived: docs/theory.md section "Vertical structure 4": u_psi = v_r + eta (B_rs/B_z/h - d ln B_z/dR).
    z = midplane_grid(H, n=8)
    b_z, d_bz_dr, bs = 3.0, -3.0 / 1.0e12, 0.4
    res = bend_profile(z, eta=ETA0, v_r=-V0, b_z=b_z, d_bz_dr=d_bz_dr, surface_ratio=bs)
    assert res.u_psi == pytest.approx(-V0 + ETA0 * (bs / H - d_bz_dr / b_z), rel=1e-13)
    assert res.b_r_over_b_z[-1] == bs


# --- arbitrary profiles against SciPy ---------------------------------------------------------------------


def test_conductivity_weighted_formula_against_quad():
    # Derived: docs/theory.md section "Vertical structure 3"; evaluated with scipy.integrate.quad.
    z = stretched(1601)
    bs, b_z, d_bz_dr = 0.7, 2.0, 4.0e-12
    res = bend_profile(z, eta=eta_fn(z), v_r=vr_fn(z), b_z=b_z, d_bz_dr=d_bz_dr, surface_ratio=bs)
    i_vr = integrate.quad(lambda x: vr_fn(x) / eta_fn(x), 0.0, H, epsabs=0, epsrel=1e-13)[0]
    i_inv = integrate.quad(lambda x: 1.0 / eta_fn(x), 0.0, H, epsabs=0, epsrel=1e-13)[0]
    expect = (i_vr + bs - H * d_bz_dr / b_z) / i_inv
    assert res.u_psi == pytest.approx(expect, rel=1e-8)
    # Advection is the 1/eta-weighted mean of v_r, not the plain mean.
    assert res.u_adv == pytest.approx(i_vr / i_inv, rel=1e-8)
    assert res.u_adv != pytest.approx(np.mean(vr_fn(z)), rel=1e-2)


def test_split_with_vertical_transport_against_solve_ivp():
    # Source: scipy.integrate.solve_ivp (DOP853, rtol 1e-13) on the same analytic profiles.
    z = stretched(2001)
    grad = 2.0e-12
    res = bend_profile(z, eta=eta_fn(z), v_z=vz_fn(z), v_r=vr_fn(z), d_bz_dr=grad)
    u_adv, u_dif, u_grad = scipy_split(eta_fn, vz_fn, vr_fn, grad, H)
    assert res.u_adv == pytest.approx(u_adv, rel=1e-8)
    assert res.u_dif == pytest.approx(u_dif, rel=1e-8)
    assert res.u_grad == pytest.approx(u_grad, rel=1e-8)
    assert res.u_psi is None and res.b_r_over_b_z is None


def test_profile_against_solve_ivp_and_solve_bvp():
    z = stretched(2001)
    bs, grad = 0.35, -1.0e-12
    res = bend_profile(z, eta=eta_fn(z), v_z=vz_fn(z), v_r=vr_fn(z), d_bz_dr=grad, surface_ratio=bs)
    scale = abs(res.u_adv)

    def ode(x, b, u):
        return vz_fn(x) / eta_fn(x) * b + (u - vr_fn(x)) / eta_fn(x) + grad

    # Source: scipy.integrate.solve_ivp from b(0) = 0 with our u_psi reaches b(h) = B_rs/B_z and follows
    # our profile.
    sol = integrate.solve_ivp(
        lambda x, b: ode(x, b, res.u_psi), (0.0, H), [0.0], t_eval=z, method="DOP853", rtol=1e-13, atol=1e-16
    )
    np.testing.assert_allclose(res.b_r_over_b_z, sol.y[0], rtol=0, atol=1e-8 * bs)
    # Source: scipy.integrate.solve_bvp with u_psi as the unknown parameter, b(0) = 0, b(h) = bs.
    xs = np.linspace(0.0, H, 200)

    def fun(x, y, p):
        return np.vstack([ode(x, y[0], p[0] * scale)])

    def bc(ya, yb, p):
        return np.array([ya[0], yb[0] - bs])

    bvp = integrate.solve_bvp(fun, bc, xs, np.zeros((1, xs.size)), p=[0.0], tol=1e-12, max_nodes=200000)
    assert bvp.success
    assert res.u_psi == pytest.approx(bvp.p[0] * scale, rel=1e-8)
    np.testing.assert_allclose(res.b_r_over_b_z, bvp.sol(z)[0], rtol=0, atol=1e-8 * bs)


def test_uniform_pumping_peclet_factor():
    # Derived: docs/theory.md section "Vertical structure 5", uniform eta and v_z: u_dif = (eta/h) Pe/(e^Pe - 1).
    z = midplane_grid(H, n=801)
    for pe in (-3.0, 0.5, 5.0, 20.0):
        res = bend_profile(z, eta=ETA0, v_z=pe * ETA0 / H)
        assert res.u_dif == pytest.approx(ETA0 / H * pe / math.expm1(pe), rel=1e-8)


# --- integrating-factor power law ---------------------------------------------------------------------


@pytest.mark.parametrize(("a", "m"), [(9.0, 3.0), (2.0, 2.0), (4.0, 4.0)])
def test_power_law_vz_over_eta_matches_the_incomplete_gamma_solution(a, m):
    # v_z/eta = (a m/h) (z/h)^(m-1), so int_0^z v_z/eta = a (z/h)^m and mu = exp(-a (z/h)^m); uniform eta
    # and v_r. Derived: docs/theory.md section "Vertical structure 6"; the closed form uses scipy.special.gammainc.
    h = 3.0 * H
    z = np.linspace(0.0, h, 3001)
    vz = ETA0 * a * m / h * (z / h) ** (m - 1.0)
    res = bend_profile(z, eta=ETA0, v_z=vz, v_r=-V0, surface_ratio="steady")

    def partial(zeta):  # int_0^zeta exp(-a s^m) ds
        return a ** (-1.0 / m) * special.gamma(1.0 / m) * special.gammainc(1.0 / m, a * zeta**m) / m

    expect = V0 * h / ETA0 * np.exp(a * (z / h) ** m) * partial(z / h)
    np.testing.assert_allclose(res.b_r_over_b_z, expect, rtol=1e-8, atol=1e-12 * expect[-1])
    assert res.u_dif == pytest.approx(ETA0 * math.exp(-a) / (h * partial(1.0)), rel=1e-8)


def test_rising_transport_bends_the_field_only_high_up():
    # Pumping that grows with height as the density falls (v_z/eta = z^2/H^3, a power law): the field is
    # nearly straight below one scale height and bends steeply above it.
    # Common practice (no single source) for the qualitative picture; the numbers follow from the
    # power-law solution checked above.
    z = np.linspace(0.0, 3.0 * H, 601)
    res = bend_profile(z, eta=ETA0, v_z=ETA0 * z**2 / H**3, v_r=-V0, surface_ratio="steady")
    b = res.b_r_over_b_z
    i1, i2 = np.searchsorted(z, [H, 2.0 * H])
    assert b[i1] < 0.02 * b[-1]
    assert b[i2] < 0.1 * b[-1]
    assert np.all(np.diff(b) > 0)
    # Uniform-eta value without pumping, for comparison: the surface ratio is much larger with it.
    plain = bend_profile(z, eta=ETA0, v_r=-V0, surface_ratio="steady")
    assert res.steady_surface_ratio > 100.0 * plain.steady_surface_ratio


# --- vanishing and negative diffusivity -----------------------------------------------------------------


def test_negative_eta_is_detected_and_located():
    z = midplane_grid(H, n=41)
    eta = np.full((3, z.size), ETA0)
    eta[2, 30:] = -0.2 * ETA0
    with pytest.raises(InputError, match=r"eta: vanishes or is negative.*column 2, height index 30") as info:
        bend_profile(z, eta=eta, v_r=-V0)
    assert "eta_floor" in str(info.value)
    eta[1, 5] = 0.0
    with pytest.raises(InputError, match="column 1, height index 5"):
        bend_profile(z, eta=eta, v_r=-V0)


def test_floor_turns_an_anti_diffusive_layer_into_a_conducting_one():
    # Derived: docs/theory.md section "Vertical structure 7": a highly conducting layer dominates
    # int dz/eta, so u_psi tends to v_r of that layer (the conducting surface-layer mechanism of
    # Bisnovatyi-Kogan & Lovelace 2007).
    z = midplane_grid(H, n=401)
    eta = np.full(z.size, ETA0)
    layer = z > 0.8 * H
    eta[layer] = -0.5 * ETA0
    v_r = np.where(layer, -5.0 * V0, -V0)
    values = []
    for floor in (1e-4 * ETA0, 1e-6 * ETA0):
        res = bend_profile(z, eta=eta, v_r=v_r, surface_ratio=0.3, eta_floor=floor)
        np.testing.assert_array_equal(res.regularised, layer)
        values.append(res.u_psi)
    assert values[1] == pytest.approx(-5.0 * V0, rel=1e-4)
    assert abs(values[0] + 5.0 * V0) > abs(values[1] + 5.0 * V0)


# --- interface: broadcasting, scalars, dtypes, strides --------------------------------------------------


def numpy_reference(z, eta, vz, vr, grad, bs):
    """Independent NumPy/SciPy evaluation with scipy.integrate.cumulative_simpson along the last axis."""
    ln_mu = -integrate.cumulative_simpson(vz / eta, x=z, axis=-1, initial=0.0)
    mu = np.exp(ln_mu - ln_mu.max(axis=-1, keepdims=True))
    i_inv = integrate.simpson(mu / eta, x=z, axis=-1)
    u_adv = integrate.simpson(mu * vr / eta, x=z, axis=-1) / i_inv
    u_dif = mu[..., -1] / i_inv
    u_grad = -grad * integrate.simpson(mu, x=z, axis=-1) / i_inv
    return u_adv, u_dif, u_grad, u_adv + u_grad + u_dif * bs


@settings(max_examples=25, deadline=None)
@given(
    batch=st.lists(st.integers(1, 3), min_size=0, max_size=3).map(tuple),
    dtype=st.sampled_from([np.float32, np.float64]),
    seed=st.integers(0, 2**32 - 1),
)
def test_broadcasting_and_dtypes_against_a_numpy_reference(batch, dtype, seed):
    # Source: scipy.integrate.simpson / cumulative_simpson on the same sampled profiles.
    rng = np.random.default_rng(seed)
    z = np.linspace(0.0, H, 301)
    shape = batch + (1,)
    c1 = rng.uniform(0.2, 2.0, shape)
    c2 = rng.uniform(-1.0, 2.0, shape)
    eta = (ETA0 * (c1 + np.exp(-((z / H) ** 2)))).astype(dtype)
    vz = (ETA0 / H * c2 * z / H).astype(dtype)
    vr = (-V0 * (1.0 + c1 * (z / H) ** 2)).astype(dtype)
    bs = rng.uniform(-1.0, 1.0, batch).astype(dtype)
    grad = rng.uniform(-1.0, 1.0, batch) * 1e-12
    res = bend_profile(z, eta=eta, v_z=vz, v_r=vr, d_bz_dr=grad, surface_ratio=bs)
    ref = numpy_reference(z, *(np.asarray(a, dtype=np.float64) for a in (eta, vz, vr)), grad, bs.astype(np.float64))
    for got, want in zip((res.u_adv, res.u_dif, res.u_grad, res.u_psi), ref, strict=True):
        assert np.shape(got) == batch
        assert np.asarray(got).dtype == np.float64
        np.testing.assert_allclose(got, want, rtol=1e-6, atol=1e-9 * V0)
    assert res.b_r_over_b_z.shape == batch + (z.size,)
    np.testing.assert_allclose(res.b_r_over_b_z[..., -1], bs, rtol=1e-6)
    if batch == ():
        assert isinstance(res.u_psi, float)


def test_one_column_of_a_batch_equals_the_single_call_and_strides_are_honoured():
    z = stretched(129)
    eta = np.stack([eta_fn(z) * f for f in (1.0, 2.0, 0.5)])
    vz = np.stack([vz_fn(z) * f for f in (0.0, 1.0, -1.0)])
    full = bend_profile(z, eta=eta, v_z=vz, v_r=vr_fn(z), surface_ratio=np.array([0.1, 0.2, 0.3]))
    one = bend_profile(z, eta=eta[1], v_z=vz[1], v_r=vr_fn(z), surface_ratio=0.2)
    assert isinstance(one.u_psi, float)
    assert full.u_psi[1] == one.u_psi
    np.testing.assert_array_equal(full.b_r_over_b_z[1], one.b_r_over_b_z)
    # Non-contiguous (transposed, Fortran-ordered) inputs give identical numbers.
    eta_f = np.asfortranarray(eta)
    strided = bend_profile(z, eta=eta_f, v_z=vz.T.copy().T, v_r=vr_fn(z), surface_ratio=np.array([0.1, 0.2, 0.3]))
    np.testing.assert_array_equal(strided.b_r_over_b_z, full.b_r_over_b_z)
    assert "BendResult(nz=129" in repr(full)
    assert isinstance(full, BendResult)


def test_bad_input_names_the_argument():
    z = midplane_grid(H, n=16)
    with pytest.raises(InputError, match="z: must be strictly increasing"):
        bend_profile(z[[0, 2, 1, 3, 4]], eta=ETA0)
    with pytest.raises(InputError, match="z: must start at the midplane"):
        bend_profile(z + 1.0, eta=ETA0)
    with pytest.raises(InputError, match="z: needs at least 4"):
        bend_profile(z[:3], eta=ETA0)
    bad = np.full(z.size, ETA0)
    bad[4] = np.nan
    with pytest.raises(InputError, match="eta: must be finite"):
        bend_profile(z, eta=bad)
    with pytest.raises(InputError, match="v_r: must be finite"):
        bend_profile(z, eta=ETA0, v_r=np.full(z.size, np.inf))
    with pytest.raises(InputError, match="last axis"):
        bend_profile(z, eta=np.full((2, 5), ETA0), v_r=np.zeros((2, 1)))
    with pytest.raises(InputError, match="do not broadcast"):
        bend_profile(z, eta=np.full((2, z.size), ETA0), v_r=np.zeros((3, z.size)))
    with pytest.raises(InputError, match="b_z: must be nonzero"):
        bend_profile(z, eta=ETA0, b_z=0.0, d_bz_dr=1.0)
    with pytest.raises(InputError, match="surface_ratio"):
        bend_profile(z, eta=ETA0, surface_ratio="outer")
    with pytest.raises(InputError, match="eta_floor: must be positive"):
        bend_profile(z, eta=ETA0, eta_floor=-1.0)
    with pytest.raises(InputError, match="scale_height: must be positive"):
        midplane_grid(-H)
    with pytest.raises(InputError, match="scale_height: must be finite"):
        midplane_grid(np.nan)


def test_astropy_quantities_are_converted():
    z = midplane_grid(H, n=8)
    plain = bend_profile(z, eta=ETA0, v_r=-V0, surface_ratio="steady")
    with_units = bend_profile(
        (z * u.cm).to(u.km), eta=ETA0 * u.cm**2 / u.s, v_r=(-V0 * u.cm / u.s).to(u.km / u.s), surface_ratio="steady"
    )
    assert with_units.steady_surface_ratio == pytest.approx(plain.steady_surface_ratio, rel=1e-12)
