"""Start QGIS without a desktop, with Processing and the trajectory provider ready.

For scripts, scheduled runs and tests::

    with qgis_session() as app:
        import processing
        processing.run("trajectory:crest_assess", {...})
"""

from __future__ import annotations

import contextlib
import os
import sys
from collections.abc import Iterator
from pathlib import Path


@contextlib.contextmanager
def qgis_session(*, gui: bool = False) -> Iterator[object]:
    """A running QgsApplication with Processing initialised and the provider registered."""
    if not gui:
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from qgis.core import QgsApplication

    QgsApplication.setPrefixPath(os.environ.get("QGIS_PREFIX_PATH", "/usr"), True)
    app = QgsApplication([], gui)
    app.initQgis()
    plugins = str(Path(QgsApplication.pkgDataPath()) / "python" / "plugins")
    if plugins not in sys.path:
        sys.path.append(plugins)
    from processing.core.Processing import Processing

    Processing.initialize()
    from . import register

    register()
    try:
        yield app
    finally:
        Processing.deinitialize()
        app.exitQgis()
