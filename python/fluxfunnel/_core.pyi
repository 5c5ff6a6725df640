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

from typing_extensions import final  # noqa: E402

def _fit_emf(
    mean_b: NDArray[np.float64],
    emf: NDArray[np.float64],
    z: NDArray[np.float64],
    fit_alpha: bool,
    fit_eta: bool,
    method: str,
    rcond: float,
    errors: str,
    n_resamples: int,
    block_length: int | None,
    n_blocks: int,
    cond_limit: float,
    seed: int,
) -> dict[str, NDArray[np.float64]]: ...

@final
class _TestFieldSolver:
    def __new__(
        cls, shape: tuple[int, int, int], spacing: tuple[float, float, float], eta: float, k_test: float, soca: bool
    ) -> _TestFieldSolver: ...
    def step(self, u0: NDArray[np.float64], u1: NDArray[np.float64] | None, dt: float, nsteps: int) -> None: ...
    def coefficients(self, u: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]: ...
    @property
    def time(self) -> float: ...
    @property
    def steps(self) -> int: ...

# --- vertical ------------------------------------------------------------

# --- flux ------------------------------------------------------------

# --- population ------------------------------------------------------------
