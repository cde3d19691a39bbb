"""Report section: the known structures and accepted exceptions the verdict took into account.

Built from the results GeoPackage's ``structures`` table and the stations'
``structure_*`` fields (:class:`~.report_data.ReportData`).
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING

import pandas as pd

from .report_data import number_text

if TYPE_CHECKING:
    from .report_data import ReportData

TITLE = "Known structures and accepted exceptions"

_EFFECT_TEXT = {
    "exclude": "excluded from the verdict (status excluded)",
    "crest_level": "crest level given",
    "note": "note only (verdict stands)",
}


def _num(v, fmt: str) -> str:
    return number_text(v, fmt)


def structure_section(data: ReportData) -> tuple[str, str] | None:
    """The structures table with the status of the stations each covers; None without any."""
    t = data.layers.get("structures")
    if t is None or t.empty:
        return None
    t = pd.DataFrame(t.drop(columns="geometry", errors="ignore"))
    st = data.stations
    sid = st["structure_id"].fillna("").astype(str) if "structure_id" in st else None
    head = ("<tr><th>id</th><th>kind</th><th>from (m)</th><th>to (m)</th><th>effect</th>"
            "<th>crest level used (m)</th><th>stations</th><th>their status</th>"
            "<th>note</th></tr>")
    body = []
    for r in t.sort_values("from_chainage", kind="stable").itertuples(index=False):
        status = ""
        if sid is not None:
            mine = sid.str.split(";").apply(lambda ids, k=r.structure_id: k in ids)
            counts = st.loc[mine.to_numpy(bool), "status"].value_counts()
            status = ", ".join(f"{k} {v}" for k, v in counts.items())
        body.append(
            f"<tr><td>{html.escape(str(r.structure_id))}</td><td>{html.escape(str(r.kind))}</td>"
            f"<td class='n'>{_num(r.from_chainage, ',.1f')}</td>"
            f"<td class='n'>{_num(r.to_chainage, ',.1f')}</td>"
            f"<td>{html.escape(_EFFECT_TEXT.get(str(r.effect), str(r.effect)))}</td>"
            f"<td class='n'>{_num(r.crest_level, '.2f')}</td>"
            f"<td class='n'>{_num(r.stations, '.0f')}</td><td>{html.escape(status)}</td>"
            f"<td>{html.escape(str(r.note or ''))}</td></tr>")
    src = html.escape(str(data.metadata.get("input_structures", "")))
    intro = (f"<p>Applied before the verdict, from <b>{src}</b> (the run parameter "
             "<code>structures_file</code>, kept in the run file for next year's run). "
             "A given crest level replaces the crest read from the terrain model "
             "(<code>ground_crest_level</code> keeps that reading); excluded stations carry "
             "the status <code>excluded</code> and get no remedy.</p>")
    return TITLE, intro + f"<table class='structures'>{head}{''.join(body)}</table>"
