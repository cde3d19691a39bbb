"""Build the desktop-GIS plugin zip: the plugin shell, its metadata and the engine.

Usage::

    python scripts/build_plugin.py [--out dist]

Writes ``<out>/trajectory_plugin-<version>.zip`` holding one folder,
``trajectory_plugin/``, with ``__init__.py`` (classFactory), ``metadata.txt`` and
``engine/trajectory/`` (this checkout's package, without caches).
"""

from __future__ import annotations

import argparse
import logging
import re
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PLUGIN_DIR = "trajectory_plugin"
log = logging.getLogger("build_plugin")


def package_version(root: Path = ROOT) -> str:
    """The version in trajectory/__init__.py (read as text: no import needed)."""
    text = (root / "trajectory" / "__init__.py").read_text(encoding="utf-8")
    m = re.search(r'^__version__\s*=\s*"([^"]+)"', text, re.M)
    if not m:
        raise SystemExit("build_plugin: no __version__ in trajectory/__init__.py")
    return m.group(1)


def build(out: Path, *, root: Path = ROOT) -> Path:
    """Write the plugin zip into ``out``; return its path."""
    version = package_version(root)
    out.mkdir(parents=True, exist_ok=True)
    target = out / f"{PLUGIN_DIR}-{version}.zip"
    shell = root / "scripts" / "plugin"
    metadata = (shell / "metadata.txt").read_text(encoding="utf-8").replace(
        "{version}", version)
    with zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as zf:
        zf.writestr(f"{PLUGIN_DIR}/metadata.txt", metadata)
        zf.write(shell / "__init__.py", f"{PLUGIN_DIR}/__init__.py")
        for src in sorted((root / "trajectory").rglob("*")):
            if src.is_dir() or "__pycache__" in src.parts or src.suffix == ".pyc":
                continue
            rel = src.relative_to(root)
            zf.write(src, f"{PLUGIN_DIR}/engine/{rel.as_posix()}")
    log.info("wrote %s", target)
    return target


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", default=str(ROOT / "dist"), help="output folder (default: dist)")
    args = ap.parse_args(argv)
    logging.basicConfig(level=logging.INFO, format="%(message)s")
    print(build(Path(args.out)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
