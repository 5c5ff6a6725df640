"""fluxfunnel: how accretion-disk turbulence moves large-scale magnetic flux.

Stages (each a submodule, loaded on first use): ``constants``, ``objects``, ``disk``, ``stats``,
``synthetic``, ``closure``, ``measure``, ``vertical``, ``flux``, ``population``. CGS (Gaussian) units
throughout. Results are model predictions under the stated mean-field assumptions, not measurements.
"""

from __future__ import annotations

import importlib
from typing import Any

from ._core import __version__
from ._errors import ConvergenceError, FluxfunnelError, InputError

_STAGES = (
    "constants",
    "objects",
    "disk",
    "stats",
    "synthetic",
    "closure",
    "measure",
    "flows",
    "vertical",
    "flux",
    "population",
)

__all__ = ["__version__", "FluxfunnelError", "InputError", "ConvergenceError", *_STAGES]


def __getattr__(name: str) -> Any:
    if name in _STAGES:
        module = importlib.import_module(f".{name}", __name__)
        globals()[name] = module
        return module
    raise AttributeError(f"module 'fluxfunnel' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
