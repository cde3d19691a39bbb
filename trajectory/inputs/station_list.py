"""Read a list of station chainages (existing survey stations) from a file.

An edge module: the only file access for stations placed at listed chainages.
Accepted: a CSV with a ``chainage`` column (any other columns are ignored), or a
plain text file with one chainage a line; ``#`` starts a comment.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import InputError, InputFileError


def read_station_chainages(path: str | Path) -> np.ndarray:
    """Chainages (m) listed in ``path``, sorted, duplicates removed; every bad line reported."""
    p = Path(path)
    if not p.is_file():
        raise InputFileError(f"{p}: station list not found")
    try:
        raw = pd.read_csv(p, dtype=str, comment="#", skipinitialspace=True, header=None)
    except pd.errors.EmptyDataError as exc:
        raise InputError(f"{p}: the station list is empty") from exc
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(f"{p}: cannot read the station list ({exc})") from exc
    head = [str(v).strip().lower() for v in raw.iloc[0]]
    if "chainage" in head:
        col, rows = raw.iloc[1:, head.index("chainage")], raw.index[1:]
    elif raw.shape[1] == 1:
        col, rows = raw.iloc[:, 0], raw.index
    else:
        raise InputError(f"{p}: give a `chainage` column or one chainage a line")
    vals = pd.to_numeric(col.str.strip(), errors="coerce").to_numpy(float)
    bad = [f"line {r + 1}: {col.iloc[i]!r} is not a number"
           for i, r in enumerate(rows) if not np.isfinite(vals[i])]
    if bad:
        raise InputError(f"{p}: {len(bad)} bad chainage(s) in the station list:\n  - "
                         + "\n  - ".join(bad[:20]))
    if vals.size == 0:
        raise InputError(f"{p}: the station list holds no chainage")
    return np.unique(vals)
