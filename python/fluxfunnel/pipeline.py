"""The whole chain for one scenario: object, disk, turbulence template, transport speeds, steady flux, verdict.

`run_scenario` takes a checked `fluxfunnel.scenario.Scenario` and returns a `ScenarioResult`; `write_outputs`
writes its text report, a netCDF file of every profile (CF-style names and units) and PNG plots, each file
through a temporary name so that nothing half-written is left behind. ``fluxfunnel run SCENARIO.toml`` is
these two calls. CGS units throughout. Every number is a model prediction: steady Shakura-Sunyaev disk,
quasi-linear mean-field closure (or the chosen template), thin disk, current-free field outside it,
kinematic flux transport.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._io import atomic_path, write_text_atomic
from .disk import AssumptionWarning
from .scenario import Scenario, ScenarioError

__all__ = ["ScenarioResult", "run_scenario", "write_outputs", "field_lines"]

Float = NDArray[np.float64]


@dataclass(frozen=True, repr=False)
class ScenarioResult:
    """Everything computed for one scenario.

    Attributes
    ----------
    name, kind : str
        System label and kind of central object.
    mass, mdot, external_field : float
        [g], [g s^-1], [G].
    inner_edge : fluxfunnel.objects.InnerEdge
        Inner radius of the disk and what set it.
    disk : fluxfunnel.disk.AlphaDisk
        The steady disk model.
    r : ndarray, shape (N,)
        Radii [cm].
    speeds : fluxfunnel.flux.TransportSpeeds
        Advection and diffusion speeds with their parts.
    steady : fluxfunnel.flux.FluxSolution
        Steady flux distribution.
    critical : fluxfunnel.flux.CriticalRadius
        Where the field becomes dominant by the scenario's criterion.
    beta : ndarray, shape (N,)
        Midplane plasma beta of the steady mean field.
    disk_valid : ndarray of bool, shape (N,)
        Where the disk model's own assumptions hold.
    dimensionless_flux : float
        Inner-edge flux over ``(Mdot r_g^2 c)^{1/2}`` (black holes; NaN otherwise).
    template : str
        Turbulence template name.
    """

    name: str
    kind: str
    mass: float
    mdot: float
    external_field: float
    inner_edge: Any
    disk: Any
    r: Float
    speeds: Any
    steady: Any
    critical: Any
    beta: Float
    disk_valid: NDArray[np.bool_]
    dimensionless_flux: float
    template: str

    @property
    def can_launch(self) -> bool:
        """Whether the criterion holds from the inner edge outward (a model prediction)."""
        return bool(self.critical.reached)

    def __repr__(self) -> str:
        return (
            f"ScenarioResult(name={self.name!r}, kind={self.kind!r}, r_in={self.inner_edge.radius:.3e} cm, "
            f"can_launch={self.can_launch}, critical_radius={self.critical.radius:.3e} cm)"
        )

    def to_xarray(self) -> Any:
        """Profiles against radius as an ``xarray.Dataset`` (units and long names in the attributes)."""
        import xarray as xr

        sp, st = self.speeds, self.steady  # speeds.to_xarray() carries u_adv, u_dif, its parts and B_r/B_z
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", AssumptionWarning)  # flagged by disk_valid below
            sigma, height = self.disk.surface_density(self.r), self.disk.scale_height(self.r)
        data: dict[str, Any] = {
            "psi": ("r", st.psi[-1], {"units": "G cm2", "long_name": "flux function R A_phi"}),
            "b_z": ("r", st.b_z[-1], {"units": "G", "long_name": "vertical field at the disk"}),
            "b_rs": ("r", st.b_rs[-1], {"units": "G", "long_name": "radial field at the disk surface"}),
            "inclination": ("r", st.inclination[-1], {"units": "degree", "long_name": "field angle from vertical"}),
            "plasma_beta": ("r", self.beta, {"units": "1", "long_name": "midplane 8 pi p / B_z^2"}),
            "surface_density": ("r", sigma, {"units": "g cm-2"}),
            "scale_height": ("r", height, {"units": "cm"}),
            "disk_valid": (
                "r",
                self.disk_valid.astype(np.int8),
                {"units": "1", "long_name": "disk assumptions hold (1) or not (0)"},
            ),
        }
        attrs = {
            "title": f"fluxfunnel scenario {self.name}",
            "Conventions": "CF-1.8",
            "system_kind": self.kind,
            "mass_g": self.mass,
            "accretion_rate_g_s": self.mdot,
            "external_field_G": self.external_field,
            "inner_edge_cm": float(self.inner_edge.radius),
            "inner_edge_set_by": str(self.inner_edge.set_by),
            "critical_radius_cm": float(self.critical.radius),
            "can_launch": int(self.can_launch),
            "criterion": f"{self.critical.criterion} {self.critical.threshold:g}",
            "template": self.template,
            "comment": "model predictions under the stated mean-field, thin-disk and steady alpha-disk assumptions",
        }
        ds = sp.to_xarray().drop_vars("beta")  # the template's beta; the steady field's is plasma_beta
        return ds.assign(xr.Dataset(data, coords={"r": ds["r"]})).assign_attrs(attrs)


def _object(sc: Scenario) -> Any:
    from . import objects

    s = sc["system"]
    kind = s["kind"]

    def fail(key: str, msg: str) -> ScenarioError:
        path = f"system.{key}"
        return ScenarioError(
            msg, key=path, line=sc.lines.get(path, sc.lines.get("system")), source=str(sc.source or "")
        )

    if kind == "black_hole":
        return objects.CompactObject.black_hole(s["mass"], s["spin"])
    if kind == "neutron_star":
        kw: dict[str, Any] = {}
        if s["radius"] is not None:
            kw["radius"] = s["radius"]
        if s["surface_field"]:
            kw["surface_field"] = s["surface_field"]
        return objects.CompactObject.neutron_star(s["mass"], **kw)
    if kind == "white_dwarf":
        return objects.CompactObject.white_dwarf(s["mass"], radius=s["radius"], surface_field=s["surface_field"])
    if s["radius"] is None:
        raise fail("radius", "a protostar needs its radius")
    return objects.CompactObject.protostar(s["mass"], s["radius"], s["surface_field"])


def _template(sc: Scenario, alpha: float, progress: bool | None) -> Any:
    from . import flux

    t = sc["turbulence"]
    if t["template"] == "magnetorotational":
        return flux.TurbulenceTemplate.magnetorotational(alpha)
    if t["template"] == "diffusion":
        return flux.TurbulenceTemplate.plain_diffusion(t["magnetic_prandtl"])
    if t["template"] == "buoyant":
        return flux.TurbulenceTemplate.buoyant(t["magnetic_prandtl"])
    from . import stats
    from .snapshots import open_snapshot

    base = sc.source.parent if sc.source is not None else Path(".")
    for key in ("box_sound_speed", "box_orbital_frequency", "box_spacing", "box_correlation_time"):
        if t[key] is None:
            raise ScenarioError(
                f"template = 'snapshots' needs {key}",
                key=f"turbulence.{key}",
                line=sc.lines.get("turbulence"),
                source=str(sc.source or ""),
            )

    def load() -> Any:
        for p in t["snapshots"]:
            path = Path(p) if Path(p).is_absolute() else base / p
            with open_snapshot(
                path, velocity=t["velocity_dataset"], field=t["field_dataset"], density=t["density_dataset"]
            ) as snap:
                arrays = snap.load()
            yield (arrays["velocity"], arrays["field"], arrays.get("density"))

    avg = stats.accumulate(load(), spacing=tuple(t["box_spacing"]), progress=progress)
    return flux.template_from_profiles(
        avg.mean,
        sound_speed=t["box_sound_speed"],
        omega=t["box_orbital_frequency"],
        tau=t["box_correlation_time"],
        alpha=alpha,
        eta_floor=t["eta_floor"],
        name="from snapshots",
    )


def run_scenario(sc: Scenario, *, progress: bool | None = None) -> ScenarioResult:
    """Run the chain for one checked scenario.

    Parameters
    ----------
    sc : Scenario
        From `fluxfunnel.scenario.load_scenario` or `parse_scenario`.
    progress : bool or None
        Progress bars for long steps (snapshot statistics); ``None`` shows them only on a terminal.

    Returns
    -------
    ScenarioResult
    """
    from . import flux, objects
    from .disk import AlphaDisk

    s, a, d = sc["system"], sc["accretion"], sc["disk"]
    obj = _object(sc)
    mdot = a["mdot"] if a["mdot"] is not None else a["eddington_ratio"] * objects.eddington_accretion_rate(s["mass"])
    edge = obj.inner_edge(mdot, prograde=not s["retrograde"])
    r_in = float(edge.radius)
    r_out = d["r_out"] if d["r_out"] is not None else 1e4 * r_in
    if r_out <= 20 * r_in:
        raise ScenarioError(
            f"must exceed 20 inner radii ({20 * r_in:.3e} cm)",
            key="disk.r_out",
            line=sc.lines.get("disk.r_out"),
            source=str(sc.source or ""),
        )
    b_ext = sc["environment"]["field"]
    disk = AlphaDisk(s["mass"], mdot, d["alpha"], r_in=r_in, mu=d["mu"])
    r = np.geomspace(1.1 * r_in, r_out, d["n_radii"])
    template = _template(sc, d["alpha"], progress)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AssumptionWarning)  # summarised in disk_valid and the report
        valid = np.asarray(disk.validity(r).holds, dtype=bool)
        speeds = flux.transport_speeds(disk, template, r, b_z=b_ext, nz=sc["turbulence"]["n_heights"])
        steady = flux.FluxModel(r, u_adv=speeds.u_adv, u_dif=speeds.u_dif, external_field=b_ext).steady_state()
        p_mid = disk.midplane_pressure(r)
    crit = sc["criteria"]
    if crit["beta_max"] is not None:
        cr = flux.critical_radius(steady, criterion="beta", threshold=crit["beta_max"], p_mid=p_mid)
    else:
        cr = flux.critical_radius(steady, criterion="inclination", threshold=crit["inclination_deg"])
    beta = steady.midplane_beta(p_mid)[-1]
    phi = float(steady.dimensionless_flux(s["mass"], mdot)[-1]) if s["kind"] == "black_hole" else math.nan
    return ScenarioResult(
        name=s["name"],
        kind=s["kind"],
        mass=float(s["mass"]),
        mdot=float(mdot),
        external_field=float(b_ext),
        inner_edge=edge,
        disk=disk,
        r=r,
        speeds=speeds,
        steady=steady,
        critical=cr,
        beta=beta,
        disk_valid=valid,
        dimensionless_flux=phi,
        template=template.name,
    )


def report(res: ScenarioResult) -> str:
    """Return the numbers a researcher quotes, as plain text."""
    from . import constants as k

    st = res.steady
    lines = [
        f"{res.name}: {res.kind.replace('_', ' ')} of {res.mass / k.M_SUN:.4g} M_sun, "
        f"Mdot = {res.mdot:.4g} g/s, environment field {res.external_field:.4g} G",
        f"  inner edge       {res.inner_edge.radius:.4e} cm (set by the {res.inner_edge.set_by})",
        f"  template         {res.template}",
        f"  u_adv, u_dif     at r_in: {res.speeds.u_adv[0]:.3e}, {res.speeds.u_dif[0]:.3e} cm/s; "
        f"at r_out: {res.speeds.u_adv[-1]:.3e}, {res.speeds.u_dif[-1]:.3e} cm/s",
        f"  B_z              {st.b_z[-1, 1]:.4e} G near the inner edge "
        f"({st.b_z[-1, 1] / res.external_field:.3g} x the environment)",
        f"  inclination      {st.inclination[-1, 1]:.2f} deg near the inner edge",
        f"  midplane beta    {res.beta[1]:.3e} near the inner edge",
        f"  inner-edge flux  {st.flux_inner[-1]:.4e} G cm^2",
    ]
    if res.kind == "black_hole":
        lines.append(
            f"  phi = Phi/(Mdot r_g^2 c)^1/2 = {res.dimensionless_flux:.3g} (Gaussian; ~50 marks an arrested flow)"
        )
    ratio = res.critical.radius / res.inner_edge.radius
    verdict = (
        f"reached: the field dominates out to {res.critical.radius:.4e} cm ({ratio:.3g} r_in)"
        if res.critical.reached
        else "not reached before the inner edge"
    )
    lines.append(f"  critical radius  ({res.critical.criterion} {res.critical.threshold:g}) {verdict}")
    lines.append(f"  can launch       {'yes' if res.can_launch else 'no'} (model prediction)")
    if not np.all(res.disk_valid):
        bad = res.r[~res.disk_valid]
        lines.append(
            f"  caution          the alpha-disk assumptions fail on {bad.size} of {res.r.size} radii "
            f"({bad.min():.3e} to {bad.max():.3e} cm): read those radii as indicative only"
        )
    return "\n".join(lines)


def field_lines(res: ScenarioResult, *, n_lines: int = 9, heights: float = 1.0) -> list[tuple[Float, Float]]:
    """Poloidal field lines through the disk, ``(r(z), z)`` pairs, from the local bending profiles.

    Inside the disk (``|z| < top H``) each line follows ``dr/dz = B_r/B_z``, with the shape of ``B_r/B_z(z)``
    from the local bending profile (`fluxfunnel.vertical.bend_profile`, via `transport_speeds`) scaled to the
    global steady surface ratio; a thin-disk picture that neglects the radial variation of the profile
    across one line.

    Parameters
    ----------
    res : ScenarioResult
    n_lines : int
        Lines, at footpoints spaced logarithmically in radius.
    heights : float
        Fraction of the matching height to draw (dimensionless, <= 1).
    """
    idx = np.unique(np.geomspace(2, res.r.size - 3, n_lines).astype(int))
    out = []
    h = res.disk.scale_height(res.r[idx])
    zeta = res.speeds.zeta
    tan_s = res.steady.tan_inclination[-1, idx]
    prof = res.speeds.b_r_over_b_z[idx]  # local steady shape: B_r/B_z(zeta) / its surface value
    for j, i in enumerate(idx):
        shape = prof[j] / prof[j, -1] if prof[j, -1] != 0 else zeta / zeta[-1]
        ratio = tan_s[j] * shape
        z = zeta * h[j]
        dz = np.diff(z)
        rr = res.r[i] + np.concatenate([[0.0], np.cumsum(0.5 * (ratio[1:] + ratio[:-1]) * dz)])
        keep = zeta <= heights * zeta[-1] + 1e-12
        out.append((rr[keep], z[keep]))
    return out


def write_outputs(res: ScenarioResult, folder: Path, *, plots: bool = True, data: bool = True) -> list[Path]:
    """Write ``<name>-report.txt``, ``<name>.nc`` and PNG plots into ``folder``; returns the paths written."""
    folder.mkdir(parents=True, exist_ok=True)
    stem = "".join(c if c.isalnum() or c in "-_" else "_" for c in res.name) or "system"
    written = [write_text_atomic(folder / f"{stem}-report.txt", report(res) + "\n")]
    if data:
        ds = res.to_xarray()
        with atomic_path(folder / f"{stem}.nc") as tmp:
            ds.to_netcdf(tmp, engine="h5netcdf")
        written.append(folder / f"{stem}.nc")
    if plots:
        written.append(_plot(res, folder / f"{stem}-flux.png"))
    return written


def _plot(res: ScenarioResult, path: Path) -> Path:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    st = res.steady
    x = res.r / res.inner_edge.radius
    fig, axes = plt.subplots(1, 3, figsize=(14, 4.2))
    ax = axes[0]
    body = res.r < 0.9 * res.r[-1]
    ax.loglog(x[body], np.abs(st.b_z[-1][body]), color="#1b6ca8", label="|B_z|")
    ax.loglog(x[body], np.abs(st.b_rs[-1][body]), color="#d1495b", ls="--", label="|B_rs|")
    ax.axhline(res.external_field, color="0.5", lw=0.8, ls=":", label="environment")
    ax.set_xlabel("r / r_in")
    ax.set_ylabel("field [G]")
    ax.legend(fontsize=8)
    ax = axes[1]
    body = res.r < 0.9 * res.r[-1]  # leave out the anchored outer edge's boundary layer
    ax.semilogx(x[body], st.inclination[-1][body], color="#2e8540")
    ax.axhline(30.0, color="0.4", lw=0.8, ls="--")
    ax.text(x[body][-1], 31, "30 deg", ha="right", fontsize=8, color="0.3")
    if res.critical.reached:
        ax.axvline(res.critical.radius / res.inner_edge.radius, color="#d1495b", lw=1)
    ax.set_xlabel("r / r_in")
    ax.set_ylabel("surface inclination [deg]")
    ax = axes[2]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AssumptionWarning)
        lines = field_lines(res, n_lines=5)
        feet = np.array([rr[0] for rr, _ in lines])
        h_feet = res.disk.scale_height(feet)
    colours = plt.cm.viridis(np.linspace(0.0, 0.85, len(lines)))
    for (rr, z), r0, h0, col in zip(lines, feet, h_feet, colours, strict=True):
        ax.plot((rr - r0) / h0, z / h0, color=col, lw=1.5, label=f"r = {r0 / res.inner_edge.radius:.3g} r_in")
    ax.set_xlabel("(r - r_foot) / H")
    ax.set_ylabel("z / H")
    ax.set_title("field-line shapes through the disk", fontsize=9)
    ax.legend(fontsize=7)
    fig.suptitle(f"{res.name}: model prediction ({res.template})", fontsize=10)
    fig.tight_layout()
    with atomic_path(path) as tmp:
        fig.savefig(tmp, dpi=110, format="png")
    plt.close(fig)
    return path
