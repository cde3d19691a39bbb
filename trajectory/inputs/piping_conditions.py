"""The piping columns of a conditions table: declared once, checked row by row.

All optional: a section without ``polder_level`` is not screened for piping. A
screened section needs the land-side level and either a subsoil class (the
creep rules of Bligh 1910 and Lane 1935) or the aquifer parameters of
Sellmeijer et al. (2011), or both.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pandas as pd

from ..formulas.piping import SUBSOIL_CLASSES

#: conditions columns of the piping screening: name -> (unit, rule)
PIPING_COLUMNS: dict[str, tuple[str, str]] = {
    "polder_level": ("m (DEM datum)", "number; land-side water or ground level behind the "
                                      "levee (piping: dH = water level + sea-level rise - it)"),
    "subsoil_class": ("", "one of " + ", ".join(SUBSOIL_CLASSES) + "; the creep rules "
                          "(Bligh, Lane) of the sand under the levee"),
    "aquifer_d70": ("um", "50 <= number <= 2000; grain size d70 of the aquifer sand "
                          "(Sellmeijer)"),
    "aquifer_k": ("m/s", "1e-7 <= number <= 1e-1; hydraulic conductivity of the aquifer "
                         "(Sellmeijer)"),
    "aquifer_thickness": ("m", "0 < number <= 200; aquifer thickness D (Sellmeijer)"),
    "blanket_thickness": ("m", "0 <= number <= 50; cohesive blanket over the aquifer at the "
                               "exit, d (Sellmeijer: head reduced by 0.3 d; empty: 0)"),
}
#: (min, max, min exclusive) of each numeric one, read by the conditions' numeric check
PIPING_RULES: dict[str, tuple[float | None, float | None, bool]] = {
    "polder_level": (-500.0, 9000.0, False),
    "aquifer_d70": (50.0, 2000.0, False),
    "aquifer_k": (1e-7, 1e-1, False),
    "aquifer_thickness": (0.0, 200.0, True),
    "blanket_thickness": (0.0, 50.0, False),
}
#: the Sellmeijer parameters that come together (blanket_thickness may stay empty)
AQUIFER = ("aquifer_d70", "aquifer_k", "aquifer_thickness")


def piping_findings(out: pd.DataFrame, text: Callable[[str], pd.Series],
                    row: Callable[[int], str]) -> list[str]:
    """Check the piping columns of ``out`` (numbers already parsed); set ``subsoil_class``.

    ``text(col)`` gives a column's cells as stripped text, ``row(i)`` the row's
    name in messages. Returns the findings, in row order per rule.
    """
    findings: list[str] = []
    soil = text("subsoil_class").str.lower().str.replace(" ", "_").to_numpy(object)
    for i in np.flatnonzero(~np.isin(soil, ["", *SUBSOIL_CLASSES])):
        findings.append(f"{row(i)}, column subsoil_class: {soil[i]!r} is not a class of the "
                        f"creep tables; give one of {', '.join(SUBSOIL_CLASSES)}")
    out["subsoil_class"] = soil
    has = {c: np.isfinite(out[c].to_numpy(float)) for c in (*AQUIFER, "blanket_thickness")}
    some = np.any([has[c] for c in AQUIFER], axis=0)
    full = np.all([has[c] for c in AQUIFER], axis=0)
    for i in np.flatnonzero(some & ~full):
        gone = [c for c in AQUIFER if not has[c][i]]
        findings.append(f"{row(i)}, column {'/'.join(gone)}: empty; Sellmeijer needs "
                        f"{', '.join(AQUIFER)} together (give all, or none)")
    for i in np.flatnonzero(has["blanket_thickness"] & ~full):
        findings.append(f"{row(i)}, column blanket_thickness: given without the aquifer "
                        f"parameters ({', '.join(AQUIFER)}); give them or leave it empty")
    polder = np.isfinite(out["polder_level"].to_numpy(float))
    rules = (soil != "") | full
    for i in np.flatnonzero(polder & ~rules):
        findings.append(f"{row(i)}, column polder_level: given, but neither subsoil_class nor "
                        f"the aquifer parameters; give one of them to screen piping, or "
                        f"leave polder_level empty")
    for i in np.flatnonzero(~polder & rules):
        findings.append(f"{row(i)}, column polder_level: empty; the piping parameters of "
                        "this row need the land-side level behind the levee")
    wl = out["water_level"].to_numpy(float)
    above = polder & np.isfinite(wl) & (out["polder_level"].to_numpy(float) > wl + 10.0)
    for i in np.flatnonzero(above):
        findings.append(f"{row(i)}, column polder_level: {out['polder_level'].iloc[i]:g} m is "
                        "more than 10 m above the design water level; check the datum")
    return findings
