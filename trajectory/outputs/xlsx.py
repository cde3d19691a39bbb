"""A small columnar XLSX writer: SpreadsheetML (ECMA-376 Part 1) written straight into a zip.

Sheets are given column by column (numpy arrays, pandas Series or lists).
Each column becomes a piece of one row template (text through the column's
distinct values), and a block of rows is rendered by a single C-level ``%``
format, so no Python object is made per cell. Each sheet may have a few
header rows above the body, a frozen pane, column widths and cell styles
(bold, italic, font colour, solid fill).

Values: finite floats as numbers (rounded to ``decimals`` where given),
integers as integers, booleans as booleans, text as inline strings (XML
escaped; characters XML cannot carry, and carriage returns, as ``_xHHHH_``,
ECMA-376 Part 1 §22.9.2.19); NaN, infinities, None and empty text leave the cell out (an empty
cell is written only where it carries a style). Other objects are written as
their text (``str``). Output bytes depend only on the input: zip entries carry
the zip epoch (1980-01-01) as their time.
"""

from __future__ import annotations

import re
import zipfile
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any
from xml.sax.saxutils import quoteattr

import numpy as np
import pandas as pd

#: SpreadsheetML limits (ECMA-376 Part 1, §18.3.1.73 row r, Excel's column range A..XFD)
MAX_ROWS = 1_048_576
MAX_COLUMNS = 16_384

_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PKG_REL = "http://schemas.openxmlformats.org/package/2006/relationships"
_XML_HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
_CT_SHEET = "application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"
_CT_BOOK = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"
_CT_STYLES = "application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"
_CT_CORE = "application/vnd.openxmlformats-package.core-properties+xml"
#: rows formatted at once (bounds the memory of long sheets)
_BLOCK_ROWS = 1024
#: cells above which a sheet is written with zip64 sizes (its XML may pass 4 GiB)
_ZIP64_CELLS = 5_000_000

#: characters XML 1.0 cannot hold (and CR, which XML reads as LF), and a literal
#: ``_xHHHH_`` that must not be read as an escape
_ESCAPED = re.compile("[\x00-\x08\x0b-\x1f\ud800-\udfff\ufffe\uffff]")
_LITERAL_ESCAPE = re.compile("_(x[0-9A-Fa-f]{4}_)")
_BAD_SHEET_NAME = re.compile(r"[\[\]:*?/\\]|^'|'$")
_HEX6 = re.compile("[0-9A-Fa-f]{6}")


@dataclass(frozen=True)
class Style:
    """Look of a cell: font weight, slant and colour, solid fill (colours as ``RRGGBB``),
    and a number format code (ECMA-376 Part 1 §18.8.31, e.g. ``"0.00"``)."""

    bold: bool = False
    italic: bool = False
    colour: str | None = None
    fill: str | None = None
    number_format: str | None = None


def _normalised(style: Style) -> Style:
    """``style`` with its colours as upper-case ``RRGGBB`` (``#`` dropped), checked."""
    out = []
    for c in (style.colour, style.fill):
        if c is not None and not _HEX6.fullmatch(c.lstrip("#")):
            raise ValueError(f"colour {c!r}: give six hex digits RRGGBB, e.g. 'A6103C'")
        out.append(None if c is None else c.lstrip("#").upper())
    return Style(style.bold, style.italic, *out, style.number_format or None)


def column_letter(index: int) -> str:
    """Spreadsheet letters of the 0-based column ``index`` (0 -> A, 26 -> AA)."""
    s, n = "", index + 1
    while n:
        n, r = divmod(n - 1, 26)
        s = chr(65 + r) + s
    return s


def _cell_ref(ref: str) -> tuple[int, int]:
    """0-based (column, row) of an A1 reference such as ``B4``."""
    m = re.fullmatch(r"([A-Za-z]{1,3})([1-9][0-9]*)", ref)
    if not m:
        raise ValueError(f"{ref!r} is not a cell reference like 'B4'")
    col = 0
    for ch in m.group(1).upper():
        col = col * 26 + ord(ch) - 64
    return col - 1, int(m.group(2)) - 1


def _text(s: str) -> str:
    """Text content of an XML element, with SpreadsheetML escapes."""
    s = s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    if "_x" in s:
        s = _LITERAL_ESCAPE.sub(r"_x005F_\1", s)
    return _ESCAPED.sub(lambda m: f"_x{ord(m.group()):04X}_", s)


def _inline(s: str) -> str:
    keep = ' xml:space="preserve"' if s[0].isspace() or s[-1].isspace() else ""
    return f' t="inlineStr"><is><t{keep}>{_text(s)}</t></is></c>'


def _float(v: float, decimals: int | None) -> str:
    """Shortest round-trip text, or fixed-point with ``decimals`` (as the body's ``%.4f``)."""
    return repr(float(v)) if decimals is None else f"{float(v):.{decimals}f}"


def _value(v: Any, decimals: int | None) -> str | None:
    """The tail of one cell's XML after its reference and style (None: no value)."""
    if v is None or v is pd.NA or v is pd.NaT:
        return None
    if isinstance(v, (bool, np.bool_)):
        return f' t="b"><v>{int(v)}</v></c>'
    if isinstance(v, (int, np.integer)):
        return f"><v>{int(v)}</v></c>"
    if isinstance(v, (float, np.floating)):
        return f"><v>{_float(v, decimals)}</v></c>" if np.isfinite(v) else None
    s = v if isinstance(v, str) else str(v)
    return _inline(s) if s else None


@dataclass
class _Sheet:
    name: str
    columns: list[Any]
    head: list[Sequence[Any]]
    head_styles: list[int]
    styles: list[int | np.ndarray]
    freeze: tuple[int, int] | None
    widths: list[float] | None
    decimals: int | list[int | None] | None
    n: int
    autofilter: int | None = None   # 1-based row of the filter buttons


class Workbook:
    """Sheets and styles collected in memory, written in one go by :meth:`save`."""

    def __init__(self) -> None:
        self._styles: dict[Style, int] = {Style(): 0}
        self._sheets: list[_Sheet] = []

    def style(self, style: Style) -> int:
        """The id of ``style`` (registered on first use; 0 is the plain cell)."""
        return self._styles.setdefault(_normalised(style), len(self._styles))

    def add_sheet(self, name: str, columns: Sequence[Any], *,
                  head: Sequence[Sequence[Any]] = (), head_styles: Sequence[int] = (),
                  styles: Sequence[int | np.ndarray] | None = None,
                  freeze: str | None = None, widths: Sequence[float] | None = None,
                  decimals: int | Sequence[int | None] | None = None,
                  autofilter: int | None = None) -> None:
        """Add a sheet: ``head`` rows (values left to right) above the body ``columns``.

        ``head_styles`` has one style id per head row; ``styles`` one per body
        column, either a single id or an integer array of ids, one per row.
        ``freeze`` is the top-left cell of the scrolling pane (``"B4"`` keeps
        column A and rows 1-3 in view); ``widths`` are column widths in
        characters; ``decimals`` rounds the floats (one number, or one per column);
        ``autofilter`` is the 1-based
        row that carries filter buttons over every column, down to the last row.
        """
        if not name or len(name) > 31 or _BAD_SHEET_NAME.search(name):
            raise ValueError(f"sheet name {name!r}: give 1 to 31 characters, none of "
                             "[]:*?/\\ and no apostrophe at either end")
        if any(s.name.lower() == name.lower() for s in self._sheets):
            raise ValueError(f"sheet name {name!r} is used twice; give each sheet its own name")
        cols = list(columns)
        lengths = {len(c) for c in cols}
        if len(lengths) > 1:
            raise ValueError(f"sheet {name!r}: columns of different lengths {sorted(lengths)}")
        n = lengths.pop() if lengths else 0
        width = max([len(cols), *(len(r) for r in head)])
        if len(head) + n > MAX_ROWS or width > MAX_COLUMNS:
            raise ValueError(f"sheet {name!r}: {len(head) + n} rows x {width} columns is more "
                             f"than a spreadsheet holds ({MAX_ROWS} x {MAX_COLUMNS}); "
                             "split the table")
        st = list(styles) if styles is not None else [0] * len(cols)
        hs = list(head_styles) if head_styles else [0] * len(head)
        if len(st) != len(cols) or len(hs) != len(head):
            raise ValueError(f"sheet {name!r}: give one style per column and per head row")
        known = len(self._styles)
        for s in [*st, *hs]:
            a = np.asarray(s)
            if a.size and (a.min() < 0 or a.max() >= known):
                raise ValueError(f"sheet {name!r}: style id outside 0..{known - 1}; "
                                 "register styles with Workbook.style first")
            if a.ndim and len(a) != n:
                raise ValueError(f"sheet {name!r}: a style array needs one id per row ({n})")
        self._sheets.append(_Sheet(name, cols, [list(r) for r in head], hs, st,
                                   _cell_ref(freeze) if freeze else None,
                                   list(widths) if widths is not None else None,
                                   list(decimals) if isinstance(decimals, (list, tuple))
                                   else decimals, n,
                                   autofilter))

    def save(self, path: str | Path, *, when: datetime | None = None,
             compresslevel: int = 1) -> Path:
        """Write the workbook to ``path``; ``when`` (naive: UTC) dates the document properties.

        Zip entries carry the zip epoch 1980-01-01 as their time, so the bytes
        depend on the content only.
        """
        if not self._sheets:
            raise ValueError("a workbook needs at least one sheet")
        stamp = when.astimezone(UTC) if when and when.tzinfo else when
        parts = [("[Content_Types].xml", _content_types(len(self._sheets))),
                 ("_rels/.rels", _root_rels()),
                 ("docProps/core.xml", _core(stamp)),
                 ("xl/workbook.xml", _workbook_xml([s.name for s in self._sheets],
                                                   [_filter_ref(s) for s in self._sheets])),
                 ("xl/_rels/workbook.xml.rels", _workbook_rels(len(self._sheets))),
                 ("xl/styles.xml", _styles_xml(list(self._styles)))]
        with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED, compresslevel=compresslevel) as zf:
            for name, text in parts:
                with zf.open(name, "w") as fh:
                    fh.write(text.encode("utf-8"))
            for k, sh in enumerate(self._sheets, start=1):
                big = sh.n * max(len(sh.columns), 1) > _ZIP64_CELLS
                with zf.open(f"xl/worksheets/sheet{k}.xml", "w", force_zip64=big) as fh:
                    for piece in _sheet_pieces(sh):
                        fh.write(piece.encode("utf-8"))
        return Path(path)


# --- sheet body: one row template, filled a block of rows at a time ---------------------

def _style_attr(sid: int) -> str:
    return f' s="{sid}"' if sid else ""


@dataclass
class _Column:
    """How one body column enters the row template: its XML with ``%`` fields, and their
    arguments (``None`` stands for the row number)."""

    template: str
    args: list[np.ndarray | None]
    empty: bool = False         # has empty styled cells (floats: written as nan first)
    gone: bool = False          # has cells to leave out (marked, then cut)


def _codes_and_tails(values: Any, decimals: int | None) -> tuple[np.ndarray, list[str | None]]:
    """Code per row and the XML tail per code (code -1 and a None tail: no value)."""
    arr = np.asarray(values, dtype=object)
    if pd.api.types.infer_dtype(arr, skipna=True) in ("string", "empty"):
        codes, uniques = pd.factorize(arr)          # missing -> -1; few distinct texts
        return codes, [_inline(u) if u else None for u in uniques]
    tails = [_value(v, decimals) for v in arr.tolist()]   # mixed objects: one by one
    return np.arange(len(tails)), tails


#: value of a cell that is left out: a float's stand-in, and the mark that replaces it
_GONE_FLOAT = np.inf
_GONE = "\x01"          # XML cannot hold it, so it is in no text written
_GONE_VALUE = "><v>inf</v></c>"
#: value of a cell that keeps only its style (an empty styled cell)
_EMPTY_FLOAT = np.nan
_EMPTY_VALUE = "><v>nan</v></c>"


def _plan(values: Any, letter: str, sid: int | np.ndarray, decimals: int | None) -> _Column:
    """The template and arguments of one body column.

    A missing value leaves the cell out where the row is unstyled (the cell is
    marked, then cut from the block) and writes an empty styled cell elsewhere.
    """
    a = values if isinstance(values, np.ndarray) else pd.Series(values).to_numpy()
    ids = np.broadcast_to(np.asarray(sid, dtype=np.int64), (len(a),))
    if np.ndim(sid) > 0:
        table = np.array([_style_attr(k) for k in range(int(ids.max(initial=0)) + 1)],
                         dtype=object)
        style, style_args = "%s", [table[ids]]
    else:
        style, style_args = _style_attr(int(sid)), []
    plain = ids == 0
    head = f'<c r="{letter}%d"{style}'
    if isinstance(a, np.ndarray) and a.dtype.kind in "biu":
        typ = ' t="b"' if a.dtype.kind == "b" else ""
        return _Column(head + typ + "><v>%d</v></c>",
                       [None, *style_args, a.astype(np.int8) if typ else a])
    if isinstance(a, np.ndarray) and a.dtype.kind == "f":
        a = a.astype(np.float64)
        bad = ~np.isfinite(a)
        if (bad & plain).all():
            return _Column("", [])
        spec = "%r" if decimals is None else f"%.{decimals}f"
        vals = np.where(bad, np.where(plain, _GONE_FLOAT, _EMPTY_FLOAT), a)
        return _Column(head + f"><v>{spec}</v></c>", [None, *style_args, vals],
                       empty=bool((bad & ~plain).any()), gone=bool((bad & plain).any()))
    codes, tails = _codes_and_tails(a, decimals)
    missing = np.array([t is None for t in tails] + [True])[codes]   # code -1: the last
    if (missing & plain).all():
        return _Column("", [])
    rows = np.array([*(t or "" for t in tails), ""], dtype=object)[codes]
    rows[missing] = np.where(plain[missing], _GONE, "/>")
    return _Column(head + "%s", [None, *style_args, rows], gone=bool((missing & plain).any()))


def _body(plans: list[_Column], first_row: int, n: int) -> Iterator[str]:
    """The body rows, a block at a time: one ``%`` format per block, no object per cell."""
    template = '<row r="%d">' + "".join(p.template for p in plans) + "</row>"
    args = [None, *(x for p in plans for x in p.args)]
    empty = any(p.empty for p in plans)
    gone = any(p.gone for p in plans)
    for start in range(0, n, _BLOCK_ROWS):
        stop = min(n, start + _BLOCK_ROWS)
        block = np.empty((stop - start, len(args)), dtype=object)
        rows = np.arange(first_row + start, first_row + stop).astype(object)
        for j, x in enumerate(args):
            block[:, j] = rows if x is None else x[start:stop]
        text = (template * (stop - start)) % tuple(block.ravel().tolist())
        if empty:
            text = text.replace(_EMPTY_VALUE, "/>")
        if gone:      # each piece but the last ends in the start of a cell to leave out
            pieces = text.replace(_GONE_VALUE, _GONE).split(_GONE)
            text = "".join([p[:p.rindex("<c ")] for p in pieces[:-1]] + pieces[-1:])
        yield text


def _head_row(values: Sequence[Any], r: int, sid: int, decimals: int | None) -> str:
    s = _style_attr(sid)
    cells = []
    for j, v in enumerate(values):
        tail = _value(v, decimals)
        ref = f'<c r="{column_letter(j)}{r}"{s}'
        cells.append(ref + tail if tail is not None else (ref + "/>" if sid else ""))
    return f'<row r="{r}">{"".join(cells)}</row>'


def _pane(col: int, row: int) -> str:
    if col == 0 and row == 0:
        return ""
    top_left = f"{column_letter(col)}{row + 1}"
    active = "bottomRight" if col and row else ("bottomLeft" if row else "topRight")
    split = (f' xSplit="{col}"' if col else "") + (f' ySplit="{row}"' if row else "")
    return (f'<pane{split} topLeftCell="{top_left}" activePane="{active}" state="frozen"/>'
            f'<selection pane="{active}" activeCell="{top_left}" sqref="{top_left}"/>')


def _sheet_pieces(sh: _Sheet) -> Iterator[str]:
    """The worksheet part (ECMA-376 Part 1, §18.3.1.99) in pieces of bounded size."""
    h = len(sh.head)
    width = max([len(sh.columns), *(len(r) for r in sh.head)])
    last = f"{column_letter(max(width, 1) - 1)}{max(h + sh.n, 1)}"
    pane = _pane(*sh.freeze) if sh.freeze else ""
    cols = ""
    if sh.widths:
        cols = "<cols>" + "".join(
            f'<col min="{j}" max="{j}" width="{w:g}" customWidth="1"/>'
            for j, w in enumerate(sh.widths, start=1)) + "</cols>"
    per_column = isinstance(sh.decimals, (list, tuple))
    head = "".join(_head_row(r, k, s, None if per_column else sh.decimals)
                   for k, (r, s) in enumerate(zip(sh.head, sh.head_styles, strict=True), 1))
    yield (f'{_XML_HEAD}<worksheet xmlns="{_MAIN}" xmlns:r="{_REL}">'
           f'<dimension ref="A1:{last}"/><sheetViews><sheetView workbookViewId="0">{pane}'
           f'</sheetView></sheetViews><sheetFormatPr defaultRowHeight="15"/>{cols}'
           f"<sheetData>{head}")
    plans = [_plan(c, column_letter(j), s, sh.decimals[j] if per_column else sh.decimals)
             for j, (c, s) in enumerate(zip(sh.columns, sh.styles, strict=True))]
    yield from _body(plans, h + 1, sh.n)
    ref = _filter_ref(sh)
    yield "</sheetData>" + (f'<autoFilter ref="{ref}"/>' if ref else "") + "</worksheet>"


def _filter_ref(sh: _Sheet) -> str | None:
    """The autofilter range of a sheet (``A3:K120``), None without one."""
    if not sh.autofilter:
        return None
    width = max([len(sh.columns), *(len(r) for r in sh.head)])
    last = max(len(sh.head) + sh.n, sh.autofilter)
    return f"A{sh.autofilter}:{column_letter(max(width, 1) - 1)}{last}"


# --- package parts ----------------------------------------------------------------------

def _content_types(n_sheets: int) -> str:
    sheets = "".join(f'<Override PartName="/xl/worksheets/sheet{k}.xml" '
                     f'ContentType="{_CT_SHEET}"/>' for k in range(1, n_sheets + 1))
    return (f'{_XML_HEAD}<Types xmlns="http://schemas.openxmlformats.org/package/2006/'
            'content-types"><Default Extension="rels" ContentType="application/'
            'vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" '
            'ContentType="application/xml"/>'
            f'<Override PartName="/xl/workbook.xml" ContentType="{_CT_BOOK}"/>'
            f'<Override PartName="/xl/styles.xml" ContentType="{_CT_STYLES}"/>'
            f'<Override PartName="/docProps/core.xml" ContentType="{_CT_CORE}"/>'
            f"{sheets}</Types>")


def _root_rels() -> str:
    return (f'{_XML_HEAD}<Relationships xmlns="{_PKG_REL}">'
            f'<Relationship Id="rId1" Type="{_REL}/officeDocument" Target="xl/workbook.xml"/>'
            '<Relationship Id="rId2" Type="http://schemas.openxmlformats.org/package/2006/'
            'relationships/metadata/core-properties" Target="docProps/core.xml"/>'
            "</Relationships>")


def _core(stamp: datetime | None) -> str:
    dates = ""
    if stamp is not None:
        iso = stamp.strftime("%Y-%m-%dT%H:%M:%SZ")
        dates = (f'<dcterms:created xsi:type="dcterms:W3CDTF">{iso}</dcterms:created>'
                 f'<dcterms:modified xsi:type="dcterms:W3CDTF">{iso}</dcterms:modified>')
    return (f"{_XML_HEAD}<cp:coreProperties xmlns:cp=\"http://schemas.openxmlformats.org/"
            'package/2006/metadata/core-properties" xmlns:dc="http://purl.org/dc/elements/1.1/" '
            'xmlns:dcterms="http://purl.org/dc/terms/" '
            'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">'
            f"<dc:creator>trajectory</dc:creator>{dates}</cp:coreProperties>")


def _workbook_xml(names: list[str], filters: list[str | None] | None = None) -> str:
    sheets = "".join(f'<sheet name={quoteattr(n)} sheetId="{k}" r:id="rId{k}"/>'
                     for k, n in enumerate(names, start=1))
    # each autofilter's range as the sheet's hidden _FilterDatabase name (as spreadsheets do)
    names_xml = "".join(_defined_filter(k, n, ref) for k, (n, ref) in enumerate(
        zip(names, filters or [None] * len(names), strict=True)) if ref)
    defined = f"<definedNames>{names_xml}</definedNames>" if names_xml else ""
    return (f'{_XML_HEAD}<workbook xmlns="{_MAIN}" xmlns:r="{_REL}">'
            f"<bookViews><workbookView/></bookViews><sheets>{sheets}</sheets>{defined}"
            "</workbook>")


def _defined_filter(k: int, name: str, ref: str) -> str:
    """``_xlnm._FilterDatabase`` of sheet ``k`` (0-based): an absolute reference."""
    a, b = ref.split(":")

    def absolute(cell: str) -> str:
        col, row = _cell_ref(cell)
        return f"${column_letter(col)}${row + 1}"

    quoted = name.replace("'", "''")
    return (f'<definedName name="_xlnm._FilterDatabase" localSheetId="{k}" hidden="1">'
            f"{_text(chr(39) + quoted + chr(39))}!{absolute(a)}:{absolute(b)}</definedName>")


def _workbook_rels(n_sheets: int) -> str:
    rels = "".join(f'<Relationship Id="rId{k}" Type="{_REL}/worksheet" '
                   f'Target="worksheets/sheet{k}.xml"/>' for k in range(1, n_sheets + 1))
    styles = (f'<Relationship Id="rId{n_sheets + 1}" Type="{_REL}/styles" '
              'Target="styles.xml"/>')
    return f'{_XML_HEAD}<Relationships xmlns="{_PKG_REL}">{rels}{styles}</Relationships>'


def _argb(colour: str) -> str:
    return "FF" + colour


def _styles_xml(styles: list[Style]) -> str:
    """Fonts, fills and one cell format per style (ECMA-376 Part 1, §18.8)."""
    fonts: dict[tuple, int] = {}
    fills: dict[str | None, int] = {None: 0}        # fills 0 and 1 are reserved (none, gray125)
    formats: dict[str, int] = {}                    # custom number formats from id 164
    xfs = []
    for st in styles:
        f = fonts.setdefault((st.bold, st.italic, st.colour), len(fonts))
        g = fills.setdefault(st.fill, len(fills) + 1) if st.fill else 0
        m = formats.setdefault(st.number_format, 164 + len(formats)) if st.number_format else 0
        apply = ((' applyFont="1"' if f else "") + (' applyFill="1"' if g else "")
                 + (' applyNumberFormat="1"' if m else ""))
        xfs.append(f'<xf numFmtId="{m}" fontId="{f}" fillId="{g}" borderId="0" xfId="0"{apply}/>')
    fmt_xml = (f'<numFmts count="{len(formats)}">' + "".join(
        f"<numFmt numFmtId={quoteattr(str(i))} formatCode={quoteattr(code)}/>"
        for code, i in formats.items()) + "</numFmts>") if formats else ""
    font_xml = "".join(
        "<font>" + ("<b/>" if b else "") + ("<i/>" if i else "") + '<sz val="11"/>'
        + (f'<color rgb="{_argb(c)}"/>' if c else "") + '<name val="Calibri"/>'
        '<family val="2"/></font>' for b, i, c in fonts)
    fill_xml = '<fill><patternFill patternType="none"/></fill>' \
        '<fill><patternFill patternType="gray125"/></fill>' + "".join(
            f'<fill><patternFill patternType="solid"><fgColor rgb="{_argb(c)}"/>'
            '<bgColor indexed="64"/></patternFill></fill>' for c in fills if c)
    return (f'{_XML_HEAD}<styleSheet xmlns="{_MAIN}">{fmt_xml}'
            f'<fonts count="{len(fonts)}">{font_xml}</fonts>'
            f'<fills count="{len(fills) + 1}">{fill_xml}</fills>'
            '<borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border>'
            '</borders><cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" '
            f'borderId="0"/></cellStyleXfs><cellXfs count="{len(xfs)}">{"".join(xfs)}</cellXfs>'
            '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/>'
            "</cellStyles></styleSheet>")
