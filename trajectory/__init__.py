"""trajectory: batch screening of levee crest levels from a centreline and a terrain model.

A screening tool: results must be reviewed by a qualified engineer under local codes.

The run is :mod:`trajectory.assess`; each subpackage is one stage, in pipeline order:
inputs, geometry, terrain, formulas, requirement, judgement, inner, pipeline, outputs,
frontends (and scenario, the invented demo data). See the README, "Where the code is".
"""

from __future__ import annotations

__version__ = "0.1.0"

#: Caution carried by every output (README, report, table header, metadata).
CAUTION = (
    "trajectory is a screening tool. Its results are estimates from a terrain model and "
    "published formulas; they must be reviewed by a qualified engineer under local codes "
    "before any decision on the safety or reinforcement of a levee."
)

__all__ = ["CAUTION", "__version__"]
