"""Error and warning types.

One root class, :class:`TrajectoryError`; each subclass also inherits the
matching builtin so callers can catch either. Library code raises these; only
the command line turns them into a one-line message and an exit code.
"""

from __future__ import annotations


class TrajectoryError(Exception):
    """Root of every error trajectory raises on purpose."""


class InputError(TrajectoryError, ValueError):
    """An input file or its content cannot be used as given."""


class InputFileError(TrajectoryError, OSError):
    """An input file is missing, unreadable or of the wrong kind."""


class ConditionsError(InputError):
    """The section-conditions table is invalid; carries every finding."""

    def __init__(self, source: str, findings: list[str]):
        self.source = source
        self.findings = list(findings)
        head = f"{source}: {len(findings)} problem(s) in the section conditions"
        super().__init__(head + ":\n  - " + "\n  - ".join(findings))


class ParameterError(TrajectoryError, ValueError):
    """A run parameter is out of range or inconsistent with another."""


class FileOverwriteError(TrajectoryError, FileExistsError):
    """The output exists and overwriting was not asked for."""


class OutputError(TrajectoryError, OSError):
    """An output cannot be written where asked (a folder, read-only, disk full, an input)."""


# --- cancellation (issue 12: GIS front end)
class RunCancelled(TrajectoryError):
    """The user cancelled the run; raised from a progress callback, nothing is written."""


class TrajectoryWarning(UserWarning):
    """Something was accepted but deserves the user's attention."""
