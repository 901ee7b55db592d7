#!/usr/bin/env python3
"""Generates covey's demo data: an invented scenario, not real records.

"Brackwater Valley Orchards" is an invented apple-growing cooperative. Each row of the
discrete set is one weekly inspection of one orchard block; each row of the Gaussian set is one
week of a block's sensor and lab readings. Both are drawn from known ground-truth networks
(written beside the data as *_truth.tsv, `from<TAB>to` per edge) so that the demo can say how
well covey recovers them.

Uses only the Python standard library (random.Random with a fixed seed, fixed-precision
formatting), so the files are reproduced byte for byte:  python3 generate_orchard.py [OUTDIR]
"""
import math
import random
import sys
from pathlib import Path

SEED = 20261201

# ---- discrete set: 12 variables, 2000 rows -------------------------------------------------
LEVELS = {
    "season": ["spring", "summer", "autumn"],
    "rainfall": ["low", "normal", "high"],
    "humidity": ["low", "high"],
    "irrigation": ["off", "drip", "sprinkler"],
    "soil_moisture": ["dry", "ok", "wet"],
    "leaf_wetness": ["short", "long"],
    "spray_applied": ["no", "yes"],
    "fungal_infection": ["none", "mild", "severe"],
    "pest_traps": ["low", "high"],
    "fruit_damage": ["none", "some"],
    "yield": ["low", "mid", "high"],
    "grade": ["export", "local", "juice"],
}
# The network is sparse in a way the demo can show off: every edge, and every pair of parents
# of a common child, touches season, leaf_wetness or fungal_infection, so its moral graph has a
# vertex cover of 3 vertices and the generator's DAG lies in the class D_3 that covey's exact
# engines sample.
PARENTS = {
    "season": [],
    "spray_applied": [],
    "rainfall": ["season"],
    "irrigation": ["season"],
    "pest_traps": ["season"],
    "humidity": ["season"],
    "soil_moisture": ["season"],
    "leaf_wetness": ["season", "humidity"],
    "fungal_infection": ["leaf_wetness", "spray_applied"],
    "fruit_damage": ["fungal_infection"],
    "yield": ["season", "fungal_infection"],
    "grade": ["fungal_infection"],
}
ORDER = ["season", "spray_applied", "rainfall", "irrigation", "pest_traps", "humidity",
         "soil_moisture", "leaf_wetness", "fungal_infection", "fruit_damage", "yield", "grade"]


def make_cpts(rng):
    """One categorical distribution per parent configuration. Each configuration favours a level
    that moves with the parents' codes (a monotone effect, as in the scenario's story), plus noise,
    so that every edge carries a clear dependence."""
    cpts = {}
    for v in ORDER:
        k = len(LEVELS[v])
        parents = PARENTS[v]
        configs = [[]]
        for p in parents:
            configs = [c + [x] for c in configs for x in range(len(LEVELS[p]))]
        table = {}
        for c in configs:
            push = sum((x + 0.5) / len(LEVELS[p]) for x, p in zip(c, parents))
            centre = (k - 1) * (push / len(parents) if parents else 0.5)
            weights = [math.exp(-1.6 * (j - centre) ** 2) + 0.15 * rng.random() for j in range(k)]
            total = sum(weights)
            table[tuple(c)] = [w / total for w in weights]
        cpts[v] = table
    return cpts


def draw_categorical(rng, probs):
    u = rng.random()
    acc = 0.0
    for j, p in enumerate(probs):
        acc += p
        if u < acc:
            return j
    return len(probs) - 1


def discrete_rows(rng, cpts, count):
    for _ in range(count):
        codes = {}
        for v in ORDER:
            codes[v] = draw_categorical(rng, cpts[v][tuple(codes[p] for p in PARENTS[v])])
        yield [LEVELS[v][codes[v]] for v in LEVELS]


# ---- Gaussian set: 8 variables, 500 rows (linear Gaussian network) -------------------------
GAUSS_ORDER = ["air_temp_c", "rel_humidity_pct", "soil_moisture_pct", "leaf_wet_hours",
               "spray_litres", "spore_log_count", "fruit_weight_g", "sugar_brix"]
GAUSS_PARENTS = {
    "air_temp_c": [],
    "spray_litres": [],
    "rel_humidity_pct": [("air_temp_c", -1.2)],
    "soil_moisture_pct": [("rel_humidity_pct", 0.35)],
    "leaf_wet_hours": [("rel_humidity_pct", 0.12), ("air_temp_c", -0.25)],
    "spore_log_count": [("leaf_wet_hours", 0.30), ("spray_litres", -0.04)],
    "fruit_weight_g": [("soil_moisture_pct", 1.5), ("spore_log_count", -6.0)],
    "sugar_brix": [("air_temp_c", 0.18), ("fruit_weight_g", -0.02)],
}
GAUSS_BASE = {"air_temp_c": (18.0, 4.0), "spray_litres": (40.0, 12.0),
              "rel_humidity_pct": (95.0, 6.0), "soil_moisture_pct": (5.0, 3.0),
              "leaf_wet_hours": (2.0, 1.5), "spore_log_count": (3.0, 0.6),
              "fruit_weight_g": (150.0, 8.0), "sugar_brix": (12.0, 0.7)}
GAUSS_COLUMNS = ["air_temp_c", "rel_humidity_pct", "soil_moisture_pct", "leaf_wet_hours",
                 "spray_litres", "spore_log_count", "fruit_weight_g", "sugar_brix"]


def gaussian_rows(rng, count):
    for _ in range(count):
        x = {}
        for v in GAUSS_ORDER:
            mean, sd = GAUSS_BASE[v]
            x[v] = mean + sum(w * x[p] for p, w in GAUSS_PARENTS[v]) + rng.gauss(0.0, sd)
        yield ["%.3f" % x[v] for v in GAUSS_COLUMNS]


def write_csv(path, header, rows):
    with open(path, "w", newline="") as out:
        out.write(",".join(header) + "\n")
        for row in rows:
            out.write(",".join(row) + "\n")


def write_truth(path, edges):
    with open(path, "w", newline="") as out:
        out.write("# ground-truth edges of the generator: from<TAB>to\n")
        for a, b in edges:
            out.write(f"{a}\t{b}\n")


def main():
    outdir = Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parent
    rng = random.Random(SEED)
    cpts = make_cpts(rng)
    write_csv(outdir / "orchard_inspections.csv", list(LEVELS), discrete_rows(rng, cpts, 2000))
    write_truth(outdir / "orchard_inspections_truth.tsv",
                [(p, v) for v in LEVELS for p in PARENTS[v]])
    write_csv(outdir / "orchard_sensors.csv", GAUSS_COLUMNS, gaussian_rows(rng, 500))
    write_truth(outdir / "orchard_sensors_truth.tsv",
                [(p, v) for v in GAUSS_COLUMNS for p, _ in GAUSS_PARENTS[v]])


if __name__ == "__main__":
    main()
