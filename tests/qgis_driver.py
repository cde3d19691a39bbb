"""Run trajectory inside the desktop GIS' Python and answer as JSON (used by the tests).

Run with the QGIS-side interpreter (``scripts/setup_qgis_env.sh``)::

    python tests/qgis_driver.py params
    python tests/qgis_driver.py assess '{"centreline": ..., "out": ...}'
    python tests/qgis_driver.py cancel '{...}'
    python tests/qgis_driver.py plugin path/to/plugin.zip
    TRAJECTORY_LAYERS='["stations"]' python tests/qgis_driver.py layers results.gpkg

Prints one JSON object on the last line of stdout.
"""

from __future__ import annotations

import json
import os
import sys
import tempfile
import zipfile
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
ALG = "trajectory:crest_assess"


def _value(v):
    """JSON-safe form of a parameter default."""
    if isinstance(v, (bool, int, float, str)) or v is None:
        return v
    return str(v)


def params() -> dict:
    from qgis.core import QgsApplication, QgsProcessingParameterDefinition

    alg = QgsApplication.processingRegistry().algorithmById(ALG)
    rows = []
    for p in alg.parameterDefinitions():
        row = {"name": p.name(), "type": p.type(), "default": _value(p.defaultValue()),
               "help": p.help(), "description": p.description(),
               "advanced": bool(p.flags() & QgsProcessingParameterDefinition.FlagAdvanced),
               "optional": bool(p.flags() & QgsProcessingParameterDefinition.FlagOptional)}
        if p.type() == "number":
            row.update(minimum=p.minimum(), maximum=p.maximum(), data_type=int(p.dataType()))
        if p.type() == "enum":
            row["options"] = list(p.options())
        rows.append(row)
    outputs = [o.name() for o in alg.outputDefinitions()]
    return {"parameters": rows, "outputs": outputs}


def assess(parameters: dict) -> dict:
    import processing
    from qgis.core import QgsProcessingFeedback

    feedback = QgsProcessingFeedback()
    progress: list[float] = []
    feedback.progressChanged.connect(progress.append)
    result = processing.run(ALG, parameters, feedback=feedback)
    return {"result": {k: _value(v) for k, v in result.items()}, "progress": progress}


def report(parameters: dict) -> dict:
    import processing

    result = processing.run("trajectory:crest_report", parameters)
    return {"result": {k: _value(v) for k, v in result.items()}}


def layers(gpkg: str) -> dict:
    """How the desktop GIS opens each spatial layer: renderer, labels, field aliases."""
    from qgis.core import QgsVectorLayer

    out = {}
    for name in json.loads(os.environ.get("TRAJECTORY_LAYERS", "[]")):
        vl = QgsVectorLayer(f"{gpkg}|layername={name}", name, "ogr")
        fields = vl.fields()
        out[name] = {"valid": vl.isValid(), "renderer": vl.renderer().type(),
                     "labels": vl.labelsEnabled(),
                     "aliases": {fields.at(i).name(): fields.at(i).alias()
                                 for i in range(fields.count())}}
    return {"layers": out}


def cancel(parameters: dict) -> dict:
    """Cancel through the feedback object as soon as the first progress arrives."""
    import processing
    from qgis.core import QgsProcessingException, QgsProcessingFeedback

    feedback = QgsProcessingFeedback()
    progress: list[float] = []

    def on_progress(p: float) -> None:
        progress.append(p)
        feedback.cancel()

    feedback.progressChanged.connect(on_progress)
    error = None
    try:
        processing.run(ALG, parameters, feedback=feedback)
    except QgsProcessingException as exc:
        error = str(exc)
    folder = Path(parameters["out"]).parent
    files = sorted(p.name for p in folder.iterdir()) if folder.exists() else []
    return {"error": error, "progress": progress, "files": files}


def plugin(zip_path: str) -> dict:
    """Install the zip into a plugin folder, load it the host's way, list its algorithms."""
    from qgis.core import QgsApplication

    target = Path(tempfile.mkdtemp(prefix="plugins-"))
    with zipfile.ZipFile(zip_path) as zf:
        zf.extractall(target)
        names = zf.namelist()
    sys.path.insert(0, str(target))
    import trajectory_plugin

    obj = trajectory_plugin.classFactory(None)
    obj.initProcessing()
    algs = [a.id() for a in QgsApplication.processingRegistry().algorithms()
            if a.provider() is not None and a.provider().id() == "trajectory"]
    import trajectory

    engine = str(Path(trajectory.__file__).resolve().parent)
    obj.unload()
    after = QgsApplication.processingRegistry().providerById("trajectory") is None
    return {"algorithms": algs, "engine": engine, "plugin_dir": str(target),
            "unloaded": after, "entries": len(names)}


def main(argv: list[str]) -> int:
    cmd = argv[0]
    from qgis.core import QgsApplication

    QgsApplication.setPrefixPath("/usr", True)
    app = QgsApplication([], False)
    app.initQgis()
    sys.path.append(str(Path(QgsApplication.pkgDataPath()) / "python" / "plugins"))
    from processing.core.Processing import Processing

    Processing.initialize()
    if cmd == "plugin":
        # load the zip's own engine: trajectory is not imported before this point
        answer = plugin(argv[1])
    else:
        from trajectory.frontends.gis_provider import register

        register()
        if cmd == "params":
            answer = params()
        elif cmd == "layers":
            answer = layers(argv[1])
        elif cmd == "report":
            answer = report(json.loads(argv[1]))
        elif cmd == "assess":
            answer = assess(json.loads(argv[1]))
        elif cmd == "cancel":
            answer = cancel(json.loads(argv[1]))
        else:
            raise SystemExit(f"unknown command {cmd}")
    print(json.dumps(answer))
    sys.stdout.flush()
    # skip the host's teardown: it is slow and can crash at exit in a headless process
    os._exit(0)


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
