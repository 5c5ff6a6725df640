"""compare(): residuals against NumPy arithmetic, error normalisation, plot helper, bad input."""

import matplotlib
import numpy as np
import pytest
from fluxfunnel import InputError, measure
from fluxfunnel.flows import roberts_flow

matplotlib.use("Agg")


def test_residuals_and_normalisation_follow_numpy():
    # Source: NumPy arithmetic on the same arrays (residual = measured - predicted, rms over heights).
    rng = np.random.default_rng(5)
    nz = 7
    m = {"alpha": rng.normal(size=(nz, 2, 2)), "alpha_err": rng.uniform(0.1, 1, (nz, 2, 2)), "z": np.arange(nz)}
    m["alpha"][3, 1, 0] = np.nan  # a degenerate height stays NaN and is left out of the rms
    p = {"alpha": rng.normal(size=(nz, 2, 2)), "eta": np.ones((nz, 2, 2))}
    c = measure.compare(m, p)
    assert list(c.residual) == ["alpha"]  # eta is only on one side
    np.testing.assert_array_equal(c.residual["alpha"], m["alpha"] - p["alpha"])
    np.testing.assert_array_equal(c.normalized_residual["alpha"], (m["alpha"] - p["alpha"]) / m["alpha_err"])
    np.testing.assert_allclose(c.rms_residual["alpha"], np.sqrt(np.nanmean((m["alpha"] - p["alpha"]) ** 2, axis=0)))
    assert "Comparison(alpha" in repr(c)


def test_profile_against_constant_prediction_and_plot():
    h = (2 * np.pi / 8, 2 * np.pi / 8, 2 * np.pi / 6)
    u = roberts_flow((8, 8, 6), u0=0.3, k=1.0, spacing=h)
    r = measure.test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=10.0, soca=True)
    k_f = np.sqrt(2)
    # Source: PHYSICS.md section 6.1 eq. (6.2).
    a_ref = -(0.09 / (2 * k_f)) * k_f**2 / (k_f**2 + 1)
    e_ref = (0.09 / (2 * k_f**2)) * k_f**2 / (k_f**2 + 1)
    c = measure.compare(r, {"alpha": a_ref * np.eye(2), "eta": e_ref * np.eye(2)})
    assert c.residual["alpha"].shape == (6, 2, 2)
    assert np.max(np.abs(c.rms_residual["alpha"])) < 1e-12
    assert np.max(np.abs(c.rms_residual["eta"])) < 1e-12
    fig = c.plot()
    assert len(fig.axes) == 8
    matplotlib.pyplot.close(fig)


def test_bad_comparisons_are_named():
    with pytest.raises(InputError, match="measured: carries neither"):
        measure.compare({"gamma": 1.0}, {"alpha": np.eye(2)})
    with pytest.raises(InputError, match="predicted: shares no quantity"):
        measure.compare({"alpha": np.eye(2)}, {"eta": np.eye(2)})
    with pytest.raises(InputError, match=r"predicted.alpha: shape"):
        measure.compare({"alpha": np.zeros((5, 2, 2))}, {"alpha": np.zeros((4, 2, 2))})
    with pytest.raises(InputError, match=r"measured.alpha: must have shape"):
        measure.compare({"alpha": np.zeros((5, 3, 3))}, {"alpha": np.eye(2)})
    with pytest.raises(InputError, match=r"predicted.z"):
        measure.compare({"alpha": np.zeros((3, 2, 2)), "z": [0, 1, 2]}, {"alpha": np.zeros((3, 2, 2)), "z": [0, 1, 3]})


def test_results_convert_to_xarray_with_units():
    xr = pytest.importorskip("xarray")
    rng = np.random.default_rng(0)
    b = rng.normal(size=(60, 5, 3))
    e = rng.normal(size=(60, 5, 3))
    fit = measure.fit_emf(b, e, np.arange(5.0), seed=0, n_resamples=10)
    ds = fit.to_xarray()
    assert isinstance(ds, xr.Dataset)
    np.testing.assert_array_equal(ds["alpha"].values, fit.alpha)
    assert ds["eta"].attrs["units"] == "cm2 s-1" and ds["z"].attrs["units"] == "cm"
    assert ds["alpha"].sel(i="y", j="x").shape == (5,)
    h = (2 * np.pi / 8, 2 * np.pi / 8, 2 * np.pi / 6)
    u = roberts_flow((8, 8, 6), u0=0.3, k=1.0, spacing=h)
    r = measure.test_field(u, eta=1.0, k_test=1.0, spacing=h, t_end=2.0, soca=True, profile=False, n_records=4)
    tds = r.to_xarray()
    assert tds["alpha"].dims == ("i", "j") and tds["alpha_history"].sizes["time"] == r.time.size
    np.testing.assert_array_equal(tds["eta"].values, r.eta)
