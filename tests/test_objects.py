"""fluxfunnel.objects against published formulas, independent root solves and reference libraries."""

import math

import astropy.units as u
import hypothesis.extra.numpy as hnp
import numpy as np
import pytest
from fluxfunnel import InputError
from fluxfunnel import constants as k
from fluxfunnel import objects as o
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from scipy.optimize import brentq, minimize_scalar

M10 = 10 * k.M_SUN


def test_isco_limits():
    # Source: Bardeen, Press & Teukolsky 1972: a = 0 -> 6, a = 1 -> 1 (prograde) and 9 (retrograde) GM/c^2.
    rg = o.gravitational_radius(M10)
    assert o.isco_radius(M10) / rg == pytest.approx(6.0, rel=1e-14)
    assert o.isco_radius(M10, 0.0, prograde=False) / rg == pytest.approx(6.0, rel=1e-14)
    assert o.isco_radius(M10, 1.0) / rg == pytest.approx(1.0, rel=1e-12)
    assert o.isco_radius(M10, 1.0, prograde=False) / rg == pytest.approx(9.0, rel=1e-14)


@pytest.mark.parametrize("spin", [0.1, 0.3, 0.5, 0.7, 0.9, 0.99, 0.998])
@pytest.mark.parametrize("prograde", [True, False])
def test_isco_matches_root_of_marginal_stability(spin, prograde):
    # Source: Bardeen, Press & Teukolsky 1972, marginal stability of equatorial circular orbits
    # r^2 - 6 r +/- 8 a r^(1/2) - 3 a^2 = 0 (units GM/c^2; upper sign prograde), solved by brentq.
    s = 1.0 if prograde else -1.0

    def condition(r):
        return r * r - 6 * r + s * 8 * spin * math.sqrt(r) - 3 * spin * spin

    lo, hi = (1.0 + 1e-12, 6.0) if prograde else (6.0, 9.0)
    root = brentq(condition, lo, hi, xtol=1e-15, rtol=1e-15)
    got = o.isco_radius(k.M_SUN, spin, prograde=prograde) / o.gravitational_radius(k.M_SUN)
    assert got == pytest.approx(root, rel=1e-12)


@pytest.mark.parametrize("spin", [0.0, 0.4, 0.8])
def test_isco_is_the_minimum_of_circular_orbit_energy(spin):
    # Source: Bardeen, Press & Teukolsky 1972 eq. (2.12), specific energy of prograde circular orbits
    # E = (r^(3/2) - 2 r^(1/2) + a) / (r^(3/4) (r^(3/2) - 3 r^(1/2) + 2 a)^(1/2)) (form recalled; its minimum
    # over r is the ISCO). A bounded scalar minimisation locates it to about sqrt(machine epsilon).
    def energy(r):
        return (r**1.5 - 2 * r**0.5 + spin) / (r**0.75 * math.sqrt(r**1.5 - 3 * r**0.5 + 2 * spin))

    best = minimize_scalar(energy, bounds=(2.0, 12.0), method="bounded", options={"xatol": 1e-10})
    got = o.isco_radius(k.M_SUN, spin) / o.gravitational_radius(k.M_SUN)
    assert got == pytest.approx(best.x, rel=1e-4)


def test_gravitational_and_horizon_radii():
    # Source: astropy.constants (CODATA 2018 G, c; IAU 2015 M_sun): r_g = G M / c^2.
    from astropy.constants import G, M_sun, c

    assert o.gravitational_radius(k.M_SUN) == pytest.approx((G * M_sun / c**2).cgs.value, rel=1e-12)
    # Source: Kerr horizon r_+ = M (1 + sqrt(1 - a^2)): 2 r_g at a = 0, r_g at a = 1.
    rg = o.gravitational_radius(k.M_SUN)
    assert o.horizon_radius(k.M_SUN, 0.0) == pytest.approx(2 * rg, rel=1e-15)
    assert o.horizon_radius(k.M_SUN, 1.0) == pytest.approx(rg, rel=1e-15)


def _lane_emden(n):
    """First zero xi_1 and -xi_1^2 theta'(xi_1) of the Lane-Emden equation, by scipy's solve_ivp."""
    x0 = 1e-6

    def rhs(x, y):
        return [y[1], -max(y[0], 0.0) ** n - 2 * y[1] / x]

    def surface(x, y):
        return y[0]

    surface.terminal = True
    sol = solve_ivp(rhs, [x0, 20], [1 - x0**2 / 6, -x0 / 3], rtol=1e-12, atol=1e-14, events=surface)
    xi1 = sol.t_events[0][0]
    return xi1, -(xi1**2) * sol.y_events[0][0][1]


def test_white_dwarf_low_mass_limit_is_the_n_3_2_polytrope():
    # Derived: docs/disk_and_objects.md section 2, from Chandrasekhar's non-relativistic degenerate
    # electron gas P = K rho^(5/3), K = (3/pi)^(2/3) h^2 / (20 m_e (mu_e m_u)^(5/3)), and the n = 3/2
    # Lane-Emden solution (solved here with scipy), which Nauenberg's fit must reproduce as M -> 0.
    n, mu_e = 1.5, 2.0
    xi1, w = _lane_emden(n)
    K = (3 / math.pi) ** (2 / 3) * k.H_PLANCK**2 / (20 * k.M_E * (mu_e * k.M_U) ** (5 / 3))
    rho_c = 1e4
    a = math.sqrt((n + 1) * K / (4 * math.pi * k.G) * rho_c ** (1 / n - 1))
    r_poly, m_poly = a * xi1, 4 * math.pi * a**3 * rho_c * w
    mass = 1e-3 * k.M_SUN
    expected = r_poly * (mass / m_poly) ** (-1 / 3)
    assert o.white_dwarf_radius(mass) == pytest.approx(expected, rel=5e-3)


def test_white_dwarf_limiting_mass_is_near_chandrasekhar():
    # Source: Chandrasekhar mass from the n = 3 Lane-Emden solution (scipy) with the ultra-relativistic
    # K = (3/pi)^(1/3) h c / (8 (mu_e m_u)^(4/3)); Nauenberg's M_3 = 5.816 M_sun / mu_e^2 sits within 1 %.
    xi1, w = _lane_emden(3.0)
    K = (3 / math.pi) ** (1 / 3) * k.H_PLANCK * k.C / (8 * (2.0 * k.M_U) ** (4 / 3))
    m_ch = 4 * math.pi * (K / (math.pi * k.G)) ** 1.5 * w
    with pytest.raises(InputError, match="mass: must lie below the limiting mass"):
        o.white_dwarf_radius(1.01 * 5.816 / 4 * k.M_SUN)
    assert 5.816 / 4 * k.M_SUN == pytest.approx(m_ch, rel=1e-2)
    assert o.white_dwarf_radius(0.999 * 5.816 / 4 * k.M_SUN) < 0.1 * o.white_dwarf_radius(0.6 * k.M_SUN)


def test_white_dwarf_radii_near_the_cv_rule_of_thumb():
    # Source: PHYSICS.md Part B section 5, the approximate form common in the CV literature
    # R = 7.8e8 cm [(1.44 M_sun/M)^(2/3) - (M/1.44 M_sun)^(2/3)]^(1/2), 1-3 % above Nauenberg (mem-M).
    for m in (0.6, 0.8, 1.0, 1.2):
        approx = 7.8e8 * ((1.44 / m) ** (2 / 3) - (m / 1.44) ** (2 / 3)) ** 0.5
        assert o.white_dwarf_radius(m * k.M_SUN) == pytest.approx(approx, rel=0.05)


def test_eddington_limits():
    # Source: astropy.constants (CODATA 2018 set, the one fluxfunnel cites; IAU 2015 M_sun):
    # L_Edd = 4 pi G M m_p c / sigma_T (pure hydrogen, Thomson scattering).
    from astropy.constants import M_sun
    from astropy.constants.codata2018 import G, c, m_p, sigma_T

    ref = (4 * math.pi * G * M_sun * m_p * c / sigma_T).cgs.value
    assert o.eddington_luminosity(k.M_SUN) == pytest.approx(ref, rel=1e-12)
    # Source: PHYSICS.md Part B section 7 (computed there): 1.257e38 erg/s and 1.40e18 g/s per M_sun at 0.1.
    assert o.eddington_luminosity(k.M_SUN) == pytest.approx(1.257e38, rel=1e-3)
    assert o.eddington_accretion_rate(k.M_SUN) == pytest.approx(1.40e18, rel=5e-3)
    assert o.eddington_accretion_rate(k.M_SUN, efficiency=0.2) == pytest.approx(ref / (0.2 * k.C**2), rel=1e-12)


def test_magnetospheric_radius_is_the_pressure_balance():
    # Source: Frank, King & Raine 2002 section 6.3 (form): B^2/8pi = rho v^2/2 with B = mu/r^3,
    # v = (2GM/r)^(1/2), rho v = Mdot/(4 pi r^2), solved here by brentq.
    mu, mass, mdot = 1e30, 1.4 * k.M_SUN, 1e17

    def balance(lr):
        r = math.exp(lr)
        v = math.sqrt(2 * k.G * mass / r)
        return math.log((mu / r**3) ** 2 / (8 * math.pi)) - math.log(0.5 * mdot / (4 * math.pi * r**2) * v)

    r_alfven = math.exp(brentq(balance, math.log(1e6), math.log(1e12), xtol=1e-14))
    assert o.magnetospheric_radius(mu, mass, mdot, xi=1.0) == pytest.approx(r_alfven, rel=1e-11)
    assert o.magnetospheric_radius(mu, mass, mdot) == pytest.approx(0.5 * r_alfven, rel=1e-11)
    # Source: PHYSICS.md Part B section 5 (computed from eq. 5.3 there).
    assert o.magnetospheric_radius(1e30, k.M_SUN, 1e16, xi=1.0) == pytest.approx(6.26e8, rel=2e-3)
    assert o.magnetospheric_radius(1e30, 1.4 * k.M_SUN, 1e16, xi=1.0) == pytest.approx(5.97e8, rel=2e-3)
    assert o.magnetospheric_radius(1e30, 1.4 * k.M_SUN, 1e17, xi=1.0) == pytest.approx(3.09e8, rel=2e-3)
    assert o.magnetospheric_radius(0.0, k.M_SUN, 1e16) == 0.0


def test_inner_edges_of_the_four_kinds():
    mdot_tt = 1e-8 * k.M_SUN / k.YEAR
    # Black hole: the ISCO. Source: Bardeen, Press & Teukolsky 1972.
    bh = o.CompactObject.black_hole(M10, 0.0).inner_edge(1e18)
    assert bh.set_by == "isco"
    assert bh.radius == pytest.approx(6 * o.gravitational_radius(M10), rel=1e-14)
    # Non-magnetic white dwarf: its surface, of order 1e9 cm. Common practice (no single source).
    wd = o.CompactObject.white_dwarf(0.8 * k.M_SUN).inner_edge(1e17)
    assert wd.set_by == "surface" and wd.radius == o.white_dwarf_radius(0.8 * k.M_SUN)
    assert 3e8 < wd.radius < 3e9
    # T Tauri star, 1 kG, 2 R_sun, 0.5 M_sun, 1e-8 M_sun/yr: r_m = 3.6 R_* (PHYSICS.md Part B section 5,
    # computed there from eq. 5.3 with xi = 0.5).
    star = o.CompactObject.protostar(0.5 * k.M_SUN, 2 * k.R_SUN, 1e3)
    tt = star.inner_edge(mdot_tt)
    assert tt.set_by == "magnetosphere"
    assert tt.radius / (2 * k.R_SUN) == pytest.approx(3.6, rel=0.02)
    # Weakly magnetised neutron star at high rate: 12 km < ISCO (12.4 km at 1.4 M_sun), so the ISCO.
    # Source: PHYSICS.md Part B section 5 (6 GM/c^2 = 12.4 km for 1.4 M_sun).
    ns = o.CompactObject.neutron_star(1.4 * k.M_SUN, surface_field=1e7).inner_edge(1e18)
    assert ns.set_by == "isco" and ns.radius == pytest.approx(12.4e5, rel=2e-3)
    # Arrays of rates give arrays of setters.
    edges = star.inner_edge(np.array([mdot_tt, 1e3 * mdot_tt]))
    assert list(edges.set_by) == ["magnetosphere", "surface"]
    assert "InnerEdge(radius=" in repr(tt) and "protostar" in repr(star)


def test_quantities_are_accepted_and_scalars_stay_scalars():
    rg = o.gravitational_radius(1.0 * u.M_sun)
    assert isinstance(rg, float)
    assert rg == pytest.approx(o.gravitational_radius(k.M_SUN), rel=1e-12)
    r = o.magnetospheric_radius(1e30 * u.G * u.cm**3, 1.4 * u.M_sun, 1e-9 * u.M_sun / u.yr)
    assert r == pytest.approx(o.magnetospheric_radius(1e30, 1.4 * k.M_SUN, 1e-9 * k.M_SUN / k.YEAR), rel=1e-3)
    with pytest.raises(InputError, match="mass: cannot convert"):
        o.gravitational_radius(1.0 * u.km)


@pytest.mark.parametrize(
    ("call", "arg"),
    [
        (lambda: o.gravitational_radius(-1.0), "mass"),
        (lambda: o.isco_radius(k.M_SUN, 1.2), "spin"),
        (lambda: o.isco_radius(k.M_SUN, -0.1), "spin"),
        (lambda: o.isco_radius(np.nan), "mass"),
        (lambda: o.isco_radius([k.M_SUN, k.M_SUN], [0.1, 0.2, 0.3]), "mass, spin"),
        (lambda: o.eddington_accretion_rate(k.M_SUN, efficiency=0.0), "efficiency"),
        (lambda: o.magnetospheric_radius(-1.0, k.M_SUN, 1e16), "magnetic_moment"),
        (lambda: o.magnetospheric_radius(1e30, k.M_SUN, [1e16, np.nan]), "mdot"),
        (lambda: o.magnetospheric_radius(1e30, [1.0, 2.0], [1e16, 1e17, 1e18]), "magnetic_moment, mass, mdot"),
        (lambda: o.white_dwarf_radius("heavy"), "mass"),
        (lambda: o.CompactObject.neutron_star(-k.M_SUN), "mass"),
        (lambda: o.CompactObject.black_hole(k.M_SUN, 1.5), "spin"),
        (lambda: o.CompactObject.protostar(k.M_SUN, 2 * k.R_SUN, -5.0), "surface_field"),
        (lambda: o.CompactObject.white_dwarf(k.M_SUN).inner_edge(-1.0), "mdot"),
    ],
)
def test_bad_input_names_the_argument(call, arg):
    with pytest.raises(InputError, match=f"^{arg}:"):
        call()


float_dtypes = st.sampled_from([np.float32, np.float64])


@settings(max_examples=40, deadline=None)
@given(shapes=hnp.mutually_broadcastable_shapes(num_shapes=2, max_dims=3, max_side=4), dtype=float_dtypes,
       data=st.data())
def test_isco_broadcasts_like_numpy(shapes, dtype, data):
    mass = data.draw(hnp.arrays(dtype, shapes.input_shapes[0], elements=st.floats(0.125, 1e5, width=32)))
    spin = data.draw(hnp.arrays(dtype, shapes.input_shapes[1], elements=st.floats(0.0, 1.0, width=32)))
    mass = (mass * k.M_SUN).astype(dtype)  # grams, still of the drawn dtype
    got = o.isco_radius(mass, spin)
    # Reference: the BPT72 formula evaluated with NumPy in float64 on the same inputs.
    m = mass.astype(np.float64)
    a = spin.astype(np.float64)
    z1 = 1 + np.cbrt(1 - a**2) * (np.cbrt(1 + a) + np.cbrt(1 - a))
    z2 = np.sqrt(3 * a**2 + z1**2)
    ref = k.G * m / k.C**2 * (3 + z2 - np.sqrt(np.maximum(3 - z1, 0) * (3 + z1 + 2 * z2)))
    assert np.shape(got) == shapes.result_shape
    np.testing.assert_allclose(got, ref, rtol=1e-12)


@settings(max_examples=40, deadline=None)
@given(shapes=hnp.mutually_broadcastable_shapes(num_shapes=3, max_dims=3, max_side=4), dtype=float_dtypes,
       data=st.data())
def test_magnetospheric_radius_broadcasts_like_numpy(shapes, dtype, data):
    mu = data.draw(hnp.arrays(dtype, shapes.input_shapes[0], elements=st.floats(1.0, 1e3, width=32)))
    m = data.draw(hnp.arrays(dtype, shapes.input_shapes[1], elements=st.floats(0.125, 10.0, width=32)))
    md = data.draw(hnp.arrays(dtype, shapes.input_shapes[2], elements=st.floats(1.0, 1e3, width=32)))
    mu, m, md = (mu * 1e30).astype(dtype), (m * k.M_SUN).astype(dtype), (md * 1e15).astype(dtype)
    got = o.magnetospheric_radius(mu, m, md)
    # Reference: FKR 2002 section 6.3 form, evaluated with NumPy in float64 on the same inputs.
    mu64, m64, md64 = (x.astype(np.float64) for x in (mu, m, md))
    ref = 0.5 * (mu64**4 / (2 * k.G * m64 * md64**2)) ** (1 / 7)
    assert np.shape(got) == shapes.result_shape
    np.testing.assert_allclose(got, ref, rtol=1e-12)


def test_objects_may_be_arrays():
    masses = np.array([5.0, 10.0, 20.0]) * k.M_SUN
    bh = o.CompactObject.black_hole(masses, np.array([0.0, 0.5, 0.9]))
    edge = bh.inner_edge(1e18)
    np.testing.assert_allclose(edge.radius, o.isco_radius(masses, [0.0, 0.5, 0.9]), rtol=1e-14)
    assert list(edge.set_by) == ["isco"] * 3
