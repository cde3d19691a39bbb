#!/usr/bin/env bash
# Fresh machine to results: set up .venv, build the invented sample scenario, assess it.
set -euo pipefail
ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$ROOT"
bash scripts/setup_env.sh test
VPY="$ROOT/.venv/bin/python"
# the invented scenario is (re)built when missing or older than its generator
STAMP=sample_gis/.generated
if [ ! -f "$STAMP" ] || [ trajectory/scenario/synthetic.py -nt "$STAMP" ] \
        || [ scripts/make_sample_data.py -nt "$STAMP" ]; then
    "$VPY" scripts/make_sample_data.py --out sample_gis
    touch "$STAMP"
fi
mkdir -p results
"$ROOT/.venv/bin/trajectory" assess \
    --centreline sample_gis/levee.gpkg \
    --dem 2019=sample_gis/dem_2019.tif --dem 2021=sample_gis/dem_2021.tif \
    --dem 2024=sample_gis/dem.tif \
    --conditions sample_gis/standards.csv --frequency sample_gis/frequency.csv \
    --structures-file sample_gis/structures.csv \
    --title "Vennel levee, Harrowmere polder (invented demo)" \
    --out results/results.gpkg \
    --report results/report.html --overwrite "$@"
echo "Results: results/results.gpkg (with layer styles), results/results.csv," \
     "results/results_stretches.csv, results/results.xlsx and results/report.html"
