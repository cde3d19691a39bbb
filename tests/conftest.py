"""Shared fixtures: the invented demo scenario, generated once per test session."""

from __future__ import annotations

import json
import os

import pytest
from hypothesis import settings

from trajectory.synthetic import LeveeSpec, make_centreline, write_scenario

# CI runs the property tests on hypothesis's fixed sequence (reproducible verdicts);
# local runs keep searching new examples
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")


@pytest.fixture(scope="session")
def demo(tmp_path_factory):
    """The full demo scenario (3 km, one epoch) with its planted truth."""
    out = tmp_path_factory.mktemp("demo")
    spec = LeveeSpec()
    paths = write_scenario(out, spec=spec, centreline=make_centreline(spec.length_m),
                           epochs=False)
    paths["truth_data"] = json.loads(paths["truth"].read_text())
    return paths


@pytest.fixture(scope="session")
def demo_result(demo, tmp_path_factory):
    """The demo assessed once with default settings, written to a GeoPackage.

    Its conditions carry safety standards and frequency lines (``standards.csv``
    with ``frequency.csv``); the design levels they give equal ``sections.csv``'s.
    """
    from trajectory.assess import RunInputs, assess
    from trajectory.params import Settings

    out = tmp_path_factory.mktemp("demo_out") / "results.gpkg"
    result = assess(RunInputs(str(demo["centreline"]), str(demo["dem"]),
                              str(demo["standards"])), out,
                    Settings(frequency=str(demo["frequency"])))
    return result, out
