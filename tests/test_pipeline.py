"""The scenario pipeline and the `fluxfunnel run` command."""

import textwrap

import numpy as np
import pytest
import xarray as xr
from fluxfunnel import cli, pipeline
from fluxfunnel.scenario import parse_scenario

SCENARIO = textwrap.dedent(
    """\
    [system]
    name = "Orrin-2"
    kind = "white_dwarf"
    mass = "0.8 solMass"

    [accretion]
    mdot = 1e17

    [disk]
    alpha = 0.05
    n_radii = 64

    [turbulence]
    template = "diffusion"
    magnetic_prandtl = 1.0
    n_heights = 33

    [environment]
    field = 0.5

    [output]
    folder = "out"
    """
)


@pytest.mark.filterwarnings("ignore::fluxfunnel.disk.AssumptionWarning")
def test_plain_diffusion_scenario_matches_the_local_balance(tmp_path):
    res = pipeline.run_scenario(parse_scenario(SCENARIO))
    # Source: Lubow, Papaloizou & Pringle 1994: with uniform eta = nu/Pm and no vertical transport the steady
    # bending is |v_r| H / eta (= 1.5 Pm H/R away from the inner edge): a few degrees, well below 30.
    d, r = res.disk, res.r
    expected = np.abs(d.radial_velocity(r)) * d.scale_height(r) / d.viscosity(r)
    np.testing.assert_allclose(np.abs(res.speeds.steady_tan_inclination), expected, rtol=1e-6)
    assert np.all(expected[r > 3 * r[0]] < 0.3)
    assert not res.can_launch
    # Source: Nauenberg 1972 white-dwarf radius sets the inner edge of a non-magnetic white dwarf's disk.
    assert res.inner_edge.set_by == "surface"
    assert "not reached" in pipeline.report(res)


def test_run_writes_report_netcdf_and_plot_and_netcdf_round_trips(tmp_path):
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO)
    assert cli.main(["run", str(p)]) == 0
    out = tmp_path / "out"
    names = sorted(f.name for f in out.iterdir())
    assert names == ["Orrin-2-flux.png", "Orrin-2-report.txt", "Orrin-2.nc"]
    assert (out / "Orrin-2-flux.png").stat().st_size > 10_000
    res = pipeline.run_scenario(parse_scenario(SCENARIO, source=p))
    ds = res.to_xarray()
    back = xr.load_dataset(out / "Orrin-2.nc", engine="h5netcdf")
    xr.testing.assert_identical(ds, back)  # no loss through netCDF: values, coordinates, units, attributes
    assert back["b_z"].attrs["units"] == "G" and back.attrs["Conventions"] == "CF-1.8"


@pytest.mark.parametrize(
    ("old", "new", "words"),
    [
        ('kind = "white_dwarf"', 'kind = "white dwarf"', "s.toml:3: system.kind: must be one of"),
        ("alpha = 0.05", "alpha = 5", "s.toml:10: disk.alpha: must lie strictly between 0 and 1"),
        ("n_radii = 64", "n_radii = 64.5", "s.toml:11: disk.n_radii: must be int"),
        ("field = 0.5", "fields = 0.5", "s.toml:19: environment.fields: unknown key"),
        ('template = "diffusion"', 'template = "snapshots"', "turbulence.snapshots: template = 'snapshots' needs"),
        ("mdot = 1e17", 'mdot = "1e17 kg"', "accretion.mdot: '1e17 kg' cannot be converted"),
    ],
)
def test_run_reports_bad_scenarios_with_key_and_line(tmp_path, capsys, old, new, words):
    p = tmp_path / "s.toml"
    text = SCENARIO.replace(old, new)
    assert text != SCENARIO
    p.write_text(text)
    assert cli.main(["run", str(p)]) == 2
    err = capsys.readouterr().err
    assert words in err
    assert not (tmp_path / "out").exists()  # nothing half-written


def test_run_explain_and_check(tmp_path, capsys):
    assert cli.main(["run", "--explain"]) == 0
    assert "box_sound_speed" in capsys.readouterr().out
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO)
    assert cli.main(["run", str(p), "--check"]) == 0
    assert "valid" in capsys.readouterr().out


def test_snapshot_template_scenario(tmp_path):
    from fluxfunnel import synthetic

    # Invented box data: isotropic synthetic turbulence in code units (c_s = 1, Omega = 1, H = 1).
    for seed in range(2):
        u = 0.1 * synthetic.solenoidal_field((12, 12, 16), spacing=(0.25, 0.25, 0.25), seed=seed)
        b = 0.2 * synthetic.solenoidal_field((12, 12, 16), spacing=(0.25, 0.25, 0.25), seed=100 + seed)
        rho = np.broadcast_to(np.exp(-0.5 * ((np.arange(16) - 7.5) * 0.25) ** 2), (12, 12, 16)).copy()
        np.savez(tmp_path / f"snap{seed}.npz", u=u, b=b, rho=rho)
    text = SCENARIO.replace(
        'template = "diffusion"',
        'template = "snapshots"\nsnapshots = ["snap0.npz", "snap1.npz"]\ndensity_dataset = "rho"\n'
        "box_sound_speed = 1.0\nbox_orbital_frequency = 1.0\nbox_spacing = [0.25, 0.25, 0.25]\n"
        "box_correlation_time = 0.7\neta_floor = 0.2",
    )
    p = tmp_path / "s.toml"
    p.write_text(text)
    res = pipeline.run_scenario(parse_scenario(text, source=p), progress=False)
    assert res.template == "from snapshots"
    assert np.all(np.isfinite(res.steady.psi))
