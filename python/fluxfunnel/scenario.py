"""Scenario files: one TOML file describes a system and a run.

A scenario names the central object, the accretion rate, the disk, the turbulence description, the field of
the environment, the grids, the launching criteria and the outputs. `load_scenario` reads and checks it;
every problem is reported as a `ScenarioError` that names the key's dotted path and its line in the file.

Numbers are CGS. A physical value may also be written as a string with a unit that astropy understands,
for example ``mass = "10 solMass"`` or ``mdot = "1e-8 solMass / yr"``; it is converted to CGS on reading.

Example
-------
A minimal scenario (every other key takes its documented default)::

    [system]
    name = "Vesper-7"
    kind = "black_hole"
    mass = "8 solMass"
    spin = 0.5

    [accretion]
    eddington_ratio = 0.05

    [environment]
    field = 1e-3        # G, poloidal field far outside the disk

The full list of tables and keys, with types, units and defaults, is `SCHEMA` (printed by
``fluxfunnel run --explain``).
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import tomllib

from ._errors import InputError

__all__ = ["ScenarioError", "Key", "SCHEMA", "Scenario", "load_scenario", "parse_scenario", "explain"]


class ScenarioError(InputError):
    """A scenario file is unusable.

    Attributes
    ----------
    key : str
        Dotted path of the offending key (``"system.mass"``), or ``""`` for the whole file.
    line : int or None
        1-based line of the key in the file, when it could be located.
    """

    def __init__(self, message: str, *, key: str = "", line: int | None = None, source: str = "") -> None:
        if source:
            where = f"{source}:{line}: " if line is not None else f"{source}: "
        else:
            where = f"line {line}: " if line is not None else ""
        prefix = f"{key}: " if key else ""
        super().__init__(f"{where}{prefix}{message}")
        self.key = key
        self.line = line


@dataclass(frozen=True)
class Key:
    """One key of the scenario schema.

    Parameters
    ----------
    kind : type or tuple of types
        Accepted TOML value types (``float`` also accepts integers; a physical ``unit`` also accepts strings).
    default : object
        Value used when the key is absent; ``REQUIRED`` for mandatory keys.
    doc : str
        One line for ``--explain``.
    unit : str, optional
        CGS unit of the value (an astropy unit string); strings with units are converted to it.
    check : callable, optional
        ``check(value) -> str | None``: returns a reason when the value is impossible.
    choices : tuple of str, optional
        Allowed values of a string key.
    """

    kind: Any
    default: Any
    doc: str
    unit: str | None = None
    check: Callable[[Any], str | None] | None = None
    choices: tuple[str, ...] | None = None


REQUIRED = object()


def _positive(v: Any) -> str | None:
    return None if v > 0 and math.isfinite(v) else f"must be a positive finite number, got {v!r}"


def _non_negative(v: Any) -> str | None:
    return None if v >= 0 and math.isfinite(v) else f"must be a non-negative finite number, got {v!r}"


def _unit_interval(v: Any) -> str | None:
    return None if 0 <= v <= 1 else f"must lie in [0, 1], got {v!r}"


def _open_unit_interval(v: Any) -> str | None:
    return None if 0 < v < 1 else f"must lie strictly between 0 and 1, got {v!r}"


def _angle(v: Any) -> str | None:
    return None if 0 < v < 90 else f"must be an angle in degrees strictly between 0 and 90, got {v!r}"


def _grid_size(v: Any) -> str | None:
    return None if 8 <= v <= 100_000 else f"must be between 8 and 100000 points, got {v!r}"


OBJECT_KINDS = ("black_hole", "neutron_star", "white_dwarf", "protostar")
TEMPLATES = ("magnetorotational", "diffusion", "buoyant", "snapshots")

SCHEMA: dict[str, dict[str, Key]] = {
    "system": {
        "name": Key(str, "unnamed system", "label used in reports and file names"),
        "kind": Key(str, REQUIRED, "central object", choices=OBJECT_KINDS),
        "mass": Key(float, REQUIRED, "mass of the central object", unit="g", check=_positive),
        "spin": Key(float, 0.0, "dimensionless spin a (black holes)", check=_unit_interval),
        "retrograde": Key(bool, False, "disk counter-rotating with the hole"),
        "radius": Key(float, None, "stellar radius (default: per kind)", unit="cm", check=_positive),
        "surface_field": Key(float, 0.0, "dipole field at the stellar surface", unit="G", check=_non_negative),
    },
    "accretion": {
        "mdot": Key(float, None, "accretion rate (or give eddington_ratio)", unit="g / s", check=_positive),
        "eddington_ratio": Key(float, None, "Mdot / Mdot_Edd (efficiency 0.1)", check=_positive),
    },
    "disk": {
        "alpha": Key(float, 0.02, "Shakura-Sunyaev viscosity parameter", check=_open_unit_interval),
        "mu": Key(float, 0.615, "mean molecular weight", check=_positive),
        "r_out": Key(float, None, "outer radius (default 1e4 inner radii)", unit="cm", check=_positive),
        "n_radii": Key(int, 200, "points of the logarithmic radial grid", check=_grid_size),
    },
    "turbulence": {
        "template": Key(str, "magnetorotational", "turbulence description", choices=TEMPLATES),
        "magnetic_prandtl": Key(float, 1.0, "nu / eta for the diffusion template", check=_positive),
        "snapshots": Key(list, [], "snapshot files (.npy, .npz, .h5) for template = 'snapshots'"),
        "velocity_dataset": Key(str, "u", "name of the velocity array in each snapshot file"),
        "field_dataset": Key(str, "b", "name of the magnetic-field array in each snapshot file"),
        "density_dataset": Key(str, None, "name of the density array in each snapshot file (optional)"),
        "box_sound_speed": Key(float, None, "isothermal sound speed of the snapshots' box", unit="cm / s",
                               check=_positive),
        "box_orbital_frequency": Key(float, None, "orbital frequency of the snapshots' box", unit="1 / s",
                                     check=_positive),
        "box_spacing": Key(list, None, "cell sizes [dx, dy, dz] of the snapshots [cm]"),
        "box_correlation_time": Key(float, None, "correlation time of the box turbulence", unit="s",
                                    check=_positive),
        "eta_floor": Key(float, None, "regularise negative closure diffusion to this fraction of the kinetic part",
                         check=_open_unit_interval),
        "n_heights": Key(int, 65, "points of the vertical grid per radius", check=_grid_size),
    },
    "environment": {
        "field": Key(float, REQUIRED, "uniform poloidal field far from the disk", unit="G", check=_positive),
    },
    "criteria": {
        "inclination_deg": Key(float, 30.0, "launching inclination of field lines from the vertical", check=_angle),
        "beta_max": Key(float, None, "alternatively: midplane plasma beta below which the field dominates",
                        check=_positive),
    },
    "output": {
        "folder": Key(str, "fluxfunnel-out", "where report, data and plots go (relative to the scenario)"),
        "plots": Key(bool, True, "write PNG plots"),
        "data": Key(str, "netcdf", "data file format", choices=("netcdf", "none")),
    },
}


@dataclass(frozen=True)
class Scenario:
    """A checked scenario: one mapping per table, every key present (defaults filled), values in CGS.

    Attributes
    ----------
    tables : dict
        ``tables["system"]["mass"]`` and so on; see `SCHEMA` for keys, units and defaults.
    source : Path or None
        The file it was read from (relative output folders are resolved against its folder).
    """

    tables: Mapping[str, Mapping[str, Any]]
    source: Path | None = None
    lines: Mapping[str, int] = field(default_factory=dict, repr=False)

    def __getitem__(self, table: str) -> Mapping[str, Any]:
        return self.tables[table]

    @property
    def output_folder(self) -> Path:
        """Output folder, resolved against the scenario file's folder."""
        folder = Path(self.tables["output"]["folder"])
        if not folder.is_absolute() and self.source is not None:
            folder = self.source.parent / folder
        return folder


_HEADER = re.compile(r"^\s*\[\s*([A-Za-z0-9_.\-\s\"']+?)\s*\]\s*(#.*)?$")
_ASSIGN = re.compile(r"^\s*([A-Za-z0-9_\-\"'.\s]+?)\s*=")


def _key_lines(text: str) -> dict[str, int]:
    """Map dotted key paths (and table names) to the 1-based line where they appear."""
    lines: dict[str, int] = {}
    table = ""
    for number, raw in enumerate(text.splitlines(), start=1):
        m = _HEADER.match(raw)
        if m and not raw.lstrip().startswith("[["):
            table = ".".join(p.strip().strip("\"'") for p in m.group(1).split("."))
            lines.setdefault(table, number)
            continue
        m = _ASSIGN.match(raw)
        if m:
            key = ".".join(p.strip().strip("\"'") for p in m.group(1).split("."))
            path = f"{table}.{key}" if table else key
            lines.setdefault(path, number)
            # dotted keys also introduce their parents
            parts = path.split(".")
            for i in range(1, len(parts)):
                lines.setdefault(".".join(parts[:i]), number)
    return lines


def _convert(value: Any, spec: Key, path: str, fail: Callable[[str, str], ScenarioError]) -> Any:
    if spec.unit is not None and isinstance(value, str):
        try:
            import astropy.units as u

            q = u.Quantity(value)
        except ImportError as exc:  # pragma: no cover - astropy is a test dependency
            raise fail(path, "values with units need astropy installed; give a plain CGS number") from exc
        except (TypeError, ValueError) as exc:
            raise fail(path, f"cannot read {value!r} as a quantity with a unit ({exc})") from exc
        try:
            return float(q.to_value(spec.unit))
        except u.UnitConversionError as exc:
            raise fail(path, f"{value!r} cannot be converted to {spec.unit}") from exc
    kinds = spec.kind if isinstance(spec.kind, tuple) else (spec.kind,)
    if float in kinds and isinstance(value, int) and not isinstance(value, bool):
        value = float(value)
    if int in kinds and isinstance(value, bool):
        raise fail(path, f"must be an integer, got {type(value).__name__}")
    if not isinstance(value, kinds):
        wanted = " or ".join(k.__name__ for k in kinds)
        if spec.unit is not None:
            wanted += f" (or a string with a unit convertible to {spec.unit})"
        raise fail(path, f"must be {wanted}, got {type(value).__name__} {value!r}")
    if spec.choices is not None and value not in spec.choices:
        raise fail(path, f"must be one of {', '.join(map(repr, spec.choices))}, got {value!r}")
    if spec.check is not None:
        reason = spec.check(value)
        if reason:
            raise fail(path, reason)
    return value


def parse_scenario(text: str, *, source: Path | str | None = None) -> Scenario:
    """Check a scenario given as TOML text.

    Parameters
    ----------
    text : str
        The TOML document.
    source : path, optional
        Where it came from (for messages and to resolve the output folder).

    Returns
    -------
    Scenario
        Every key present (defaults filled in), physical values in CGS.

    Raises
    ------
    ScenarioError
        For a TOML syntax error, an unknown table or key, a value of the wrong type, an impossible value, a
        missing required key or contradictory keys; the message names the key's dotted path and its line.
    """
    src = str(source) if source is not None else ""
    lines = _key_lines(text)

    def fail(path: str, message: str) -> ScenarioError:
        line = lines.get(path)
        if line is None and "." in path:
            line = lines.get(path.rsplit(".", 1)[0])
        return ScenarioError(message, key=path, line=line, source=src)

    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        raise ScenarioError(f"not valid TOML: {exc}", line=int(m.group(1)) if m else None, source=src) from exc

    tables: dict[str, dict[str, Any]] = {}
    for name in raw:
        if name not in SCHEMA:
            known = ", ".join(SCHEMA)
            raise fail(name, f"unknown table (known tables: {known})")
        if not isinstance(raw[name], dict):
            raise fail(name, f"must be a table [{name}], got {type(raw[name]).__name__}")
    for name, keys in SCHEMA.items():
        given = raw.get(name, {})
        for key in given:
            if key not in keys:
                raise fail(f"{name}.{key}", f"unknown key (known keys of [{name}]: {', '.join(keys)})")
        out: dict[str, Any] = {}
        for key, spec in keys.items():
            path = f"{name}.{key}"
            if key in given:
                out[key] = _convert(given[key], spec, path, fail)
            elif spec.default is REQUIRED:
                raise fail(path if name in raw else name, f"is required ({spec.doc})" if name in raw else
                           f"table [{name}] with key '{key}' is required ({spec.doc})")
            else:
                out[key] = spec.default
        tables[name] = out

    # Relations between keys.
    acc = tables["accretion"]
    if (acc["mdot"] is None) == (acc["eddington_ratio"] is None):
        raise fail("accretion", "give exactly one of 'mdot' and 'eddington_ratio'")
    turb = tables["turbulence"]
    if turb["template"] == "snapshots":
        if not turb["snapshots"]:
            raise fail("turbulence.snapshots", "template = 'snapshots' needs at least one snapshot file")
        for i, p in enumerate(turb["snapshots"]):
            if not isinstance(p, str):
                raise fail("turbulence.snapshots", f"entry {i} must be a path string, got {p!r}")
        for key in ("box_sound_speed", "box_orbital_frequency", "box_spacing", "box_correlation_time"):
            if turb[key] is None:
                raise fail(f"turbulence.{key}" if f"turbulence.{key}" in lines else "turbulence",
                           f"template = 'snapshots' needs turbulence.{key}")
        sp = turb["box_spacing"]
        if len(sp) != 3 or not all(isinstance(v, (int, float)) and not isinstance(v, bool) and v > 0 for v in sp):
            raise fail("turbulence.box_spacing", f"must be three positive cell sizes [dx, dy, dz], got {sp!r}")
    sysm = tables["system"]
    if sysm["kind"] == "protostar" and sysm["radius"] is None:
        raise fail("system", "kind = 'protostar' needs system.radius")
    if sysm["kind"] != "black_hole" and sysm["spin"] != 0.0:
        raise fail("system.spin", f"spin is used only for black holes, not for kind = {sysm['kind']!r}")
    return Scenario(tables=tables, source=Path(source) if source is not None else None, lines=lines)


def load_scenario(path: str | Path) -> Scenario:
    """Read and check a scenario file.

    Parameters
    ----------
    path : str or Path
        A TOML file.

    Returns
    -------
    Scenario

    Raises
    ------
    ScenarioError
        If the file cannot be read or fails any check of `parse_scenario`.
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise ScenarioError(f"cannot read scenario file ({exc.strerror})", source=str(p)) from exc
    return parse_scenario(text, source=p)


def explain() -> str:
    """Return a plain-text description of every table and key (type, unit, default)."""
    out = []
    for name, keys in SCHEMA.items():
        out.append(f"[{name}]")
        for key, spec in keys.items():
            kinds = spec.kind if isinstance(spec.kind, tuple) else (spec.kind,)
            t = "/".join(k.__name__ for k in kinds)
            unit = f" [{spec.unit}]" if spec.unit else ""
            if spec.default is REQUIRED:
                d = "required"
            else:
                d = f"default {spec.default!r}"
            choices = f" one of {', '.join(spec.choices)};" if spec.choices else ""
            out.append(f"  {key} ({t}{unit}):{choices} {spec.doc}; {d}")
        out.append("")
    return "\n".join(out)
