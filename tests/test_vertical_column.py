"""The 1D mean-field column model (fluxfunnel.vertical.ColumnModel).

Dynamo growth rates and frequencies are checked against the plane-wave dispersion relations of mean-field
dynamo theory; quenching against the steady state of the dynamical-quenching equation.
"""

import math
import signal
import time

import matplotlib
import numpy as np
import pytest
from conftest import sigint_after
from fluxfunnel import InputError
from fluxfunnel.vertical import ColumnHistory, ColumnModel, DynamicalQuenching
from scipy import integrate

matplotlib.use("Agg")

L = 2.0 * np.pi  # periodic column of one wavelength: k = 1 (invented, dimensionless units)


def periodic_grid(nz):
    return np.linspace(0.0, L, nz, endpoint=False)


def fourier_mode(history, field="b_y"):
    return np.fft.rfft(getattr(history, field), axis=1)[:, 1]


def fit_rate(t, mode):
    """Growth rate and angular frequency from a straight-line fit of log|c| and the unwrapped phase."""
    i = t.size // 2
    growth = np.polyfit(t[i:], np.log(np.abs(mode[i:])), 1)[0]
    freq = np.polyfit(t[i:], np.unwrap(np.angle(mode[i:])), 1)[0]
    return growth, freq


# --- kinematic dynamos -----------------------------------------------------------------------------------


@pytest.mark.parametrize("alpha", [2.0, -2.0])
def test_alpha_squared_growth_rate_converges_at_second_order(alpha):
    # Source: Moffatt 1978 (Magnetic Field Generation in Electrically Conducting Fluids, ch. 9) and Krause &
    # Raedler 1980: plane-wave alpha^2 dynamo, growth rate |alpha| k - eta k^2.
    eta, k = 1.0, 1.0
    expect = abs(alpha) * k - eta * k**2
    errors = []
    for nz in (16, 32, 64):
        model = ColumnModel(
            periodic_grid(nz), shear=0.0, omega=1.0, alpha=alpha, gamma=0.0, eta=eta, boundary="periodic"
        )
        hist = model.run(6.0, dt=1e-3, n_snapshots=6, progress=False)
        rate = math.log(hist.rms_field[-1] / hist.rms_field[-2])
        errors.append(abs(rate - expect))
    assert errors[-1] < 3e-3
    orders = np.log2(np.array(errors[:-1]) / np.array(errors[1:]))
    assert np.all((orders > 1.9) & (orders < 2.1)), orders


@pytest.mark.parametrize("dynamo_number", [2.0, -2.0, 8.0])
def test_alpha_omega_critical_dynamo_number_and_wave_frequency(dynamo_number):
    # Source: Moffatt 1978; Krause & Raedler 1980 (plane-wave alpha-Omega dynamo, alpha dropped from the
    # azimuthal equation): lambda = -eta k^2 + (1 -/+ i) sqrt(|alpha S k|/2), so with D = alpha S/(eta^2 k^3)
    # the critical |D| is 2 and the dynamo wave there has frequency eta k^2.
    # From memory for the naming of D and its critical value; the dispersion relation itself is re-derived in
    # docs/theory.md section "Vertical structure 11".
    eta, k, q, omega = 1.0, 1.0, 1.5, 1.0
    shear_rate = -q * omega
    alpha = dynamo_number * eta**2 * k**3 / shear_rate
    model = ColumnModel(
        periodic_grid(128),
        shear=q,
        omega=omega,
        alpha=alpha,
        gamma=0.0,
        eta=eta,
        boundary="periodic",
        alpha_omega=True,
    )
    hist = model.run(12.0, dt=2e-3, n_snapshots=120, progress=False)
    growth, freq = fit_rate(hist.t, fourier_mode(hist))
    root = math.sqrt(abs(alpha * shear_rate * k) / 2.0)
    assert growth == pytest.approx(-eta * k**2 + root, abs=2e-3)
    assert abs(freq) == pytest.approx(root, rel=1e-3)
    if abs(dynamo_number) == 2.0:
        assert abs(growth) < 1e-3
        assert abs(freq) == pytest.approx(eta * k**2, rel=1e-3)


def test_bounded_alpha_omega_column_against_a_solve_bvp_eigenvalue():
    # Source: scipy.integrate.solve_bvp on the continuous eigenvalue problem of the same column (alpha-Omega,
    # alpha = a0 sin(pi z), pumping gamma = 2z, eta = 1 + z^2/2, B_x = B_y = 0 at z = +-1), written as eight
    # real first-order equations with the complex growth rate as two unknown parameters.
    a0, shear_rate = 8.0, -15.0

    def alpha(x):
        return a0 * np.sin(np.pi * x)

    def eta(x):
        return 1.0 + 0.5 * x**2

    def fun(x, y, p):
        lam = p[0] + 1j * p[1]
        bx, by, dbx, dby = y[0] + 1j * y[1], y[2] + 1j * y[3], y[4] + 1j * y[5], y[6] + 1j * y[7]
        # eta B'' = lambda B + (alpha B_y)' + (gamma B)' - eta' B' (x part), and - S B_x in the y part.
        # gamma = 2 z, so (gamma B)' = 2 B + 2 z B'; eta' = z.
        d2bx = (lam * bx + a0 * np.pi * np.cos(np.pi * x) * by + alpha(x) * dby + 2 * bx + 2 * x * dbx - x * dbx) / eta(
            x
        )
        d2by = (lam * by - shear_rate * bx + 2 * by + 2 * x * dby - x * dby) / eta(x)
        comps = (dbx, dby, d2bx, d2by)
        return np.vstack([part for c in comps for part in (c.real, c.imag)])

    def bc(ya, yb, p):
        return np.array([ya[0], ya[1], ya[2], ya[3], yb[0], yb[1], yb[2], yb[3], ya[4] - 1.0, ya[5]])

    x = np.linspace(-1.0, 1.0, 101)
    y0 = np.zeros((8, x.size))
    y0[0], y0[2], y0[4] = np.cos(np.pi * x / 2), 3 * np.cos(np.pi * x / 2), -np.pi / 2 * np.sin(np.pi * x / 2)
    sol = integrate.solve_bvp(fun, bc, x, y0, p=[5.0, 0.0], tol=1e-8, max_nodes=100000)
    assert sol.success
    expect = sol.p[0]
    assert abs(sol.p[1]) < 1e-8 and expect > 0  # a steadily growing mode
    errors = []
    for nz in (101, 201):
        z = np.linspace(-1.0, 1.0, nz)
        model = ColumnModel(z, shear=-shear_rate, omega=1.0, alpha=alpha(z), gamma=2 * z, eta=eta(z), alpha_omega=True)
        hist = model.run(8.0, dt=1e-3, n_snapshots=80, progress=False)
        i = hist.t.size // 2
        errors.append(abs(np.polyfit(hist.t[i:], np.log(hist.rms_field[i:]), 1)[0] - expect))
    assert errors[1] < 1e-4 * expect
    assert errors[0] / errors[1] > 3.0  # second order in dz


def test_pumping_carries_the_field_at_the_pumping_speed():
    # Source: the advection-diffusion equation: with uniform gamma and eta a mode exp(ikz) moves at speed
    # gamma and decays at eta k^2.
    gamma, eta = 0.8, 0.05
    model = ColumnModel(periodic_grid(128), shear=0.0, omega=1.0, alpha=0.0, gamma=gamma, eta=eta, boundary="periodic")
    hist = model.run(4.0, dt=2e-3, n_snapshots=40, progress=False)
    growth, freq = fit_rate(hist.t, fourier_mode(hist, "b_x"))
    assert -freq == pytest.approx(gamma, rel=2e-3)  # phase of exp(ik(z - gamma t)) falls at gamma k
    assert growth == pytest.approx(-eta, rel=2e-3)


def test_diffusion_between_vertical_field_boundaries():
    # Source: heat equation with zero end values: the lowest mode sin(pi z/L) decays at eta (pi/L)^2.
    nz, eta = 129, 0.3
    z = np.linspace(0.0, 1.0, nz)
    seed = np.sin(np.pi * z)
    seed[[0, -1]] = 0.0  # sin(pi) is 1.2e-16 in floating point
    model = ColumnModel(z, shear=0.0, omega=1.0, alpha=0.0, gamma=0.0, eta=eta, b_x0=seed)
    hist = model.run(0.5, dt=1e-3, n_snapshots=5, progress=False)
    rate = -math.log(hist.rms_field[-1] / hist.rms_field[-2]) / 0.1
    assert rate == pytest.approx(eta * np.pi**2, rel=1e-4)


def test_default_step_follows_pure_diffusion_to_one_percent():
    # Source: heat equation with zero end values, lowest mode decays as exp(-eta pi^2 t / L^2); the default
    # step (a hundredth of L^2/eta) is an accuracy choice, common practice (no single source).
    z = np.linspace(0.0, 1.0, 65)
    seed = np.sin(np.pi * z)
    seed[[0, -1]] = 0.0
    model = ColumnModel(z, shear=0.0, omega=1.0, alpha=0.0, gamma=0.0, eta=0.3, b_x0=seed)
    hist = model.run(1.0, n_snapshots=2, progress=False)
    assert hist.rms_field[-1] / hist.rms_field[0] == pytest.approx(math.exp(-0.3 * np.pi**2), rel=1e-2)


def test_implicit_steps_stay_stable_far_beyond_the_explicit_limit():
    # Steps 10^4 times the explicit diffusive limit dz^2/(2 eta): backward Euler decays monotonically
    # toward the exact decay (Source: heat equation), Crank-Nicolson stays bounded.
    nz, eta = 65, 1.0
    z = np.linspace(0.0, 1.0, nz)
    dz = z[1]
    big = 1e4 * dz**2 / (2 * eta)
    seed = np.sin(np.pi * z) + 0.3 * np.sin(20 * np.pi * z)
    seed[[0, -1]] = 0.0
    for theta in (1.0, 0.5):
        model = ColumnModel(z, shear=0.0, omega=1.0, alpha=0.0, gamma=0.0, eta=eta, theta=theta, b_x0=seed)
        hist = model.run(20 * big, dt=big, n_snapshots=20, progress=False)
        assert np.all(np.isfinite(hist.b_x))
        assert np.max(np.abs(hist.b_x[-1])) <= np.max(np.abs(seed))
        if theta == 1.0:
            assert np.all(np.diff(hist.rms_field) < 0)


# --- dynamical quenching ---------------------------------------------------------------------------------


def test_imposed_uniform_field_gives_catastrophic_quenching():
    # Source: Vainshtein & Cattaneo 1992 (ApJ 393, 165); Gruzinov & Diamond 1994 (PRL 72, 1651): with no
    # helicity flux and J.B = 0 the saturated alpha is alpha_K / (1 + R_m B^2/B_eq^2). A uniform imposed field
    # in a periodic column without shear stays uniform (J = 0).
    eta, eta_mol, b0, b_eq, k_f, alpha_k = 1.0, 0.01, 0.3, 1.0, 5.0, 0.5
    rm = eta / eta_mol
    model = ColumnModel(
        periodic_grid(16),
        shear=0.0,
        omega=1.0,
        alpha=alpha_k,
        gamma=0.0,
        eta=eta,
        boundary="periodic",
        eta_molecular=eta_mol,
        quenching=DynamicalQuenching(b_eq=b_eq, k_f=k_f),
        b_x0=b0,
    )
    dt = 1e-3
    hist = model.run(5.0, dt=dt, n_snapshots=50, progress=False)
    expect = alpha_k / (1.0 + rm * b0**2 / b_eq**2)
    np.testing.assert_allclose(hist.alpha[-1], expect, rtol=1e-8)
    np.testing.assert_allclose(hist.b_x[-1], b0, rtol=1e-12)
    # Derived: docs/theory.md section "Vertical structure 10": relaxation at 2 eta k_f^2 (B^2/B_eq^2 + 1/R_m);
    # backward Euler gives ln(1 + rate dt)/dt, within rate dt / 2 of it.
    rate = 2.0 * eta * k_f**2 * (b0**2 / b_eq**2 + 1.0 / rm)
    seen = -np.diff(np.log(np.abs(hist.alpha[:12, 0] - expect))) / (hist.t[1] - hist.t[0])
    np.testing.assert_allclose(seen, rate, rtol=rate * dt)


def saturated_alpha_squared(nz, t_end=150.0):
    eta, eta_mol, b_eq, k_f, alpha_k = 1.0, 0.1, 1.0, 3.0, 2.0
    model = ColumnModel(
        periodic_grid(nz),
        shear=0.0,
        omega=1.0,
        alpha=alpha_k,
        gamma=0.0,
        eta=eta,
        boundary="periodic",
        eta_molecular=eta_mol,
        quenching=DynamicalQuenching(b_eq=b_eq, k_f=k_f),
    )
    hist = model.run(t_end, dt=0.02, n_snapshots=15, progress=False)
    return model, hist, (eta, eta_mol, b_eq, alpha_k)


def test_saturated_alpha_squared_dynamo_obeys_the_steady_quenching_formula():
    model, hist, (eta, eta_mol, b_eq, alpha_k) = saturated_alpha_squared(64)
    rm = eta / eta_mol
    assert hist.rms_field[-1] == pytest.approx(hist.rms_field[-2], rel=1e-7)  # saturated
    bx, by, alpha = hist.b_x[-1], hist.b_y[-1], hist.alpha[-1]
    dz = model.dz

    def ddz(f):
        return (np.roll(f, -1) - np.roll(f, 1)) / (2 * dz)

    jb = -bx * ddz(by) + by * ddz(bx)
    b2 = bx**2 + by**2
    # Derived: docs/theory.md section "Vertical structure 10" (steady state of Blackman & Brandenburg 2002's equation,
    # no flux): alpha = (alpha_K + R_m eta J.B/B_eq^2) / (1 + R_m B^2/B_eq^2).
    np.testing.assert_allclose(alpha, (alpha_k + rm * eta * jb / b_eq**2) / (1 + rm * b2 / b_eq**2), rtol=1e-6)
    # Derived: docs/theory.md section "Vertical structure 11": a helical wave saturates at
    # B^2/B_eq^2 = (alpha_K - (eta + eta_mol) k)/(eta k); on the grid k becomes the centred-difference
    # wavenumbers k_a = sin(k dz)/dz (alpha term) and k_d^2 = (2 sin(k dz/2)/dz)^2 (diffusion).
    k_a = math.sin(dz) / dz
    k_d2 = (2.0 * math.sin(dz / 2) / dz) ** 2
    alpha_sat = (eta + eta_mol) * k_d2 / k_a
    assert alpha.mean() == pytest.approx(alpha_sat, rel=1e-6)
    level = (alpha_k - alpha_sat) / (rm * (alpha_sat - eta * k_a))
    assert b2.mean() / b_eq**2 == pytest.approx(level, rel=1e-6)
    continuum = (alpha_k - (eta + eta_mol)) / eta
    assert b2.mean() / b_eq**2 == pytest.approx(continuum, rel=0.03)


def test_helicity_flux_out_of_the_column_raises_the_saturated_field():
    # Common practice (no single source; e.g. Brandenburg & Subramanian 2005, Phys. Rep. 417, 1, section 9):
    # a helicity flux out of the domain alleviates catastrophic quenching, so the field saturates higher.
    z = np.linspace(-1.0, 1.0, 81)
    finals = []
    for kappa in (0.0, 1.0):
        model = ColumnModel(
            z,
            shear=1.5,
            omega=20.0,
            alpha=3.0 * np.sin(np.pi * z),
            gamma=0.0,
            eta=0.2,
            eta_molecular=0.002,
            quenching=DynamicalQuenching(b_eq=1.0, k_f=10.0, helicity_diffusivity=kappa),
        )
        hist = model.run(40.0, dt=5e-3, n_snapshots=20, progress=False)
        finals.append(hist.rms_field[-5:].mean())
    assert np.all(np.isfinite(finals))
    assert finals[1] > 2.0 * finals[0]


# --- interface --------------------------------------------------------------------------------------------


def test_history_plot_and_repr():
    import matplotlib.pyplot as plt

    model = ColumnModel(periodic_grid(32), shear=1.5, omega=1.0, alpha=1.0, gamma=0.0, eta=1.0, boundary="periodic")
    hist = model.run(1.0, dt=0.01, n_snapshots=4, progress=False)
    assert isinstance(hist, ColumnHistory)
    assert hist.b_y.shape == (5, 32) and hist.t[0] == 0.0 and hist.t[-1] == pytest.approx(1.0)
    assert "ColumnHistory(nt=5, nz=32" in repr(hist)
    ax = hist.plot("b_y")
    mesh = ax.collections[0]
    np.testing.assert_array_equal(np.asarray(mesh.get_array()).reshape(32, 5), hist.b_y.T)
    plt.close(ax.figure)
    ds = hist.to_xarray()
    np.testing.assert_array_equal(ds["b_y"].values, hist.b_y)
    assert ds["b_x"].attrs["units"] == "G" and ds["t"].size == 5
    # Runs continue one another.
    later = model.run(2.0, dt=0.01, n_snapshots=2, progress=False)
    np.testing.assert_array_equal(later.b_y[0], hist.b_y[-1])
    assert model.t == pytest.approx(2.0)


def test_progress_bar_when_asked(capsys):
    model = ColumnModel(periodic_grid(16), shear=0.0, omega=1.0, alpha=1.0, gamma=0.0, eta=1.0, boundary="periodic")
    model.run(0.1, dt=0.01, n_snapshots=3, progress=True)
    assert "column" in capsys.readouterr().err
    model.run(0.2, dt=0.01, n_snapshots=3, progress=False)
    assert capsys.readouterr().err == ""


@pytest.mark.skipif(not hasattr(signal, "SIGINT"), reason="needs POSIX signals")
def test_ctrl_c_stops_a_long_run_and_keeps_the_last_snapshot():
    model = ColumnModel(
        periodic_grid(64),
        shear=0.0,
        omega=1.0,
        alpha=1.5,
        gamma=0.0,
        eta=1.0,
        boundary="periodic",
        eta_molecular=0.1,
        quenching=DynamicalQuenching(b_eq=1.0, k_f=3.0),
    )
    before = model.b_x.copy()
    start = time.monotonic()
    with sigint_after(0.3):
        with pytest.raises(KeyboardInterrupt):
            model.run(1e6, dt=1e-3, n_snapshots=1, progress=False)  # about a billion steps in one chunk
    assert time.monotonic() - start < 3.0
    np.testing.assert_array_equal(model.b_x, before)
    assert model.t == 0.0


def test_bad_input_names_the_argument():
    z = np.linspace(0.0, 1.0, 17)
    ok = dict(shear=1.5, omega=1.0, alpha=0.1, gamma=0.0, eta=1.0)
    with pytest.raises(InputError, match="z: must be strictly increasing"):
        ColumnModel(z[::-1], **ok)
    with pytest.raises(InputError, match="z: must be uniformly spaced"):
        ColumnModel(z**2, **ok)
    with pytest.raises(InputError, match="alpha: must be finite"):
        ColumnModel(z, **{**ok, "alpha": np.where(z > 0.5, np.nan, 0.1)})
    with pytest.raises(InputError, match="eta: must be positive"):
        ColumnModel(z, **{**ok, "eta": -1.0})
    with pytest.raises(InputError, match="gamma: must be a scalar or have the shape of z"):
        ColumnModel(z, **{**ok, "gamma": np.zeros(5)})
    with pytest.raises(InputError, match="eta_molecular: must be positive with dynamical quenching"):
        ColumnModel(z, **ok, quenching=DynamicalQuenching(b_eq=1.0, k_f=1.0))
    with pytest.raises(InputError, match="b_eq: must be positive"):
        ColumnModel(z, **ok, eta_molecular=0.01, quenching=DynamicalQuenching(b_eq=-1.0, k_f=1.0))
    with pytest.raises(InputError, match="b_x0: must vanish at both end nodes"):
        ColumnModel(z, **ok, b_x0=1.0)
    with pytest.raises(InputError, match="boundary"):
        ColumnModel(z, **ok, boundary="open")
    with pytest.raises(InputError, match="theta"):
        ColumnModel(z, **ok, theta=0.2)
    model = ColumnModel(z, **ok)
    with pytest.raises(InputError, match="t_end: must be finite and later"):
        model.run(-1.0)
    with pytest.raises(InputError, match="dt: must be finite and positive"):
        model.run(1.0, dt=0.0)
    with pytest.raises(InputError, match="n_snapshots"):
        model.run(1.0, n_snapshots=0)
