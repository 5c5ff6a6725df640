"""Population sweeps: the whole pipeline per system, vectorised over arrays of systems."""

import math
import warnings

import matplotlib
import numpy as np
import pytest
from conftest import sigint_after
from fluxfunnel import InputError
from fluxfunnel import constants as k
from fluxfunnel.disk import AlphaDisk, AssumptionWarning
from fluxfunnel.flux import FluxModel, TurbulenceTemplate, critical_radius, transport_speeds
from fluxfunnel.objects import CompactObject
from fluxfunnel.population import jet_capability, plot_capability_map

# The disks of these tests are chosen for the transport physics; some are cooler than the ionisation
# temperature, which the disk model flags with AssumptionWarning (tested in test_disk.py). The transport
# checks do not depend on the thermal assumptions, so that warning is not an error here.
pytestmark = pytest.mark.filterwarnings("ignore::fluxfunnel.disk.AssumptionWarning")

matplotlib.use("Agg")


def _bpt72_isco(spin):
    # Source: Bardeen, Press & Teukolsky 1972, prograde ISCO in units of GM/c^2.
    z1 = 1 + (1 - spin**2) ** (1 / 3) * ((1 + spin) ** (1 / 3) + (1 - spin) ** (1 / 3))
    z2 = math.sqrt(3 * spin**2 + z1**2)
    return 3 + z2 - math.sqrt((3 - z1) * (3 + z1 + 2 * z2))


def test_sweep_matches_the_single_system_pipeline_and_uses_isco_edges():
    masses = np.array([5.0, 20.0])[:, None] * k.M_SUN
    bh = CompactObject.black_hole(masses, 0.7)
    mdot = np.array([1e16, 1e17])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", AssumptionWarning)
        res = jet_capability(bh, mdot, 10.0, alpha=0.02, n_r=80)
    assert (len(caught) == 1) == (not res.disk_valid.all())  # one summary warning, only when needed
    assert res.can_launch.shape == (2, 2) and np.all(res.set_by == "isco")
    r_g = k.G * masses[:, 0] / k.C**2
    np.testing.assert_allclose(res.inner_radius[:, 0], _bpt72_isco(0.7) * r_g, rtol=1e-10)
    # the same system by hand, stage by stage
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AssumptionWarning)
        disk = AlphaDisk(masses[1, 0], mdot[0], 0.02, r_in=res.inner_radius[1, 0])
        r = np.geomspace(1.1 * res.inner_radius[1, 0], 1e11, 80)
        sp = transport_speeds(disk, TurbulenceTemplate.buoyant(1.0), r, b_z=10.0)
    sol = FluxModel(r, u_adv=sp.u_adv, u_dif=sp.u_dif, external_field=10.0).steady_state()
    cr = critical_radius(sol)
    assert res.can_launch[1, 0] == cr.reached
    assert res.critical_radius[1, 0] == pytest.approx(cr.radius, rel=1e-12, nan_ok=True)
    assert res.flux_inner[1, 0] == pytest.approx(sol.flux_inner[0], rel=1e-12)
    assert res.disk_valid[1, 0] == bool(np.all(disk.validity(r).holds))


@pytest.mark.parametrize("template", [TurbulenceTemplate.buoyant(1.0), TurbulenceTemplate.plain_diffusion(3.0)])
def test_rust_sweep_matches_the_python_pipeline(template):
    # Two implementations of the same pipeline (Rust end to end vs the Python stage API) must agree.
    bh = CompactObject.black_hole(np.array([5.0, 20.0])[:, None] * k.M_SUN, 0.5)
    mdot = np.array([1e16, 1e17, 1e18])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AssumptionWarning)
        fast = jet_capability(bh, mdot, 1.0, alpha=0.02, template=template, engine="rust", n_r=64)
        slow = jet_capability(bh, mdot, 1.0, alpha=0.02, template=template, engine="python", n_r=64)
    np.testing.assert_array_equal(fast.can_launch, slow.can_launch)
    np.testing.assert_allclose(fast.critical_radius, slow.critical_radius, rtol=1e-10)
    np.testing.assert_allclose(fast.flux_inner, slow.flux_inner, rtol=1e-10)
    np.testing.assert_allclose(fast.inner_tan_inclination, slow.inner_tan_inclination, rtol=1e-10)
    np.testing.assert_array_equal(fast.disk_valid, slow.disk_valid)
    with pytest.raises(InputError, match="engine"):
        jet_capability(bh, mdot, 1.0, alpha=0.02, criterion="beta", engine="rust")


def test_white_dwarf_edge_is_its_surface_and_plain_diffusion_cannot_launch():
    # Source: Nauenberg 1972 mass-radius relation via the objects stage sets the white-dwarf edge.
    # Common practice (no single source): plain diffusion with Pm ~ 1 bends field lines by ~H/R only.
    wd = CompactObject.white_dwarf(np.array([0.6, 1.0]) * k.M_SUN)
    res = jet_capability(wd, 1e17, 1.0, alpha=0.02, template=TurbulenceTemplate.plain_diffusion(1.0), n_r=64)
    np.testing.assert_allclose(res.inner_radius, wd.radius, rtol=1e-12)
    assert np.all(res.set_by == "surface") and not res.can_launch.any()
    assert np.all(np.isnan(res.critical_radius))
    assert np.all(res.inner_tan_inclination < math.tan(math.radians(30)))
    single = jet_capability(CompactObject.white_dwarf(0.6 * k.M_SUN), 1e17, 1.0, alpha=0.02, n_r=32)
    assert single.can_launch.shape == () and single.inner_radius.shape == ()  # scalar systems stay scalar


# An in-process dask cluster can leave event-loop resources to the garbage collector when the machine is busy;
# those shutdown warnings say nothing about the results, which is what this test checks.
@pytest.mark.filterwarnings("ignore::ResourceWarning", "ignore::pytest.PytestUnraisableExceptionWarning")
def test_dask_distributed_gives_the_same_answer():
    distributed = pytest.importorskip("distributed")
    wd = CompactObject.white_dwarf(0.8 * k.M_SUN)
    local = jet_capability(wd, [1e16, 1e17], 1.0, alpha=0.02, n_r=48)
    with distributed.Client(processes=False, n_workers=1, threads_per_worker=2, dashboard_address=None) as client:
        remote = jet_capability(wd, [1e16, 1e17], 1.0, alpha=0.02, n_r=48, client=client)
    np.testing.assert_allclose(remote.critical_radius, local.critical_radius, rtol=1e-10)  # Rust vs Python path
    np.testing.assert_array_equal(remote.can_launch, local.can_launch)


def test_capability_map_plot():
    wd = CompactObject.white_dwarf(0.8 * k.M_SUN)
    mdot = np.geomspace(1e16, 1e17, 3)
    b = np.array([0.1, 1.0])
    res = jet_capability(wd, mdot[None, :], b[:, None], alpha=0.02, n_r=32)
    ax = plot_capability_map(res, mdot, b, x_label="mdot [g/s]", y_label="B_ext [G]")
    assert ax.get_xscale() == "log" and ax.get_xlabel() == "mdot [g/s]"
    with pytest.raises(InputError, match="result"):
        plot_capability_map(res, mdot[:2], b)
    assert "JetCapability(shape=(2, 3)" in repr(res)


def test_population_bad_input():
    wd = CompactObject.white_dwarf(0.8 * k.M_SUN)
    with pytest.raises(InputError, match="objects"):
        jet_capability("wd", 1e17, 1.0, alpha=0.02)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="alpha"):
        jet_capability(wd, 1e17, 1.0, alpha=2.0)
    with pytest.raises(InputError, match="mdot"):
        jet_capability(wd, -1e17, 1.0, alpha=0.02)
    with pytest.raises(InputError, match="outer_radius"):
        jet_capability(wd, 1e17, 1.0, alpha=0.02, outer_radius=2e9)


def test_ctrl_c_stops_a_sweep():
    import signal
    import time

    if not hasattr(signal, "SIGINT"):
        pytest.skip("needs POSIX signals")
    # Enough systems that the sweep lasts far longer than the 0.3 s before the signal on any machine.
    wd = CompactObject.white_dwarf(np.linspace(0.5, 1.2, 200_000) * k.M_SUN)
    start = time.monotonic()
    with sigint_after(0.3):
        with pytest.raises(KeyboardInterrupt):
            jet_capability(wd, 1e17, 1.0, alpha=0.02, n_r=64, workers=2)
    assert time.monotonic() - start < 5.0
