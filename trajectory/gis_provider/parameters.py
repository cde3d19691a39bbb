"""Processing parameters generated from the one parameter table (:mod:`trajectory.params`).

Name, type, default, range, choices, unit and help of every run parameter come
from :func:`trajectory.params.parameter_table`; nothing is restated here.
"""

from __future__ import annotations

from typing import Any

from qgis.core import (
    QgsProcessingParameterBoolean,
    QgsProcessingParameterDefinition,
    QgsProcessingParameterEnum,
    QgsProcessingParameterFile,
    QgsProcessingParameterNumber,
)

from ..params import Settings, parameter_table

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
    elif isinstance(default, str):
        # text parameters of the table are optional file paths ("" = not given)
        p = QgsProcessingParameterFile(name, label(row), optional=True)
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


def settings_from_parameters(algorithm, parameters: dict, context) -> Settings:
    """Read the run parameters back from an algorithm call into :class:`Settings`.

    Validation is Settings' own (a :class:`~trajectory.errors.ParameterError`).
    """
    values: dict[str, Any] = {}
    for row in parameter_table():
        name, default = row["name"], row["default"]
        if row["choices"]:
            values[name] = row["choices"][algorithm.parameterAsEnum(parameters, name, context)]
        elif isinstance(default, bool):
            values[name] = algorithm.parameterAsBoolean(parameters, name, context)
        elif isinstance(default, str):
            values[name] = algorithm.parameterAsFile(parameters, name, context) or ""
        elif isinstance(default, int):
            values[name] = algorithm.parameterAsInt(parameters, name, context)
        else:
            values[name] = algorithm.parameterAsDouble(parameters, name, context)
    return Settings.from_mapping(values, source="processing parameters")


def help_html() -> str:
    """The parameter list for the dialog's help panel, from the table."""
    items = []
    for row in parameter_table():
        unit = f" [{row['unit']}]" if row["unit"] else ""
        items.append(f"<li><b>{row['name']}</b>{unit}: {row['help']} "
                     f"(default: {row['default']})</li>")
    return "<ul>" + "".join(items) + "</ul>"
