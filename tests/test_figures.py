"""The notebooks' figures: written, non-empty, and showing the structure the analysis predicts.

The code cells of each notebook run in-process (in a temporary folder), then the PNG files they saved are
read back with ``matplotlib.image.imread`` and their pixels inspected. Pixel positions come from the
notebook's own axes (``Axes.get_window_extent`` and ``transData``), which match the saved image because
the figures are saved at the figure's own dpi.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import matplotlib

matplotlib.use("Agg")
import matplotlib.image as mpimg
import matplotlib.pyplot as plt
import nbformat
import numpy as np
import pytest
from matplotlib.colors import to_rgb

NOTEBOOKS = Path(__file__).resolve().parents[1] / "notebooks"


def _run_notebook(name: str, workdir: Path, monkeypatch: pytest.MonkeyPatch) -> dict[str, Any]:
    """Execute the notebook's code cells in one namespace, in ``workdir``; return the namespace."""
    nb = nbformat.read(NOTEBOOKS / name, as_version=4)
    monkeypatch.chdir(workdir)
    namespace: dict[str, Any] = {"__name__": "__notebook__"}
    for cell in nb.cells:
        if cell.cell_type == "code":
            exec(compile(cell.source, f"{name}:cell", "exec"), namespace)  # noqa: S102 - our own notebook
    return namespace


def _pixels(path: Path) -> np.ndarray:
    """RGB pixels in [0, 1], rows from the top of the image."""
    img = mpimg.imread(path)
    return np.asarray(img[..., :3], dtype=float)


def _box(ax: Any, height: int, inset: int = 4) -> tuple[slice, slice]:
    """Row and column slices of the inside of ``ax`` in a saved image of ``height`` rows."""
    ext = ax.get_window_extent()
    rows = slice(int(height - ext.y1) + inset, int(height - ext.y0) - inset)
    cols = slice(int(ext.x0) + inset, int(ext.x1) - inset)
    return rows, cols


def _colour_mask(img: np.ndarray, colour: str, tol: float = 0.08) -> np.ndarray:
    return np.all(np.abs(img - np.array(to_rgb(colour))) < tol, axis=-1)


def _executed(factory: pytest.TempPathFactory, tag: str, notebook: str) -> tuple[Path, dict[str, Any]]:
    """Run ``notebook`` in a fresh folder; return its figures folder and its namespace."""
    mp = pytest.MonkeyPatch()
    work = factory.mktemp(tag)
    try:
        ns = _run_notebook(notebook, work, mp)
    finally:
        mp.undo()
    return work / "figures", ns


@pytest.fixture(scope="module")
def bending(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, Any]]:
    yield _executed(tmp_path_factory, "nb02", "02_bending_and_flux_speeds.ipynb")
    plt.close("all")


@pytest.fixture(scope="module")
def coefficients(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, Any]]:
    yield _executed(tmp_path_factory, "nb01", "01_snapshots_to_coefficients.ipynb")
    plt.close("all")


@pytest.mark.parametrize(
    "fixture, names",
    [
        ("bending", ["02_field_lines.png", "02_vertical_profiles.png", "02_butterfly.png"]),
        ("coefficients", ["01_profiles_and_coefficients.png", "01_roberts_comparison.png"]),
    ],
)
def test_figures_written_and_not_blank(fixture: str, names: list[str], request: pytest.FixtureRequest) -> None:
    # Checks: each PNG exists, is more than a few kB, decodes, and is not a single flat colour.
    folder, _ = request.getfixturevalue(fixture)
    for name in names:
        path = folder / name
        assert path.is_file(), name
        assert path.stat().st_size > 5_000, name
        img = _pixels(path)
        assert img.shape[0] > 200 and img.shape[1] > 400, name
        assert img.std() > 0.05, f"{name}: nearly uniform image"


def test_butterfly_has_both_field_signs_in_both_halves(bending: tuple[Path, dict[str, Any]]) -> None:
    # Checks the butterfly diagram (diverging colour map, red = positive b_y, blue = negative): the plot
    # area is not uniform, and strongly red and strongly blue cells both appear above and below the
    # midplane (an oscillating dynamo wave reverses the field in each half). The midplane row comes from
    # the axes' own data transform.
    folder, ns = bending
    img = _pixels(folder / "02_butterfly.png")
    ax = ns["ax"]  # the butterfly axes (the notebook's last ``fig, ax``)
    rows, cols = _box(ax, img.shape[0])
    area = img[rows, cols]
    assert area.std() > 0.1
    r, g, b = area[..., 0], area[..., 1], area[..., 2]
    red = (r > 0.6) & (b < 0.45) & (g < 0.5)
    blue = (b > 0.6) & (r < 0.45) & (g < 0.6)
    mid_row = int(img.shape[0] - ax.transData.transform((0.0, 0.0))[1]) - rows.start
    for half in (slice(0, mid_row - 5), slice(mid_row + 5, area.shape[0])):
        assert red[half].mean() > 0.01
        assert blue[half].mean() > 0.01


def test_alpha_curve_changes_sign_in_rendered_profiles(coefficients: tuple[Path, dict[str, Any]]) -> None:
    # Checks the coefficient figure's alpha panel: pixels of the kinetic-alpha curve (colour C0) appear on
    # both sides of the x = 0 line (the curve of opposite signs in the two halves), and above the midplane
    # they lie right of zero (positive alpha, from the negative kinetic helicity put into the upper half),
    # below it left; the magnetic-alpha curve (C1) lies on the other side. The legend's area is masked out.
    folder, ns = coefficients
    img = _pixels(folder / "01_profiles_and_coefficients.png")
    ax = ns["axs"][1]
    h = img.shape[0]
    rows, cols = _box(ax, h)
    mask = np.zeros(img.shape[:2], dtype=bool)
    mask[rows, cols] = _colour_mask(img[rows, cols], "C0")
    leg = ax.get_legend().get_window_extent()
    mask[int(h - leg.y1) - 2 : int(h - leg.y0) + 2, int(leg.x0) - 2 : int(leg.x1) + 2] = False
    x0, y0 = ax.transData.transform((0.0, 0.0))
    zero_col, mid_row = int(round(x0)), int(round(h - y0))
    ys, xs = np.nonzero(mask)
    assert xs.size > 100
    upper = ys < mid_row - 10
    lower = ys > mid_row + 10
    assert np.mean(xs[upper] > zero_col + 2) > 0.8
    assert np.mean(xs[lower] < zero_col - 2) > 0.8
    # The magnetic alpha (C1) has the opposite sign: left of zero between 0.3 H and 2 H above the midplane.
    _, y_lo = ax.transData.transform((0.0, 0.3))
    _, y_hi = ax.transData.transform((0.0, 2.0))
    mask_m = np.zeros(img.shape[:2], dtype=bool)
    mask_m[rows, cols] = _colour_mask(img[rows, cols], "C1")
    mask_m[int(h - leg.y1) - 2 : int(h - leg.y0) + 2, int(leg.x0) - 2 : int(leg.x1) + 2] = False
    ys_m, xs_m = np.nonzero(mask_m)
    band = (ys_m > h - y_hi) & (ys_m < h - y_lo)
    assert band.sum() > 20
    assert np.mean(xs_m[band] < zero_col - 1) > 0.8


def test_pumping_parts_have_opposite_signs_in_rendered_profiles(coefficients: tuple[Path, dict[str, Any]]) -> None:
    # Checks the drift panel: in the upper half, the kinetic pumping curve (C0) lies mostly right of zero
    # (away from the turbulent midplane) and the magnetic pumping curve (C1) mostly left (toward the strong
    # magnetic fluctuations), i.e. two curves of opposite sign.
    folder, ns = coefficients
    img = _pixels(folder / "01_profiles_and_coefficients.png")
    ax = ns["axs"][2]
    h = img.shape[0]
    rows, cols = _box(ax, h)
    x0, _ = ax.transData.transform((0.0, 0.0))
    _, y_lo = ax.transData.transform((0.0, 0.3))
    _, y_hi = ax.transData.transform((0.0, 2.0))
    leg = ax.get_legend().get_window_extent()
    for colour, sign in (("C0", +1), ("C1", -1)):
        mask = np.zeros(img.shape[:2], dtype=bool)
        mask[rows, cols] = _colour_mask(img[rows, cols], colour)
        mask[int(h - leg.y1) - 2 : int(h - leg.y0) + 2, int(leg.x0) - 2 : int(leg.x1) + 2] = False
        mask[: int(h - y_hi)] = False
        mask[int(h - y_lo) :] = False
        ys, xs = np.nonzero(mask)
        assert xs.size > 30, colour
        assert np.mean(sign * (xs - x0) > 0) > 0.7, colour


@pytest.fixture(scope="module")
def population(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, Any]]:
    yield _executed(tmp_path_factory, "nb03", "03_population_launch_map.ipynb")
    plt.close("all")


def test_population_figures_written_and_not_blank(population: tuple[Path, dict[str, Any]]) -> None:
    # Checks: each PNG of notebook 03 exists, is more than a few kB, decodes, and is not a flat colour.
    folder, _ = population
    names = [
        "03_black_hole_map.png",
        "03_accretion_field_map.png",
        "03_white_dwarf_young_star_maps.png",
        "03_one_system.png",
    ]
    for name in names:
        path = folder / name
        assert path.is_file(), name
        assert path.stat().st_size > 5_000, name
        img = _pixels(path)
        assert img.shape[0] > 200 and img.shape[1] > 400, name
        assert img.std() > 0.05, name


def _white_pixels(img: np.ndarray, ax: Any) -> tuple[np.ndarray, np.ndarray]:
    """Rows and columns (image coordinates) of near-white pixels inside ``ax``: the launch contour.

    The map's colour field uses viridis, which contains no near-white colour, so inside the axes such
    pixels can only come from the white launch-boundary contour.
    """
    rows, cols = _box(ax, img.shape[0])
    white = np.all(img[rows, cols] > 0.93, axis=-1)
    ys, xs = np.nonzero(white)
    return ys + rows.start, xs + cols.start


def _boundary_columns(ax: Any, x: np.ndarray, can_launch: np.ndarray, height: int) -> tuple[float, float]:
    """Pixel columns between which a contour of ``can_launch`` at 0.5 must lie (launching at low x).

    Along each row of cells the 0.5 level of the cell-centred flag lies between the centre of the last
    launching cell and that of the first non-launching one; over all rows it therefore lies between the
    smallest of the former and the largest of the latter.
    """
    last = np.array([np.nonzero(row)[0].max() for row in can_launch if row.any() and not row.all()])
    lo = ax.transData.transform((x[last.min()], 1.0))[0]
    hi = ax.transData.transform((x[last.max() + 1], 1.0))[0]
    return lo, hi


def test_black_hole_map_shows_a_launch_boundary_only_with_the_buoyant_template(
    population: tuple[Path, dict[str, Any]],
) -> None:
    # Checks the rendered mass x spin map: with plain diffusion no system launches, so the panel has no
    # contour (no white pixels) while its colour field still varies; with the buoyant template the colour
    # field varies strongly and the white launch contour is drawn, and every contour pixel lies in the
    # band of masses where the computed flag changes (see _boundary_columns). The flag itself follows from
    # the 30-degree criterion (Blandford & Payne 1982) applied by fluxfunnel.flux.critical_radius.
    folder, ns = population
    img = _pixels(folder / "03_black_hole_map.png")
    plain_ax, buoyant_ax = ns["bh_axs"]
    plain, buoyant = ns["bh"][ns["PLAIN"].name], ns["bh"][ns["BUOYANT"].name]
    assert not plain.can_launch.any()
    assert 0 < buoyant.can_launch.sum() < buoyant.can_launch.size
    h = img.shape[0]
    rows, cols = _box(plain_ax, h)
    assert img[rows, cols].std() > 0.05
    assert _white_pixels(img, plain_ax)[0].size == 0
    rows, cols = _box(buoyant_ax, h)
    assert img[rows, cols].std() > 0.1
    ys, xs = _white_pixels(img, buoyant_ax)
    assert ys.size > 50
    lo, hi = _boundary_columns(buoyant_ax, ns["masses"], buoyant.can_launch, h)
    assert np.all((xs > lo - 3) & (xs < hi + 3))
    # The contour spans the map from bottom to top (every spin row has launching and non-launching holes).
    assert ys.max() - ys.min() > 0.8 * (rows.stop - rows.start)


def test_field_and_star_maps_show_their_launch_boundaries(population: tuple[Path, dict[str, Any]]) -> None:
    # Checks the other capability maps: the accretion-rate x field map of one hole and the white-dwarf and
    # young-star panels each mix launching and non-launching systems, so each draws a white contour, and
    # on the field map the contour lies where the template's beta quench switches launching off.
    folder, ns = population
    img = _pixels(folder / "03_accretion_field_map.png")
    kes = ns["kes"]
    ys, xs = _white_pixels(img, ns["kes_ax"])
    assert ys.size > 30
    lo, hi = _boundary_columns(ns["kes_ax"], ns["fields"], kes.can_launch, img.shape[0])
    assert np.all((xs > lo - 3) & (xs < hi + 3))
    img = _pixels(folder / "03_white_dwarf_young_star_maps.png")
    for ax in ns["star_axs"]:
        rows, cols = _box(ax, img.shape[0])
        assert img[rows, cols].std() > 0.05
        assert _white_pixels(img, ax)[0].size > 20
