"""Elliptic integrals, the ring-current kernel and the discretised flux operator of the ``flux`` stage."""

import math

import mpmath
import numpy as np
import pytest
import scipy.special as sc
from fluxfunnel import InputError, _core
from fluxfunnel import constants as const
from fluxfunnel.flux import flux_function, flux_operator, power_law_ratio, ring_kernel, surface_radial_field
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from scipy.integrate import quad

# --- complete elliptic integrals ----------------------------------------------------------------------------

M_VALUES = np.concatenate(
    [-np.geomspace(1e-8, 1e4, 25), np.linspace(0, 1, 101)[:-1], 1 - np.geomspace(1e-300, 0.5, 60)]
)
P_VALUES = np.concatenate([np.geomspace(1e-300, 1e-1, 80), np.linspace(0.1, 1, 19), np.geomspace(1, 1e6, 20)])


def test_ellipk_ellipe_match_scipy():
    # Source: scipy.special.ellipk / ellipe (Cephes), reference library, to 1e-14 relative.
    np.testing.assert_allclose(_core.flux_ellipk(M_VALUES), sc.ellipk(M_VALUES), rtol=1e-14)
    np.testing.assert_allclose(_core.flux_ellipe(M_VALUES), sc.ellipe(M_VALUES), rtol=1e-14)


def test_complementary_parameter_matches_scipy_near_m_one():
    # Source: scipy.special.ellipkm1 (K as a function of p = 1 - m), to 1e-14; E(1 - p) via mpmath.ellipe at
    # 30 digits because forming 1 - p in double precision loses p's digits.
    np.testing.assert_allclose(_core.flux_ellipkm1(P_VALUES), sc.ellipkm1(P_VALUES), rtol=1e-14)
    mpmath.mp.dps = 60  # mpmath.ellipe itself needs the extra digits next to m = 1
    ref = np.array([float(mpmath.ellipe(1 - mpmath.mpf(p))) for p in P_VALUES[::4] if p > 1e-50])
    np.testing.assert_allclose(_core.flux_ellipem1(P_VALUES[::4][P_VALUES[::4] > 1e-50]), ref, rtol=1e-14)


def test_carlson_forms_match_scipy():
    # Source: scipy.special.elliprf / elliprd (Carlson's algorithms as implemented in Boost), to 1e-14.
    rng = np.random.default_rng(7)
    x, y, z = (10.0 ** rng.uniform(-8, 4, 200) for _ in range(3))
    x[:20] = 0.0
    np.testing.assert_allclose(_core.flux_elliprf(x, y, z), sc.elliprf(x, y, z), rtol=1e-14)
    np.testing.assert_allclose(_core.flux_elliprd(x, y, z), sc.elliprd(x, y, z), rtol=1e-14)


def test_elliptic_out_of_domain_is_nan():
    # Source: scipy.special convention, NaN outside the domain (m > 1, p < 0).
    assert np.isnan(_core.flux_ellipk(np.array([1.5, np.nan]))).all()
    assert np.isnan(_core.flux_ellipkm1(np.array([-1e-3]))).all()
    assert np.isinf(_core.flux_ellipk(np.array([1.0])))[0]


@given(hnp.arrays(np.float64, st.integers(1, 30), elements=st.floats(0.0, 1.0, exclude_max=True)))
@settings(max_examples=40, deadline=None)
def test_ellip_property_any_m_in_unit_interval(m):
    # Source: scipy.special.ellipk / ellipe.
    np.testing.assert_allclose(_core.flux_ellipk(m), sc.ellipk(m), rtol=1e-14)
    np.testing.assert_allclose(_core.flux_ellipe(m), sc.ellipe(m), rtol=1e-14)


# --- ring-current kernel ------------------------------------------------------------------------------------


def _biot_savart_g(r, a):
    """G from A_phi of a loop by direct quadrature: psi = r A_phi, A_phi = (I a/c) int cos(p) dp / |x - x'|."""
    mpmath.mp.dps = 40
    r, a = mpmath.mpf(r), mpmath.mpf(a)
    f = lambda p: mpmath.cos(p) / mpmath.sqrt(r * r + a * a - 2 * r * a * mpmath.cos(p))  # noqa: E731
    integral = 2 * mpmath.quad(f, [0, mpmath.pi / 2, mpmath.pi])
    # psi = (2 pi I / c) G  and  psi = r (I a / c) integral  =>  G = r a integral / (2 pi)
    return float(r * a * integral / (2 * mpmath.pi))


@pytest.mark.parametrize("ratio", [1e-6, 1e-3, 0.1, 0.5, 0.9, 0.99, 1.01, 1.2, 2.0, 10.0, 1e3, 1e6])
def test_ring_kernel_matches_biot_savart_quadrature(ratio):
    # Source: Biot-Savart vector potential of a circular loop (Jackson 1999 eq. 5.32), integrated with
    # mpmath.quad at 40 digits; independent of any elliptic-integral code.
    r = 3.0
    assert ring_kernel(r, r * ratio) == pytest.approx(_biot_savart_g(r, r * ratio), rel=2e-14)


def test_ring_kernel_with_scipy_elliptic_form():
    # Source: Jackson 1999 eq. 5.37 evaluated with scipy.special.ellipkm1 / ellipe (different code path).
    r = np.geomspace(0.01, 100, 57)
    rs = np.full_like(r, 1.0)
    m = 4 * r * rs / (r + rs) ** 2
    p = ((r - rs) / (r + rs)) ** 2
    ref = (r + rs) / (2 * np.pi) * ((2 - m) * sc.ellipkm1(p) - 2 * sc.ellipe(m))
    near = np.abs(np.log(r)) < 1.5  # where scipy's own combination does not cancel
    np.testing.assert_allclose(ring_kernel(r[near], rs[near]), ref[near], rtol=1e-13)


def test_centre_field_of_a_loop():
    # Source: Jackson 1999 section 5.5, B_z at the centre of a loop = 2 pi I / (c a).
    # psi = (2 pi I / c) G, B_z = (1/R) d psi/dR; central difference at R = 1e-3 a (error O(R^2/a^2)).
    current, a, h = 3.0e9, 2.0e10, 1e-3 * 2.0e10
    g = lambda x: 2 * np.pi * current / const.C * ring_kernel(x, a)  # noqa: E731
    rr = 1e-3 * a
    b_z = (g(rr + h * 1e-2) - g(rr - h * 1e-2)) / (2 * h * 1e-2) / rr
    assert b_z == pytest.approx(2 * np.pi * current / (const.C * a), rel=1e-5)


def test_loop_field_in_the_plane_matches_jackson_bz():
    # Source: loop field B_z in the plane (Smythe / Jackson form, PHYSICS.md eq. 2.2 with z = 0) via scipy
    # ellipk/ellipe, against (1/R) dpsi/dR of our kernel by a 4th-order central difference.
    a = 1.0
    for r in [0.3, 0.7, 1.6, 4.0]:
        m = 4 * a * r / (a + r) ** 2
        bz_ref = 1 / (a + r) * (sc.ellipk(m) + (a * a - r * r) / (a - r) ** 2 * sc.ellipe(m))  # 2I/c = 1 units
        h = 1e-4 * r
        g = [ring_kernel(r + k * h, a) for k in (-2, -1, 1, 2)]
        d = (g[0] - 8 * g[1] + 8 * g[2] - g[3]) / (12 * h)
        # psi for 2I/c = 1 is pi * G
        assert np.pi * d / r == pytest.approx(bz_ref, rel=1e-8)


@given(
    hnp.mutually_broadcastable_shapes(num_shapes=2, max_dims=3, max_side=4),
    st.sampled_from([np.float32, np.float64]),
    st.data(),
)
@settings(max_examples=30, deadline=None)
def test_ring_kernel_broadcasts_like_a_ufunc(shapes, dtype, data):
    # Source: NumPy broadcasting rules; values against the scipy form of Jackson 1999 eq. 5.37.
    s1, s2 = shapes.input_shapes
    el = st.floats(0.125, 8.0, width=32)
    r = data.draw(hnp.arrays(dtype, s1, elements=el))
    rs = data.draw(hnp.arrays(dtype, s2, elements=el))
    out = ring_kernel(r, rs)
    rb, rsb = np.broadcast_arrays(r.astype(np.float64), rs.astype(np.float64))
    assert np.shape(out) == rb.shape
    ok = np.abs(rb - rsb) > 1e-3 * rb
    m = 4 * rb * rsb / (rb + rsb) ** 2
    ref = (rb + rsb) / (2 * np.pi) * ((2 - m) * sc.ellipkm1(((rb - rsb) / (rb + rsb)) ** 2) - 2 * sc.ellipe(m))
    np.testing.assert_allclose(np.asarray(out)[ok], ref[ok], rtol=1e-9)
    assert isinstance(ring_kernel(1.0, 2.0), float)


def test_ring_kernel_bad_input():
    with pytest.raises(InputError, match="r_src"):
        ring_kernel(1.0, -2.0)
    with pytest.raises(InputError, match="r: must be finite"):
        ring_kernel(np.nan, 2.0)
    with pytest.raises(InputError, match="broadcast"):
        ring_kernel(np.ones(3), np.ones(4))


# --- the power-law ratio -------------------------------------------------------------------------------------


def test_power_law_ratio_values_and_identities():
    # Derived: docs/theory.md "Global flux" section 3, from the Hankel-transform potential field (Bessel
    # integral DLMF 10.22.43); evaluated independently with mpmath.gamma. f(1) = 1 is the closed-form field
    # psi = sqrt(R^2 + z^2) - z (45 degree field lines).
    mpmath.mp.dps = 30
    n = np.array([0.05, 0.3, 0.5, 1.0, 1.3, 1.7, 1.95])
    g = mpmath.gamma
    ref = [float(g((x + 1) / 2) * g(1 - x / 2) / (g((3 - x) / 2) * g(x / 2))) for x in n]
    np.testing.assert_allclose(power_law_ratio(n), ref, rtol=1e-13)
    assert power_law_ratio(1.0) == pytest.approx(1.0, abs=1e-15)
    np.testing.assert_allclose(power_law_ratio(n) * power_law_ratio(2 - n), 1.0, rtol=1e-13)
    assert power_law_ratio(1e-6) == pytest.approx(1e-6, rel=1e-5)  # f(n) ~ n for small n
    with pytest.raises(InputError, match="n: must lie"):
        power_law_ratio(2.0)


# --- the discretised operator --------------------------------------------------------------------------------


def _kernel_scipy(r, rp):
    """Independent kernel: scipy.special ellipkm1/ellipe (Jackson 1999 eq. 5.37) near the ring, and
    scipy.special.hyp2f1 for Q_{1/2} (Cohl & Tohline 1999) in the far field where the former cancels."""
    chi = 0.5 * (r / rp + rp / r)
    if chi >= 1.5:
        return np.sqrt(r * rp) / np.pi * (np.pi / 2) * (2 * chi) ** -1.5 * sc.hyp2f1(1.25, 0.75, 2.0, chi**-2)
    m = 4 * r * rp / (r + rp) ** 2
    p = ((r - rp) / (r + rp)) ** 2
    return (r + rp) / (2 * np.pi) * ((2 - m) * sc.ellipkm1(p) - 2 * sc.ellipe(m))


def _tails(r_eval, r_in, r_out, b_rs):
    """psi at r_eval from sheet currents outside [r_in, r_out] by scipy.integrate.quad (in ln R')."""
    out = []
    for r in r_eval:
        f = lambda x, r=r: _kernel_scipy(r, np.exp(x)) * np.exp(x) * b_rs(np.exp(x))  # noqa: E731
        xi, xo = np.log(r_in), np.log(r_out)
        parts = [(xi - 40, xi - 1), (xi - 1, xi), (xo, xo + 1), (xo + 1, xo + 40)]
        out.append(sum(quad(f, lo, hi, limit=400, epsabs=0, epsrel=1e-10)[0] for lo, hi in parts))
    return np.array(out)


def test_point_source_pair_forward_and_inverse_second_order():
    # Derived: docs/theory.md "Global flux" section 2 (field of a point source at z = -h):
    # B_rs = R/(R^2+h^2)^(3/2), psi = 1 - h/sqrt(R^2+h^2). Currents outside the grid added by scipy quad.
    h = 1.0
    b_exact = lambda R: R / (R * R + h * h) ** 1.5  # noqa: E731
    psi_exact = lambda R: 1 - h / np.sqrt(R * R + h * h)  # noqa: E731
    fwd, inv = [], []
    for n in (61, 121, 241):
        r = np.geomspace(1e-3, 1e3, n)
        tail = _tails(r, r[0], r[-1], b_exact)
        psi = flux_function(r, b_exact(r), psi_ext=tail)
        sel = (r > 1e-2) & (r < 1e2)
        fwd.append(np.max(np.abs(psi[sel] / psi_exact(r[sel]) - 1)))
        b = surface_radial_field(r, psi_exact(r), psi_ext=tail)
        inv.append(np.max(np.abs(b[sel] / b_exact(r[sel]) - 1)))
    order_f = np.log2(np.array(fwd[:-1]) / np.array(fwd[1:]))
    order_i = np.log2(np.array(inv[:-1]) / np.array(inv[1:]))
    assert fwd[-1] < 2e-3 and inv[-1] < 2e-3
    assert np.all(order_f > 1.8) and np.all(order_i > 1.8), (fwd, inv)


@pytest.mark.parametrize("n_index", [0.5, 1.0, 1.5])
def test_power_law_surface_field_is_gamma_ratio(n_index):
    # Derived: docs/theory.md "Global flux" section 3: B_z = R^-n  <=>  B_rs = f(n) R^-n, psi = R^(2-n)/(2-n),
    # f from power_law_ratio (checked against mpmath above). Currents outside the grid added by scipy quad.
    f = power_law_ratio(n_index)
    b_exact = lambda R: f * R ** (-n_index)  # noqa: E731
    errs = []
    for n in (81, 161):
        r = np.geomspace(1.0, 1e4, n)
        tail = _tails(r, r[0], r[-1], b_exact)
        b = surface_radial_field(r, r ** (2 - n_index) / (2 - n_index), psi_ext=tail)
        sel = (r > 10) & (r < 1e3)
        errs.append(np.max(np.abs(b[sel] / b_exact(r[sel]) - 1)))
    assert errs[-1] < 1e-3
    assert errs[0] / errs[1] > 3.4, errs  # second order: about 4 per halving of the spacing


def test_operator_structure():
    # Derived: docs/theory.md "Global flux" section 2: G symmetric and homogeneous of degree 1, so on a
    # uniform log grid W_ij / R_i^2 depends on j - i only (away from the end hats).
    r = np.geomspace(1.0, 1e3, 40)
    w = flux_operator(r)
    s = w / r[:, None] ** 2
    np.testing.assert_allclose(np.diag(s[1:-1, 1:-1], 3), np.diag(s[1:-1, 1:-1], 3)[0], rtol=1e-12)
    r_uneven = np.sort(np.concatenate([r, [3.3, 47.0]]))
    w2 = flux_operator(r_uneven)  # general path
    assert w2.shape == (42, 42) and np.all(np.isfinite(w2))


def test_operator_bad_input():
    with pytest.raises(InputError, match="r: must be strictly increasing"):
        flux_operator([1.0, 3.0, 2.0])
    with pytest.raises(InputError, match="r: must be positive"):
        flux_operator([-1.0, 1.0, 2.0])
    with pytest.raises(InputError, match="psi: must be finite"):
        surface_radial_field([1.0, 2.0, 3.0], [0.0, np.nan, 1.0])
    assert math.isclose(float(surface_radial_field([1.0, 2.0, 3.0], [1.0, 1.0, 1.0], psi_ext=1.0)[1]), 0.0)


def test_quantity_and_float32_inputs():
    # Source: astropy.units conversion km -> cm; G is homogeneous of degree 1 (docs/theory.md "Global flux" 2).
    import astropy.units as u

    assert ring_kernel(1 * u.km, 2 * u.km) == pytest.approx(1e5 * ring_kernel(1.0, 2.0), rel=1e-14)
    r32 = np.geomspace(1.0, 100.0, 30).astype(np.float32)
    w32 = flux_operator(r32)
    w64 = flux_operator(r32.astype(np.float64))
    np.testing.assert_array_equal(w32, w64)
    assert w32.dtype == np.float64
