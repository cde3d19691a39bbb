"""Write outputs so that a crash never leaves a half-written file under the final name."""

from __future__ import annotations

import contextlib
import logging
import os
import re
import shutil
import signal
import threading
from collections.abc import Iterator
from pathlib import Path

from ..errors import FileOverwriteError, TrajectoryError

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
#: final paths of the sets this process has switched into place (see :func:`was_switched`)
_SWITCHED: set[Path] = set()
#: kinds of temporary beside an output: the new file, the previous one kept until the switch
_KINDS = ("partial", "previous")


def _partial_name(final: Path, kind: str = "partial") -> Path:
    return final.with_name(f".{final.stem}.{os.getpid()}.{kind}{final.suffix}")


def was_switched(path: str | Path) -> bool:
    """True once a set holding ``path`` has been switched into place by this process."""
    return Path(path) in _SWITCHED


def forget_switched(paths: list[Path]) -> None:
    """A new run of these outputs begins: earlier switches no longer describe them."""
    _SWITCHED.difference_update(Path(p) for p in paths)


@contextlib.contextmanager
def staged(paths: list[Path], *, overwrite: bool) -> Iterator[dict[Path, Path]]:
    """Temporary paths for several outputs, all switched into place only when all are written.

    Yields ``{final: temporary}``. A failure or an interrupt anywhere in the block
    removes every temporary and leaves all previous outputs as they were, so a set
    of outputs (GeoPackage, tables, report) always comes from one run.

    The switch itself holds a lock on the destination folders (two runs never
    interleave their renames), defers Ctrl-C and SIGTERM until it is done, creates
    new names exclusively (without ``overwrite``, a file another run made meanwhile
    is never replaced) and undoes itself if a rename fails.

    Raises
    ------
    FileOverwriteError
        An output exists (or appeared meanwhile) and ``overwrite`` is false.
    OutputError
        A file-system fault (disk full, read-only folder) while writing or switching.
    """
    from .targets import output_fault

    finals = [Path(p) for p in paths]
    forget_switched(finals)
    for f in finals:
        refuse_overwrite(f, overwrite=overwrite)
    tmps: dict[Path, Path] = {}
    _STAGED.update(_partial_name(f) for f in finals)
    try:
        for f in finals:
            f.parent.mkdir(parents=True, exist_ok=True)
            remove_stale_partials(f)
            tmps[f] = _partial_name(f)
            with contextlib.suppress(FileNotFoundError):
                tmps[f].unlink()
        yield tmps
        with _folders_locked({f.parent for f in finals}), _signals_deferred():
            _switch(tmps, overwrite=overwrite)
            _SWITCHED.update(finals)  # before a deferred interrupt is raised
    except Exception as exc:  # GDAL and SQLite raise their own types for the same faults
        if isinstance(exc, TrajectoryError):
            raise
        fault = output_fault(exc, list(dict.fromkeys(f.parent for f in finals)))
        if fault is None:
            raise
        raise fault from exc
    finally:
        _STAGED.difference_update(_partial_name(f) for f in finals)
        for f in finals:  # with SQLite's side files of an interrupted GeoPackage
            for kind in _KINDS:
                t = _partial_name(f, kind)
                for side in ("", "-journal", "-wal", "-shm"):
                    with contextlib.suppress(FileNotFoundError):
                        t.with_name(t.name + side).unlink()


def _switch(tmps: dict[Path, Path], *, overwrite: bool) -> None:
    """Rename every temporary onto its final name, or none (undone on any failure)."""
    done: list[tuple[Path, Path | None]] = []  # (final, its previous file kept aside)
    try:
        for f, t in tmps.items():
            if overwrite and f.exists():
                keep = _partial_name(f, "previous")
                _link_or_copy(f, keep)
                os.replace(t, f)
                done.append((f, keep))
            else:
                _create_exclusively(t, f)
                done.append((f, None))
    except BaseException:
        for f, keep in reversed(done):
            with contextlib.suppress(OSError):
                if keep is None:
                    f.unlink()
                else:
                    os.replace(keep, f)
        raise


def _link_or_copy(src: Path, dst: Path) -> None:
    with contextlib.suppress(FileNotFoundError):
        dst.unlink()
    try:
        os.link(src, dst)  # the previous file stays under its name until replaced
    except OSError:
        shutil.copy2(src, dst)  # file systems without hard links


def _create_exclusively(tmp: Path, final: Path) -> None:
    """Give ``tmp`` the name ``final`` unless that name exists (another run made it)."""
    try:
        os.link(tmp, final)  # atomic, and fails if the name exists
    except FileExistsError:
        raise FileOverwriteError(f"{final}: was created by another run while this one ran; "
                                 "nothing of this run was kept. Choose another name or pass "
                                 "--overwrite") from None
    except OSError:  # no hard links here: claim the name, then replace it
        try:
            os.close(os.open(final, os.O_CREAT | os.O_EXCL | os.O_WRONLY))
        except FileExistsError:
            raise FileOverwriteError(f"{final}: was created by another run while this one "
                                     "ran; nothing of this run was kept. Choose another name "
                                     "or pass --overwrite") from None
        os.replace(tmp, final)
        return
    tmp.unlink()


@contextlib.contextmanager
def _folders_locked(folders: set[Path]) -> Iterator[None]:
    """An exclusive lock on each folder (in a fixed order, so two runs never deadlock)."""
    try:
        import fcntl
    except ImportError:  # no advisory locks on this platform
        yield
        return
    fds = []
    try:
        for d in sorted({os.path.realpath(f) for f in folders}):
            fd = os.open(d, os.O_RDONLY)
            fds.append(fd)
            fcntl.flock(fd, fcntl.LOCK_EX)
        yield
    finally:
        for fd in fds:
            os.close(fd)  # closing releases the lock


@contextlib.contextmanager
def _signals_deferred() -> Iterator[None]:
    """Hold Ctrl-C and SIGTERM until the block is done, then raise the interrupt (main thread).

    The handlers are swapped for a recorder (a signal mask would not do: the
    kernel hands a process signal to any thread that does not block it).
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    caught: list[int] = []
    kinds = [signal.SIGINT, signal.SIGTERM]
    old = {k: signal.signal(k, lambda signum, frame: caught.append(signum)) for k in kinds}
    try:
        yield
    finally:
        for k, h in old.items():
            signal.signal(k, h)
    if caught:
        raise KeyboardInterrupt(f"signal {caught[0]}")


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # exists, owned by someone else
        return True
    return True


def remove_stale_partials(path: str | Path) -> list[Path]:
    """Remove temporaries ``.{stem}.{pid}.partial{suffix}`` (and ``.previous``) of killed runs.

    A file is stale when its process no longer runs (or is this process);
    the temporary of a run still going on is left alone. Returns the removed paths.
    """
    final = Path(path)
    pattern = re.compile(rf"^\.{re.escape(final.stem)}\.(\d+)\.(?:partial|previous)"
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
