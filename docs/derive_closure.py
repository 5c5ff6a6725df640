# ruff: noqa: E741  (tensor indices i, j, k, l, m, n as in the formulas)
"""Symbolic re-derivation of the tau-closure coefficients of fluxfunnel.closure (see docs/theory.md).

Run it (``python docs/derive_closure.py``) to print each derived result. The test suite imports it and
compares the Rust kernels against :func:`closure_coefficients`, which builds the mean EMF as an explicit
sympy expression in the mean field ``B_j`` and its gradient ``G_jk = d_k B_j`` from the linear response terms
(theory sections 2 to 5) and reads every coefficient off by differentiation, independently of the index
bookkeeping of the Rust code.

Bases: the tau closure (Blackman & Field 2002; Brandenburg & Subramanian 2005), the general representation of
the EMF (Raedler 1980; Krause & Raedler 1980), the Leray projector of incompressible flow, Taylor's (1921)
diffusion formula for the stratification factor, and the small-scale helicity budget (Kleeorin & Ruzmaikin
1982; Blackman & Brandenburg 2002).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import sympy as sp

R3 = range(3)
X, Y, Z = 0, 1, 2


def eps(i: int, j: int, k: int) -> Any:
    """Levi-Civita symbol."""
    return sp.LeviCivita(i, j, k)


def delta(i: int, j: int) -> int:
    """Kronecker delta."""
    return 1 if i == j else 0


# --- section 4: the isotropic fourth-rank moment ------------------------------------------------------------


def isotropic_fourth_moment() -> sp.Array:
    """<(K_jm b_l) b_k>/<b^2> for isotropic solenoidal b, by integrating over the unit sphere.

    The spectral tensor of isotropic solenoidal fluctuations is E(k) (delta_lk - n_l n_k)/(8 pi k^2), so
    the moment is (1/2) times the sphere average of n_j n_m (delta_lk - n_l n_k).
    """
    th, ph = sp.symbols("theta phi", real=True)
    n = [sp.sin(th) * sp.cos(ph), sp.sin(th) * sp.sin(ph), sp.cos(th)]
    w = sp.sin(th) / (4 * sp.pi)
    cache: dict[tuple[int, ...], Any] = {}

    def avg(*idx: int) -> Any:
        """Sphere average of n_a n_b ... by direct integration, each distinct monomial once."""
        key = tuple(sorted(idx))
        if key not in cache:
            f = w
            for a in key:
                f = f * n[a]
            cache[key] = sp.integrate(sp.integrate(sp.expand(f), (ph, 0, 2 * sp.pi)), (th, 0, sp.pi))
        return cache[key]

    # The trace over l = k of (delta_lk - n_l n_k) is 2, hence the factor 1/2 per unit <b^2>.
    out = sp.MutableDenseNDimArray.zeros(3, 3, 3, 3)
    for j in R3:
        for m in R3:
            for l in R3:
                for k in R3:
                    out[j, m, l, k] = sp.nsimplify(sp.Rational(1, 2) * (delta(l, k) * avg(j, m) - avg(j, m, l, k)))
    return sp.Array(out)


def isotropic_fourth_moment_closed_form() -> sp.Array:
    """(4 d_jm d_lk - d_jl d_mk - d_jk d_ml)/30, the closed form the sphere average must reproduce."""
    out = sp.MutableDenseNDimArray.zeros(3, 3, 3, 3)
    for j in R3:
        for m in R3:
            for l in R3:
                for k in R3:
                    out[j, m, l, k] = sp.Rational(
                        4 * delta(j, m) * delta(l, k) - delta(j, l) * delta(m, k) - delta(j, k) * delta(m, l), 30
                    )
    return sp.Array(out)


# --- section 2: helical waves and the shape of alpha --------------------------------------------------------


def helical_wave_lemma() -> dict[str, Any]:
    """One circularly polarised wave u = A(e1 cos(k.x) + e2 sin(k.x)), e1 x e2 = k/|k|.

    Averaging over the phase gives <u.curl u> = -A^2 |k| and C_jlk = <u_j d_l u_k> = (H/2) eps_jmk n_l n_m
    with n = k/|k|: the helicity of each wave enters C through n n, so an incoherent superposition gives
    C_jlk = (H/2) eps_jmk N^h_lm with the helicity-weighted shape tensor N^h.
    Returns the residuals of these two statements (both zero).
    """
    A, kk, s = sp.symbols("A k s", positive=True)
    res_h, res_c = sp.Integer(0), sp.Integer(0)
    # Exact unit vectors (Pythagorean quadruples) instead of angles keep the algebra exact and quick.
    for direction in ((1, 2, 2), (2, 3, 6), (-1, 4, 8), (0, 0, 1)):
        n = sp.Matrix(direction) / sp.sqrt(sum(x * x for x in direction))
        helper = sp.Matrix([1, 0, 0]) if direction[0] == 0 else sp.Matrix([0, 0, 1])
        e1 = n.cross(helper)
        e1 = e1 / sp.sqrt(e1.dot(e1))
        e2 = n.cross(e1)
        # u(s) with s = k.x the phase; d_l u = n_l k du/ds.
        u = A * (e1 * sp.cos(s) + e2 * sp.sin(s))
        du = u.diff(s)

        def avg(expr: Any) -> Any:
            # Each product is a quadratic form in (cos s, sin s), whose phase average is half the sum of its
            # values at s = 0 and s = pi/2 (the mean of cos^2 and sin^2 is 1/2, of cos sin is 0).
            return sp.simplify((expr.subs(s, 0) + expr.subs(s, sp.pi / 2)) / 2)

        curl = sp.Matrix([sum(eps(i, l, m) * n[l] * kk * du[m] for l in R3 for m in R3) for i in R3])
        helicity = avg(u.dot(curl))
        res_h = sp.Max(res_h, abs(sp.simplify(helicity + A**2 * kk)))
        for j in R3:
            for l in R3:
                for k in R3:
                    c = avg(u[j] * n[l] * kk * du[k])
                    model = helicity / 2 * sum(eps(j, m, k) * n[l] * n[m] for m in R3)
                    res_c = sp.Max(res_c, abs(sp.simplify(c - model)))
    return {"helicity_residual": res_h, "c_tensor_residual": res_c}


# --- the mean EMF as an explicit expression -----------------------------------------------------------------


def _sym_matrix(name: str) -> sp.Matrix:
    s = sp.symbols(f"{name}_0:3_0:3")
    return sp.Matrix(3, 3, lambda i, j: s[3 * min(i, j) + max(i, j)])


def mean_field_symbols() -> tuple[list[Any], list[list[Any]]]:
    """The mean field B_j and its gradient G_jk = d_k B_j as plain symbols."""
    b = list(sp.symbols("B_0:3"))
    g = [list(sp.symbols(f"G_{j}_0:3")) for j in R3]
    return b, g


def kinetic_correlation(hk: Any, nu: Any, div_r: Sequence[Any], grad_r: Any) -> Any:
    """C_jlk = <u_j d_l u_k> of solenoidal, inhomogeneous helical turbulence.

    Its part symmetric in (j, k) is (1/2) d_l R_jk; its antisymmetric part holds the helicity
    (helical_wave_lemma) and the piece forced by solenoidality, C_jjk = d_j R_jk.
    ``grad_r[l][j][k]`` = d_l R_jk.
    """
    c = sp.MutableDenseNDimArray.zeros(3, 3, 3)
    for j in R3:
        for l in R3:
            for k in R3:
                c[j, l, k] = (
                    sp.Rational(1, 2) * grad_r[l][j][k]
                    + hk / 2 * sum(eps(j, m, k) * nu[l, m] for m in R3)
                    + sp.Rational(1, 4) * (delta(j, l) * div_r[k] - delta(k, l) * div_r[j])
                )
    # Check the solenoidal constraint C_jjk = d_j R_jk (with d_j R_jk = div_r[k]).
    for k in R3:
        trace = sum(c[j, j, k] for j in R3)
        sym_part = sum(grad_r[j][j][k] for j in R3) / 2
        residual = sp.simplify(trace - sym_part - div_r[k] / 2)
        assert residual == 0 or (residual.is_number and abs(float(residual)) < 1e-12)
    return c


def magnetic_correlation(hc: Any, nb: Any, div_m: Sequence[Any], grad_m: Any) -> Any:
    """D_ljk = <(d_l b_j) b_k> of solenoidal, inhomogeneous helical magnetic fluctuations.

    Symmetric part (1/2) d_l M_jk, helical part (H_c/2) eps_jkm N^b_lm (same lemma), and the piece forced
    by div b = 0: D_jjk = 0.
    """
    d = sp.MutableDenseNDimArray.zeros(3, 3, 3)
    for l in R3:
        for j in R3:
            for k in R3:
                d[l, j, k] = (
                    sp.Rational(1, 2) * grad_m[l][j][k]
                    + hc / 2 * sum(eps(j, k, m) * nb[l, m] for m in R3)
                    - sp.Rational(1, 4) * (delta(l, j) * div_m[k] - delta(l, k) * div_m[j])
                )
    return d


def emf_expression(
    tau: Any,
    reynolds: Any,
    c_kin: Any,
    maxwell: Any,
    d_mag: Any,
    s4: Any,
    q: Any,
    *,
    gravity: Any = 0,
    c2: Any = 1,
    pressure_weight: Any = 2,
    buoyancy_weight: Any = 1,
    strat: Any = 1,
) -> list[Any]:
    """tau times the linear source of dE/dt, written out term by term (theory sections 2, 3 and 5).

    * kinetic: db/dt = (B.grad)u - (u.grad)B, E_i = tau eps_ijk <u_j db_k/dt>;
    * magnetic: du/dt = P[(B.grad)b + (b.grad)B - grad(B.b)]/q, expanded to first order in grad B:
      (B.grad)b_j + b_n d_n B_j - w (K_jl b_n) d_n B_l with w = 2 when everything is projected;
    * buoyancy: du_j/dt = g (B.b)/(q c2) P_jz; E_i = tau eps_ijk <du_j/dt b_k>.
    ``strat`` multiplies the z-derivative part of the kinetic diffusion (vertical-velocity correlations).
    """
    b, g = mean_field_symbols()
    e = []
    for i in R3:
        acc = 0
        for j in R3:
            for k in R3:
                if eps(i, j, k) == 0:
                    continue
                ev = eps(i, j, k)
                # Kinetic: <u_j (B_l d_l u_k - u_l d_l B_k)>.
                acc += ev * tau * sum(c_kin[j, l, k] * b[l] for l in R3)
                acc -= ev * tau * sum(reynolds[j, l] * g[k][l] * (strat if l == Z else 1) for l in R3)
                # Magnetic: <(du_j/dt) b_k>.
                acc += ev * tau / q * sum(d_mag[l, j, k] * b[l] for l in R3)
                acc += ev * tau / q * sum(maxwell[n, k] * g[j][n] for n in R3)
                acc -= ev * tau / q * pressure_weight * sum(s4[j, l, n, k] * g[l][n] for l in R3 for n in R3)
                # Buoyancy: P_jz (B.b) b_k -> B_l (delta_jz M_lk - S_jzlk).
                if gravity != 0:
                    acc += (
                        ev
                        * tau
                        * gravity
                        / (q * c2)
                        * sum(b[l] * (delta(j, Z) * maxwell[l, k] - buoyancy_weight * s4[j, Z, l, k]) for l in R3)
                    )
        e.append(sp.expand(acc))
    return e


def read_off(e: list[Any]) -> tuple[np.ndarray, np.ndarray]:
    """a_il = dE_i/dB_l and b_ijk = dE_i/dG_jk from the expression (exact, the EMF is linear)."""
    b, g = mean_field_symbols()
    a = np.array([[sp.diff(e[i], b[l]) for l in R3] for i in R3], dtype=object)
    bt = np.array([[[sp.diff(e[i], g[j][k]) for k in R3] for j in R3] for i in R3], dtype=object)
    return a, bt


def axial(a: np.ndarray) -> list[Any]:
    """gamma_i = -(1/2) eps_ijk a_jk."""
    return [sp.simplify(-sum(eps(i, j, k) * a[j, k] for j in R3 for k in R3) / 2) for i in R3]


def horizontal_eta(bt: np.ndarray) -> np.ndarray:
    """eta_ij of E_i = -eta_ij J_j for B(z): d_z B_x = J_y, d_z B_y = -J_x."""
    eta = np.zeros((3, 3), dtype=object)
    for i in (X, Y):
        eta[i, X] = bt[i, Y, Z]
        eta[i, Y] = -bt[i, X, Z]
    return eta


def phi_p_moments(kvecs: np.ndarray, weights: np.ndarray, b2: float) -> dict[str, np.ndarray]:
    """Consistent M, N^b and S of a projected spectrum made of discrete wave directions.

    b-spectrum phi(k) P(k): M_nk = c sum_w (d_nk - n_n n_k), N_jm = sum_w n_j n_m / sum_w,
    S_jmnk = c sum_w n_j n_m (d_nk - n_n n_k), with c fixed by tr M = <b^2>.
    """
    n = kvecs / np.linalg.norm(kvecs, axis=1)[:, None]
    w = np.asarray(weights, dtype=float)
    c = b2 / (2.0 * w.sum())
    eye = np.eye(3)
    proj = eye[None] - np.einsum("an,ak->ank", n, n)
    m = c * np.einsum("a,ank->nk", w, proj)
    nb = np.einsum("a,aj,am->jm", w, n, n) / w.sum()
    s4 = c * np.einsum("a,aj,am,ank->jmnk", w, n, n, proj)
    return {"maxwell": m, "b_shape": nb, "s4": s4}


def closure_coefficients(
    *,
    tau: float,
    rho: float,
    reynolds: np.ndarray,
    maxwell: np.ndarray,
    kinetic_helicity: float,
    current_helicity: float,
    u_shape: np.ndarray,
    b_shape: np.ndarray,
    s4: np.ndarray,
    div_reynolds: np.ndarray,
    div_maxwell: np.ndarray,
    gravity: float = 0.0,
    c2: float = 1.0,
    pressure_weight: float = 2.0,
    buoyancy_weight: float = 1.0,
    strat: float = 1.0,
) -> dict[str, np.ndarray]:
    """Every coefficient at one point, read off the explicit EMF (numbers in, floats out).

    ``s4`` is the unnormalised S_jmnk [G^2]; ``div_maxwell`` is d_j M_ij [G^2/cm] (density outside).
    Returns a, b_tensor, alpha_kinetic, alpha_magnetic, buoyancy tensor, gamma parts and eta parts.
    """
    f = sp.Float
    q = 4 * sp.pi * f(rho)
    rs = sp.Matrix(3, 3, lambda i, j: f(reynolds[i, j]))
    ms = sp.Matrix(3, 3, lambda i, j: f(maxwell[i, j]))
    nu = sp.Matrix(3, 3, lambda i, j: f(u_shape[i, j]))
    nb = sp.Matrix(3, 3, lambda i, j: f(b_shape[i, j]))
    s4s = sp.Array(np.vectorize(f)(s4).tolist())
    zero3 = [[[0] * 3 for _ in R3] for _ in R3]  # gradient pieces that do not enter one-point coefficients
    ck = kinetic_correlation(f(kinetic_helicity), nu, [f(x) for x in div_reynolds], zero3)
    dm = magnetic_correlation(f(current_helicity), nb, [f(x) for x in div_maxwell], zero3)

    def coeffs(**kw: Any) -> tuple[np.ndarray, np.ndarray]:
        base = dict(tau=f(tau), q=q, pressure_weight=f(pressure_weight), buoyancy_weight=f(buoyancy_weight))
        base.update(kw)
        return read_off(emf_expression(**base))

    zero = sp.zeros(3, 3)
    zero_c = sp.MutableDenseNDimArray.zeros(3, 3, 3)
    zero_s = sp.MutableDenseNDimArray.zeros(3, 3, 3, 3)
    a_k, b_k = coeffs(reynolds=rs, c_kin=ck, maxwell=zero, d_mag=zero_c, s4=zero_s, strat=f(strat))
    a_m, b_m = coeffs(reynolds=zero, c_kin=zero_c, maxwell=ms, d_mag=dm, s4=s4s)
    a_b, _ = coeffs(reynolds=zero, c_kin=zero_c, maxwell=ms, d_mag=zero_c, s4=s4s, gravity=f(gravity), c2=f(c2))
    # (with d_mag = 0 and no gradients in B, the only B-linear magnetic term left is the buoyancy one)
    as_f = np.vectorize(lambda x: float(sp.N(x)))
    ak = as_f(a_k)
    am = as_f(a_m)
    ab = as_f(a_b)
    return {
        "alpha_kinetic": 0.5 * (ak + ak.T),
        "alpha_magnetic": 0.5 * (am + am.T),
        "alpha_buoyancy": 0.5 * (ab + ab.T),
        "pumping_kinetic": np.array([float(x) for x in axial(a_k)]),
        "pumping_magnetic": np.array([float(x) for x in axial(a_m)]),
        "buoyancy_gamma": np.array([float(x) for x in axial(a_b)]),
        "buoyancy_tensor": ab,
        "eta_kinetic": as_f(horizontal_eta(b_k)),
        "eta_magnetic": as_f(horizontal_eta(b_m)),
        "b_tensor": as_f(b_k) + as_f(b_m),
    }


# --- the symbolic statements of theory sections 2 to 6 ------------------------------------------------------


def isotropic_statements() -> dict[str, Any]:
    """Isotropic limits, all symbolic: alpha, eta_t, pumping, magnetic eta (three pressure treatments),
    buoyancy (projected and not)."""
    tau, u2, b2, q, hk, hc, g, c2 = sp.symbols("tau u2 b2 q H_K H_C g c2", positive=True)
    eye = sp.eye(3)
    dr = sp.symbols("dR_0:3")
    dmv = sp.symbols("dM_0:3")
    zero3 = [[[0] * 3 for _ in R3] for _ in R3]
    ck = kinetic_correlation(hk, eye / 3, dr, zero3)
    dm = magnetic_correlation(hc, eye / 3, dmv, zero3)
    s_iso = isotropic_fourth_moment_closed_form()
    s4 = sp.Array([[[[b2 * s_iso[j, m, l, k] for k in R3] for l in R3] for m in R3] for j in R3])
    out: dict[str, Any] = {}
    for w, label in ((2, "projected"), (1, "partial"), (0, "unprojected")):
        e = emf_expression(tau, u2 * eye / 3, ck, b2 * eye / 3, dm, s4, q, pressure_weight=w)
        a, bt = read_off(e)
        eta = horizontal_eta(bt)
        out[f"eta_xx[{label}]"] = sp.simplify(eta[X, X])
        out[f"eta_xy[{label}]"] = sp.simplify(eta[X, Y])
        if label == "projected":
            out["alpha_xx"] = sp.simplify((a[X, X] + a[X, X]) / 2)
            out["gamma"] = axial(a)
    e_kin_only = emf_expression(tau, u2 * eye / 3, ck, sp.zeros(3, 3), dm * 0, s4 * 0, q)
    out["eta_t_kinetic"] = sp.simplify(horizontal_eta(read_off(e_kin_only)[1])[X, X])
    for w, label in ((1, "projected"), (0, "unprojected")):
        e = emf_expression(
            0 * tau + tau, sp.zeros(3, 3), ck * 0, b2 * eye / 3, dm * 0, s4, q, gravity=g, c2=c2, buoyancy_weight=w
        )
        out[f"buoyant_rise[{label}]"] = sp.simplify(axial(read_off(e)[0])[Z])
    return out


def stratification_factor() -> Any:
    """Taylor's formula with a damped internal-wave autocorrelation: int_0^inf e^{-t/tau} cos(N t) dt."""
    t, tau, n = sp.symbols("t tau N", positive=True)
    return sp.simplify(sp.integrate(sp.exp(-t / tau) * sp.cos(n * t), (t, 0, sp.oo)))


def quenching_steady_state() -> dict[str, Any]:
    """Steady state and relaxation rate of d alpha_M/dt = -2 eta_t k_f^2 [E.B/B_eq^2 + alpha_M/R_m].

    With E = alpha B - eta_t J (isotropic eta_t), E.B = (alpha_K + alpha_M) B^2 - eta_t J.B.
    """
    am, ak, et, kf, beq, rm, b, jb = sp.symbols("alpha_M alpha_K eta_t k_f B_eq R_m B JB", real=True)
    emf_b = (ak + am) * b**2 - et * jb
    rhs = -2 * et * kf**2 * (emf_b / beq**2 + am / rm)
    am_star = sp.solve(sp.Eq(rhs, 0), am)[0]
    alpha = sp.simplify(ak + am_star)
    rate = sp.simplify(-sp.diff(rhs, am))
    return {"alpha_steady": alpha, "relaxation_rate": rate, "rhs": rhs}


def main() -> None:
    """Print every derived statement."""
    s = isotropic_fourth_moment()
    print("isotropic fourth moment == closed form:", s == isotropic_fourth_moment_closed_form())
    print("S_xxzz, S_zyzy, S_xxxx per <b^2>:", s[0, 0, 2, 2], s[2, 1, 2, 1], s[0, 0, 0, 0])
    print("helical wave lemma:", helical_wave_lemma())
    for k, v in isotropic_statements().items():
        print(f"{k:28s} {v}")
    print("stratification factor:", stratification_factor())
    for k, v in quenching_steady_state().items():
        print(f"{k:28s} {v}")


if __name__ == "__main__":
    main()
