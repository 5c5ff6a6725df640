"""Analytic reference flows on a grid, for validating coefficient measurement.

Both flows are steady, incompressible and Beltrami (``curl u`` parallel to ``u``), with closed-form
mean-field coefficients at low magnetic Reynolds number (see `fluxfunnel.measure.test_field`). Arrays are
``(3, nx, ny, nz)`` with components ``(x, y, z)`` and the grid point ``(i, j, l)`` at
``(i dx, j dy, l dz)``. The flows are periodic in a box of side ``2 pi / k`` (or a whole multiple of it);
choose ``spacing = 2 pi m / (k n)`` so that the grid covers whole periods.

References
----------
G. O. Roberts 1972, Phil. Trans. R. Soc. A 271, 411 (the Roberts flow).
V. I. Arnold 1965, C. R. Acad. Sci. Paris 261, 17; S. Childress 1970, J. Math. Phys. 11, 3063 (ABC flows).
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._errors import InputError
from ._validate import as_float, as_scalar, check_positive

__all__ = ["roberts_flow", "abc_flow"]


def _grid(shape: Any, spacing: Any) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    try:
        dims = tuple(int(s) for s in shape)
    except TypeError as exc:
        raise InputError(f"shape: must be three grid sizes (nx, ny, nz), got {shape!r}") from exc
    if len(dims) != 3 or any(n < 1 for n in dims) or any(int(s) != s for s in shape):
        raise InputError(f"shape: must be three positive whole numbers (nx, ny, nz), got {shape!r}")
    h = as_float("spacing", spacing, unit="cm")
    if h.ndim == 0:
        h = np.full(3, float(h))
    if h.shape != (3,):
        raise InputError(f"spacing: must be a number or three numbers (dx, dy, dz), got shape {h.shape}")
    check_positive("spacing", h)
    axes = [np.arange(n) * d for n, d in zip(dims, h, strict=True)]
    x, y, z = np.meshgrid(*axes, indexing="ij")
    return x, y, z



def roberts_flow(shape: Any, *, u0: Any, k: Any, spacing: Any) -> NDArray[np.float64]:
    r"""Roberts flow on a grid.

    .. math::

        \mathbf u = u_0\,(\sin kx \cos ky,\; -\cos kx \sin ky,\; \sqrt2 \sin kx \sin ky),

    which satisfies :math:`\nabla\times\mathbf u = k_f \mathbf u` with :math:`k_f = \sqrt2 k`,
    :math:`\langle u^2\rangle = u_0^2` and kinetic helicity :math:`\langle\mathbf u\cdot\boldsymbol\omega
    \rangle = k_f u_0^2`. It does not depend on z.

    Parameters
    ----------
    shape : tuple of int
        Grid size ``(nx, ny, nz)``.
    u0 : float
        Velocity amplitude, cm s^-1.
    k : float
        Horizontal wavenumber, rad cm^-1 (must be positive).
    spacing : float or tuple of float
        Grid spacing ``dx`` (all axes) or ``(dx, dy, dz)``, cm.

    Returns
    -------
    ndarray, shape (3, nx, ny, nz)
        Velocity, cm s^-1.

    References
    ----------
    G. O. Roberts 1972, Phil. Trans. R. Soc. A 271, 411.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.flows import roberts_flow
    >>> u = roberts_flow((16, 16, 4), u0=2.0, k=1.0, spacing=2 * np.pi / 16)
    >>> round(float(np.mean(np.sum(u**2, axis=0))), 12)
    4.0
    """
    amp = as_scalar("u0", u0, "cm / s")
    kk = as_scalar("k", k, "1 / cm")
    check_positive("k", np.asarray(kk))
    x, y, _ = _grid(shape, spacing)
    sx, cx, sy, cy = np.sin(kk * x), np.cos(kk * x), np.sin(kk * y), np.cos(kk * y)
    return np.stack([amp * sx * cy, -amp * cx * sy, amp * np.sqrt(2.0) * sx * sy])


def abc_flow(shape: Any, *, a: Any, b: Any, c: Any, k: Any, spacing: Any) -> NDArray[np.float64]:
    r"""Arnold-Beltrami-Childress (ABC) flow on a grid.

    .. math::

        \mathbf u = (A \sin kz + C \cos ky,\; B \sin kx + A \cos kz,\; C \sin ky + B \cos kx),

    with :math:`\nabla\times\mathbf u = k\mathbf u` and :math:`\langle u^2\rangle = A^2 + B^2 + C^2` over a
    period.

    Parameters
    ----------
    shape : tuple of int
        Grid size ``(nx, ny, nz)``.
    a, b, c : float
        Amplitudes A, B, C, cm s^-1.
    k : float
        Wavenumber, rad cm^-1 (must be positive).
    spacing : float or tuple of float
        Grid spacing ``dx`` (all axes) or ``(dx, dy, dz)``, cm.

    Returns
    -------
    ndarray, shape (3, nx, ny, nz)
        Velocity, cm s^-1.

    References
    ----------
    V. I. Arnold 1965, C. R. Acad. Sci. Paris 261, 17; S. Childress 1970, J. Math. Phys. 11, 3063.

    Examples
    --------
    >>> import numpy as np
    >>> from fluxfunnel.flows import abc_flow
    >>> u = abc_flow((8, 8, 8), a=1.0, b=1.0, c=1.0, k=1.0, spacing=2 * np.pi / 8)
    >>> round(float(np.mean(np.sum(u**2, axis=0))), 12)
    3.0
    """
    aa = as_scalar("a", a, "cm / s")
    bb = as_scalar("b", b, "cm / s")
    cc = as_scalar("c", c, "cm / s")
    kk = as_scalar("k", k, "1 / cm")
    check_positive("k", np.asarray(kk))
    x, y, z = _grid(shape, spacing)
    return np.stack(
        [
            aa * np.sin(kk * z) + cc * np.cos(kk * y),
            bb * np.sin(kk * x) + aa * np.cos(kk * z),
            cc * np.sin(kk * y) + bb * np.cos(kk * x),
        ]
    )
