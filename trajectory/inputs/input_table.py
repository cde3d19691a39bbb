"""Every input and output file of a run, declared once.

The run *parameters* are declared in :mod:`trajectory.params`; this table holds
the *files* (and the layer and field names that go with them). The command line,
the ``[inputs]`` table of a run file and the desktop-GIS processing tool are
generated from it, so they take the same inputs under the same names.

Precedence: a value given on the command line (or in the GIS dialog) wins over
the run file's ``[inputs]``; relative paths in a run file are taken from the run
file's folder.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import ParameterError


@dataclass(frozen=True)
class InputSpec:
    """One input of a run.

    ``kind`` tells the front ends what it is: ``line`` (a line layer), ``raster``,
    ``table`` (CSV, GeoPackage table or polygons), ``results`` (an earlier results
    GeoPackage), ``name`` (a layer name inside a file), ``field`` (a field of the
    ``parent`` input), or an output: ``out_gpkg``, ``out_csv``, ``out_html``.
    ``repeat``: several ``DATE=PATH`` entries, oldest first.
    """

    name: str
    kind: str
    help: str
    label: str                    # what it is, in words (for messages and dialogs)
    required: bool = False
    repeat: bool = False
    parent: str | None = None
    #: offered in the desktop-GIS tool as its own parameter (a layer name is implied
    #: there by the layer the user picks)
    gis: bool = True

    @property
    def is_path(self) -> bool:
        return self.kind not in ("name", "field")

    @property
    def is_output(self) -> bool:
        return self.kind.startswith("out_")

    @property
    def flag(self) -> str:
        return "--" + self.name.replace("_", "-")


INPUTS: tuple[InputSpec, ...] = (
    InputSpec("centreline", "line", "Levee centreline (any OGR line format).",
              "levee centreline", required=True),
    InputSpec("layer", "name", "Line layer of the centreline file.", "centreline layer",
              gis=False),
    InputSpec("line_id_field", "field", "Field telling several centrelines apart; each line "
              "gets its own chainage.", "field telling several centrelines apart",
              parent="centreline"),
    InputSpec("dem", "raster", "Terrain model (any GDAL raster, VRT mosaics too); several "
              "surveys as DATE=PATH entries, oldest first (the last gives the status).",
              "terrain model", required=True, repeat=True),
    InputSpec("compare", "results", "Earlier result GeoPackage of the same line as "
              "DATE=OLD.gpkg entries, oldest first; stations matched by chainage.",
              "earlier results", repeat=True),
    InputSpec("conditions", "table", "Section conditions: CSV, GeoPackage table or section "
              "polygons.", "section conditions", required=True),
    InputSpec("conditions_layer", "name", "Layer of the conditions file, when it has several.",
              "conditions layer", gis=False),
    InputSpec("out", "out_gpkg", "Output GeoPackage.", "output GeoPackage", required=True),
    InputSpec("table", "out_csv", "Deficit table (CSV); default: next to the GeoPackage.",
              "deficit table (default: beside the GeoPackage)"),
    InputSpec("report", "out_html", "Also write the HTML report (self-contained) to this "
              "path.", "report (HTML)"),
)

BY_NAME = {s.name: s for s in INPUTS}


def read_run_file_inputs(path: str | Path) -> dict[str, Any]:
    """The ``[inputs]`` table of a TOML run file, checked against :data:`INPUTS`.

    Repeatable inputs are lists of ``"DATE=PATH"`` strings (one string is taken as
    a list of one); relative paths are resolved from the run file's folder.
    """
    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError as exc:
        raise ParameterError(f"{p}: run file not found") from exc
    except (OSError, tomllib.TOMLDecodeError) as exc:
        raise ParameterError(f"{p}: cannot read the run file ({exc})") from exc
    table = data.get("inputs", {})
    if not isinstance(table, dict):
        raise ParameterError(f"{p}: 'inputs' must be a table ([inputs])")
    unknown = sorted(set(table) - set(BY_NAME))
    if unknown:
        raise ParameterError(f"{p}: [inputs] has unknown entries {', '.join(unknown)}; "
                             f"known are: {', '.join(BY_NAME)}")
    out: dict[str, Any] = {}
    for key, value in table.items():
        spec = BY_NAME[key]
        if spec.repeat:
            items = [value] if isinstance(value, str) else value
            if not isinstance(items, list) or not all(isinstance(x, str) for x in items):
                raise ParameterError(f"{p}: [inputs] {key} must be a list of \"DATE=PATH\" "
                                     "strings")
            out[key] = tuple(_resolve_entry(x, p.parent) for x in items)
        else:
            if not isinstance(value, str):
                raise ParameterError(f"{p}: [inputs] {key} must be a text, got {value!r}")
            out[key] = _resolve(value, p.parent) if spec.is_path else value
    return out


def _resolve(path: str, base: Path) -> str:
    return path if not path or Path(path).is_absolute() else str(base / path)


def _resolve_entry(entry: str, base: Path) -> str:
    """Resolve the path of a ``DATE=PATH`` entry (or a plain path) from ``base``."""
    from ..judgement.epochs import parse_epoch

    date, path = parse_epoch(entry)
    path = _resolve(path, base)
    return path if date is None else f"{date}={path}"


def merge_inputs(given: dict[str, Any], run_file: str | Path | None) -> dict[str, Any]:
    """Inputs given by a front end over those of the run file; required ones checked.

    ``given`` maps input names to values (``None``, or an empty tuple for a repeatable
    input: not given).
    Returns every input of :data:`INPUTS` (``None`` / ``()`` where not given).
    """
    from_file = read_run_file_inputs(run_file) if run_file else {}
    merged: dict[str, Any] = {}
    for spec in INPUTS:
        v = given.get(spec.name)
        if v is None or (spec.repeat and len(v) == 0):
            v = from_file.get(spec.name, () if spec.repeat else None)
        merged[spec.name] = tuple(v or ()) if spec.repeat else v
    # an empty text given on purpose (--out "") is left to the checks that name it
    missing = [s for s in INPUTS if s.required and merged[s.name] in (None, ())]
    if missing:
        where = f"[inputs] of {run_file}" if run_file else "[inputs] of a run file (--config)"
        raise ParameterError("; ".join(
            f"no {s.label} given: pass {s.flag} PATH or put {s.name} under {where}"
            for s in missing))
    return merged
