"""covey from Python: the demo's job on the orchard-inspection data, cell by cell.

Run it whole (after `make python`):
    PYTHONPATH=build/python /usr/bin/python3 examples/python_tour.py
or cell by cell (`# %%` marks the cells) in Jupyter or an editor that knows them. Files go to
out/python_tour/. The same steps with the command line are examples/run_demo.sh.
"""

# %% Data in: a pandas DataFrame, scored exactly as `covey score` scores the CSV file.
import math
import os
from pathlib import Path

import pandas as pd

import covey

root = Path(__file__).resolve().parents[1]
out = Path(os.environ.get("OUT", root / "out" / "python_tour"))
out.mkdir(parents=True, exist_ok=True)

data = pd.read_csv(root / "examples" / "orchard_inspections.csv")
table = covey.score(data, max_indegree=3)  # BDeu: the columns are labels
table.save(out / "scores.h5")
info = table.info()
print(table, "scored from", info["num_rows"], "rows")
print(pd.DataFrame(info["variables"])[["name", "kind", "parent_sets"]].head())

# %% The best DAG whose moral graph has a vertex cover of at most 3 nodes (D_3).
best = covey.best(table, cover=3)
print(f"best DAG of D_3: log score {best.log_score:.2f}, cover {best.cover}")
print(best.edges.to_string(index=False))

# %% Exact independent draws from the posterior restricted to D_3, with log Z_3.
cover_draws = covey.draw(table, cover=3, count=5000, seed=1)
lo, hi = cover_draws.log_z_ci95
print(f"log Z_3 = {cover_draws.log_z:.4f} (95% interval {lo:.4f} .. {hi:.4f}), "
      f"acceptance {cover_draws.acceptance_rate:.3f}")

# %% The exact posterior over all DAGs (12 variables is small enough).
post = covey.exact(table)
print(f"log Z = {post.log_z:.4f} ({post.route} route)")
print(post.edges.sort_values("probability", ascending=False).head(8).to_string(index=False))
print(f"posterior mass of D_3, Z_3 / Z: {math.exp(cover_draws.log_z - post.log_z):.4f}")

# %% Chains: stopped early (stop=, as Ctrl-C would), then resumed to the same end.
run_path = out / "run.h5"
options = dict(chains=4, thin=200, seed=7, teleport_cover=3, teleport_rate=0.02)
first = covey.chain(table, run_path, steps=200_000, stop=lambda: True, **options)
print(f"stopped by {first['stop_reason']} at step {first['steps']}")
summary = covey.chain(table, run_path, steps=200_000, resume=True)
print(f"resumed to {summary['steps']} steps per chain; stopped by {summary['stop_reason']}")

# %% The run file as arrays, and the chains' edge frequencies against the exact ones.
run = covey.open_run(run_path)
print(run, "edges array:", run.edges.shape)
merged = run.edge_probabilities().merge(post.edges, on=["from", "to"],
                                        suffixes=("_chains", "_exact"))
merged["difference"] = (merged["probability_chains"] - merged["probability_exact"]).abs()
print("largest difference between chain and exact edge probabilities:",
      f"{merged['difference'].max():.3f}")

# %% Convergence diagnostics as a DataFrame, worst first.
check = covey.check(run_path, features="edges,score")
print(check)
assessed = check.features[check.features["status"] != "undefined"]
print(assessed[["name", "mean", "rhat", "ess_bulk", "status"]].head().to_string(index=False))
