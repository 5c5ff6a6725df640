"""Exception classes raised by fluxfunnel (the Rust core maps its errors onto these)."""

from __future__ import annotations

__all__ = ["FluxfunnelError", "InputError", "ConvergenceError"]


class FluxfunnelError(Exception):
    """Base class of every error fluxfunnel raises on purpose."""


class InputError(FluxfunnelError, ValueError):
    """An argument is unusable; the message names the argument and says what is wrong with it."""


class ConvergenceError(FluxfunnelError, RuntimeError):
    """An iterative method did not converge.

    Parameters
    ----------
    message : str
        What failed to converge.
    residual : float, optional
        The last residual reached, in the method's own norm.
    """

    def __init__(self, message: str, residual: float = float("nan")) -> None:
        super().__init__(message)
        self.residual = float(residual)
