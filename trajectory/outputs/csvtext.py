"""CSV text of a table, column by column: the bytes of ``pandas.DataFrame.to_csv``, faster.

pandas formats every float through a Python callback per value when given a
``float_format``; a long line's station table (thousands of rows, some seventy
columns) then costs more to write than to assess. Here each column is formatted
in one list pass and the rows are joined once. The output is the same as
``df.to_csv(fh, index=False, float_format="%.{decimals}f")`` with pandas'
defaults (empty text for missing values, minimal quoting, ``\\n`` line ends);
``tests/test_csvtext.py`` checks that against pandas itself.
"""

from __future__ import annotations

from typing import TextIO

import pandas as pd

#: characters that make a field quoted (csv QUOTE_MINIMAL: delimiter, quote, line end)
_SPECIAL = (",", '"', "\n")


def _quote(text: str) -> str:
    if any(c in text for c in _SPECIAL):
        return '"' + text.replace('"', '""') + '"'
    return text


def _column_text(col: pd.Series, fmt: str) -> list[str] | None:
    """Each value's CSV field, or None for a kind of column left to pandas."""
    kind = col.dtype.kind
    if kind == "f":
        return [fmt % v if v == v else "" for v in col.to_numpy().tolist()]
    if kind in "iub":
        return [str(v) for v in col.to_numpy().tolist()]
    if kind == "O":   # objects and pandas' string dtypes
        vals = col.to_numpy(dtype=object, na_value=None).tolist()
        text = ["" if v is None or (isinstance(v, float) and v != v) else
                v if isinstance(v, str) else str(v) for v in vals]
        joined = "".join(text)
        if any(c in joined for c in _SPECIAL):  # quote only where a field needs it
            return [_quote(t) for t in text]
        return text
    return None


def write_csv(df: pd.DataFrame, fh: TextIO, *, decimals: int = 4,
              column_decimals: dict[str, int] | None = None) -> None:
    """Write ``df`` (header, no index) to the open text file ``fh`` as CSV.

    Floats get ``decimals`` decimals, or those ``column_decimals`` gives their column.
    """
    fmt = f"%.{decimals}f"
    own = {c: f"%.{d}f" for c, d in (column_decimals or {}).items()}
    cols = [_column_text(df[c], own.get(c, fmt)) for c in df.columns]
    if any(c is None for c in cols) or not df.columns.is_unique:
        if own:  # pandas takes one float format: these columns get their text first
            df = df.assign(**{c: _column_text(df[c], f) for c, f in own.items()
                              if c in df and df[c].dtype.kind == "f"})
        df.to_csv(fh, index=False, float_format=fmt, lineterminator="\n")  # rare kinds
        return
    fh.write(",".join(_quote(str(c)) for c in df.columns) + "\n")
    if len(df):
        fh.write("\n".join([",".join(row) for row in zip(*cols, strict=True)]))
        fh.write("\n")


def frame_is_plain(df: pd.DataFrame) -> bool:
    """True where :func:`write_csv` formats every column itself (no pandas fallback)."""
    return df.columns.is_unique and all(_column_text(df[c].iloc[:0], "%.4f") is not None
                                        for c in df.columns)
