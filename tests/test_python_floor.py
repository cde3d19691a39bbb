"""The package keeps to the Python floor pyproject declares (requires-python).

The suite itself runs on the floor in CI (Debian 12's 3.11); these checks catch
what a newer interpreter on a developer's machine would let through: syntax of
a later version (``ast.parse`` with ``feature_version``, Python docs, ``ast``)
and a setup script that accepts an interpreter below the floor.
"""

from __future__ import annotations

import ast
import re
import subprocess
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _floor() -> tuple[int, int]:
    spec = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["requires-python"]
    m = re.fullmatch(r">=\s*(\d+)\.(\d+)", spec)
    assert m, f"requires-python {spec!r} is not a plain floor"
    return int(m[1]), int(m[2])


def test_running_interpreter_meets_the_floor():
    assert sys.version_info[:2] >= _floor()


def test_every_module_parses_with_the_floor_grammar():
    floor = _floor()
    files = sorted((ROOT / "trajectory").rglob("*.py")) + sorted((ROOT / "scripts").glob("*.py"))
    assert len(files) > 30
    for f in files:
        ast.parse(f.read_text(encoding="utf-8"), filename=str(f), feature_version=floor)


def test_ruff_target_is_the_floor():
    data = tomllib.loads((ROOT / "pyproject.toml").read_text())
    major, minor = _floor()
    assert data["tool"]["ruff"]["target-version"] == f"py{major}{minor}"


def test_setup_refuses_an_interpreter_below_the_floor(tmp_path):
    # a stand-in interpreter that reports the version just below the floor
    major, minor = _floor()
    fake = tmp_path / "python_old"
    below = f"{major}.{minor - 1}.0"
    fake.write_text("#!/bin/sh\n"
                    f"case \"$*\" in *version_info*) exit 1;; -V) echo 'Python {below}';; esac\n"
                    "exit 3\n")
    fake.chmod(0o755)
    cp = subprocess.run(["bash", str(ROOT / "scripts" / "setup_env.sh")],
                        env={"PATH": "/usr/bin:/bin", "PYTHON": str(fake)},
                        capture_output=True, text=True, check=False)
    assert cp.returncode == 1
    assert f"needs Python {major}.{minor} or newer" in cp.stderr
