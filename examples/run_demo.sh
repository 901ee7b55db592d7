#!/usr/bin/env bash
# covey's demo: the whole job on the invented orchard-inspection data (see the README's tour):
# score -> best -> draw -> exact -> chain -> check -> compare -> report. Writes everything under
# out/demo/ and ends by printing where the report is and how well the consensus graph recovers
# the generator's network.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
cd "$root"  # paths in the output stay short and the same on every machine
covey=${COVEY:-build/covey}
out=${OUT:-out/demo}
mkdir -p "$out"
data=examples/orchard_inspections.csv
truth=examples/orchard_inspections_truth.tsv
step() { printf '\n== %s\n' "$*"; }
# The demo may run again over its own folder: --force lets every step replace its earlier output.

step "1/8 score: BDeu local scores of the 12 inspection variables (max in-degree 3)"
"$covey" score "$data" -o "$out/scores.h5" --max-indegree 3 --force
"$covey" info "$out/scores.h5"

step "2/8 best: the highest-scoring DAG whose moral graph has a vertex cover of size <= 3"
"$covey" best "$out/scores.h5" --cover 3 --dot "$out/best.dot" --force

step "3/8 draw: 20000 exact independent draws from the posterior restricted to that class, D_3"
"$covey" draw "$out/scores.h5" --cover 3 --draws 20000 --seed 1 -o "$out/cover_draws.h5" \
  --save-sampler "$out/sampler.h5" --force | head -12

step "4/8 exact: the exact posterior over all DAGs (12 variables is small enough)"
"$covey" exact "$out/scores.h5" --cover 3 --top 5

step "5/8 chain: 4 hybrid chains (local moves, REV, exact teleports from D_3), until converged"
"$covey" chain "$out/scores.h5" -o "$out/run.h5" --chains 4 --steps 4e6 --thin 200 \
  --sampler "$out/sampler.h5" --teleport-cover 3 --teleport-rate 0.02 --seed 7 \
  --until-rhat 1.01 --until-ess 400 --force --json > "$out/chain.json"
python3 - "$out/chain.json" <<'PY'
import json, sys
s = json.load(open(sys.argv[1]))
print(f"{s['steps']} steps per chain in {s['seconds']:.1f} s "
      f"({s['proposals_per_second'] / 1e6:.1f} M proposals/s), stopped by: {s['stop_reason']}")
print("acceptance by move:", ", ".join(f"{m} {a:.3f}" for m, a in s["acceptance"].items()))
print(f"teleport regenerations: {s['regenerations']}")
PY

step "6/8 check: R-hat, bulk and tail ESS and MCSE of every edge, adjacency and ancestor feature"
"$covey" check "$out/run.h5" --top 8
"$covey" check "$out/run.h5" --json > "$out/check.json"

step "7/8 compare: the chains (all DAGs) against the exact all-DAG posterior, and against D_3"
"$covey" compare "$out/run.h5" "$out/scores.h5" --top 5
"$covey" compare "$out/run.h5" "$out/cover_draws.h5" --top 5

step "8/8 report: the visual report, with the exact posterior beside the chains"
"$covey" report "$out/run.h5" --compare "$out/scores.h5" -o "$out/report" --force

printf '\n== recovery: consensus graph of the chains (adjacencies above 0.5) against the generator\n'
python3 - "$out/check.json" "$truth" <<'PY'
import json, sys
check = json.load(open(sys.argv[1]))
truth = set()
for line in open(sys.argv[2]):
    if line.startswith("#") or not line.strip():
        continue
    a, b = line.split()
    truth.add(frozenset((a, b)))
found = {frozenset((f["from"], f["to"])) for f in check["features"]
         if f["kind"] == "adjacency" and f["probability"] > 0.5}
tp = len(found & truth)
print(f"adjacencies with posterior probability > 0.5: {len(found)}; true adjacencies: {len(truth)}")
print(f"precision {tp / max(len(found), 1):.3f}, recall {tp / len(truth):.3f}")
PY
printf '\nThe report is at %s/report/index.html (all demo outputs are in %s)\n' "$out" "$out"
echo "Remember: learned structure shows statistical dependence, not proven cause; decisions"
echo "affecting safety or health rest with qualified people and local rules."
