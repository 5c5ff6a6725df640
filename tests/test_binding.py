"""The binding layer: error mapping and Ctrl-C handling of long Rust work."""

import signal
import time

import fluxfunnel
import pytest
from conftest import sigint_after
from fluxfunnel import ConvergenceError, FluxfunnelError, InputError, _core


def test_core_errors_map_to_python_classes():
    with pytest.raises(InputError, match="mass: must be positive") as info:
        _core._raise_core_error("input")
    assert isinstance(info.value, ValueError) and isinstance(info.value, FluxfunnelError)
    with pytest.raises(ConvergenceError) as info:
        _core._raise_core_error("convergence")
    assert isinstance(info.value, RuntimeError)
    assert info.value.residual == pytest.approx(0.25)
    with pytest.raises(KeyboardInterrupt):
        _core._raise_core_error("interrupted")


def test_long_work_returns_and_validates():
    assert _core._busy_wait(0.05) >= 0.05
    with pytest.raises(InputError, match="seconds"):
        _core._busy_wait(-1.0)


@pytest.mark.skipif(not hasattr(signal, "SIGINT"), reason="needs POSIX signals")
def test_ctrl_c_stops_long_work_promptly():
    # A SIGINT sent 0.2 s into a 30 s computation must stop it within a fraction of a second.
    start = time.monotonic()
    with sigint_after(0.2):
        with pytest.raises(KeyboardInterrupt):
            _core._busy_wait(30.0)
    assert time.monotonic() - start < 2.0


def test_version_and_lazy_stages():
    assert fluxfunnel.__version__ == _core.__version__
    with pytest.raises(AttributeError):
        fluxfunnel.no_such_stage  # noqa: B018
