"""The `fluxfunnel demo` command writes its report and plot."""

import re

import numpy as np
import pytest
from fluxfunnel import cli
from fluxfunnel import constants as k
from fluxfunnel.demo import SYSTEMS


def test_demo_writes_report_and_plot(tmp_path, capsys):
    out = tmp_path / "demo"
    assert cli.main(["demo", "--out", str(out)]) == 0
    report = (out / "report.txt").read_text(encoding="utf-8")
    assert "model prediction" in report
    for system in SYSTEMS:
        assert system.name in report
    png = (out / "disk_structure.png").read_bytes()
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and len(png) > 10_000
    assert "Quillon X-3" in capsys.readouterr().out
    # The black hole's printed inner edge is its ISCO. Source: Bardeen, Press & Teukolsky 1972 formula,
    # evaluated here with NumPy for the demo's spin 0.7 and 8.2 M_sun.
    a = 0.7
    z1 = 1 + np.cbrt(1 - a**2) * (np.cbrt(1 + a) + np.cbrt(1 - a))
    z2 = np.sqrt(3 * a**2 + z1**2)
    isco = k.G * 8.2 * k.M_SUN / k.C**2 * (3 + z2 - np.sqrt((3 - z1) * (3 + z1 + 2 * z2)))
    match = re.search(r"Quillon X-3.*?\n  inner edge r_in = (\S+) cm, set by the isco", report)
    assert match is not None
    assert float(match.group(1)) == pytest.approx(isco, rel=1e-4)
    # The white dwarf's disk stops at its surface, of order 1e9 cm. Common practice (no single source).
    match = re.search(r"Marrowby CV.*?\n  inner edge r_in = (\S+) cm, set by the surface", report)
    assert match is not None and 3e8 < float(match.group(1)) < 3e9
    assert re.search(r"Tarnwell A.*?\n  inner edge r_in = \S+ cm, set by the magnetosphere", report)


def test_demo_runs_the_whole_chain(tmp_path):
    out = tmp_path / "demo"
    assert cli.main(["demo", "--out", str(out)]) == 0
    report = (out / "report.txt").read_text(encoding="utf-8")
    assert "Turbulence -> coefficients" in report and "Flux transport and critical radius" in report
    png = (out / "transport.png").read_bytes()
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and len(png) > 10_000
    # Source: Lubow, Papaloizou & Pringle 1994: plain diffusion with Pm ~ 1 bends field lines by an angle of order
    # H/r, far below the 30 degrees of Blandford & Payne 1982, for the thin black-hole and white-dwarf disks.
    for name in ("Quillon X-3", "Marrowby CV"):
        row = re.search(rf"  {name}\s+plain Pm=1\s+\S+\s+\S+\s+\S+\s+(\S+)\s+(.*)", report)
        assert row is not None
        assert float(row.group(1)) < 15.0 and row.group(2).strip() == "not reached"


def test_demo_without_plots(tmp_path):
    assert cli.main(["demo", "--out", str(tmp_path), "--no-plots"]) == 0
    assert (tmp_path / "report.txt").exists()
    assert not (tmp_path / "disk_structure.png").exists()
