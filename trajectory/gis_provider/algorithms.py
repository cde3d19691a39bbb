"""The processing algorithms: thin shells over :func:`trajectory.assess.assess`."""

from __future__ import annotations

import logging
from pathlib import Path

from qgis.core import (
    QgsProcessing,
    QgsProcessingAlgorithm,
    QgsProcessingContext,
    QgsProcessingException,
    QgsProcessingOutputNumber,
    QgsProcessingParameterFeatureSource,
    QgsProcessingParameterFile,
    QgsProcessingParameterFileDestination,
    QgsProcessingParameterRasterLayer,
    QgsProcessingUtils,
)

from .. import CAUTION
from ..errors import RunCancelled, TrajectoryError
from ..outputs.schema import LAYERS
from ..status import STATUSES
from .feedback import FeedbackLogHandler, FeedbackProgress
from .parameters import help_html, settings_from_parameters, settings_parameters

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
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.CENTRELINE, "Levee centreline (line layer or file)",
            [QgsProcessing.TypeVectorLine]))
        self.addParameter(QgsProcessingParameterRasterLayer(
            self.DEM, "Terrain model (raster layer or file)"))
        self.addParameter(QgsProcessingParameterFeatureSource(
            self.CONDITIONS, "Section conditions (table layer or CSV file)",
            [QgsProcessing.TypeVector]))
        for p in settings_parameters():
            self.addParameter(p)
        self.addParameter(QgsProcessingParameterFileDestination(
            self.OUT, "Results GeoPackage", "GeoPackage (*.gpkg)"))
        self.addParameter(QgsProcessingParameterFileDestination(
            self.TABLE, "Deficit table (default: beside the GeoPackage)", "CSV (*.csv)",
            optional=True, createByDefault=False))
        for status in STATUSES:
            self.addOutput(QgsProcessingOutputNumber(f"length_{status}",
                                                     f"Length {status} [m]"))
            self.addOutput(QgsProcessingOutputNumber(f"stations_{status}",
                                                     f"Stations {status}"))

    # ------------------------------------------------------------------ run
    def _inputs(self, parameters, context, feedback):
        from ..assess import RunInputs

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
        dem = raster.source()
        return RunInputs(str(line), str(dem), str(cond), layer or None)

    def processAlgorithm(self, parameters, context, feedback) -> dict:
        from ..assess import assess, summary

        progress = FeedbackProgress(feedback)
        settings = settings_from_parameters(self, parameters, context)
        inputs = self._inputs(parameters, context, feedback)
        out = self.parameterAsFileOutput(parameters, self.OUT, context)
        table = self.parameterAsFileOutput(parameters, self.TABLE, context) or None
        log = logging.getLogger("trajectory")
        handler = FeedbackLogHandler(feedback)
        log.addHandler(handler)
        old_level = log.level
        log.setLevel(logging.INFO)
        try:
            progress.check()
            result = assess(inputs, out, settings, overwrite=True, table=table,
                            progress=progress)
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
        return {self.OUT: out, self.TABLE: str(csv), **summary(result)}

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
        from ..outputs.report import write_report

        results = self.parameterAsFile(parameters, self.RESULTS, context)
        out = self.parameterAsFileOutput(parameters, self.OUT, context)
        try:
            write_report(results, out, overwrite=True)
        except TrajectoryError as exc:
            raise QgsProcessingException(str(exc)) from exc
        feedback.pushInfo(CAUTION)
        return {self.OUT: out}
