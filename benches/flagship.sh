#!/usr/bin/env bash
# The flagship benchmark: the 32-net crossed bus (about 100k unknowns) and the same lines side
# by side, extracted by the release binary; prints one JSON object with each run's figures and
# the targets (≤ 60 s wall, ≤ 4 GB peak, ≤ 40 GMRES iterations per right-hand side, crossed
# ≤ 1.5 × side by side). A benchmark, not a test: it reports, the caller judges.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
out=${1:-out/flagship}
mkdir -p "$out"
for case in crossed-bus side-by-side-bus; do
    rm -rf "$out/$case"
    ./target/release/rafter --quiet extract "data/$case.toml" -o "$out/$case"
done
python3 - "$out" <<'PY'
import json, sys
out = sys.argv[1]
runs = {}
for case in ("crossed-bus", "side-by-side-bus"):
    d = json.load(open(f"{out}/{case}/capacitance.json"))
    runs[case] = {
        "unknowns": d["unknowns"],
        "nets": len(d["nets"]),
        "total_s": round(d["timing"]["total_s"], 2),
        "assemble_s": round(d["timing"]["assemble_s"], 2),
        "solve_s": round(d["timing"]["solve_s"], 2),
        "peak_memory_gb": round((d["peak_memory_bytes"] or 0) / 1e9, 3),
        "compression": d["hmatrix"]["compression"],
        "max_rank": d["hmatrix"]["max_rank"],
        "gmres_max_iterations": max(d["gmres"]["iterations"]),
    }
c, s = runs["crossed-bus"], runs["side-by-side-bus"]
ratio = c["total_s"] / s["total_s"]
print(json.dumps({
    "runs": runs,
    "crossed_over_side_by_side": round(ratio, 3),
    "targets": {
        "wall_le_60s": c["total_s"] <= 60.0,
        "peak_le_4gb": c["peak_memory_gb"] <= 4.0,
        "gmres_le_40": c["gmres_max_iterations"] <= 40,
        "ratio_le_1_5": ratio <= 1.5,
    },
}, indent=2))
PY
