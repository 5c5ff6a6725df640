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

# --- measure ------------------------------------------------------------

# --- vertical ------------------------------------------------------------

def _bend_columns(
    z: NDArray[np.float64],
    eta: NDArray[np.float64],
    v_z: NDArray[np.float64],
    v_r: NDArray[np.float64],
    grad: NDArray[np.float64],
    surface_ratio: NDArray[np.float64] | None,
    steady: bool,
    eta_floor: float | None,
) -> tuple[
    NDArray[np.float64],
    NDArray[np.float64],
    NDArray[np.float64],
    NDArray[np.float64],
    NDArray[np.float64] | None,
    NDArray[np.bool_],
]: ...
def _mass_speed(
    z: NDArray[np.float64], density: NDArray[np.float64], v_r: NDArray[np.float64]
) -> NDArray[np.float64]: ...
def _column_advance(
    dz: float,
    periodic: bool,
    alpha_k: NDArray[np.float64],
    gamma: NDArray[np.float64],
    eta: NDArray[np.float64],
    eta_mol: float,
    shear: float,
    alpha_omega: bool,
    theta: float,
    b_eq: NDArray[np.float64] | None,
    k_f: float,
    kappa: float,
    dt: float,
    nsteps: int,
    b_x: NDArray[np.float64],
    b_y: NDArray[np.float64],
    alpha_m: NDArray[np.float64],
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]: ...

# --- flux ------------------------------------------------------------

# --- population ------------------------------------------------------------
