"""Reading simulation snapshots from disk without loading them whole.

A snapshot holds vector fields of shape ``(3, nx, ny, nz)`` (components x, y, z = radial, azimuthal, vertical;
z the last grid axis) and optionally scalar fields ``(nx, ny, nz)``. Supported files:

- HDF5 (``.h5``, ``.hdf5``; needs h5py): the user names the datasets (paths inside the file);
- NumPy ``.npz`` archives: the user names the members; members stored without compression are memory-mapped,
  compressed ones are read when used;
- a folder of NumPy ``.npy`` files, one per field, named ``<dataset>.npy``; memory-mapped.

Arrays stay on disk (memory maps or h5py datasets) until a slab is asked for, so a snapshot larger than
memory can be processed slab by slab along x with `Snapshot.slabs`; `one_point_profiles` does that for the
horizontally averaged one-point statistics (mean fields, Reynolds and Maxwell stresses, mean EMF), which are
exact sums over slabs. Spectral statistics (shape tensors, helicities) need whole horizontal planes and are
computed by `fluxfunnel.stats` on arrays that fit in memory.
"""

from __future__ import annotations

import zipfile
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._errors import InputError

__all__ = ["Snapshot", "open_snapshot", "OnePointProfiles", "one_point_profiles"]


def _npz_member(path: Path, key: str, name: str) -> Any:
    """Memory-map an uncompressed ``.npz`` member; read a compressed one lazily through ``np.load``."""
    member = name if name.endswith(".npy") else f"{name}.npy"
    with zipfile.ZipFile(path) as zf:
        try:
            info = zf.getinfo(member)
        except KeyError:
            names = ", ".join(n[:-4] if n.endswith(".npy") else n for n in zf.namelist())
            raise InputError(f"{key}: no such member {name!r} in {path} (members: {names})") from None
        if info.compress_type != zipfile.ZIP_STORED:
            return np.load(path)[member[:-4]]
        with zf.open(info) as fh:
            version = np.lib.format.read_magic(fh)
            if version == (1, 0):
                shape, fortran, dtype = np.lib.format.read_array_header_1_0(fh)
            else:
                shape, fortran, dtype = np.lib.format.read_array_header_2_0(fh)
            header_len = fh.tell()
    # Data start = local file header + name + extra field + npy header.
    with open(path, "rb") as raw:
        raw.seek(info.header_offset)
        local = raw.read(30)
        name_len = int.from_bytes(local[26:28], "little")
        extra_len = int.from_bytes(local[28:30], "little")
    offset = info.header_offset + 30 + name_len + extra_len + header_len
    return np.memmap(path, dtype=dtype, mode="r", offset=offset, shape=shape, order="F" if fortran else "C")


@dataclass(frozen=True)
class Snapshot:
    """Fields of one snapshot, kept on disk until used.

    Attributes
    ----------
    path : Path
        File or folder the fields come from.
    velocity, field : array-like
        ``(3, nx, ny, nz)`` memory maps or h5py datasets (cm s^-1 and G).
    density, pressure : array-like or None
        ``(nx, ny, nz)`` (g cm^-3 and dyn cm^-2), when named.
    """

    path: Path
    velocity: Any
    field: Any
    density: Any = None
    pressure: Any = None
    _handle: Any = None

    @property
    def shape(self) -> tuple[int, int, int]:
        """Grid shape ``(nx, ny, nz)``."""
        return tuple(self.velocity.shape[1:])  # type: ignore[return-value]

    def slabs(self, *, size: int | None = None) -> Iterator[tuple[slice, dict[str, NDArray[Any]]]]:
        """Yield ``(x_slice, arrays)`` for consecutive slabs of ``size`` x-planes, read into memory one at a time.

        Parameters
        ----------
        size : int, optional
            x-planes per slab; by default as many as fit in about 64 MiB per field.
        """
        nx, ny, nz = self.shape
        if size is None:
            per_plane = 3 * ny * nz * np.dtype(self.velocity.dtype).itemsize
            size = max(1, min(nx, (64 << 20) // max(per_plane, 1)))
        if size < 1:
            raise InputError(f"size: must be a positive number of x-planes, got {size}")
        for start in range(0, nx, size):
            sl = slice(start, min(nx, start + size))
            arrays = {"velocity": np.asarray(self.velocity[:, sl]), "field": np.asarray(self.field[:, sl])}
            if self.density is not None:
                arrays["density"] = np.asarray(self.density[sl])
            if self.pressure is not None:
                arrays["pressure"] = np.asarray(self.pressure[sl])
            yield sl, arrays

    def load(self) -> dict[str, NDArray[Any]]:
        """Read every field into memory (only for snapshots that fit)."""
        out = {"velocity": np.asarray(self.velocity), "field": np.asarray(self.field)}
        if self.density is not None:
            out["density"] = np.asarray(self.density)
        if self.pressure is not None:
            out["pressure"] = np.asarray(self.pressure)
        return out

    def close(self) -> None:
        """Close the underlying HDF5 file, if any."""
        if self._handle is not None:
            self._handle.close()

    def __enter__(self) -> Snapshot:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def open_snapshot(
    path: str | Path,
    *,
    velocity: str = "u",
    field: str = "b",
    density: str | None = None,
    pressure: str | None = None,
) -> Snapshot:
    """Open a snapshot file (HDF5, ``.npz``) or folder of ``.npy`` files without reading it.

    Parameters
    ----------
    path : str or Path
        ``.h5``/``.hdf5`` file, ``.npz`` archive, or a folder holding ``<name>.npy`` files.
    velocity, field : str
        Dataset (HDF5 path, npz member or npy file stem) of the velocity [cm s^-1] and magnetic field [G],
        each of shape ``(3, nx, ny, nz)``.
    density, pressure : str, optional
        Datasets of the density [g cm^-3] and pressure [dyn cm^-2], shape ``(nx, ny, nz)``.

    Returns
    -------
    Snapshot
        Use as a context manager to close HDF5 files.

    Raises
    ------
    InputError
        If the file is missing or of an unknown kind, a dataset is missing, or shapes do not fit together.
    """
    p = Path(path)
    names: Mapping[str, str | None] = {"velocity": velocity, "field": field, "density": density,
                                       "pressure": pressure}
    handle = None
    arrays: dict[str, Any] = {}
    if not p.exists():
        raise InputError(f"path: {p} does not exist")
    suffix = p.suffix.lower()
    if p.is_dir():
        for key, name in names.items():
            if name is None:
                continue
            f = p / f"{name}.npy"
            if not f.exists():
                raise InputError(f"{key}: no file {f.name} in {p}")
            arrays[key] = np.load(f, mmap_mode="r")
    elif suffix == ".npz":
        for key, name in names.items():
            if name is not None:
                arrays[key] = _npz_member(p, key, name)
    elif suffix in (".h5", ".hdf5", ".he5"):
        try:
            import h5py
        except ImportError as exc:  # pragma: no cover - h5py is in the test extra
            raise InputError("path: reading HDF5 needs h5py (pip install h5py)") from exc
        handle = h5py.File(p, "r")
        for key, name in names.items():
            if name is None:
                continue
            if name not in handle:
                handle.close()
                raise InputError(f"{key}: no dataset {name!r} in {p} (top level: {', '.join(handle.keys())})")
            arrays[key] = handle[name]
    else:
        raise InputError(f"path: unknown snapshot kind {suffix!r}; use .h5/.hdf5, .npz or a folder of .npy files")

    def fail(msg: str) -> InputError:
        if handle is not None:
            handle.close()
        return InputError(msg)

    for key in ("velocity", "field"):
        shp = tuple(arrays[key].shape)
        if len(shp) != 4 or shp[0] != 3:
            raise fail(f"{key}: must have shape (3, nx, ny, nz), got {shp}")
        if np.dtype(arrays[key].dtype).kind != "f":
            raise fail(f"{key}: must be float32 or float64, got {arrays[key].dtype}")
    if tuple(arrays["field"].shape) != tuple(arrays["velocity"].shape):
        fshape, ushape = tuple(arrays["field"].shape), tuple(arrays["velocity"].shape)
        raise fail(f"field: shape {fshape} differs from velocity {ushape}")
    grid = tuple(arrays["velocity"].shape[1:])
    for key in ("density", "pressure"):
        if key in arrays and tuple(arrays[key].shape) != grid:
            raise fail(f"{key}: must have shape {grid} (the velocity grid), got {tuple(arrays[key].shape)}")
    return Snapshot(path=p, velocity=arrays["velocity"], field=arrays["field"], density=arrays.get("density"),
                    pressure=arrays.get("pressure"), _handle=handle)


@dataclass(frozen=True)
class OnePointProfiles:
    """Horizontally averaged one-point statistics per height, accumulated slab by slab.

    Attributes
    ----------
    mean_u, mean_b : ndarray, shape (nz, 3)
        Horizontal means [cm s^-1], [G].
    reynolds : ndarray, shape (nz, 3, 3)
        <u'_i u'_j> [cm^2 s^-2].
    maxwell : ndarray, shape (nz, 3, 3)
        <b'_i b'_j> [G^2].
    emf : ndarray, shape (nz, 3)
        <u' x b'> [cm s^-1 G].
    rho : ndarray, shape (nz,), or None
        Mean density [g cm^-3].
    """

    mean_u: NDArray[np.float64]
    mean_b: NDArray[np.float64]
    reynolds: NDArray[np.float64]
    maxwell: NDArray[np.float64]
    emf: NDArray[np.float64]
    rho: NDArray[np.float64] | None = None

    def __repr__(self) -> str:
        return f"OnePointProfiles(nz={self.mean_u.shape[0]})"


def one_point_profiles(snapshot: Snapshot, *, slab: int | None = None) -> OnePointProfiles:
    """One-point statistics per height of a snapshot, reading it slab by slab (constant memory).

    The fluctuation products are accumulated as raw second moments in float64 and centred at the end,
    ``<u'_i u'_j> = <u_i u_j> - <u_i><u_j>``; for fields whose fluctuations are much smaller than their
    means this loses digits, so prefer `fluxfunnel.stats` when the snapshot fits in memory.

    Parameters
    ----------
    snapshot : Snapshot
        From `open_snapshot`.
    slab : int, optional
        x-planes per slab (see `Snapshot.slabs`).

    Returns
    -------
    OnePointProfiles
    """
    nx, ny, nz = snapshot.shape
    s_u = np.zeros((nz, 3))
    s_b = np.zeros((nz, 3))
    s_uu = np.zeros((nz, 3, 3))
    s_bb = np.zeros((nz, 3, 3))
    s_ub = np.zeros((nz, 3, 3))
    s_rho = np.zeros(nz) if snapshot.density is not None else None
    for _, arrays in snapshot.slabs(size=slab):
        u = arrays["velocity"].astype(np.float64, copy=False)
        b = arrays["field"].astype(np.float64, copy=False)
        for name, arr in (("velocity", u), ("field", b)):
            if not np.all(np.isfinite(arr)):
                raise InputError(f"{name}: must be finite; found NaN or infinity in the snapshot")
        s_u += u.sum(axis=(1, 2)).T
        s_b += b.sum(axis=(1, 2)).T
        s_uu += np.einsum("ixyz,jxyz->zij", u, u)
        s_bb += np.einsum("ixyz,jxyz->zij", b, b)
        s_ub += np.einsum("ixyz,jxyz->zij", u, b)
        if s_rho is not None:
            rho = arrays["density"].astype(np.float64, copy=False)
            if np.any(~np.isfinite(rho)) or np.any(rho <= 0):
                raise InputError("density: must be finite and positive everywhere in the snapshot")
            s_rho += rho.sum(axis=(0, 1))
    n = nx * ny
    mu, mb = s_u / n, s_b / n
    rey = s_uu / n - mu[:, :, None] * mu[:, None, :]
    mxw = s_bb / n - mb[:, :, None] * mb[:, None, :]
    cross = s_ub / n - mu[:, :, None] * mb[:, None, :]  # <u'_i b'_j>
    emf = np.stack(
        [cross[:, 1, 2] - cross[:, 2, 1], cross[:, 2, 0] - cross[:, 0, 2], cross[:, 0, 1] - cross[:, 1, 0]], axis=-1
    )
    return OnePointProfiles(mean_u=mu, mean_b=mb, reynolds=rey, maxwell=mxw, emf=emf,
                            rho=None if s_rho is None else s_rho / n)
