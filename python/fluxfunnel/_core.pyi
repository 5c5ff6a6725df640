# Hand-written stub of the compiled module fluxfunnel._core.
# Checked by `python -m mypy.stubtest fluxfunnel._core`.
# One section per stage, in pipeline order. Arrays are float64 unless stated.

import numpy as np  # noqa: F401  (used by the stage sections)
from numpy.typing import NDArray  # noqa: F401

__version__: str

# --- binding-layer diagnostics -------------------------------------------------------------------------------

def _busy_wait(seconds: float) -> float: ...
def _raise_core_error(kind: str) -> None: ...

# --- objects ------------------------------------------------------------

# --- disk ------------------------------------------------------------

# --- stats ------------------------------------------------------------

def _stats_point(
    u: NDArray[np.float32] | NDArray[np.float64], b: NDArray[np.float32] | NDArray[np.float64]
) -> tuple[
    NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]
]: ...
def _stats_spectral(
    field_: NDArray[np.float32] | NDArray[np.float64],
    spacing: tuple[float, float, float],
    periodic_z: bool,
    volume_mean: bool,
    moments: bool,
    helicity: bool,
) -> tuple[NDArray[np.float64], NDArray[np.float64] | None, NDArray[np.float64] | None]: ...

# --- closure ------------------------------------------------------------

# --- measure ------------------------------------------------------------

# --- vertical ------------------------------------------------------------

# --- flux ------------------------------------------------------------

# --- population ------------------------------------------------------------
