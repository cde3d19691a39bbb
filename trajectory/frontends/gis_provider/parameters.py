"""Processing parameters generated from the one parameter table (:mod:`trajectory.params`)
and the one input table (:mod:`trajectory.inputs.input_table`).

Name, type, default, range, choices, unit and help of every run parameter, and
name, kind and help of every input file, come from those tables; nothing is
restated here.
"""

from __future__ import annotations

from typing import Any

from qgis.core import (
    QgsProcessing,
    QgsProcessingParameterBoolean,
    QgsProcessingParameterDefinition,
    QgsProcessingParameterEnum,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterField,
    QgsProcessingParameterFile,
    QgsProcessingParameterFileDestination,
    QgsProcessingParameterNumber,
    QgsProcessingParameterRasterLayer,
    QgsProcessingParameterString,
)

from ...inputs.input_table import INPUTS, InputSpec
from ...params import Settings, load_run_file, parameter_table

#: parameter groups shown under "Advanced parameters" in the dialog
ADVANCED_GROUPS = frozenset({"profile", "execution"})


def label(row: dict[str, Any]) -> str:
    """Dialog label of one table row: the name in words and its unit."""
    words = row["name"].replace("_", " ")
    text = words[0].upper() + words[1:]
    return f"{text} [{row['unit']}]" if row["unit"] else text


def definition(row: dict[str, Any]) -> QgsProcessingParameterDefinition:
    """One processing parameter from one row of the parameter table."""
    name, default = row["name"], row["default"]
    if row["choices"]:
        choices = list(row["choices"])
        p = QgsProcessingParameterEnum(name, label(row), options=choices,
                                       defaultValue=choices.index(default))
    elif isinstance(default, bool):
        p = QgsProcessingParameterBoolean(name, label(row), defaultValue=default)
    elif isinstance(default, str) and row["path"]:
        # file parameters of the table are optional ("" = not given)
        p = QgsProcessingParameterFile(name, label(row), optional=True)
    elif isinstance(default, str):
        p = QgsProcessingParameterString(name, label(row), defaultValue=default,
                                         optional=True)
    else:
        kind = (QgsProcessingParameterNumber.Integer if isinstance(default, int)
                else QgsProcessingParameterNumber.Double)
        p = QgsProcessingParameterNumber(name, label(row), type=kind, defaultValue=default)
        if row["min"] is not None:
            p.setMinimum(row["min"])
        if row["max"] is not None:
            p.setMaximum(row["max"])
        if kind == QgsProcessingParameterNumber.Double:
            p.setMetadata({"widget_wrapper": {"decimals": 3}})
    help_text = row["help"]
    if row["min_exclusive"]:
        help_text += f" Must be greater than {row['min']:g}."
    p.setHelp(help_text)
    if row["group"] in ADVANCED_GROUPS:
        p.setFlags(p.flags() | QgsProcessingParameterDefinition.FlagAdvanced)
    return p


def settings_parameters() -> list[QgsProcessingParameterDefinition]:
    """Every run parameter of :class:`~trajectory.params.Settings`, in table order."""
    return [definition(row) for row in parameter_table()]


#: the run file (the CLI's --config): parameters, and inputs under [inputs]
CONFIG = "config"
#: output file filters by input kind
_FILTERS = {"out_gpkg": "GeoPackage (*.gpkg)", "out_csv": "CSV (*.csv)",
            "out_html": "HTML (*.html)"}
#: a repeatable input's entries in one text field
ENTRY_SEPARATOR = ";"


def _input_label(spec: InputSpec) -> str:
    """Dialog label of an input: its label in words, capitalised."""
    return spec.label[:1].upper() + spec.label[1:]


def input_definitions(spec: InputSpec) -> list[QgsProcessingParameterDefinition]:
    """The processing parameter(s) of one input of the input table.

    A repeatable terrain model becomes the latest survey (a raster layer) with its
    date and the earlier surveys as ``DATE=PATH`` entries separated by ``;``; other
    repeatable inputs are such entries alone.
    """
    opt = not spec.required
    name, text = spec.name, _input_label(spec)
    if spec.kind == "raster" and spec.repeat:
        return [QgsProcessingParameterRasterLayer(name, f"{text}: the latest survey "
                                                  "(raster layer or file)"),
                QgsProcessingParameterString(f"{name}_date", "Date of the latest survey "
                                             "(YYYY or YYYY-MM-DD; needed with earlier ones)",
                                             optional=True),
                QgsProcessingParameterString(f"{name}_earlier", "Earlier surveys as "
                                             "DATE=PATH entries, oldest first, separated by ;",
                                             optional=True)]
    if spec.repeat:
        return [QgsProcessingParameterString(name, f"{text} as DATE=PATH entries, oldest "
                                             "first, separated by ;", optional=True)]
    if spec.kind == "line":
        return [QgsProcessingParameterFeatureSource(name, f"{text} (line layer or file)",
                                                    [QgsProcessing.TypeVectorLine],
                                                    optional=opt)]
    if spec.kind == "table":
        return [QgsProcessingParameterFeatureSource(name, f"{text} (table layer or file)",
                                                    [QgsProcessing.TypeVector], optional=opt)]
    if spec.kind == "field":
        return [QgsProcessingParameterField(name, text, parentLayerParameterName=spec.parent,
                                            optional=True)]
    if spec.is_output:
        return [QgsProcessingParameterFileDestination(name, text, _FILTERS[spec.kind],
                                                      optional=opt, createByDefault=not opt)]
    raise ValueError(f"no processing parameter for input kind {spec.kind!r}")  # pragma: no cover


def input_parameters() -> list[QgsProcessingParameterDefinition]:
    """Every input of the input table offered in the GIS tool, then the run file."""
    out = []
    for spec in INPUTS:
        if spec.gis:
            for p in input_definitions(spec):
                p.setHelp(spec.help)
                out.append(p)
    out.append(QgsProcessingParameterFile(
        CONFIG, "Run file (TOML): parameters, and inputs under [inputs] where left empty "
        "here", extension="toml", optional=True))
    return out


def split_entries(text: str | None) -> tuple[str, ...]:
    """``DATE=PATH`` entries of one text field (separated by ``;``)."""
    return tuple(e.strip() for e in (text or "").split(ENTRY_SEPARATOR) if e.strip())


def settings_from_parameters(algorithm, parameters: dict, context) -> Settings:
    """Read the run parameters back from an algorithm call into :class:`Settings`.

    With a run file, its parameters apply wherever the dialog keeps the table's
    default (a dialog always holds a value for every parameter, so a value that
    differs from the default is the user's and wins). Validation is Settings' own
    (a :class:`~trajectory.errors.ParameterError`).
    """
    values: dict[str, Any] = {}
    for row in parameter_table():
        name, default = row["name"], row["default"]
        if row["choices"]:
            values[name] = row["choices"][algorithm.parameterAsEnum(parameters, name, context)]
        elif isinstance(default, bool):
            values[name] = algorithm.parameterAsBoolean(parameters, name, context)
        elif isinstance(default, str) and row["path"]:
            values[name] = algorithm.parameterAsFile(parameters, name, context) or ""
        elif isinstance(default, str):
            values[name] = algorithm.parameterAsString(parameters, name, context) or ""
        elif isinstance(default, int):
            values[name] = algorithm.parameterAsInt(parameters, name, context)
        else:
            values[name] = algorithm.parameterAsDouble(parameters, name, context)
    config = algorithm.parameterAsFile(parameters, CONFIG, context)
    if config:
        from_file = load_run_file(config)
        defaults = {row["name"]: row["default"] for row in parameter_table()}
        values.update({k: v for k, v in from_file.items()
                       if k not in values or values[k] == defaults[k]})
    return Settings.from_mapping(values, source="processing parameters"
                                 + (f" and {config}" if config else ""))


def help_html() -> str:
    """The parameter list for the dialog's help panel, from the table."""
    items = []
    for row in parameter_table():
        unit = f" [{row['unit']}]" if row["unit"] else ""
        items.append(f"<li><b>{row['name']}</b>{unit}: {row['help']} "
                     f"(default: {row['default']})</li>")
    return "<ul>" + "".join(items) + "</ul>"
