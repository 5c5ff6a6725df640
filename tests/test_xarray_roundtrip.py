"""Every result object's `.to_xarray()` survives a netCDF round trip unchanged (issue: labelled data)."""

import numpy as np
import pytest
import xarray as xr
from fluxfunnel import constants as k
from fluxfunnel import flux, population, vertical
from fluxfunnel.disk import AlphaDisk
from fluxfunnel.objects import CompactObject

pytestmark = pytest.mark.filterwarnings("ignore::fluxfunnel.disk.AssumptionWarning")


def _round_trip(ds, tmp_path, name):
    path = tmp_path / f"{name}.nc"
    ds.to_netcdf(path, engine="h5netcdf")
    back = xr.load_dataset(path, engine="h5netcdf")
    xr.testing.assert_identical(ds, back)
    return back


def test_bend_result(tmp_path):
    z = np.linspace(0.0, 1e9, 33)
    res = vertical.bend_profile(z, eta=np.full((4, 33), 1e14), v_r=-1e3, surface_ratio="steady")
    back = _round_trip(res.to_xarray(), tmp_path, "bend")
    assert back["u_adv"].attrs["units"] == "cm s-1" and back["b_r_over_b_z"].shape == (4, 33)


def test_transport_speeds_and_population(tmp_path):
    disk = AlphaDisk(k.M_SUN, 1e17, 0.05, r_in=1e9)
    sp = flux.transport_speeds(disk, flux.TurbulenceTemplate.buoyant(1.0), np.geomspace(2e9, 1e11, 16))
    _round_trip(sp.to_xarray(), tmp_path, "speeds")
    jc = population.jet_capability(CompactObject.white_dwarf(0.8 * k.M_SUN), [1e16, 1e17], 1.0, alpha=0.05, n_r=32)
    back = _round_trip(jc.to_xarray(), tmp_path, "population")
    np.testing.assert_array_equal(back["can_launch"].values.astype(bool), jc.can_launch)
