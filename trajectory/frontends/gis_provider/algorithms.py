"""The processing algorithms: thin shells over :func:`trajectory.assess.assess`."""

from __future__ import annotations

import logging
from pathlib import Path

from qgis.core import (
    QgsProcessingAlgorithm,
    QgsProcessingContext,
    QgsProcessingException,
    QgsProcessingOutputNumber,
    QgsProcessingParameterFile,
    QgsProcessingParameterFileDestination,
    QgsProcessingUtils,
)

from ... import CAUTION
from ...errors import RunCancelled, TrajectoryError
from ...inputs.input_table import merge_inputs
from ...judgement.status import STATUSES
from ...outputs.schema import LAYERS
from .feedback import FeedbackLogHandler, FeedbackProgress
from .parameters import (
    CONFIG,
    help_html,
    input_parameters,
    settings_from_parameters,
    settings_parameters,
    split_entries,
)

#: result layers loaded into the project when the run ends (styles stored in the
#: GeoPackage, if any, are applied by the host on load)
LOADED_LAYERS = tuple(name for name, (geom, _) in LAYERS.items() if geom is not None)


class CrestAssessAlgorithm(QgsProcessingAlgorithm):
    """Assess crest levels along a levee line (the CLI's ``trajectory assess``)."""

    CENTRELINE = "centreline"
    DEM = "dem"
    CONDITIONS = "conditions"
    OUT = "out"
    TABLE = "table"

    def name(self) -> str:
        return "crest_assess"

    def displayName(self) -> str:
        return "Assess levee crest levels"

    def group(self) -> str:
        return "Levee crest screening"

    def groupId(self) -> str:
        return "screening"

    def shortHelpString(self) -> str:
        return ("Cuts cross-sections along the levee centreline at fixed chainage, reads the "
                "crest level from the terrain model, computes the required crest level per "
                "section (EurOtop 2018) and writes a GeoPackage and a deficit table. The same "
                "engine and parameters as the command line <tt>trajectory assess</tt>."
                f"<p><i>{CAUTION}</i></p><h3>Run parameters</h3>{help_html()}")

    def createInstance(self) -> CrestAssessAlgorithm:
        return CrestAssessAlgorithm()

    def initAlgorithm(self, config=None) -> None:
        for p in input_parameters():
            self.addParameter(p)
        for p in settings_parameters():
            self.addParameter(p)
        for status in STATUSES:
            self.addOutput(QgsProcessingOutputNumber(f"length_{status}",
                                                     f"Length {status} [m]"))
            self.addOutput(QgsProcessingOutputNumber(f"stations_{status}",
                                                     f"Stations {status}"))

    # ------------------------------------------------------------------ run
    def _inputs(self, parameters, context, feedback) -> tuple:
        """RunInputs and the outputs, from the dialog and the run file's [inputs]."""
        from ...assess import RunInputs
        from ...judgement.epochs import parse_dem_options

        line, layer = self.parameterAsCompatibleSourceLayerPathAndLayerName(
            parameters, self.CENTRELINE, context, ["gpkg", "shp", "geojson", "fgb"],
            "gpkg", feedback)
        cond = self.parameterAsCompatibleSourceLayerPath(
            parameters, self.CONDITIONS, context, ["csv"], "csv", feedback)
        raster = self.parameterAsRasterLayer(parameters, self.DEM, context)
        if raster is None:
            raise QgsProcessingException("no terrain model given")
        if raster.providerType() != "gdal":
            raise QgsProcessingException(
                f"the terrain model must be a file GDAL reads, not a {raster.providerType()} "
                "layer; save it as GeoTIFF or VRT first")
        date = self.parameterAsString(parameters, f"{self.DEM}_date", context).strip()
        latest = f"{date}={raster.source()}" if date else raster.source()
        earlier = split_entries(self.parameterAsString(parameters, f"{self.DEM}_earlier",
                                                       context))
        fields = self.parameterAsFields(parameters, "line_id_field", context)
        given = {
            "centreline": str(line), "layer": layer or None,
            "line_id_field": fields[0] if fields else None,
            "dem": (*earlier, latest),
            "compare": split_entries(self.parameterAsString(parameters, "compare", context)),
            "conditions": str(cond),
            "out": self.parameterAsFileOutput(parameters, self.OUT, context),
            "table": self.parameterAsFileOutput(parameters, self.TABLE, context) or None,
            "report": self.parameterAsFileOutput(parameters, "report", context) or None,
        }
        io = merge_inputs(given, self.parameterAsFile(parameters, CONFIG, context) or None)
        dem, dem_date, epochs = parse_dem_options(io["dem"], io["compare"])
        inputs = RunInputs(io["centreline"], dem, io["conditions"], io["layer"],
                           dem_date=dem_date, earlier=epochs,
                           line_id_field=io["line_id_field"])
        return inputs, io

    def processAlgorithm(self, parameters, context, feedback) -> dict:
        from ...assess import assess, summary

        progress = FeedbackProgress(feedback)
        log = logging.getLogger("trajectory")
        handler = FeedbackLogHandler(feedback)
        log.addHandler(handler)
        old_level = log.level
        log.setLevel(logging.INFO)
        try:
            settings = settings_from_parameters(self, parameters, context)
            inputs, io = self._inputs(parameters, context, feedback)
            out, table = io["out"], io["table"]
            progress.check()
            result = assess(inputs, out, settings, overwrite=True, table=table,
                            progress=progress, report=io["report"])
        except RunCancelled as exc:
            raise QgsProcessingException(str(exc)) from exc
        except TrajectoryError as exc:
            raise QgsProcessingException(str(exc)) from exc
        finally:
            log.removeHandler(handler)
            log.setLevel(old_level)
        csv = Path(table) if table else Path(out).with_suffix(".csv")
        feedback.pushInfo(CAUTION)
        self._load_on_completion(out, context)
        return {self.OUT: out, self.TABLE: str(csv), "report": io["report"] or "",
                **summary(result)}

    def _load_on_completion(self, out: str, context: QgsProcessingContext) -> None:
        project = context.project()
        if project is None:
            return
        stem = Path(out).stem
        for name in LOADED_LAYERS:
            details = QgsProcessingContext.LayerDetails(
                f"{stem} {name}", project, self.OUT, QgsProcessingUtils.LayerHint.Vector)
            context.addLayerToLoadOnCompletion(f"{out}|layername={name}", details)


class CrestReportAlgorithm(QgsProcessingAlgorithm):
    """The HTML report of a results GeoPackage (the CLI's ``trajectory report``)."""

    RESULTS = "results"
    OUT = "out"

    def name(self) -> str:
        return "crest_report"

    def displayName(self) -> str:
        return "Report of a levee crest assessment"

    def group(self) -> str:
        return "Levee crest screening"

    def groupId(self) -> str:
        return "screening"

    def shortHelpString(self) -> str:
        return ("Writes the self-contained HTML report (summary, longitudinal plot, map, "
                "worst cross-sections, uncertainty, surveys, reinforcement options) of a "
                "results GeoPackage written by <i>Assess levee crest levels</i>. The same as "
                "the command line <tt>trajectory report</tt>."
                f"<p><i>{CAUTION}</i></p>")

    def createInstance(self) -> CrestReportAlgorithm:
        return CrestReportAlgorithm()

    def initAlgorithm(self, config=None) -> None:
        self.addParameter(QgsProcessingParameterFile(
            self.RESULTS, "Results GeoPackage", extension="gpkg"))
        self.addParameter(QgsProcessingParameterFileDestination(
            self.OUT, "Report (HTML)", "HTML (*.html)"))

    def processAlgorithm(self, parameters, context, feedback) -> dict:
        from ...outputs.report import write_report

        results = self.parameterAsFile(parameters, self.RESULTS, context)
        out = self.parameterAsFileOutput(parameters, self.OUT, context)
        try:
            write_report(results, out, overwrite=True)
        except TrajectoryError as exc:
            raise QgsProcessingException(str(exc)) from exc
        feedback.pushInfo(CAUTION)
        return {self.OUT: out}
