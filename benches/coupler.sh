#!/usr/bin/env bash
# Full-wave benchmark: the demo coupled-stripline section (data/coupled-stripline.toml) meshed
# to about 20 000 current unknowns, solved by the release binary at one frequency (10 GHz) and
# over a sweep of 0.1–20 GHz (6 points, --raw so that only the layout itself is solved);
# prints one JSON object: per frequency the unknowns, seconds (operators + solve), GMRES
# iterations and compression, and the target (≤ 60 s at one frequency). A benchmark, not a
# test: it reports, the caller judges.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
out=${1:-out/coupler}
cell=${CELL:-0.03}
mkdir -p "$out"
one="$out/one.toml"
sweep="$out/sweep.toml"
sed -e "s/^max_cell = .*/max_cell = $cell/" -e "s/^start = .*/start = 1e10/" -e "s/^stop = .*/stop = 1e10/" \
    -e "s/^points = .*/points = 1/" data/coupled-stripline.toml > "$one"
sed -e "s/^max_cell = .*/max_cell = $cell/" -e "s/^start = .*/start = 1e8/" -e "s/^stop = .*/stop = 2e10/" \
    -e "s/^points = .*/points = 6/" data/coupled-stripline.toml > "$sweep"
rm -rf "$out/one" "$out/sweep"
./target/release/rafter --quiet sweep "$one" -o "$out/one" --raw
./target/release/rafter --quiet sweep "$sweep" -o "$out/sweep" --raw
python3 - "$out" <<'PY'
import json, sys
out = sys.argv[1]
def rows(d):
    return [
        {"frequency_hz": f, "unknowns": n, "seconds": round(s, 2), "iterations": max(i), "compression": round(c, 5)}
        for f, n, s, i, c in zip(d["frequencies_hz"], d["unknowns"], d["seconds"], d["iterations"], d["compression"])
    ]
one = json.load(open(f"{out}/one/sweep.json"))
sw = json.load(open(f"{out}/sweep/sweep.json"))
r1 = rows(one)[0]
print(json.dumps({
    "layout": one["layout"],
    "one_frequency": r1,
    "setup_seconds": round(one["setup_seconds"], 2),
    "sweep": rows(sw),
    "targets": {"one_frequency_le_60s": r1["seconds"] <= 60.0},
}, indent=2))
PY
