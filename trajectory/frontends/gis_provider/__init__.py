"""Desktop-GIS front end: a QGIS Processing provider, a thin shell like the CLI.

Nothing here computes: every algorithm calls :func:`trajectory.assess.assess`, and
every run parameter is generated from :mod:`trajectory.params`. Importing this
package does not import QGIS; the submodules do.

Public names (import from the submodules):

- :class:`trajectory.frontends.gis_provider.provider.TrajectoryProvider` (id ``trajectory``)
- :class:`trajectory.frontends.gis_provider.algorithms.CrestAssessAlgorithm`
  (id ``trajectory:crest_assess``)
- :func:`trajectory.frontends.gis_provider.parameters.settings_parameters`
- :func:`trajectory.frontends.gis_provider.register` (add the provider to a running QGIS)
"""

from __future__ import annotations

PROVIDER_ID = "trajectory"

#: the registered provider; the reference keeps its Python side alive while QGIS holds it
_PROVIDER = None


def register():
    """Add the trajectory provider to the running QGIS' processing registry; return it."""
    from qgis.core import QgsApplication

    from .provider import TrajectoryProvider

    global _PROVIDER
    registry = QgsApplication.processingRegistry()
    if _PROVIDER is not None and registry.providerById(PROVIDER_ID) is _PROVIDER:
        return _PROVIDER
    _PROVIDER = TrajectoryProvider()
    registry.addProvider(_PROVIDER)
    return _PROVIDER


__all__ = ["PROVIDER_ID", "register"]
