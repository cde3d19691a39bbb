"""Benchmark: a whole levee line against the floor of reading its terrain.

Builds long invented scenarios (meandering centrelines of 20 and 100 km, a 0.5 m
DEM as 1 km tiles behind a VRT) in a temporary folder and measures, each in a
fresh process and repeated (the best wall time counts, the largest peak memory):

- floor: rasterio reading just the windows that cover the sections, one window
  per section, nothing else (the least any program must read), under the same
  GDAL block cache as a run;
- floor_pool: the same windows shared among the pool's processes (reading alone on
  the cores the pool uses);
- blocks: each internal block of the tiles that the sections touch, read once
  straight from the tile (the decompression a program cannot avoid);
- serial: ``trajectory.assess.assess`` with one process (writes the GeoPackage);
- lines: the same on the safety standards and frequency lines (design levels read
  off the lines, the return period each station holds, the economic optimum);
- stability: the same with the inner-slope stability screening on (every section with
  an invented body soil, one in four weak enough to be short, so the stability berms
  are designed too);
- pool: the same on a local process pool;
- naive: the script a user would otherwise write, a loop over sections with
  shapely points and ``dataset.sample`` (timed on the first sections only and
  scaled to the line, as it is slow).

Usage::

    python scripts/bench.py                      # 20 and 100 km, temp folder
    python scripts/bench.py --lengths 20 --keep bench_data --repeat 5

Wall time and CPU time (user + system, of the process and its workers) are
both printed: on a shared machine the CPU time is the steadier figure. Peak
memory is the resident set size high-water mark of the measuring process
(``resource.getrusage``), and of its largest worker for the pool. The
scenarios use a 70 m DEM corridor either side of the line (the sections reach
60 m), which keeps generating the 100 km DEM to a few minutes.
"""

from __future__ import annotations

import argparse
import json
import logging
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

log = logging.getLogger("bench")

#: sections timed for the naive loop (it is then scaled to the whole line)
NAIVE_SECTIONS = 60
#: DEM corridor either side of the line (m); sections reach 60 m, so 70 m covers
#: them with room for the bilinear neighbours and keeps generation affordable
CORRIDOR_M = 70.0


# ------------------------------------------------------------------ scenario
def build(folder: Path, length_m: float) -> dict[str, str]:
    """Write (or reuse) the long scenario of ``length_m`` in ``folder``."""
    from dataclasses import replace

    from trajectory.scenario.synthetic import LeveeSpec, make_long_centreline, write_scenario

    done = folder / "done.json"
    if done.exists():
        return json.loads(done.read_text())
    t = time.perf_counter()
    spec = replace(LeveeSpec().repeated(length_m), margin_m=CORRIDOR_M)
    line = make_long_centreline(length_m)
    paths = write_scenario(folder, spec=spec, centreline=line, epochs=False,
                           tile_size_m=1000.0, overwrite=True)
    out = {k: str(v) for k, v in paths.items()}
    out["build_s"] = round(time.perf_counter() - t, 1)
    out["tiles"] = len(list(Path(paths["dem"]).parent.glob("*.tif")))
    done.write_text(json.dumps(out))
    return out


#: the invented soils of the stability case: (unit weight, saturated, c', phi', required)
BENCH_SOIL = ((18.0, 20.0, 5.0, 32.0, 1.3), (18.0, 20.0, 6.0, 30.0, 1.3),
              (17.0, 18.5, 1.0, 22.0, 1.3), (18.0, 20.0, 5.0, 31.0, 1.3))


def soil_conditions(paths: dict[str, str]) -> str:
    """The scenario's sections with a body soil per row (written once beside them)."""
    src = Path(paths["sections"])
    dst = src.with_name("sections_soil.csv")
    if not dst.exists():
        lines = src.read_text(encoding="utf-8").splitlines()
        head = lines[0] + (",soil_unit_weight,soil_unit_weight_sat,soil_cohesion,"
                           "soil_friction_angle,required_safety_factor")
        rows = [ln + "," + ",".join(f"{v:g}" for v in BENCH_SOIL[k % len(BENCH_SOIL)])
                for k, ln in enumerate(lines[1:])]
        dst.write_text("\n".join([head, *rows]) + "\n", encoding="utf-8")
    return str(dst)


def _sections(paths: dict[str, str]):
    """Stations and sample points of the default run (spacing 25 m, +-50 m, DEM cell)."""
    from trajectory.geometry.chainage import make_stations
    from trajectory.geometry.sections import section_offsets, section_points
    from trajectory.inputs.sources import open_dem, read_centreline
    from trajectory.params import Settings

    s = Settings()
    dem = open_dem(paths["dem"])
    line, _ = read_centreline(paths["centreline"], target_crs=dem.crs)
    st = make_stations(line, spacing=s.spacing, smooth_length=s.smooth_length)
    off = section_offsets(s.half_width, dem.cell)
    return line, st, off, section_points(st, off)


# ------------------------------------------------------------------ measures
def _cpu() -> float:
    """CPU seconds of this process and its finished children (user + system)."""
    me = resource.getrusage(resource.RUSAGE_SELF)
    ch = resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + ch.ru_utime + ch.ru_stime


def _floor_windows(paths: dict[str, str]) -> tuple[list, int, int]:
    """The floor's windows (one per section), the run's GDAL cache (bytes), the stations."""
    import rasterio
    from rasterio.windows import Window

    from trajectory.geometry.sections import station_cell_ranges, to_pixel
    from trajectory.params import Settings

    _, st, _, (x, y) = _sections(paths)
    with rasterio.open(paths["dem"]) as ds:
        c, r = to_pixel(ds.transform, x, y)
        ext = station_cell_ranges(c, r, width=ds.width, height=ds.height)
    wins = [Window(int(c0), int(r0), int(c1 - c0), int(r1 - r0))
            for c0, c1, r0, r1 in ext if c1 > c0 and r1 > r0]
    return wins, int(Settings().dem_cache * 2**20), len(st)


def _read_windows(path: str, wins: list, cache: int) -> int:
    """Read ``wins`` of band 1 under a GDAL block cache of ``cache`` bytes; cells read."""
    import rasterio

    with rasterio.Env(GDAL_CACHEMAX=cache), rasterio.open(path) as ds:
        return sum(ds.read(1, window=w).size for w in wins)


def measure_floor(paths: dict[str, str], workers: int) -> dict:
    """One window per section (the cells its samples and their neighbours need).

    Read under the same GDAL block cache as a run (``Settings.dem_cache``): like for
    like, and steadier than GDAL's default cache of 5 % of the memory.
    """
    wins, cache, stations = _floor_windows(paths)
    t, cpu0 = time.perf_counter(), _cpu()
    cells = _read_windows(paths["dem"], wins, cache)
    wall, cpu = time.perf_counter() - t, _cpu() - cpu0
    return {"wall": wall, "cpu": cpu, "cells": int(cells), "stations": stations}


def measure_floor_pool(paths: dict[str, str], workers: int) -> dict:
    """The floor's windows shared among ``workers`` forked processes (consecutive parts).

    What reading alone costs on the cores the pool uses: the pool's own floor.
    """
    import multiprocessing

    import numpy as np

    wins, cache, stations = _floor_windows(paths)
    ctx = multiprocessing.get_context("fork")
    parts = [list(p) for p in np.array_split(np.array(wins, dtype=object), max(workers, 1))]
    t, cpu0 = time.perf_counter(), _cpu()
    procs = [ctx.Process(target=_read_windows, args=(paths["dem"], p, cache)) for p in parts]
    for p in procs:
        p.start()
    for p in procs:
        p.join()
    wall, cpu = time.perf_counter() - t, _cpu() - cpu0
    return {"wall": wall, "cpu": cpu, "stations": stations}


def measure_blocks(paths: dict[str, str], workers: int) -> dict:
    """Each internal block of the tiles that the samples touch, read once from its tile."""
    import numpy as np
    import rasterio
    from rasterio.windows import Window

    from trajectory.geometry.sections import to_pixel

    _, st, _, (x, y) = _sections(paths)
    todo: list[tuple[Path, list[Window]]] = []
    for f in sorted(Path(paths["dem"]).parent.glob("*.tif")):
        with rasterio.open(f) as ds:
            b = ds.bounds
            near = (x >= b.left - 1) & (x <= b.right + 1) & (y >= b.bottom - 1) & (y <= b.top + 1)
            if not near.any():
                continue
            c, r = to_pixel(ds.transform, x[near], y[near])
            j = np.floor(c - 0.5).astype(np.int64)
            i = np.floor(r - 0.5).astype(np.int64)
            j, i = np.concatenate([j, j + 1, j, j + 1]), np.concatenate([i, i, i + 1, i + 1])
            ok = (j >= 0) & (j < ds.width) & (i >= 0) & (i < ds.height)
            bh, bw = ds.block_shapes[0]
            wins = []
            for key in np.unique((i[ok] // bh) * (1 << 20) + j[ok] // bw):
                bi, bj = divmod(int(key), 1 << 20)
                wins.append(Window(bj * bw, bi * bh, min(bw, ds.width - bj * bw),
                                   min(bh, ds.height - bi * bh)))
            if wins:
                todo.append((f, wins))
    t, cpu0 = time.perf_counter(), _cpu()
    for f, wins in todo:
        with rasterio.open(f) as ds:
            for w in wins:
                ds.read(1, window=w)
    wall, cpu = time.perf_counter() - t, _cpu() - cpu0
    return {"wall": wall, "cpu": cpu, "blocks": sum(len(w) for _, w in todo),
            "stations": len(st)}


def measure_assess(paths: dict[str, str], workers: int, *, lines: bool = False,
                   soil: str = "") -> dict:
    """The whole job, GeoPackage written; with ``lines`` on the frequency lines and
    safety standards (``standards.csv`` + ``frequency.csv``): the probability stage;
    with ``soil`` on those conditions (the stability case)."""
    from trajectory.assess import RunInputs, assess
    from trajectory.params import Settings

    out = Path(tempfile.mkdtemp(prefix="bench_out_")) / "results.gpkg"
    conditions = soil or (paths["standards"] if lines else paths["sections"])
    settings = Settings(workers=workers, frequency=paths["frequency"] if lines else "")
    t, cpu0 = time.perf_counter(), _cpu()
    res = assess(RunInputs(paths["centreline"], paths["dem"], conditions), out, settings)
    wall, cpu = time.perf_counter() - t, _cpu() - cpu0
    counts = {k: int(v) for k, v in res.stations["status"].value_counts().items()}
    got = {"wall": wall, "cpu": cpu, "stations": len(res.stations), "status": counts}
    if soil:
        got["stability"] = {k: int(v) for k, v in
                            res.stations["stability_status"].value_counts().items()}
        got["berms"] = int((res.options["option"] == "stability_berm").sum())
    return got


def measure_stability(paths: dict[str, str], workers: int) -> dict:
    """The serial assessment with the inner-slope stability screening on."""
    return measure_assess(paths, workers, soil=soil_conditions(paths))


def measure_lines(paths: dict[str, str], workers: int) -> dict:
    """``serial`` on frequency lines and standards: what the probability stage adds."""
    return measure_assess(paths, workers, lines=True)


def measure_engine(paths: dict[str, str], workers: int) -> dict:
    """``trajectory.assess.run`` alone: the whole computation, no files written.

    Also times the piping stage alone (:func:`measure_piping`) on the run's stations.
    """
    from trajectory.assess import RunInputs, run
    from trajectory.params import Settings

    t, cpu0 = time.perf_counter(), _cpu()
    res = run(RunInputs(paths["centreline"], paths["dem"], paths["sections"]),
              Settings(workers=workers))
    wall, cpu = time.perf_counter() - t, _cpu() - cpu0
    return {"wall": wall, "cpu": cpu, "stations": len(res.stations),
            **measure_piping(res, paths["sections"])}


def measure_piping(res, conditions: str, *, repeat: int = 5) -> dict:
    """The piping stage of a run (screening, stretches, berms) on its stations, best of
    ``repeat``; it runs inside every run, here it is timed alone."""
    import numpy as np

    from trajectory.inner.piping_screen import piping_options, piping_stretches, screen_piping
    from trajectory.inputs.sources import read_conditions
    from trajectory.judgement.status import station_extents

    table = read_conditions(conditions).table.set_index("section_id")
    st = res.stations.drop(columns=[c for c in ("polder_level", "subsoil_class")
                                    if c in res.stations])
    cond = table.loc[st["section_id"].to_numpy()].reset_index()
    c = st["chainage"].to_numpy(float)
    lo, hi = station_extents(c, float(c[0]), float(c[-1]))
    best = np.inf
    for _ in range(repeat):
        t = time.perf_counter()
        got = screen_piping(st, cond, profiles=res.profiles, offsets=res.offsets)
        full = st.assign(**got)
        runs = piping_stretches(full, start=float(c[0]), end=float(c[-1]))
        piping_options(full, runs, extents=hi - lo, thickness=1.0)
        best = min(best, time.perf_counter() - t)
    screened = int((got["piping_status"] != "not_screened").sum())
    return {"piping_s": best, "piping_screened": screened}


def measure_naive(paths: dict[str, str], workers: int) -> dict:
    """The typical per-section script: shapely points, then ``dataset.sample``."""
    import numpy as np
    import rasterio
    from shapely.geometry import Point

    line, st, off, _ = _sections(paths)
    n = min(NAIVE_SECTIONS, len(st))
    t, cpu0 = time.perf_counter(), _cpu()
    with rasterio.open(paths["dem"]) as ds:
        for k in range(n):
            d = st.along[k]
            p = line.interpolate(d)
            a, b = line.interpolate(max(d - 5, 0)), line.interpolate(min(d + 5, line.length))
            tx, ty = b.x - a.x, b.y - a.y
            norm = (tx * tx + ty * ty) ** 0.5
            nx, ny = -ty / norm, tx / norm
            pts = [Point(p.x + o * nx, p.y + o * ny) for o in off]
            z = np.array([v[0] for v in ds.sample([(q.x, q.y) for q in pts])], dtype=float)
            z[z == ds.nodata] = np.nan
    wall, cpu = time.perf_counter() - t, _cpu() - cpu0
    return {"wall": wall * len(st) / n, "cpu": cpu * len(st) / n, "timed_sections": n,
            "stations": len(st)}


MEASURES = {"floor": measure_floor, "floor_pool": measure_floor_pool, "blocks": measure_blocks,
            "engine": measure_engine, "serial": measure_assess, "lines": measure_lines,
            "pool": measure_assess, "stability": measure_stability, "naive": measure_naive}


def _child(kind: str, paths_json: str, workers: int) -> None:
    paths = json.loads(paths_json)
    out = MEASURES[kind](paths, workers)
    out["rss_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    out["rss_children_mb"] = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print("RESULT " + json.dumps(out))


def _run_child(kind: str, paths: dict, workers: int) -> dict:
    t = time.perf_counter()
    cp = subprocess.run([sys.executable, __file__, "--measure", kind, "--paths",
                         json.dumps(paths), "--workers", str(workers)],
                        capture_output=True, text=True, check=False)
    if cp.returncode != 0:
        raise RuntimeError(f"{kind} failed:\n{cp.stderr[-3000:]}")
    line = [x for x in cp.stdout.splitlines() if x.startswith("RESULT ")][-1]
    out = json.loads(line[7:])
    out["process_wall"] = time.perf_counter() - t
    return out


# ------------------------------------------------------------------ report
def bench(lengths: list[float], folder: Path, *, repeat: int, workers: int,
          naive: bool, kinds: list[str] | None = None) -> dict:
    kinds = kinds or ["floor", "floor_pool", "blocks", "engine", "serial", "lines", "pool",
                      "stability"]
    kinds += ["naive"] if naive and "naive" not in kinds else []
    report: dict = {"cores": workers, "repeat": repeat, "lengths": {}}
    for km in lengths:
        paths = build(folder / f"{km:g}km", km * 1000.0)
        log.info("%g km: scenario in %s (%s tiles, built in %s s)", km, paths["dem"],
                 paths["tiles"], paths["build_s"])
        runs: dict[str, list[dict]] = {k: [] for k in kinds}
        for _ in range(repeat):  # interleaved, so background load hits every kind alike
            for k in kinds:
                runs[k].append(_run_child(k, paths, workers if k.endswith("pool") else 1))
        best = {k: min(r, key=lambda x: x["wall"]) for k, r in runs.items()}
        for k, r in runs.items():
            best[k] = dict(best[k], rss_mb=max(x["rss_mb"] for x in r),
                           rss_children_mb=max(x["rss_children_mb"] for x in r),
                           walls=[round(x["wall"], 3) for x in r])
        report["lengths"][km] = {"paths": paths, "best": best}
    return report


def print_report(rep: dict) -> None:
    cores = rep["cores"]
    print(f"\nbest of {rep['repeat']} runs; pool on {cores} worker processes\n")
    print(f"{'km':>5} {'stations':>8} {'kind':>7} {'wall s':>8} {'cpu s':>8} {'peak MB':>8} "
          f"{'workers MB':>10}")
    for km, r in rep["lengths"].items():
        for k, b in r["best"].items():
            print(f"{km:>5g} {b['stations']:>8} {k:>7} {b['wall']:>8.2f} {b['cpu']:>8.2f} "
                  f"{b['rss_mb']:>8.0f} "
                  f"{b['rss_children_mb']:>10.0f}")
    print()
    for km, r in rep["lengths"].items():
        b = r["best"]
        if "engine" in b and "piping_s" in b["engine"]:
            e = b["engine"]
            print(f"{km:g} km: piping stage {e['piping_s'] * 1000:.1f} ms for "
                  f"{e['piping_screened']} screened stations = "
                  f"{100 * e['piping_s'] / e['wall']:.2f} % of the engine's wall time")
        if "floor" not in b:
            continue
        fl = b["floor"]["wall"]
        if not {"serial", "pool", "blocks", "engine"} <= set(b):
            continue
        print(f"{km:g} km: serial / floor = {b['serial']['wall'] / fl:.2f} (target <= 2)")
        print(f"{km:g} km: engine (run, no files) / floor = {b['engine']['wall'] / fl:.2f}")
        print(f"{km:g} km: pool / (floor / {cores}) = {b['pool']['wall'] / (fl / cores):.2f} "
              f"(target <= 1.2)")
        print(f"{km:g} km: stability / floor = {b['stability']['wall'] / fl:.2f} "
              f"(target <= 3; {b['stability'].get('stability', {})}, "
              f"{b['stability'].get('berms', 0)} berms)")
        print(f"{km:g} km: serial / blocks floor = {b['serial']['wall'] / b['blocks']['wall']:.2f}")
        if "naive" in b:
            print(f"{km:g} km: naive / serial = {b['naive']['wall'] / b['serial']['wall']:.1f} "
                  f"(target >= 20)")
    ks = sorted(rep["lengths"])
    if len(ks) >= 2 and {"floor", "serial"} <= set(rep["lengths"][ks[0]]["best"]):
        a, z = rep["lengths"][ks[0]]["best"], rep["lengths"][ks[-1]]["best"]
        # cost per km above start-up: the slope between the shortest and longest line
        dkm = ks[-1] - ks[0]
        per_km = {k: (z[k]["wall"] - a[k]["wall"]) / dkm for k in z}
        cpu_km = {k: (z[k]["cpu"] - a[k]["cpu"]) / dkm for k in z}
        print(f"\ncost per km above start-up ({ks[0]:g} -> {ks[-1]:g} km), s/km "
              "(wall; CPU beside it, steadier on a shared machine):")
        for k, v in per_km.items():
            print(f"  {k:>7}: {v:.4f}  ({v / per_km['floor']:.2f} x floor)   CPU "
                  f"{cpu_km[k]:.4f} ({cpu_km[k] / cpu_km['floor']:.2f} x floor)")
        print(f"per km CPU: serial / floor = {cpu_km['serial'] / cpu_km['floor']:.2f}")
        fl = per_km["floor"]
        print(f"per km: serial / floor = {per_km['serial'] / fl:.2f} (target <= 2)")
        if "lines" in per_km:
            print(f"per km: probability stage (lines - serial) / floor = "
                  f"{(per_km['lines'] - per_km['serial']) / fl:.3f} wall, "
                  f"{(cpu_km['lines'] - cpu_km['serial']) / cpu_km['floor']:.3f} CPU "
                  "(target <= 0.1)")
        if "stability" in per_km:
            print(f"per km: stability / floor = {per_km['stability'] / fl:.2f} wall, "
                  f"{cpu_km['stability'] / cpu_km['floor']:.2f} CPU (target <= 3; the stability "
                  f"stage {(cpu_km['stability'] - cpu_km['serial']) / cpu_km['floor']:.2f} x "
                  "floor in CPU)")
        if "naive" in per_km:
            print(f"per km: naive / serial = {per_km['naive'] / per_km['serial']:.1f} "
                  f"(target >= 20; read as serial within 2x the floor, the binding one)")
        if {"pool", "floor_pool"} <= set(per_km):
            pf = per_km["floor_pool"]
            print(f"per km: pool / (floor / {cores}) = {per_km['pool'] / (fl / cores):.2f} "
                  f"(target <= 1.2)")
            print(f"per km: pool / floor read on {cores} processes = "
                  f"{per_km['pool'] / pf:.2f} (reading alone on {cores} processes = "
                  f"{pf / (fl / cores):.2f} x floor/{cores})")
            eff = per_km["pool"] / (per_km["serial"] / cores)
            print(f"per km: pool / (serial / {cores}) = {eff:.2f} (parallel overhead of the "
                  "job)")
        for k in [k for k in ("serial", "pool") if k in z]:
            key = "rss_children_mb" if k == "pool" else "rss_mb"
            print(f"peak memory {k}: {ks[-1]:g} km / {ks[0]:g} km = "
                  f"{z[k][key] / a[k][key]:.2f} (target <= 1.5)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--lengths", type=float, nargs="+", default=[20.0, 100.0],
                    help="line lengths in km")
    ap.add_argument("--keep", default=None, help="folder for the scenarios (reused if present)")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--no-naive", action="store_true", help="skip the naive loop")
    ap.add_argument("--json", default=None, help="also write the figures to this file")
    ap.add_argument("--kinds", nargs="+", default=None, choices=sorted(MEASURES),
                    help="measure only these (e.g. --kinds floor engine: the piping stage "
                         "is timed with the engine)")
    ap.add_argument("--measure", help=argparse.SUPPRESS)
    ap.add_argument("--paths", help=argparse.SUPPRESS)
    a = ap.parse_args()
    if a.measure:
        _child(a.measure, a.paths, a.workers)
        return
    logging.basicConfig(level=logging.INFO, format="%(message)s")
    with tempfile.TemporaryDirectory(prefix="trajectory_bench_") as tmp:
        folder = Path(a.keep) if a.keep else Path(tmp)
        folder.mkdir(parents=True, exist_ok=True)
        rep = bench(a.lengths, folder, repeat=a.repeat, workers=a.workers, naive=not a.no_naive,
                    kinds=a.kinds)
    print_report(rep)
    if a.json:
        Path(a.json).write_text(json.dumps(rep, indent=2, default=str))


if __name__ == "__main__":
    main()
