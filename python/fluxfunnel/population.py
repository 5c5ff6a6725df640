"""Jet capability of whole populations of accreting systems.

For each system: the inner edge from `fluxfunnel.objects` (ISCO, stellar surface or magnetospheric
truncation), a steady alpha disk (`fluxfunnel.disk.AlphaDisk`) from just outside that edge to an outer
radius where the environment's field is anchored, transport speeds from a turbulence template
(`fluxfunnel.flux.transport_speeds`), the steady flux distribution (`fluxfunnel.flux.FluxModel`) and the
critical radius (`fluxfunnel.flux.critical_radius`). Systems run in parallel threads (the Rust kernels
release the GIL) or on a ``dask.distributed`` client. CGS units. Everything is a model prediction under the
assumptions of each stage (steady gas-pressure alpha disk, kinematic mean-field transport, thin disk,
current-free exterior, the template's coefficients); a "can launch" flag is not an observation.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray
from tqdm.auto import tqdm

from . import _core
from ._errors import InputError
from ._validate import as_float, broadcast, check_positive
from .disk import KRAMERS_COEFFICIENT, AlphaDisk, AssumptionWarning
from .flux import FluxModel, TurbulenceTemplate, critical_radius, transport_speeds
from .objects import CompactObject

__all__ = ["JetCapability", "jet_capability", "plot_capability_map"]

Float = NDArray[np.float64]


@dataclass(frozen=True, repr=False)
class JetCapability:
    """Critical radius, inner radius and launch capability of each system (arrays of the broadcast shape).

    Attributes
    ----------
    critical_radius : ndarray
        Outermost radius [cm] inside which the field is dominant by the criterion (NaN where not reached).
    inner_radius : ndarray
        Inner edge of the disk [cm].
    can_launch : ndarray of bool
        Whether the criterion holds at the inner edge (outside the edge's buffer): the disk reaches its
        critical radius before its inner edge. A model prediction.
    set_by : ndarray of str
        What set the inner edge: ``"isco"``, ``"surface"`` or ``"magnetosphere"``.
    flux_inner : ndarray
        Flux through the first grid radius, ``2 pi psi(r[0])`` [G cm^2].
    inner_tan_inclination : ndarray
        ``B_rs/B_z`` at the first radius outside the inner buffer (dimensionless).
    disk_valid : ndarray of bool
        Whether the gas-pressure / Kramers alpha disk's own assumptions hold on the whole grid.
    criterion : str
        Criterion used.
    """

    critical_radius: Float
    inner_radius: Float
    can_launch: NDArray[np.bool_]
    set_by: NDArray[np.str_]
    flux_inner: Float
    inner_tan_inclination: Float
    disk_valid: NDArray[np.bool_]
    criterion: str

    def to_xarray(self) -> Any:
        """Return the sweep as an ``xarray.Dataset`` (axes ``system_0, ...`` of the broadcast shape)."""
        import xarray as xr

        dims = tuple(f"system_{i}" for i in range(self.can_launch.ndim))
        data = {
            "critical_radius": (dims, self.critical_radius, {"units": "cm"}),
            "inner_radius": (dims, self.inner_radius, {"units": "cm"}),
            "can_launch": (dims, self.can_launch.astype(np.int8), {"units": "1", "long_name": "model prediction"}),
            "set_by": (dims, self.set_by.astype(str), {"long_name": "what sets the inner edge"}),
            "flux_inner": (dims, self.flux_inner, {"units": "G cm2"}),
            "inner_tan_inclination": (dims, self.inner_tan_inclination, {"units": "1"}),
            "disk_valid": (dims, self.disk_valid.astype(np.int8), {"units": "1"}),
        }
        return xr.Dataset(data, attrs={"criterion": self.criterion})

    def __repr__(self) -> str:
        n = self.can_launch.size
        return (
            f"JetCapability(shape={self.can_launch.shape}, can_launch={int(self.can_launch.sum())}/{n}, "
            f"criterion={self.criterion!r}, disk_valid={int(self.disk_valid.sum())}/{n})"
        )


def _one_system(
    system: tuple[float, float, float, float, float],
    template: TurbulenceTemplate,
    alpha: float,
    pm: float | None,
    n_r: int,
    criterion: Any,
    threshold: float | None,
) -> tuple[float, bool, float, float, bool]:
    """Run one system (mass, mdot, external field, inner edge, outer radius) through the pipeline."""
    mass, mdot, b_ext, r_in, r_out = system
    # AssumptionWarning of the disk is silenced by the caller (warning filters are process-wide, so this
    # worker must not touch them) and summarised through disk_valid.
    disk = AlphaDisk(mass, mdot, alpha, r_in=r_in)
    r = np.geomspace(1.1 * r_in, r_out, n_r)
    valid = bool(np.all(disk.validity(r).holds))
    speeds = transport_speeds(disk, template, r, pm=pm, b_z=b_ext)
    sol = FluxModel(r, u_adv=speeds.u_adv, u_dif=speeds.u_dif, external_field=b_ext).steady_state()
    p_mid = disk.midplane_pressure(r) if criterion == "beta" else None
    cr = critical_radius(sol, criterion=criterion, threshold=threshold, p_mid=p_mid)
    k = int(np.searchsorted(r, r[0] * 1.1))
    return cr.radius, cr.reached, float(sol.flux_inner[0]), float(sol.tan_inclination[0, k]), valid


def jet_capability(
    objects: CompactObject,
    mdot: ArrayLike,
    external_field: ArrayLike,
    *,
    alpha: float,
    template: TurbulenceTemplate | None = None,
    pm: float | None = None,
    outer_radius: ArrayLike = 1e11,
    n_r: int = 200,
    criterion: str | Callable[..., Any] = "inclination",
    threshold: float | None = None,
    workers: int | None = None,
    client: Any = None,
    engine: str = "auto",
    progress: bool | None = None,
) -> JetCapability:
    """Run disk -> template -> transport speeds -> steady flux -> critical radius for arrays of systems.

    Parameters
    ----------
    objects : fluxfunnel.objects.CompactObject
        Central objects (one kind; fields may be arrays).
    mdot : array_like
        Accretion rates [g s^-1]; broadcasts with the objects' fields.
    external_field : array_like
        Uniform vertical field of the environment, anchored at ``outer_radius`` [G]; broadcasts.
    alpha : float
        Disk viscosity parameter (dimensionless).
    template : TurbulenceTemplate, optional
        Turbulence template; default `TurbulenceTemplate.buoyant` with Pm = 1.
    pm : float, optional
        Overrides the template's magnetic Prandtl number.
    outer_radius : array_like
        Outer disk radius [cm] (broadcasts); must exceed ten times the inner edge.
    n_r : int
        Radii per system (logarithmic grid from 1.1 times the inner edge).
    criterion, threshold
        Passed to `fluxfunnel.flux.critical_radius` (``"inclination"`` (30 degrees), ``"beta"`` with the
        disk's midplane pressure, or a callable).
    workers : int, optional
        Threads for the sweep (default: all cores).
    client : dask.distributed.Client, optional
        Run the systems on this cluster instead (one task per system).
    engine : {"auto", "rust", "python"}
        ``"rust"``: the whole pipeline per system in Rust, parallel over systems (built-in templates and the
        inclination criterion only). ``"python"``: stage by stage through the Python API (any template,
        criterion or client). ``"auto"`` picks Rust when it can.
    progress : bool or None
        Progress bar; ``None`` shows it only on a terminal.

    Returns
    -------
    JetCapability
        Arrays of the broadcast shape. Disks whose own assumptions fail somewhere on the grid are flagged
        in ``disk_valid`` (one `AssumptionWarning` summarises them).

    Examples
    --------
    >>> from fluxfunnel import constants as k
    >>> from fluxfunnel.objects import CompactObject
    >>> from fluxfunnel.population import jet_capability
    >>> wd = CompactObject.white_dwarf(0.8 * k.M_SUN)
    >>> jet_capability(wd, [1e16, 1e17], 1.0, alpha=0.02, n_r=64).inner_radius.shape
    (2,)
    """
    if not isinstance(objects, CompactObject):
        raise InputError(f"objects: must be a CompactObject, got {type(objects).__name__}")
    tmpl = TurbulenceTemplate.buoyant(1.0) if template is None else template
    if int(n_r) != n_r or n_r < 16:
        raise InputError(f"n_r: must be an integer >= 16, got {n_r!r}")
    a = float(as_float("alpha", alpha))
    if not 0 < a <= 1:
        raise InputError(f"alpha: must lie in (0, 1], got {a}")
    md = as_float("mdot", mdot, unit="g / s")
    check_positive("mdot", md)
    b_ext = as_float("external_field", external_field, unit="G")
    check_positive("external_field", b_ext)
    r_out = as_float("outer_radius", outer_radius, unit="cm")
    check_positive("outer_radius", r_out)
    edge = objects.inner_edge(md)
    shape = np.broadcast_shapes(np.shape(objects.mass), md.shape, b_ext.shape, r_out.shape, np.shape(edge.radius))
    mass, md_b, b_b, r_in, r_o = broadcast(
        mass=np.asarray(objects.mass, dtype=float),
        mdot=md,
        external_field=b_ext,
        inner_radius=np.asarray(edge.radius, dtype=float),
        outer_radius=r_out,
    )
    r_in = r_in.reshape(shape)
    set_by = np.broadcast_to(np.asarray(edge.set_by), shape)
    if np.any(r_o <= 10 * r_in):
        raise InputError("outer_radius: must exceed ten times the inner edge for every system")
    jobs = [
        tuple(float(v) for v in row)
        for row in zip(mass.ravel(), md_b.ravel(), b_b.ravel(), r_in.ravel(), r_o.ravel(), strict=True)
    ]
    settings = (tmpl, a, pm, int(n_r), criterion, threshold)

    def run(job: Any) -> tuple[float, bool, float, float, bool]:
        return _one_system(job, *settings)

    results: list[Any] = [None] * len(jobs)
    quiet = None if progress is None else not progress
    if engine not in ("auto", "rust", "python"):
        raise InputError(f"engine: must be 'auto', 'rust' or 'python', got {engine!r}")
    rust_ok = tmpl.builtin is not None and criterion == "inclination" and client is None and tmpl.top == 1.0
    if engine == "rust" and not rust_ok:
        raise InputError("engine: 'rust' needs a built-in template, the inclination criterion and no client")
    if engine != "python" and rust_ok:
        return _rust_sweep(tmpl, a, pm, int(n_r), threshold, jobs, shape, r_in, set_by, quiet)
    with warnings.catch_warnings(), tqdm(total=len(jobs), disable=quiet, unit="system") as bar:
        warnings.simplefilter("ignore", AssumptionWarning)
        if client is not None:
            futures = [client.submit(_one_system, job, *settings, pure=False) for job in jobs]
            for i, fut in enumerate(futures):
                results[i] = fut.result()
                bar.update(1)
        else:
            pool = ThreadPoolExecutor(max_workers=workers)
            try:
                for i, res in enumerate(pool.map(run, jobs)):
                    results[i] = res
                    bar.update(1)
            except BaseException:  # Ctrl-C (or an error): drop the systems not started yet
                pool.shutdown(wait=False, cancel_futures=True)
                raise
            pool.shutdown()
    crit = np.array([x[0] for x in results], dtype=float).reshape(shape)
    reached = np.array([x[1] for x in results], dtype=bool).reshape(shape)
    flux = np.array([x[2] for x in results], dtype=float).reshape(shape)
    tan_in = np.array([x[3] for x in results], dtype=float).reshape(shape)
    valid = np.array([x[4] for x in results], dtype=bool).reshape(shape)
    if not np.all(valid):
        warnings.warn(
            f"{int((~valid).sum())} of {valid.size} disks violate the gas-pressure / Kramers alpha-disk "
            "assumptions somewhere on their grid (see JetCapability.disk_valid)",
            AssumptionWarning,
            stacklevel=2,
        )
    name = "callable" if callable(criterion) else str(criterion)
    return JetCapability(
        critical_radius=crit,
        inner_radius=r_in.copy(),
        can_launch=reached,
        set_by=np.array(set_by, dtype=str),
        flux_inner=flux,
        inner_tan_inclination=tan_in,
        disk_valid=valid,
        criterion=name,
    )


def _rust_sweep(
    tmpl: TurbulenceTemplate,
    alpha: float,
    pm: float | None,
    n_r: int,
    threshold: float | None,
    jobs: list[Any],
    shape: tuple[int, ...],
    r_in: Float,
    set_by: Any,
    quiet: bool | None,
) -> JetCapability:
    """Run the Rust path of `jet_capability`, in chunks so that the progress bar moves."""
    cols = np.array(jobs, dtype=float).reshape(-1, 5).T.copy()
    assert tmpl.builtin is not None
    amplitude, power, beta_quench = tmpl.builtin
    template = (float(tmpl.pm if pm is None else pm), amplitude, power, beta_quench, float(tmpl.top))
    thr = 30.0 if threshold is None else float(threshold)
    if not 0.0 < thr < 90.0:
        raise InputError(f"threshold: an inclination must lie in (0, 90) degrees, got {thr}")
    disk = (0.615, KRAMERS_COEFFICIENT, 0.7, math.sqrt(2.0 * math.pi))  # AlphaDisk defaults
    n = cols.shape[1]
    chunk = max(16, n // 50)
    parts: list[tuple[Any, ...]] = []
    with tqdm(total=n, disable=quiet, unit="system") as bar:
        for lo in range(0, n, chunk):
            sl = [np.ascontiguousarray(c[lo : lo + chunk]) for c in cols]
            mass, mdot, field, r_in_c, r_out_c = sl
            parts.append(
                _core.population_sweep(
                    mass, mdot, field, r_in_c, r_out_c, template, alpha, n_r, 129, (thr, 0.1, 0.05), disk
                )
            )
            bar.update(sl[0].size)
    crit, reached, flux, tan_in, valid = (np.concatenate([p[k] for p in parts]) for k in range(5))
    if not np.all(valid):
        warnings.warn(
            f"{int((~valid).sum())} of {valid.size} disks violate the gas-pressure / Kramers alpha-disk "
            "assumptions somewhere on their grid (see JetCapability.disk_valid)",
            AssumptionWarning,
            stacklevel=3,
        )
    return JetCapability(
        critical_radius=crit.reshape(shape),
        inner_radius=r_in.copy(),
        can_launch=reached.reshape(shape),
        set_by=np.array(set_by, dtype=str),
        flux_inner=flux.reshape(shape),
        inner_tan_inclination=tan_in.reshape(shape),
        disk_valid=valid.reshape(shape),
        criterion="inclination",
    )


def plot_capability_map(
    result: JetCapability,
    x: ArrayLike,
    y: ArrayLike,
    *,
    x_label: str = "x",
    y_label: str = "y",
    ax: Any = None,
) -> Any:
    """Map of the inner inclination ratio over two swept parameters, with the launch boundary.

    Parameters
    ----------
    result : JetCapability
        Result of a sweep shaped ``(len(y), len(x))``.
    x, y : array_like
        Swept parameter values (any units; shown on logarithmic axes, so positive).
    x_label, y_label : str
        Axis labels (with units).
    ax : matplotlib.axes.Axes, optional
        Axes to draw on.

    Returns
    -------
    matplotlib.axes.Axes
        The axes, showing ``B_rs/B_z`` at the inner edge in colour and ``can_launch`` as a contour.
    """
    import matplotlib.pyplot as plt

    xx, yy = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    if result.can_launch.shape != (yy.size, xx.size):
        raise InputError(
            f"result: shape {result.can_launch.shape} does not match (len(y), len(x)) = {(yy.size, xx.size)}"
        )
    if ax is None:
        _, ax = plt.subplots()
    mesh = ax.pcolormesh(xx, yy, result.inner_tan_inclination, shading="auto")
    ax.figure.colorbar(mesh, ax=ax, label="B_rs / B_z at the inner edge (model prediction)")
    if result.can_launch.any() and not result.can_launch.all():
        ax.contour(xx, yy, result.can_launch.astype(float), levels=[0.5], colors="w")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_xlabel(x_label)
    ax.set_ylabel(y_label)
    return ax
