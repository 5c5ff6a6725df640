"""Snapshot readers: memory-mapped access and slab-by-slab one-point statistics."""

import h5py
import numpy as np
import pytest
from fluxfunnel import InputError
from fluxfunnel.snapshots import one_point_profiles, open_snapshot


def _fields(seed=1, shape=(12, 10, 8), dtype=np.float64):
    rng = np.random.default_rng(seed)
    u = rng.normal(size=(3, *shape)).astype(dtype) + 0.3
    b = (rng.normal(size=(3, *shape)) + 0.5 * u).astype(dtype)
    rho = np.exp(rng.normal(size=shape)).astype(dtype)
    return u, b, rho


def _reference(u, b, rho):
    # Reference: the textbook definitions written directly with NumPy (horizontal x-y averages).
    u = u.astype(np.float64)
    b = b.astype(np.float64)
    du = u - u.mean(axis=(1, 2), keepdims=True)
    db = b - b.mean(axis=(1, 2), keepdims=True)
    rey = np.einsum("ixyz,jxyz->zij", du, du) / (u.shape[1] * u.shape[2])
    mxw = np.einsum("ixyz,jxyz->zij", db, db) / (u.shape[1] * u.shape[2])
    emf = np.cross(du, db, axis=0).mean(axis=(1, 2)).T
    return u.mean(axis=(1, 2)).T, b.mean(axis=(1, 2)).T, rey, mxw, emf, rho.mean(axis=(0, 1))


def _check(prof, ref):
    mu, mb, rey, mxw, emf, rho = ref
    np.testing.assert_allclose(prof.mean_u, mu, rtol=1e-12, atol=1e-13)
    np.testing.assert_allclose(prof.mean_b, mb, rtol=1e-12, atol=1e-13)
    np.testing.assert_allclose(prof.reynolds, rey, rtol=1e-11, atol=1e-12)
    np.testing.assert_allclose(prof.maxwell, mxw, rtol=1e-11, atol=1e-12)
    np.testing.assert_allclose(prof.emf, emf, rtol=1e-11, atol=1e-12)
    np.testing.assert_allclose(prof.rho, rho, rtol=1e-12)


@pytest.mark.parametrize("kind", ["folder", "npz", "npz-compressed", "h5"])
def test_readers_agree_with_numpy(tmp_path, kind):
    u, b, rho = _fields()
    if kind == "folder":
        for name, arr in (("vel", u), ("mag", b), ("dens", rho)):
            np.save(tmp_path / f"{name}.npy", arr)
        path = tmp_path
    elif kind.startswith("npz"):
        path = tmp_path / "snap.npz"
        (np.savez_compressed if kind.endswith("compressed") else np.savez)(path, vel=u, mag=b, dens=rho)
    else:
        path = tmp_path / "snap.h5"
        with h5py.File(path, "w") as f:
            f["fields/vel"] = u
            f["fields/mag"] = b
            f["fields/dens"] = rho
    names = ("fields/vel", "fields/mag", "fields/dens") if kind == "h5" else ("vel", "mag", "dens")
    with open_snapshot(path, velocity=names[0], field=names[1], density=names[2]) as snap:
        if kind in ("folder", "npz"):
            assert isinstance(snap.velocity, np.memmap)  # stays on disk
        assert snap.shape == (12, 10, 8)
        np.testing.assert_array_equal(snap.load()["field"], b)
        # Slabs of 5 x-planes (12 = 5 + 5 + 2) give the same statistics as the whole box.
        _check(one_point_profiles(snap, slab=5), _reference(u, b, rho))


def test_float32_and_fortran_order(tmp_path):
    u, b, rho = _fields(dtype=np.float32)
    np.save(tmp_path / "u.npy", np.asfortranarray(u))
    np.save(tmp_path / "b.npy", b)
    snap = open_snapshot(tmp_path)
    prof = one_point_profiles(snap, slab=3)
    mu, mb, rey, mxw, emf, _ = _reference(u, b, rho)
    np.testing.assert_allclose(prof.reynolds, rey, rtol=1e-10, atol=1e-10)
    assert prof.rho is None


def test_bad_snapshots(tmp_path):
    u, b, rho = _fields()
    with pytest.raises(InputError, match="path: .* does not exist"):
        open_snapshot(tmp_path / "nothing.h5")
    np.savez(tmp_path / "s.npz", u=u, b=b[:, :5], rho=rho[:, :, :3])
    with pytest.raises(InputError, match="field: shape"):
        open_snapshot(tmp_path / "s.npz")
    with pytest.raises(InputError, match="density: must have shape"):
        np.savez(tmp_path / "t.npz", u=u, b=b, rho=rho[:, :, :3])
        open_snapshot(tmp_path / "t.npz", density="rho")
    with pytest.raises(InputError, match="velocity: no such member"):
        open_snapshot(tmp_path / "t.npz", velocity="vx")
    np.savez(tmp_path / "w.npz", u=u[0], b=b)
    with pytest.raises(InputError, match=r"velocity: must have shape \(3, nx, ny, nz\)"):
        open_snapshot(tmp_path / "w.npz")
    (tmp_path / "x.txt").write_text("hello")
    with pytest.raises(InputError, match="unknown snapshot kind"):
        open_snapshot(tmp_path / "x.txt")
    bad = u.copy()
    bad[0, 3, 2, 1] = np.nan
    np.savez(tmp_path / "n.npz", u=bad, b=b)
    with pytest.raises(InputError, match="velocity: must be finite"):
        one_point_profiles(open_snapshot(tmp_path / "n.npz"))
