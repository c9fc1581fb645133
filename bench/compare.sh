#!/usr/bin/env bash
# Compare loopwright's sweep with the SciPy peer (/work/shared/bench/peer_scipy.py,
# or $PEER): the column A 20 x 20 and blender 100 x 100 sweeps, one core each,
# runs alternated (peer, then Go straight after); prints median points/s, the
# median and range of the ratios of each back-to-back pair (the machine's speed
# drifts between pairs more than within one), and checks that every point's λ11
# and Niederlinski index agree to 1e-6 (relative, after the peer's 6-digit
# rounding). Usage: bench/compare.sh [RUNS] (default 5).
# Needs: apt-get install -y python3-scipy python3-numpy; run from anywhere.
set -euo pipefail
runs=${1:-5}
root=$(cd "$(dirname "$0")/.." && pwd)
peer=${PEER:-/work/shared/bench/peer_scipy.py}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
(cd "$root" && go build -o "$tmp/gosweep" ./bench/gosweep)

for model in column blender; do
  : >"$tmp/go.$model"; : >"$tmp/py.$model"
  for ((r = 0; r < runs; r++)); do
    OPENBLAS_NUM_THREADS=1 /usr/bin/python3 "$peer" "$model" sweep | head -1 >>"$tmp/py.$model"
    GOMAXPROCS=1 "$tmp/gosweep" -root "$root" -model "$model" | head -1 >>"$tmp/go.$model"
  done
  OPENBLAS_NUM_THREADS=1 /usr/bin/python3 "$peer" "$model" sweep --points >"$tmp/pypts.$model"
  GOMAXPROCS=1 "$tmp/gosweep" -root "$root" -model "$model" -points >"$tmp/gopts.$model"
  /usr/bin/python3 - "$model" "$tmp" <<'PY'
import json, statistics, sys
model, tmp = sys.argv[1], sys.argv[2]
rate = lambda f: [json.loads(l)["points_per_s"] for l in open(f"{tmp}/{f}.{model}")]
go, py = statistics.median(rate("go")), statistics.median(rate("py"))
pairs = sorted(g / p for g, p in zip(rate("go"), rate("py")))
axes = {"column": ("zF", "F"), "blender": ("s_conc", "f_conc")}[model]
def pts(f):
    # The peer numbers points in its serpentine order: match on the axis values.
    return {tuple(float(f"{d[a]:.6g}") for a in axes): d
            for d in map(json.loads, open(f"{tmp}/{f}.{model}")) if d.get("mode") == "sweep_point"}
gp, pp = pts("gopts"), pts("pypts")
assert len(gp) == len(pp), (len(gp), len(pp))
import math
worst = 0.0  # in units of the tolerance: 1e-6 relative plus half the peer's last printed digit
for i, p in pp.items():
    g = gp[i]
    for a, b in ((g["rga"][0], p["rga"][0][0]), (g["niederlinski"], p["niederlinski"])):
        half_digit = 0.5 * 10 ** (math.floor(math.log10(abs(b))) - 5)  # the peer prints 6 significant digits
        worst = max(worst, abs(a - b) / (1e-6 * abs(b) + half_digit))
print(f"{model}: go {go:.0f} points/s, peer {py:.0f} points/s (medians of {len(rate('go'))}); "
      f"ratio of the medians {go/py:.1f}x, of back-to-back pairs median {statistics.median(pairs):.1f}x "
      f"(range {pairs[0]:.1f}x..{pairs[-1]:.1f}x); {len(pp)} points: λ11 and NI agree "
      f"(worst {worst:.2f} of the tolerance 1e-6 + peer rounding)")
if worst > 1:
    sys.exit(f"{model}: numbers differ by more than 1e-6")
PY
done
