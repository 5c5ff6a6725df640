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

# --- closure ------------------------------------------------------------

def _closure_coefficients(
    reynolds: NDArray[np.float64],
    maxwell: NDArray[np.float64],
    kinetic_helicity: NDArray[np.float64],
    current_helicity: NDArray[np.float64],
    u_shape: NDArray[np.float64],
    b_shape: NDArray[np.float64] | None,
    b_shape4: NDArray[np.float64] | None,
    tau: NDArray[np.float64],
    rho: NDArray[np.float64],
    gravity: NDArray[np.float64],
    brunt_vaisala2: NDArray[np.float64],
    response_speed2: NDArray[np.float64],
    div_reynolds: NDArray[np.float64],
    magnetic_div: NDArray[np.float64],
    *,
    pressure: str,
    field_direction: tuple[float, float, float],
    stratification: bool,
    with_b_tensor: bool,
) -> NDArray[np.float64]: ...
def _closure_field_response(
    u: NDArray[np.float64],
    b: NDArray[np.float64],
    *,
    tau: float,
    rho: float,
    gravity: float,
    response_speed2: float,
    spacing: tuple[float, float, float],
    pressure: str,
) -> NDArray[np.float64]: ...
def _closure_gradient(values: NDArray[np.float64], coord: NDArray[np.float64], axis: int) -> NDArray[np.float64]: ...

# --- measure ------------------------------------------------------------

# --- vertical ------------------------------------------------------------

# --- flux ------------------------------------------------------------

# --- population ------------------------------------------------------------
