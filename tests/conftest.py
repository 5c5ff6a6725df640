"""Shared test helpers."""

from __future__ import annotations

import contextlib
import gc
import os
import signal
import threading
from collections.abc import Iterator


@contextlib.contextmanager
def sigint_after(seconds: float) -> Iterator[None]:
    """Send this process a SIGINT ``seconds`` after entering the block.

    Automatic garbage collection is paused inside the block: a collection runs the callbacks that other
    libraries register in ``gc.callbacks`` (hypothesis does), and a KeyboardInterrupt raised while such a
    callback runs is printed as "Exception ignored" and lost instead of reaching the code under test. Real
    users' Ctrl-C is not affected by this; only the test's timing of the signal is.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    timer = threading.Timer(seconds, lambda: os.kill(os.getpid(), signal.SIGINT))
    timer.start()
    try:
        yield
    finally:
        timer.cancel()
        if was_enabled:
            gc.enable()
