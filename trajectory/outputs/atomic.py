"""Write outputs so that a crash never leaves a half-written file under the final name."""

from __future__ import annotations

import contextlib
import logging
import os
import re
from collections.abc import Iterator
from pathlib import Path

from ..errors import FileOverwriteError

log = logging.getLogger(__name__)


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
    if final in _STAGED:  # a temporary of :func:`staged`: written in place, renamed there
        yield final
        return
    with staged([final], overwrite=overwrite) as tmp:
        yield tmp[final]


#: temporaries of the sets being written by :func:`staged` (forked writers inherit it)
_STAGED: set[Path] = set()


def _partial_name(final: Path) -> Path:
    return final.with_name(f".{final.stem}.{os.getpid()}.partial{final.suffix}")


@contextlib.contextmanager
def staged(paths: list[Path], *, overwrite: bool) -> Iterator[dict[Path, Path]]:
    """Temporary paths for several outputs, all renamed into place only when all are written.

    Yields ``{final: temporary}``. A failure or an interrupt anywhere in the block
    removes every temporary and leaves all previous outputs as they were, so a set
    of outputs (GeoPackage, tables) always comes from one run.
    """
    finals = [Path(p) for p in paths]
    for f in finals:
        refuse_overwrite(f, overwrite=overwrite)
    tmps = {}
    for f in finals:
        f.parent.mkdir(parents=True, exist_ok=True)
        remove_stale_partials(f)
        tmps[f] = _partial_name(f)
        with contextlib.suppress(FileNotFoundError):
            tmps[f].unlink()
    _STAGED.update(tmps.values())
    try:
        yield tmps
        for f, t in tmps.items():
            os.replace(t, f)
    finally:
        _STAGED.difference_update(tmps.values())
        for t in tmps.values():  # with SQLite's side files of an interrupted GeoPackage
            for side in ("", "-journal", "-wal", "-shm"):
                with contextlib.suppress(FileNotFoundError):
                    t.with_name(t.name + side).unlink()


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # exists, owned by someone else
        return True
    return True


def remove_stale_partials(path: str | Path) -> list[Path]:
    """Remove temporary files ``.{stem}.{pid}.partial{suffix}`` left by killed runs.

    A file is stale when its process no longer runs (or is this process);
    the temporary of a run still going on is left alone. Returns the removed paths.
    """
    final = Path(path)
    pattern = re.compile(rf"^\.{re.escape(final.stem)}\.(\d+)\.partial"
                         rf"{re.escape(final.suffix)}(-journal|-wal|-shm)?$")
    removed = []
    if not final.parent.is_dir():
        return removed
    for p in final.parent.iterdir():
        m = pattern.match(p.name)
        if m and (int(m.group(1)) == os.getpid() or not _alive(int(m.group(1)))):
            with contextlib.suppress(FileNotFoundError):
                p.unlink()
                removed.append(p)
                log.info("removed %s, left by an interrupted run", p.name)
    return removed
