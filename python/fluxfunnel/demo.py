"""The built-in demo: from synthetic turbulence to the critical radius of three invented systems.

``fluxfunnel demo`` calls `run`. The chain: an invented stratified turbulent box (synthetic solenoidal fields)
-> per-height statistics (`fluxfunnel.stats`) -> tau-closure coefficients (`fluxfunnel.closure`) -> a turbulence
template in disk units -> for each of three invented systems (a black hole fed by a companion, an accreting
white dwarf, a young star): the disk, its inner edge, the bending of field lines and the flux transport speeds
(`fluxfunnel.vertical` through `fluxfunnel.flux.transport_speeds`), the steady flux distribution with the
current-free field outside the disk, and the critical radius. The plain-diffusion template (Pm = 1) is run
beside it for comparison. The systems and the box are made up for illustration; every number printed is a
model prediction under the stated assumptions, not an observation.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from . import constants as k
from .disk import AlphaDisk, AssumptionWarning
from .objects import CompactObject, eddington_accretion_rate

if TYPE_CHECKING:
    from .closure import ClosureCoefficients
    from .flux import TurbulenceTemplate
    from .stats import TurbulenceProfiles

__all__ = ["run", "SYSTEMS", "DemoSystem", "RADIUS_FACTORS", "ALPHA", "ENVIRONMENT_FIELDS", "demo_box_template"]

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

ENVIRONMENT_FIELDS = {"Quillon X-3": 10.0, "Marrowby CV": 1.0, "Tarnwell A": 1.0e-2}
"""Invented poloidal field supplied far out [G]: from the companion's surface field, diluted (black hole and
white dwarf), or from the parent cloud, compressed (young star). Free parameters of the demo."""

BOX: dict[str, Any] = {"shape": (32, 32, 32), "height": 1.5, "u_rms": 0.35, "turbulent_beta": 10.0, "tau_omega": 0.7}
"""The invented turbulent box "Halden-1" in units c_s = Omega = H = 1: grid, half-height in H, velocity rms,
midplane turbulent beta and correlation time (common-practice magnitudes, no single source)."""

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
        lines.append(f"  {r[i]:10.3e} {fr:7.1f} {s:12.4e} {t:10.4e} {a:9.3e} {rho:12.4e} {v:11.3e} {b:10.3e}  {note}")
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


def demo_box_template(
    alpha: float = ALPHA,
) -> tuple[TurbulenceProfiles, ClosureCoefficients, TurbulenceTemplate]:
    """Make the invented box, its profiles, closure coefficients and turbulence template.

    Returns
    -------
    (profiles, coefficients, template)
        `fluxfunnel.stats.TurbulenceProfiles`, `fluxfunnel.closure.ClosureCoefficients` and
        `fluxfunnel.flux.TurbulenceTemplate`, all in box units (c_s = Omega = H = 1).
    """
    from . import closure, flux, stats, synthetic

    nx, ny, nz = BOX["shape"]
    top = BOX["height"]
    spacing = (2.0 * top / nz * 1.5, 2.0 * top / nz * 1.5, 2.0 * top / nz)
    z = stats.height_grid(nz, spacing[2])
    rho = np.broadcast_to(np.exp(-0.5 * z**2), (nx, ny, nz)).copy()
    # Velocity eddies stretched azimuthally (as in shear flows); magnetic eddies isotropic here, since stretched
    # magnetic eddies lower eta_yy (negative diffusion, see docs/theory.md "Closure 4").
    u = synthetic.solenoidal_field(
        (nx, ny, nz), spacing=spacing, k_peak=4.0, aspect=(1.0, 2.0, 1.0), helicity=-0.3, rms=BOX["u_rms"], seed=11
    )
    b_rms = float(np.sqrt(4.0 * np.pi * 2.0 / BOX["turbulent_beta"]))  # <b^2>/8pi = p_0/beta_t with p_0 = 1
    b = synthetic.solenoidal_field(
        (nx, ny, nz), spacing=spacing, k_peak=4.0, aspect=(1.0, 1.0, 1.0), helicity=-0.3, rms=b_rms, seed=12
    )
    profiles = stats.turbulence_profiles(u, b, rho=rho, spacing=spacing)
    state = closure.TurbulenceState.from_profiles(profiles, tau=BOX["tau_omega"], gravity=z, sound_speed=1.0)
    coefficients = closure.emf_coefficients(state, field_direction=(1.0, 0.0, 0.0))
    template = flux.template_from_profiles(
        profiles,
        sound_speed=1.0,
        omega=1.0,
        tau=BOX["tau_omega"],
        alpha=alpha,
        eta_floor=0.2,
        name="Halden-1 box through the closure",
    )
    return profiles, coefficients, template


def _transport_section(out: Path, plots: bool) -> list[str]:
    from . import flux

    profiles, coeffs, template = demo_box_template(ALPHA)
    z = profiles.z
    up = z > 0
    lines = [
        "Turbulence -> coefficients (invented box Halden-1, units c_s = Omega = H = 1, tau Omega = "
        f"{BOX['tau_omega']:g}; quasi-linear tau closure, pressure-projected Lorentz force):",
        "     z/H   N^b_yy   eta_yy[c_s H]  pump_kin  pump_mag  buoyancy  [c_s]",
    ]
    for i in np.flatnonzero(up)[:: max(1, int(up.sum()) // 5)]:
        lines.append(
            f"  {z[i]:6.2f}  {profiles.b_shape[i, 1, 1]:7.3f}  {coeffs.eta[i, 1, 1]:13.4e}  "
            f"{coeffs.pumping_kinetic[i, 2]:8.1e}  {coeffs.pumping_magnetic[i, 2]:8.1e}  {coeffs.buoyancy[i, 2]:8.1e}"
        )
    neg = np.asarray(coeffs.negative_diffusion)  # one flag per height
    if np.any(neg):
        lines.append(
            f"  negative diffusion at {int(np.sum(neg))} of {z.size} heights: regularised to 20% of the "
            "kinetic part in the template (eta_floor = 0.2)"
        )
    lines.append(
        f"  template: {template.name}, Pm = {template.pm:.3g} for alpha = {ALPHA:g}, "
        f"mechanisms: {', '.join(template.vertical) or 'none'}"
    )
    lines.append("")
    lines.append("Flux transport and critical radius (steady kinematic flux, current-free field outside the disk,")
    lines.append("criterion: surface inclination > 30 deg, Blandford & Payne 1982):")
    lines.append(
        "  system          template            B_ext[G]  r_in[cm]   B_z(r_in)/B_ext  i(r_in)[deg]  critical radius"
    )
    curves: dict[str, dict[str, np.ndarray]] = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AssumptionWarning)
        for system in SYSTEMS:
            edge = system.central.inner_edge(system.mdot)
            r_in = float(edge.radius)
            disk = AlphaDisk(system.central.mass, system.mdot, ALPHA, r_in=r_in)
            r = np.geomspace(1.1 * r_in, 1e4 * r_in, 120)
            b_ext = ENVIRONMENT_FIELDS[system.name]
            for label, tmpl in (
                ("box closure", template),
                ("plain Pm=1", flux.TurbulenceTemplate.plain_diffusion(1.0)),
            ):
                sp = flux.transport_speeds(disk, tmpl, r, b_z=b_ext)
                sol = flux.FluxModel(r, u_adv=sp.u_adv, u_dif=sp.u_dif, external_field=b_ext).steady_state()
                cr = flux.critical_radius(sol)
                k1 = int(np.searchsorted(r, 1.21 * r_in))
                verdict = f"{cr.radius:.3e} cm ({cr.radius / r_in:.3g} r_in)" if cr.reached else "not reached"
                lines.append(
                    f"  {system.name:<15} {label:<18} {b_ext:9.2g}  {r_in:9.3e}  {sol.b_z[0, k1] / b_ext:14.3g}  "
                    f"{sol.inclination[0, k1]:12.1f}  {verdict}"
                )
                curves[f"{system.name} ({label})"] = {"x": r / r_in, "incl": sol.inclination[0]}
    lines.append(
        "  (inner edges from the Kerr ISCO, the white dwarf's Nauenberg radius and the young star's "
        "magnetosphere; the dipole's own flux is not included in the flux model)"
    )
    lines.append("  Reading: in this kinematic model the steady inclination is set locally, by the template and H/r,")
    lines.append("  so a large inner radius does not by itself keep a white dwarf from its critical radius; the")
    lines.append("  common expectation that white-dwarf disks rarely launch jets is not reproduced by these numbers.")
    if plots:
        _plot_transport(out / "transport.png", profiles, coeffs, curves)
        lines.append("plot: transport.png (closure coefficients vs height; surface inclination vs radius)")
    return lines


def _plot_transport(
    path: Path, profiles: TurbulenceProfiles, coeffs: ClosureCoefficients, curves: dict[str, dict[str, np.ndarray]]
) -> None:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(11.0, 4.2), layout="constrained")
    FigureCanvasAgg(fig)
    ax_c, ax_i = fig.subplots(1, 2)
    z = profiles.z  # type: ignore[attr-defined]
    ax_c.plot(coeffs.pumping_kinetic[:, 2], z, label="pumping, kinetic")  # type: ignore[attr-defined]
    ax_c.plot(coeffs.pumping_magnetic[:, 2], z, label="pumping, magnetic")  # type: ignore[attr-defined]
    ax_c.plot(coeffs.buoyancy[:, 2], z, label="buoyancy (radial field)")  # type: ignore[attr-defined]
    ax_c.plot(10 * coeffs.eta[:, 1, 1], z, "k--", label="10 x eta_yy [c_s H]")  # type: ignore[attr-defined]
    ax_c.axvline(0.0, color="0.6", lw=0.8)
    ax_c.set_xlabel("vertical velocity [c_s]")
    ax_c.set_ylabel("z / H")
    ax_c.legend(fontsize=7)
    ax_c.set_title("closure coefficients of the invented box", fontsize=9)
    colours: dict[str, str] = {}
    for name, c in curves.items():
        system = name.split(" (")[0]
        colours.setdefault(system, f"C{len(colours)}")
        body = c["x"] < 0.7 * c["x"][-1]  # leave out the anchored outer edge's boundary layer
        ax_i.semilogx(
            c["x"][body], c["incl"][body], color=colours[system], ls="-" if "closure" in name else ":", label=name
        )
    ax_i.axhline(30.0, color="0.4", lw=0.8, ls="--")
    ax_i.set_xlabel("r / r_in")
    ax_i.set_ylabel("surface inclination [deg]")
    ax_i.legend(fontsize=6)
    ax_i.set_title("steady field-line inclination (model prediction)", fontsize=9)
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
    lines.append("")
    lines.extend(_transport_section(out, plots))
    text = "\n".join(lines) + "\n"
    (out / "report.txt").write_text(text, encoding="utf-8")
    print(text, end="")
    print(f"report written to {out / 'report.txt'}")
