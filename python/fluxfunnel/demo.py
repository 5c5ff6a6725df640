"""The built-in demo: three invented accreting systems, their inner edges and disk structure.

``fluxfunnel demo`` calls `run`. The systems are made up for illustration (names and numbers invented);
every number printed is a model prediction of a steady gas-pressure / Kramers-opacity alpha disk around
an idealised object, not an observation.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from . import constants as k
from .disk import AlphaDisk, AssumptionWarning
from .objects import CompactObject, eddington_accretion_rate

__all__ = ["run", "SYSTEMS", "DemoSystem", "RADIUS_FACTORS", "ALPHA"]

ALPHA = 0.1
"""Viscosity parameter used for every demo disk (common practice for ionised disks)."""
RADIUS_FACTORS = (1.5, 3.0, 10.0, 100.0, 1000.0)
"""Radii of the printed table, in units of each system's inner edge."""


@dataclass(frozen=True)
class DemoSystem:
    """One invented system of the demo.

    Attributes
    ----------
    name : str
        Invented name.
    description : str
        One line on what it is.
    central : CompactObject
        The accreting object.
    mdot : float
        Accretion rate [g s^-1].
    """

    name: str
    description: str
    central: CompactObject
    mdot: float


SYSTEMS: tuple[DemoSystem, ...] = (
    DemoSystem(
        "Quillon X-3",
        "stellar-mass black hole (8.2 M_sun, spin 0.7) fed by a companion at 5% of its Eddington rate",
        CompactObject.black_hole(8.2 * k.M_SUN, 0.7),
        0.05 * eddington_accretion_rate(8.2 * k.M_SUN),
    ),
    DemoSystem(
        "Marrowby CV",
        "non-magnetic accreting white dwarf (0.75 M_sun, Nauenberg radius) at 3e16 g/s",
        CompactObject.white_dwarf(0.75 * k.M_SUN),
        3.0e16,
    ),
    DemoSystem(
        "Tarnwell A",
        "young star (0.6 M_sun, 2.3 R_sun, 1.5 kG dipole) accreting 2e-8 M_sun/yr",
        CompactObject.protostar(0.6 * k.M_SUN, 2.3 * k.R_SUN, 1.5e3),
        2.0e-8 * k.M_SUN / k.YEAR,
    ),
)
"""The three invented systems."""

_HEADER = (
    f"{'r [cm]':>10} {'r/r_in':>7} {'Sigma[g/cm2]':>12} {'T_c [K]':>10} {'H/r':>9} {'rho_c[g/cm3]':>12} "
    f"{'v_r [cm/s]':>11} {'B_eq [G]':>10}  assumptions"
)


def _system_report(system: DemoSystem) -> tuple[list[str], dict[str, np.ndarray]]:
    edge = system.central.inner_edge(system.mdot)
    disk = AlphaDisk(system.central.mass, system.mdot, ALPHA, r_in=edge.radius)
    lines = [
        f"{system.name}: {system.description}",
        f"  inner edge r_in = {edge.radius:.4e} cm, set by the {edge.set_by}"
        f" (truncation {edge.truncation_radius:.3e} cm, surface {edge.surface_radius:.3e} cm,"
        f" ISCO {edge.isco_radius:.3e} cm)",
        f"  steady alpha disk, alpha = {ALPHA}, mdot = {system.mdot:.3e} g/s",
        "  " + _HEADER,
    ]
    r = edge.radius * np.array(RADIUS_FACTORS)
    grid = edge.radius * np.logspace(np.log10(1.05), 3.5, 120)
    with warnings.catch_warnings():
        # The demo reports the assumption ratios itself, in the last column.
        warnings.simplefilter("ignore", AssumptionWarning)
        cols = [
            disk.surface_density(r),
            disk.midplane_temperature(r),
            disk.aspect_ratio(r),
            disk.midplane_density(r),
            disk.radial_velocity(r),
            disk.equipartition_field(r),
        ]
        curves = {
            "x": grid / edge.radius,
            "sigma": disk.surface_density(grid),
            "aspect": disk.aspect_ratio(grid),
            "holds": disk.validity(grid).holds,
        }
    valid = disk.validity(r)
    for i, fr in enumerate(RADIUS_FACTORS):
        if valid.holds[i]:
            note = "hold"
        else:
            parts = []
            if valid.radiation_to_gas_pressure[i] > 1:
                parts.append(f"P_rad/P_gas={valid.radiation_to_gas_pressure[i]:.2g}")
            if valid.scattering_to_kramers_opacity[i] > 1:
                parts.append(f"k_es/k_Kr={valid.scattering_to_kramers_opacity[i]:.2g}")
            if valid.optical_depth[i] < 1:
                parts.append(f"tau={valid.optical_depth[i]:.2g}")
            if valid.ionisation_to_midplane_temperature[i] > 1:
                parts.append(f"T_ion/T_c={valid.ionisation_to_midplane_temperature[i]:.2g}")
            note = "FAIL " + ", ".join(parts)
        s, t, a, rho, v, b = (c[i] for c in cols)
        lines.append(
            f"  {r[i]:10.3e} {fr:7.1f} {s:12.4e} {t:10.4e} {a:9.3e} {rho:12.4e} {v:11.3e} {b:10.3e}  {note}"
        )
    if not valid.holds.any():
        lines.append(
            "  note: the model's assumptions fail at every tabulated radius; read these numbers as indicative only"
        )
    return lines, curves


def _plot(path: Path, curves: dict[str, dict[str, np.ndarray]]) -> None:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(9.0, 4.0), layout="constrained")
    FigureCanvasAgg(fig)
    ax_s, ax_h = fig.subplots(1, 2)
    for name, c in curves.items():
        # Full curve faint; the part where the model's assumptions hold drawn solid on top.
        (line,) = ax_s.loglog(c["x"], c["sigma"], alpha=0.3, lw=1.0)
        colour = line.get_color()
        ax_h.loglog(c["x"], c["aspect"], color=colour, alpha=0.3, lw=1.0)
        ax_s.loglog(c["x"], np.where(c["holds"], c["sigma"], np.nan), color=colour, label=name)
        ax_h.loglog(c["x"], np.where(c["holds"], c["aspect"], np.nan), color=colour)
    ax_s.set_xlabel("r / r_in")
    ax_s.set_ylabel("surface density [g cm$^{-2}$]")
    ax_h.set_xlabel("r / r_in")
    ax_h.set_ylabel("aspect ratio H / r")
    ax_s.legend(fontsize=8)
    fig.suptitle(
        "Model predictions: steady alpha disks of three invented systems (faint: the model's assumptions fail)",
        fontsize=9,
    )
    fig.savefig(path, dpi=110)


def run(out: Path, *, plots: bool = True) -> None:
    """Run the demo: print and write ``report.txt`` (and ``disk_structure.png``) into ``out``.

    Parameters
    ----------
    out : Path
        Folder for the report and the plot; created if missing.
    plots : bool, keyword-only
        Write the PNG plot (needs matplotlib).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as tmp:  # doctest: +SKIP
    ...     run(pathlib.Path(tmp), plots=False)
    """
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    lines = [
        "fluxfunnel demo: three invented accreting systems",
        "",
        "Every number below is a model prediction, not an observation: a steady, Keplerian, optically thick",
        "Shakura-Sunyaev disk with gas pressure and Kramers opacity (midplane convention: Gaussian profile),",
        "around idealised objects (Kerr ISCO, cold Nauenberg white dwarf, aligned dipole truncating the disk",
        "at half the spherical Alfven radius). The last column says where the disk model's own assumptions",
        "fail; the values printed there are still those of the gas-pressure / Kramers model.",
        "",
    ]
    curves = {}
    for system in SYSTEMS:
        block, curve = _system_report(system)
        lines.extend(block)
        lines.append("")
        curves[system.name] = curve
    if plots:
        png = out / "disk_structure.png"
        _plot(png, curves)
        lines.append(f"plot: {png.name} (surface density and H/r against r/r_in)")
    text = "\n".join(lines) + "\n"
    (out / "report.txt").write_text(text, encoding="utf-8")
    print(text, end="")
    print(f"report written to {out / 'report.txt'}")
