"""The processing provider that holds trajectory's algorithms."""

from __future__ import annotations

from qgis.core import QgsProcessingProvider

from ... import __version__
from . import PROVIDER_ID
from .algorithms import CrestAssessAlgorithm, CrestReportAlgorithm


class TrajectoryProvider(QgsProcessingProvider):
    """Provider ``trajectory``: levee crest screening algorithms."""

    def id(self) -> str:
        return PROVIDER_ID

    def name(self) -> str:
        return "trajectory levee crest screening"

    def longName(self) -> str:
        return f"trajectory {__version__}: levee crest screening"

    def versionInfo(self) -> str:
        return __version__

    def loadAlgorithms(self) -> None:
        self.addAlgorithm(CrestAssessAlgorithm())
        self.addAlgorithm(CrestReportAlgorithm())
