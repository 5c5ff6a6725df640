"""File writing that never leaves a half-written file behind."""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path

__all__ = ["atomic_path", "write_text_atomic"]


@contextlib.contextmanager
def atomic_path(target: str | Path) -> Iterator[Path]:
    """Yield a temporary path beside ``target``; rename it onto ``target`` only if the block succeeds.

    The temporary file lives in the same folder (so the final rename is atomic on POSIX file systems) and is
    removed if the block raises, including on ``KeyboardInterrupt``.
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        os.replace(tmp_path, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            tmp_path.unlink()
        raise


def write_text_atomic(target: str | Path, text: str) -> Path:
    """Write ``text`` to ``target`` through `atomic_path`; returns the final path."""
    with atomic_path(target) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(target)
