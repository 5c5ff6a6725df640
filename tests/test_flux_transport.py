"""Transport speeds from turbulence templates scaled with an alpha disk, fed to the global flux model."""

import math

import numpy as np
import pytest
from fluxfunnel import InputError
from fluxfunnel import constants as k
from fluxfunnel.disk import AlphaDisk
from fluxfunnel.flux import FluxModel, TurbulenceTemplate, critical_radius, transport_speeds

# The disks of these tests are chosen for the transport physics; some are cooler than the ionisation
# temperature, which the disk model flags with AssumptionWarning (tested in test_disk.py). The transport
# checks do not depend on the thermal assumptions, so that warning is not an error here.
pytestmark = pytest.mark.filterwarnings("ignore::fluxfunnel.disk.AssumptionWarning")

R = np.geomspace(3e9, 3e12, 161)


def _disk(alpha):
    # An invented system: a solar-mass accretor at 1e17 g/s with its inner edge at 1e9 cm.
    return AlphaDisk(k.M_SUN, 1e17, alpha, r_in=1e9)


def test_plain_diffusion_reproduces_local_lpp94_balance():
    # Derived: docs/theory.md "Global flux" section 1 with uniform eta: u_dif = eta/H, u_adv = v_r, so the
    # steady ratio is |v_r| H / eta (Lubow, Papaloizou & Pringle 1994 local balance), from the disk's own
    # profiles; and B_r/B_z grows linearly with height (its value at H is twice that at H/2).
    disk = _disk(0.1)
    sp = transport_speeds(disk, TurbulenceTemplate.plain_diffusion(2.0), R)
    eta = disk.viscosity(R) / 2.0
    np.testing.assert_allclose(sp.u_dif, eta / disk.scale_height(R), rtol=1e-10)
    np.testing.assert_allclose(sp.u_adv, disk.radial_velocity(R), rtol=1e-10)
    lpp = -disk.radial_velocity(R) * disk.scale_height(R) / eta
    np.testing.assert_allclose(sp.steady_tan_inclination, lpp, rtol=1e-10)
    np.testing.assert_allclose(sp.u_dif_diffusion_only, sp.u_dif, rtol=0)
    mid = sp.zeta.size // 2
    np.testing.assert_allclose(sp.b_r_over_b_z[:, -1] / sp.b_r_over_b_z[:, mid], 2.0, rtol=1e-10)


def test_uniform_rise_gives_the_peclet_factor():
    # Derived: PHYSICS.md 1.3 (1.4b), uniform eta and v_z: u_dif = (eta/h) Pe / (e^Pe - 1), Pe = v_z h / eta.
    disk = _disk(0.1)
    def rise(z, b):
        return np.full(np.broadcast_shapes(z.shape, b.shape), 0.05)

    template = TurbulenceTemplate(name="uniform rise", pm=1.0, eta_shape=np.ones_like, vertical={"pumping": rise})
    sp = transport_speeds(disk, template, R[::20])
    h, c_s = disk.scale_height(R[::20]), disk.sound_speed(R[::20])
    eta = disk.viscosity(R[::20])
    pe = 0.05 * c_s * h / eta
    np.testing.assert_allclose(sp.u_dif, eta / h * pe / np.expm1(pe), rtol=1e-7)
    np.testing.assert_allclose(sp.u_dif_by_mechanism["pumping"], sp.u_dif, rtol=0)


def test_plain_diffusion_drags_little_buoyancy_drags_much_more_for_weak_fields():
    # Common practice (no single source) / PHYSICS.md 1.4: with eta = nu/Pm and Pm ~ 1 the field is barely
    # dragged (bending of order H/R); vertical transport that grows with height suppresses outward
    # diffusion and drags flux in. Template of the buoyant kind is our illustrative default.
    disk = _disk(0.02)
    k10 = np.searchsorted(R, 1e10)
    out = {}
    templates = {"plain": TurbulenceTemplate.plain_diffusion(1.0), "buoyant": TurbulenceTemplate.buoyant(1.0)}
    for name, template in templates.items():
        for b_ext in (1e-3, 3.0):
            sp = transport_speeds(disk, template, R, b_z=b_ext)
            sol = FluxModel(R, u_adv=sp.u_adv, u_dif=sp.u_dif, external_field=b_ext).steady_state()
            out[name, b_ext] = (sp, sol, sol.b_z[0, k10] / b_ext)
    sp, sol, compression = out["plain", 1e-3]
    assert compression < 2.0
    assert np.all(np.abs(sol.inclination[0, 5:-10]) < 10.0)
    assert not critical_radius(sol).reached
    sp_b, sol_b, compression_b = out["buoyant", 1e-3]
    assert compression_b > 100 * compression
    mid = sp_b.zeta.size // 2
    assert np.median(sp_b.b_r_over_b_z[:, -1] / sp_b.b_r_over_b_z[:, mid]) > 10.0  # bending grows with height
    assert critical_radius(sol_b).reached
    assert out["buoyant", 1e-3][2] > out["buoyant", 3.0][2]  # weak fields dragged more than strong ones
    # Source: beta = 8 pi P / B^2 (standard definition), against the disk's midplane pressure.
    np.testing.assert_allclose(sp.beta, 8 * math.pi * disk.midplane_pressure(R) / 1e-3**2, rtol=1e-12)


def test_transport_speeds_bad_input():
    disk = _disk(0.1)
    with pytest.raises(InputError, match="template"):
        transport_speeds(disk, "plain", R)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="pm"):
        transport_speeds(disk, TurbulenceTemplate.plain_diffusion(), R, pm=-1.0)
    with pytest.raises(InputError, match="b_z"):
        transport_speeds(disk, TurbulenceTemplate.plain_diffusion(), R, b_z=0.0)
    with pytest.raises(InputError, match="amplitude"):
        TurbulenceTemplate.buoyant(amplitude=-0.1)
    with pytest.raises(InputError, match="r: must be strictly increasing"):
        transport_speeds(disk, TurbulenceTemplate.plain_diffusion(), R[::-1])
