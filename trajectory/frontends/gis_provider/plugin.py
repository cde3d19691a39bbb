"""The desktop plugin object: registers the provider when the host loads the plugin."""

from __future__ import annotations

from qgis.core import QgsApplication


class TrajectoryPlugin:
    """What the plugin zip's ``classFactory`` returns (the host calls initGui/unload)."""

    def __init__(self, iface=None):
        self.iface = iface
        self.provider = None

    def initProcessing(self) -> None:
        from .provider import TrajectoryProvider

        self.provider = TrajectoryProvider()
        QgsApplication.processingRegistry().addProvider(self.provider)

    def initGui(self) -> None:
        self.initProcessing()

    def unload(self) -> None:
        if self.provider is not None:
            QgsApplication.processingRegistry().removeProvider(self.provider)
            self.provider = None
