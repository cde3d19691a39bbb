"""Every run parameter, declared once.

:class:`Settings` is the single source of truth: each field carries its unit,
range, choices and help text in its metadata. The command line, the TOML run
file and the desktop-GIS processing tool are all generated from this table, so
they cannot disagree. Validation lives here too, so a script calling the library
gets the same checks as the command line.
"""

from __future__ import annotations

import dataclasses
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .checks import settings_consistency
from .errors import ParameterError


def _p(
    default: Any,
    help: str,
    *,
    unit: str = "",
    min: float | None = None,
    max: float | None = None,
    min_exclusive: bool = False,
    choices: tuple[str, ...] | None = None,
    group: str = "geometry",
    path: bool = False,
) -> Any:
    """Declare one parameter: its default and the metadata the front ends read.

    ``path``: a text parameter that names a file (a file picker in the GIS tool;
    relative paths of a run file are taken from its folder); other text is text.
    """
    meta = {
        "path": path,
        "help": help,
        "unit": unit,
        "min": min,
        "max": max,
        "min_exclusive": min_exclusive,
        "choices": choices,
        "group": group,
    }
    return field(default=default, metadata=meta)


@dataclass(frozen=True)
class Settings:
    """Run parameters of an assessment (units in each field's metadata)."""

    # --- stations and cross-sections
    spacing: float = _p(25.0, "Distance between stations along the centreline.",
                        unit="m", min=0.0, min_exclusive=True, max=10000.0)
    start_chainage: float = _p(0.0, "Chainage of the first point of the centreline.",
                               unit="m", min=-1e9, max=1e9)
    reverse: bool = _p(False, "Run chainage against the digitised direction of the line.")
    half_width: float = _p(60.0, "Length of each cross-section on either side of the centreline.",
                           unit="m", min=0.0, min_exclusive=True, max=2000.0)
    sample_step: float = _p(0.0, "Spacing of samples along a cross-section; 0 = the DEM cell size.",
                            unit="m", min=0.0, max=50.0)
    smooth_length: float = _p(10.0, "Length over which the line's tangent is smoothed for the "
                              "section normals (about two crest widths).",
                              unit="m", min=0.0, max=1000.0)
    water_side: str = _p("left", "Side of the water (outer side) relative to the line's "
                         "digitised direction; a `water_side` column in the conditions wins.",
                         choices=("left", "right"))
    # --- reading a profile
    object_width: float = _p(1.0, "Objects on the crest narrower than this (posts, fences) are "
                             "ignored when reading the crest level.",
                             unit="m", min=0.0, max=20.0, group="profile")
    crest_search: float = _p(15.0, "The crest must lie within this distance of the centreline.",
                             unit="m", min=0.0, min_exclusive=True, max=500.0, group="profile")
    crest_tolerance: float = _p(0.10, "Cells within this height of the crest top belong to the "
                                "crest (raised automatically to 3x the profile's noise).",
                                unit="m", min=0.0, min_exclusive=True, max=2.0, group="profile")
    max_nodata: float = _p(0.5, "Profiles with a larger fraction of nodata samples are no_data.",
                           unit="fraction", min=0.0, max=1.0, group="profile")
    # --- stations from a list, joining centreline parts
    stations_file: str = _p("", "File of chainages to place stations at (CSV with a `chainage` "
                            "column, or one number a line) instead of every --spacing m.",
                            path=True)
    structures_file: str = _p("", "Table of known structures and accepted exceptions (CSV, or "
                              "any vector file with polygons): kind, effect (exclude | "
                              "crest_level | note), chainage range or polygon; applied before "
                              "the verdict.", group="outputs", path=True)
    gap_tolerance: float = _p(1.0, "Gaps between centreline parts up to this are closed; "
                              "larger gaps are refused and listed.",
                              unit="m", min=0.0, max=1000.0)
    # --- required level
    approach: str = _p("design", "EurOtop (2018) approach: 'design' (design or assessment, "
                       "default) or 'mean' (mean value); 'taw2002_design' or 'taw2002_mean' "
                       "for the TAW (2002) formulas.",
                       choices=("design", "mean", "taw2002_design", "taw2002_mean"),
                       group="requirement")
    frequency: str = _p("", "Frequency table (CSV or GeoPackage table): section_id, "
                        "return_period, water_level, optionally hm0 and tm10 or tp; read "
                        "linearly in log(return period).", group="requirement",
                        path=True)
    extrapolate_frequency: bool = _p(False, "Allow one decade of log-linear extrapolation "
                                     "beyond a frequency table (flagged); otherwise refused.",
                                     group="requirement")
    watch_band: float = _p(0.10, "Margins from 0 up to this value are 'watch' rather than 'ok'.",
                           unit="m", min=0.0, max=5.0, group="requirement")
    # --- several surveys (epochs)
    # (each survey's crest-level error for the rates comes from the accuracy model of the
    # uncertainty block below: vertical_accuracy, sigma_systematic, sigma_random)
    rate_z: float = _p(1.645, "Standard errors a lowering rate (or a drop between surveys) must "
                       "exceed to count (one-sided; 1.645 = 95 %).",
                       unit="-", min=0.0, min_exclusive=True, max=10.0, group="epochs")
    # --- stretches and reporting (outputs)
    title: str = _p("", "Name of the levee (or a title) shown at the head of the report and "
                    "recorded in the run metadata; empty: a generic title.", group="outputs")
    min_stretch_length: float = _p(50.0, "Runs of stations shorter than this take the status of a "
                                   "more severe neighbouring stretch (never a milder one), so "
                                   "one noisy station does not split a stretch; 0 = off.",
                                   unit="m", min=0.0, max=10000.0, group="outputs")
    # --- remedies (screening estimates of the reinforcement options)
    remedy_watch: bool = _p(False, "Also work out remedies for 'watch' stretches (target: the "
                            "watch band).", group="remedies")
    berm_above_swl: float = _p(0.0, "Level of a proposed outer berm above the still water "
                               "(design level + sea-level rise); negative = below.",
                               unit="m", min=-10.0, max=10.0, group="remedies")
    fill_unit_cost: float = _p(0.0, "Cost per m3 of fill (currency-neutral) for an "
                               "order-of-magnitude cost; 0 = no cost figures.",
                               unit="per m3", min=0.0, max=1e6, group="remedies")
    # --- piping screening (sections with a polder_level; trajectory.inner.piping_screen)
    piping_entry: str = _p("outer_toe", "Entry point of the seepage path: the outer toe, or the "
                           "design waterline (where still water + sea-level rise meets the "
                           "outer ground); the outer toe where the waterline is not found.",
                           choices=("outer_toe", "waterline"), group="remedies")
    piping_berm_thickness: float = _p(1.0, "Thickness of a proposed piping berm on the inner "
                                      "side (its fill volume is thickness x length per metre); "
                                      "at least 0.5 m, so the profile reading sees it.",
                                      unit="m", min=0.5, max=5.0, group="remedies")
    # --- inner-slope stability (trajectory.inner.stability; sections with soil columns only)
    stability_phreatic: str = _p("line", "Phreatic line for the inner-slope stability screening: "
                                 "'line' (still water on the outer slope straight to the inner "
                                 "toe) or 'saturated' (at the ground surface: a fully saturated "
                                 "body).", choices=("line", "saturated"), group="stability")
    # --- uncertainty: the terrain model's vertical accuracy (trajectory.judgement.uncertainty)
    vertical_accuracy: str = _p("asprs-10cm", "Vertical accuracy of the terrain model: an ASPRS "
                                "(2014) vertical accuracy class (RMSEz, split half systematic) "
                                "or 'custom' for --sigma-systematic / --sigma-random.",
                                choices=("asprs-2.5cm", "asprs-5cm", "asprs-10cm", "asprs-15cm",
                                         "asprs-20cm", "asprs-33.3cm", "custom"),
                                group="uncertainty")
    sigma_systematic: float = _p(0.0, "Systematic vertical error common to the whole survey "
                                 "(std; with vertical_accuracy = custom).",
                                 unit="m", min=0.0, max=5.0, group="uncertainty")
    sigma_random: float = _p(0.0, "Random vertical error of each DEM cell (std; with "
                             "vertical_accuracy = custom).",
                             unit="m", min=0.0, max=5.0, group="uncertainty")
    simulate: int = _p(0, "Monte Carlo realisations of the terrain model's error; reports "
                       "empirical std of crest level and margin next to the analytic ones "
                       "(0 = off).", unit="realisations", min=0, max=10000, group="uncertainty")
    simulate_random_state: int = _p(20261, "Random state of the Monte Carlo (same value, "
                                    "same result).", min=0, max=2**31 - 1, group="uncertainty")
    # --- execution
    chunk_size: int = _p(256, "Stations processed together in one chunk (bounds memory).",
                         unit="stations", min=1, max=100000, group="execution")
    workers: int = _p(0, "Worker processes; 0 = auto (all cores for long runs, serial for "
                      "short ones), 1 = serial.",
                      unit="processes", min=0, max=1024, group="execution")
    # --- reading the terrain model (issue 7: bad input)
    dem_z_scale: float = _p(0.0, "Metres per DEM unit (0.01 for a DEM in centimetres); "
                            "0 = from the file (its band scale, else 1).",
                            unit="m per unit", min=0.0, max=1000.0, group="dem")
    # --- execution at scale: distributed runs and bounded memory (results do not change)
    scheduler: str = _p("", "Address of a Dask scheduler (e.g. tcp://host:8786) to run the "
                        "chunks on; needs the extra trajectory[distributed]. Empty: local.",
                        group="execution")
    dem_cache: float = _p(64.0, "GDAL block cache per process (bounds memory on long lines).",
                          unit="MB", min=1.0, max=65536.0, group="execution")

    def __post_init__(self) -> None:
        problems = validate_values(dataclasses.asdict(self))
        if not problems:
            problems = settings_consistency(self)
        if problems:
            raise ParameterError("; ".join(problems))

    # ------------------------------------------------------------------ helpers
    @classmethod
    def from_mapping(cls, values: dict[str, Any], *, source: str = "parameters") -> Settings:
        """Build settings from a mapping (e.g. a run file), rejecting unknown keys."""
        known = {f.name: f for f in dataclasses.fields(cls)}
        unknown = sorted(set(values) - set(known))
        if unknown:
            raise ParameterError(
                f"{source}: unknown parameter(s) {', '.join(unknown)}; "
                f"known are: {', '.join(sorted(known))}"
            )
        coerced = {k: _coerce(known[k], v, source) for k, v in values.items()}
        return cls(**coerced)

    def replace(self, **changes: Any) -> Settings:
        return dataclasses.replace(self, **changes)


def parameter_table() -> list[dict[str, Any]]:
    """The parameter table as plain records (name, type, default, unit, range, help)."""
    rows = []
    for f in dataclasses.fields(Settings):
        rows.append({"name": f.name, "type": _type_name(f), "default": f.default, **f.metadata})
    return rows


def load_run_file(path: str | Path) -> dict[str, Any]:
    """Read a TOML run file; parameters at top level or under ``[parameters]``."""
    p = Path(path)
    try:
        with p.open("rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError as exc:
        raise ParameterError(f"{p}: run file not found") from exc
    except tomllib.TOMLDecodeError as exc:
        raise ParameterError(f"{p}: not valid TOML ({exc})") from exc
    data.pop("inputs", None)  # the input files of a run file (trajectory.inputs.input_table)
    values = dict(data.get("parameters", data))
    # a file named in a run file is found from the run file's folder
    paths = {f.name for f in dataclasses.fields(Settings) if f.metadata["path"]}
    for k, v in values.items():
        if k in paths and isinstance(v, str) and v and not Path(v).is_absolute():
            values[k] = str(p.parent / v)
    return values


def validate_values(values: dict[str, Any]) -> list[str]:
    """Check every value against its declared range and choices; return all findings."""
    problems = []
    for f in dataclasses.fields(Settings):
        v = values.get(f.name, f.default)
        m = f.metadata
        if m["choices"] is not None:
            if v not in m["choices"]:
                problems.append(f"{f.name} must be one of {', '.join(m['choices'])}, got {v!r}")
            continue
        if isinstance(f.default, bool):
            continue
        lo, hi = m["min"], m["max"]
        unit = f" {m['unit']}" if m["unit"] else ""
        if lo is not None and (v < lo or (m["min_exclusive"] and v == lo)):
            rel = ">" if m["min_exclusive"] else ">="
            problems.append(f"{f.name} must be {rel} {lo}{unit}, got {v}")
        if hi is not None and v > hi:
            problems.append(f"{f.name} must be <= {hi}{unit}, got {v}")
    return problems


def _type_name(f: dataclasses.Field) -> str:
    return type(f.default).__name__


def _coerce(f: dataclasses.Field, v: Any, source: str) -> Any:
    kind: type = type(f.default)
    try:
        if kind is bool:
            if isinstance(v, str):
                if v.lower() in ("true", "yes", "1"):
                    return True
                if v.lower() in ("false", "no", "0"):
                    return False
                raise ValueError(v)
            return bool(v)
        return kind(v)
    except (TypeError, ValueError) as exc:
        raise ParameterError(
            f"{source}: parameter {f.name} must be a {kind.__name__}, got {v!r}"
        ) from exc
