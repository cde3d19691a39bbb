"""Where outputs may go: never onto an input, never twice, never where a folder cannot hold them.

Checked before any work is done, so a run with a wrong output path stops at once
with a message naming the path and what to do. File-system faults met while
writing (disk full, read-only folder) become the same kind of message through
:func:`output_fault`.
"""

from __future__ import annotations

import contextlib
import errno
import os
from collections.abc import Mapping, Sequence
from pathlib import Path

from ..errors import OutputError


def file_identity(p: str | Path) -> tuple[str, tuple[int, int] | None]:
    """What names one file: its real path (links resolved) and, where it exists, its device
    and inode (hard links share them)."""
    try:
        st = os.stat(p)
        inode: tuple[int, int] | None = (st.st_dev, st.st_ino)
    except OSError:  # does not exist yet
        inode = None
    return os.path.realpath(p), inode


def _same(a: tuple[str, tuple[int, int] | None], b: tuple[str, tuple[int, int] | None]) -> bool:
    """One file: the same real path, or hard links (same device and inode)."""
    return a[0] == b[0] or (a[1] is not None and a[1] == b[1])


def _folder_problem(p: Path, role: str) -> str | None:
    """Why the folder of ``p`` cannot hold a new file (None when it can)."""
    if p.is_dir():
        return (f"{p}: {role} is a folder; give a file name inside it "
                f"(e.g. {p / ('results' + (p.suffix or '.gpkg'))})")
    parent = p.parent
    while not parent.exists():  # folders still to be made: judge the nearest existing one
        if parent == parent.parent:
            break
        parent = parent.parent
    if parent.exists() and not parent.is_dir():
        return (f"{p}: the output folder {parent} is a file, not a folder; "
                f"choose another folder for {role}")
    if parent.is_dir() and not os.access(parent, os.W_OK | os.X_OK):
        return (f"{p}: the folder {parent} cannot be written (read-only or no permission); "
                f"choose a writable folder for {role}")
    return None


def check_targets(outputs: dict[str, Path], inputs: Mapping[str, str | Path]) -> None:
    """Refuse outputs that would replace an input or each other, or that cannot be written.

    Parameters
    ----------
    outputs
        Role (e.g. ``--out``, ``--table``) -> path of every file the run writes.
    inputs
        Role (e.g. ``--conditions``) -> path of every file the run reads.

    Raises
    ------
    OutputError
        The first problem found, naming the path, its role and what to do.
    """
    ins = [(in_role, q, file_identity(q)) for in_role, q in inputs.items()]  # once each
    outs = [(role, p, file_identity(p)) for role, p in outputs.items()]
    for role, p, ident in outs:
        problem = _folder_problem(Path(p), role)
        if problem:
            raise OutputError(problem)
        for in_role, q, q_ident in ins:
            if _same(ident, q_ident):
                raise OutputError(f"{p}: {role} is the input {in_role} ({q}); writing it would "
                                  "destroy the input. Choose another output name")
    for k, (role, p, ident) in enumerate(outs):
        for other_role, _, other in outs[:k]:
            if _same(ident, other):
                raise OutputError(f"{p}: {role} and {other_role} name the same file; one "
                                  "would be lost. Give them different names")


#: errno values of file-system faults a user can act on, and what to say
_ERRNO_TEXT = {
    errno.ENOSPC: "no space left on the device (disk full); free space or choose another folder",
    errno.EDQUOT: "disk quota exceeded; free space or choose another folder",
    errno.EFBIG: "the file grew beyond the size allowed; free space, raise the limit or choose "
                 "another folder",
    errno.EROFS: "the folder is on a read-only file system; choose a writable folder",
    errno.EACCES: "permission denied; choose a folder you can write to",
    errno.EPERM: "permission denied; choose a folder you can write to",
    errno.ENOTDIR: "a part of the path is a file, not a folder; choose another folder",
    errno.EISDIR: "the path is a folder; give a file name",
}
#: the same faults as GDAL and SQLite word them (they raise their own error types)
_MESSAGE_ERRNO = {
    "no space left": errno.ENOSPC, "database or disk is full": errno.ENOSPC,
    "disk i/o error": errno.ENOSPC, "file too large": errno.EFBIG,
    "read-only file system": errno.EROFS, "readonly database": errno.EROFS,
    "permission denied": errno.EACCES, "not a directory": errno.ENOTDIR,
    "is a directory": errno.EISDIR, "disk quota": errno.EDQUOT,
}


def output_fault(exc: BaseException, folders: Sequence[str | Path]) -> OutputError | None:
    """A one-line :class:`OutputError` for a file-system fault met writing into ``folders``.

    GDAL and SQLite often word a full disk as something else (a table that
    "does not exist"), so a small probe file is written into each folder (the
    failed run's temporaries still there) to see which one refuses: that one is
    named (the first when none does). None when ``exc`` is not such a fault:
    then it is a bug and must propagate as it is.
    """
    code = _fault_code(exc)
    refusing = [(Path(f), c) for f in folders if (c := _probe(Path(f))) is not None]
    if code is None and refusing:
        code = refusing[0][1]
    if code is None:
        return None
    folder = next((f for f, c in refusing if c == code), Path(folders[0]))
    return OutputError(f"{folder}: the outputs cannot be written: {_ERRNO_TEXT[code]}; "
                       "nothing was replaced")


def _fault_code(exc: BaseException) -> int | None:
    e: BaseException | None = exc
    seen: set[int] = set()
    while e is not None and id(e) not in seen:
        seen.add(id(e))
        code = e.errno if isinstance(e, OSError) and e.errno in _ERRNO_TEXT else None
        if code is None:
            text = str(e).lower()
            code = next((c for k, c in _MESSAGE_ERRNO.items() if k in text), None)
        if code is not None:
            return code
        e = e.__cause__ or e.__context__
    return None


#: size of the probe written by :func:`_probe` (larger than any file-system block)
_PROBE_BYTES = 1 << 16


def _probe(folder: Path) -> int | None:
    """The errno of a fault writing a small file into ``folder`` (None: it can be written)."""
    probe = folder / f".trajectory.{os.getpid()}.probe"
    try:
        with open(probe, "wb") as fh:
            fh.write(b"\0" * _PROBE_BYTES)
            fh.flush()
            os.fsync(fh.fileno())
    except OSError as exc:
        return exc.errno if exc.errno in _ERRNO_TEXT else None
    finally:
        with contextlib.suppress(OSError):
            probe.unlink()
    return None
