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

def objects_gravitational_radius(mass: NDArray[np.float64]) -> NDArray[np.float64]: ...
def objects_isco_radius(
    mass: NDArray[np.float64], spin: NDArray[np.float64], prograde: bool
) -> NDArray[np.float64]: ...
def objects_horizon_radius(mass: NDArray[np.float64], spin: NDArray[np.float64]) -> NDArray[np.float64]: ...
def objects_white_dwarf_radius(mass: NDArray[np.float64], mu_e: float) -> NDArray[np.float64]: ...
def objects_eddington_luminosity(mass: NDArray[np.float64]) -> NDArray[np.float64]: ...
def objects_eddington_accretion_rate(
    mass: NDArray[np.float64], efficiency: NDArray[np.float64]
) -> NDArray[np.float64]: ...
def objects_magnetospheric_radius(
    magnetic_moment: NDArray[np.float64], mass: NDArray[np.float64], mdot: NDArray[np.float64], xi: float
) -> NDArray[np.float64]: ...
def objects_inner_edge(
    mass: NDArray[np.float64],
    spin: NDArray[np.float64],
    radius: NDArray[np.float64],
    magnetic_moment: NDArray[np.float64],
    mdot: NDArray[np.float64],
    xi: float,
    prograde: bool,
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.uint8]]: ...

# --- disk ------------------------------------------------------------

from typing import final  # noqa: E402

@final
class AlphaDiskCore:
    def __new__(
        cls,
        mass: float,
        mdot: float,
        alpha: float,
        r_in: float,
        mu: float,
        kappa0: float,
        hydrogen_fraction: float,
        midplane_factor: float,
        ionisation_temperature: float,
    ) -> AlphaDiskCore: ...
    def profile(
        self, r: NDArray[np.float64], quantity: str
    ) -> tuple[NDArray[np.float64], tuple[float, float, float, float]]: ...
    def density(
        self, r: NDArray[np.float64], z: NDArray[np.float64], polytropic_index: float | None = None
    ) -> tuple[NDArray[np.float64], tuple[float, float, float, float]]: ...
    def plasma_beta(
        self, r: NDArray[np.float64], b_z: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], tuple[float, float, float, float]]: ...
    def validity(
        self, r: NDArray[np.float64]
    ) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]: ...

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
    divide_magnetic_div: bool = False,
) -> tuple[NDArray[np.float64], NDArray[np.bool_], NDArray[np.bool_]]: ...
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

def flux_ellipk(x: NDArray[np.float64]) -> NDArray[np.float64]: ...
def flux_ellipkm1(x: NDArray[np.float64]) -> NDArray[np.float64]: ...
def flux_ellipe(x: NDArray[np.float64]) -> NDArray[np.float64]: ...
def flux_ellipem1(x: NDArray[np.float64]) -> NDArray[np.float64]: ...
def flux_elliprf(x: NDArray[np.float64], y: NDArray[np.float64], z: NDArray[np.float64]) -> NDArray[np.float64]: ...
def flux_elliprd(x: NDArray[np.float64], y: NDArray[np.float64], z: NDArray[np.float64]) -> NDArray[np.float64]: ...
def flux_ring_kernel(r: NDArray[np.float64], r_src: NDArray[np.float64]) -> NDArray[np.float64]: ...
def flux_operator(r: NDArray[np.float64]) -> NDArray[np.float64]: ...
def flux_psi_from_field(
    r: NDArray[np.float64], b_rs: NDArray[np.float64], psi_ext: NDArray[np.float64]
) -> NDArray[np.float64]: ...
def flux_field_from_psi(
    r: NDArray[np.float64], psi: NDArray[np.float64], psi_ext: NDArray[np.float64]
) -> NDArray[np.float64]: ...

@final
class FluxSystem:
    def __new__(
        cls,
        r: NDArray[np.float64],
        u_adv: NDArray[np.float64],
        u_dif: NDArray[np.float64],
        radial_diffusivity: NDArray[np.float64],
        psi_ext: NDArray[np.float64],
        inner_edge: str,
        outer_edge: str,
    ) -> FluxSystem: ...
    def b_z(self, psi: NDArray[np.float64]) -> NDArray[np.float64]: ...
    def b_rs(self, psi: NDArray[np.float64]) -> NDArray[np.float64]: ...
    def dpsi_dt(self, psi: NDArray[np.float64]) -> NDArray[np.float64]: ...
    def psi_ext(self) -> NDArray[np.float64]: ...
    def steady_state(self) -> tuple[NDArray[np.float64], NDArray[np.float64]]: ...

@final
class FluxStepper:
    def __new__(cls, system: FluxSystem, psi0: NDArray[np.float64], dt: float, method: str) -> FluxStepper: ...
    def advance(self, n: int) -> None: ...
    def psi(self) -> NDArray[np.float64]: ...
    def b_rs(self) -> NDArray[np.float64]: ...
    @property
    def t(self) -> float: ...
    @property
    def steps(self) -> int: ...

# --- population ------------------------------------------------------------

def population_sweep(
    mass: NDArray[np.float64],
    mdot: NDArray[np.float64],
    external_field: NDArray[np.float64],
    inner_radius: NDArray[np.float64],
    outer_radius: NDArray[np.float64],
    template: tuple[float, float, float, float, float],
    alpha: float,
    n_r: int,
    nz: int,
    criterion: tuple[float, float, float],
    disk: tuple[float, float, float, float],
) -> tuple[
    NDArray[np.float64], NDArray[np.bool_], NDArray[np.float64], NDArray[np.float64], NDArray[np.bool_]
]: ...
