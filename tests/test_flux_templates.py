"""Turbulence templates built from statistics through the closure stage."""

import types

import numpy as np
import pytest
from fluxfunnel import InputError
from fluxfunnel import constants as k
from fluxfunnel.disk import AlphaDisk
from fluxfunnel.flux import (
    TurbulenceTemplate,
    template_from_profiles,
    template_from_statistics,
    transport_speeds,
)

pytestmark = pytest.mark.filterwarnings("ignore::fluxfunnel.disk.AssumptionWarning")

ZETA = np.linspace(0.0, 2.0, 41)


def test_isotropic_diffusivity_sets_the_prandtl_number():
    # Source: Krause & Raedler 1980 (isotropic tau closure): eta_t = tau <u^2>/3; here in units of c_s H.
    u2, tau_om, alpha = 0.05, 0.8, 0.02
    t = template_from_statistics(ZETA, velocity_dispersion=u2, field_dispersion=0.0, tau_omega=tau_om, alpha=alpha)
    assert t.pm == pytest.approx(alpha / (tau_om * u2 / 3), rel=1e-12)
    np.testing.assert_allclose(t.eta_shape(ZETA), 1.0, rtol=1e-12)
    assert t.vertical == {}


def test_kinetic_pumping_runs_down_the_turbulence_gradient():
    # Source: Raedler 1968 (isotropic): gamma = -(1/2) grad eta_t, eta_t = tau <u^2>/3.
    # With <u^2>/c_s^2 = a + b zeta^2 the drift is -(tau Omega) b zeta / 3 (in c_s); the second-order
    # centred gradient of the closure stage is exact for a quadratic.
    a, b, tau_om = 0.02, 0.01, 0.5
    t = template_from_statistics(
        ZETA, velocity_dispersion=a + b * ZETA**2, field_dispersion=0.0, tau_omega=tau_om, alpha=0.02
    )
    v = t.vertical["pumping (kinetic)"](ZETA[1:-1], np.array([np.inf]))
    np.testing.assert_allclose(v, -tau_om * b * ZETA[1:-1] / 3, rtol=1e-9, atol=1e-14)


def test_buoyancy_of_isotropic_eddies_is_half_the_unprojected_drift():
    # Derived: docs/theory.md "Closure 5", from the pressure-projected tau closure (PHYSICS 4.3):
    # isotropic b gives v = tau g <b^2>/(24 pi rho c^2) = (tau Omega) zeta (<b^2>/(4 pi rho c_s^2))/6 in c_s.
    b2, tau_om = 0.04, 0.7
    t = template_from_statistics(ZETA, velocity_dispersion=0.03, field_dispersion=b2, tau_omega=tau_om, alpha=0.02)
    v = t.vertical["buoyancy"](ZETA, np.array([np.inf]))
    np.testing.assert_allclose(v, tau_om * ZETA * b2 / 6, rtol=1e-9, atol=1e-15)
    unproj = template_from_statistics(
        ZETA,
        velocity_dispersion=0.03,
        field_dispersion=b2,
        tau_omega=tau_om,
        alpha=0.02,
        closure_options={"closure": "unprojected"},
    )
    np.testing.assert_allclose(unproj.vertical["buoyancy"](ZETA[1:], np.array([1.0])), 2 * v[1:], rtol=1e-9)


def test_without_vertical_transport_the_closure_template_is_plain_diffusion():
    # Source: Lubow, Papaloizou & Pringle 1994 balance |v_r| H / eta, reached by both routes.
    disk = AlphaDisk(k.M_SUN, 1e17, 0.05, r_in=1e9)
    r = np.geomspace(2e9, 1e11, 12)
    t = template_from_statistics(
        np.linspace(0, 1, 33), velocity_dispersion=0.1, field_dispersion=0.0, tau_omega=1.0, alpha=0.05
    )
    a = transport_speeds(disk, t, r)
    b = transport_speeds(disk, TurbulenceTemplate.plain_diffusion(t.pm), r)
    np.testing.assert_allclose(a.u_adv, b.u_adv, rtol=1e-12)
    np.testing.assert_allclose(a.u_dif, b.u_dif, rtol=1e-12)


def test_magnetorotational_default_lifts_flux_and_bends_more_than_diffusion():
    # Common practice (no single source): magnetic pressure falling slower than gas pressure makes the
    # buoyant drift grow with height, so field lines bend more than the plain-diffusion H/R.
    disk = AlphaDisk(10 * k.M_SUN, 1e18, 0.02, r_in=1e7)
    r = np.geomspace(1.2e7, 1e10, 20)
    mri = TurbulenceTemplate.magnetorotational(0.02)
    assert "buoyancy" in mri.vertical and "pumping (kinetic)" not in mri.vertical
    sp = transport_speeds(disk, mri, r)
    plain = transport_speeds(disk, TurbulenceTemplate.plain_diffusion(mri.pm), r)
    assert np.all(sp.steady_tan_inclination > 5 * plain.steady_tan_inclination)


def test_from_profiles_matches_the_dimensionless_route():
    # Same statistics given in box units (c_s = 2e5 cm/s, Omega = 1e-3 1/s) and in disk units.
    c_s, om = 2e5, 1e-3
    h = c_s / om
    z = np.linspace(-2, 2, 41) * h
    zeta = z / h
    rho = 1e-9 * np.exp(-0.5 * zeta**2)
    u2 = 0.03 + 0.01 * zeta**2
    rey = np.einsum("z,ij->zij", u2 * c_s**2 / 3, np.eye(3))
    mxw = np.einsum("z,ij->zij", 0.05 * 4 * np.pi * rho * c_s**2 / 3, np.eye(3))
    shape = np.broadcast_to(np.eye(3) / 3, (41, 3, 3))
    prof = types.SimpleNamespace(z=z, reynolds=rey, maxwell=mxw, u_shape=shape, b_shape=shape, rho=rho)
    t1 = template_from_profiles(prof, sound_speed=c_s, omega=om, tau=0.7 / om, alpha=0.02)
    up = zeta > -1e-9  # upper half including the midplane
    t2 = template_from_statistics(
        np.maximum(zeta[up], 0.0),
        velocity_dispersion=rey[up] / c_s**2,
        field_dispersion=0.05 / 3 * np.broadcast_to(np.eye(3), (int(up.sum()), 3, 3)),
        tau_omega=0.7,
        alpha=0.02,
        u_shape=shape[up],
        b_shape=shape[up],
    )
    assert t1.pm == pytest.approx(t2.pm, rel=1e-12)
    assert set(t1.vertical) == set(t2.vertical) == {"pumping (kinetic)", "pumping (magnetic)", "buoyancy"}
    for m in t2.vertical:
        np.testing.assert_allclose(
            t1.vertical[m](zeta[up], np.ones(1)), t2.vertical[m](zeta[up], np.ones(1)), rtol=1e-12, atol=1e-15
        )


def test_negative_diffusion_is_reported_or_regularised():
    # Derived: docs/theory.md "Closure 4" (PHYSICS 3.5): azimuthally stretched magnetic eddies lower eta_yy by
    # (tau <b^2>/8 pi rho)(N_x - N_y); strong enough fields make it negative.
    kw = dict(
        velocity_dispersion=0.01, field_dispersion=0.5, tau_omega=1.0, alpha=0.02, b_shape=np.diag([0.45, 0.1, 0.45])
    )
    with pytest.raises(InputError, match="non-positive"):
        template_from_statistics(ZETA, **kw)
    t = template_from_statistics(ZETA, eta_floor=0.1, **kw)
    assert np.all(t.eta_shape(ZETA) > 0)
    with pytest.raises(InputError, match="zeta"):
        template_from_statistics(ZETA - 1, velocity_dispersion=0.01, field_dispersion=0.0, tau_omega=1.0, alpha=0.02)
    with pytest.raises(InputError, match="tau"):
        template_from_statistics(ZETA, velocity_dispersion=0.01, field_dispersion=0.0, tau_omega=-1.0, alpha=0.02)
    with pytest.raises(InputError, match="b_shape"):
        TurbulenceTemplate.magnetorotational(0.02, b_shape=(0.5, 0.5, 0.5))
