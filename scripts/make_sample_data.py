"""Write the invented demo scenario (river Vennel, Harrowmere polder).

Usage::

    python scripts/make_sample_data.py [--out sample_gis] [--no-epochs] [--tile-size 1000]

Deterministic: the same options give the same files. Existing scenario files
in the output folder are replaced.
"""

from __future__ import annotations

import argparse
import logging
import sys
import time
from pathlib import Path

try:
    import trajectory  # noqa: F401
except ImportError:  # run from a checkout without installing the package
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from trajectory.errors import TrajectoryError  # noqa: E402
from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario  # noqa: E402

log = logging.getLogger("make_sample_data")


def main(argv: list[str] | None = None) -> int:
    """Parse the options, write the scenario, log the files written."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", default="sample_gis", type=Path, help="output folder")
    ap.add_argument("--length", default=3000.0, type=float,
                    help="line length in m (features scale with it)")
    ap.add_argument("--no-epochs", action="store_true", help="skip the earlier survey DEMs")
    ap.add_argument("--tile-size", default=None, type=float,
                    help="write the DEMs as tiles of this size (m) with a VRT mosaic")
    args = ap.parse_args(argv)
    logging.basicConfig(level=logging.INFO, format="%(levelname)s %(name)s: %(message)s")
    logging.getLogger("pyogrio").setLevel(logging.WARNING)   # its per-file record counts
    t0 = time.perf_counter()
    spec = LeveeSpec()
    if args.length != spec.length_m:
        spec = spec.scaled(args.length)
    try:
        paths = write_scenario(args.out, spec=spec, centreline=make_centreline(spec.length_m),
                               epochs=not args.no_epochs, tile_size_m=args.tile_size,
                               overwrite=True)
    except TrajectoryError as exc:
        log.error("%s", exc)
        return 2
    total = 0
    for key, p in paths.items():
        files = [p] if p.is_file() else []
        if p.suffix == ".vrt":
            files = [f for f in p.parent.iterdir() if f.is_file()]
        size = sum(f.stat().st_size for f in files)
        total += size
        log.info("%-12s %-28s %8.2f MB", key, p.relative_to(args.out), size / 1e6)
    log.info("total %.2f MB in %.1f s", total / 1e6, time.perf_counter() - t0)
    return 0


if __name__ == "__main__":
    sys.exit(main())
