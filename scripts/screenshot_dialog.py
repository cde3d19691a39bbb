"""Screenshot of the crest-assessment algorithm dialog, taken without a desktop.

Run with the QGIS-side interpreter under a virtual X server::

    xvfb-run -a -s "-screen 0 1280x1024x24" .venv-qgis/bin/python scripts/screenshot_dialog.py \
        --out docs/gis_dialog.png [--centreline ... --dem ... --conditions ...]

The input layers, when given, are loaded into the project so the dialog shows them.
"""

from __future__ import annotations

import argparse
import logging
import sys
from pathlib import Path

log = logging.getLogger("screenshot_dialog")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", required=True, help="PNG to write")
    ap.add_argument("--centreline")
    ap.add_argument("--dem")
    ap.add_argument("--conditions")
    ap.add_argument("--width", type=int, default=900)
    ap.add_argument("--height", type=int, default=820)
    args = ap.parse_args(argv)
    logging.basicConfig(level=logging.INFO, format="%(message)s")

    from qgis.core import QgsProject, QgsRasterLayer, QgsVectorLayer
    from qgis.PyQt.QtWidgets import QApplication

    from trajectory.frontends.gis_provider.headless import qgis_session

    with qgis_session(gui=True):
        from processing.gui.AlgorithmDialog import AlgorithmDialog
        from qgis.core import QgsApplication

        project = QgsProject.instance()
        chosen = {}
        if args.centreline:
            chosen["centreline"] = QgsVectorLayer(args.centreline, "levee centreline", "ogr")
        if args.dem:
            chosen["dem"] = QgsRasterLayer(args.dem, "terrain model", "gdal")
        if args.conditions:
            chosen["conditions"] = QgsVectorLayer(args.conditions, "section conditions", "ogr")
        for layer in chosen.values():
            project.addMapLayer(layer)
        alg = QgsApplication.processingRegistry().createAlgorithmById("trajectory:crest_assess")
        dlg = AlgorithmDialog(alg, False, None)
        dlg.setParameters({k: layer.id() for k, layer in chosen.items()})
        dlg.resize(args.width, args.height)
        dlg.show()
        for _ in range(20):
            QApplication.processEvents()
        out = Path(args.out)
        out.parent.mkdir(parents=True, exist_ok=True)
        if not dlg.grab().save(str(out)):
            raise SystemExit(f"screenshot_dialog: could not write {out}")
        log.info("wrote %s", out)
        dlg.close()
    return 0


if __name__ == "__main__":
    sys.exit(main())
