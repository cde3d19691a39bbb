"""Write outputs so that a crash never leaves a half-written file under the final name."""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterator
from pathlib import Path

from ..errors import FileOverwriteError


def refuse_overwrite(path: str | Path, *, overwrite: bool) -> None:
    """Raise :class:`FileOverwriteError` if ``path`` exists and overwriting was not asked for."""
    p = Path(path)
    if p.exists() and not overwrite:
        raise FileOverwriteError(f"{p}: exists already; choose another name or pass --overwrite")


@contextlib.contextmanager
def atomic_path(path: str | Path, *, overwrite: bool) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it into place on success.

    The temporary file lives in the destination folder (so the rename is atomic
    on one file system) and is removed if the block fails or is interrupted.
    """
    final = Path(path)
    refuse_overwrite(final, overwrite=overwrite)
    final.parent.mkdir(parents=True, exist_ok=True)
    tmp = final.with_name(f".{final.stem}.{os.getpid()}.partial{final.suffix}")
    if tmp.exists():
        tmp.unlink()
    try:
        yield tmp
        os.replace(tmp, final)
    finally:
        if tmp.exists():
            tmp.unlink()
