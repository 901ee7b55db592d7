"""On a 5-variable table the module and the CLI agree with brute-force enumeration of every DAG
(written here in NumPy from the table's TSV export, independent of covey's engines)."""
import numpy as np
import pandas as pd
import pytest

import covey
from conftest import run_covey

N = 5


def five_variable_frame(rows=400, seed=11):
    """Discrete data from a -> b -> c, a -> d, e alone (fixed seed)."""
    rng = np.random.default_rng(seed)
    a = rng.integers(0, 2, rows)
    b = (a + (rng.random(rows) < 0.2)) % 2
    c = (b + (rng.random(rows) < 0.25)) % 3
    d = np.where(rng.random(rows) < 0.7, a, rng.integers(0, 2, rows))
    e = rng.integers(0, 2, rows)
    return pd.DataFrame({"a": a, "b": b, "c": c, "d": d, "e": e}).astype(str).radd("L")


def read_tsv_scores(path):
    """{node: [(parent mask, log score)]} from covey's TSV score format."""
    lines = [l for l in open(path).read().splitlines() if l and not l.startswith("#")]
    names = lines[0].split("\t")[1:]
    index = {name: i for i, name in enumerate(names)}
    scores = {v: [] for v in range(len(names))}
    for line in lines[2:]:
        node, parents, log_score = line.split("\t")
        mask = sum(1 << index[p] for p in parents.split(",") if p)
        scores[index[node]].append((mask, float(log_score)))
    return names, scores


def enumerate_posterior(scores):
    """log Z and P(u -> v), P(u ~> v) over all DAGs whose parent sets are in the table."""
    choices = [scores[v] for v in range(N)]
    grid = np.meshgrid(*[np.arange(len(c)) for c in choices], indexing="ij")
    combos = np.stack([g.ravel() for g in grid], 1)
    masks = np.stack([np.array([m for m, _ in choices[v]])[combos[:, v]] for v in range(N)], 1)
    # Acyclic iff repeatedly removing the nodes without remaining parents removes them all.
    removed = np.zeros(len(masks), dtype=np.int64)
    for _ in range(N):
        for v in range(N):
            free = (masks[:, v] & ~removed) == 0
            removed |= np.where(free, 1 << v, 0)
    acyclic = removed == (1 << N) - 1
    combos, masks = combos[acyclic], masks[acyclic]
    logw = sum(np.array([s for _, s in choices[v]])[combos[:, v]] for v in range(N))
    # adjacency[g, u, v] = 1 when u is a parent of v; reach: paths of length >= 1
    adjacency = ((masks[:, None, :] >> np.arange(N)[None, :, None]) & 1).astype(np.int64)
    reach, power = adjacency.copy(), adjacency.copy()
    for _ in range(N - 1):
        power = np.minimum(power @ adjacency, 1)
        reach |= power
    top = logw.max()
    weights = np.exp(logw - top)
    total = weights.sum()
    edges = np.einsum("g,guv->uv", weights, adjacency) / total
    ancestors = np.einsum("g,guv->uv", weights, reach) / total
    return top + np.log(total), edges, ancestors, len(masks)


@pytest.fixture(scope="module")
def five(tmp_path_factory):
    folder = tmp_path_factory.mktemp("five")
    table = covey.score(five_variable_frame(), max_indegree=4)
    table.save(folder / "scores.tsv")
    table.save(folder / "scores.h5")
    return table, folder


def test_enumeration_covers_all_dags(five):
    table, folder = five
    names, scores = read_tsv_scores(folder / "scores.tsv")
    assert names == table.variables
    assert enumerate_posterior(scores)[3] == 29281  # labelled DAGs on 5 nodes (OEIS A003024)


@pytest.mark.parametrize("route", ["layered", "signed"])
def test_exact_equals_enumeration_and_cli(five, route):
    table, folder = five
    log_z, edges, ancestors, _ = enumerate_posterior(read_tsv_scores(folder / "scores.tsv")[1])
    post = covey.exact(table, route=route)
    assert post.log_z == pytest.approx(log_z, abs=1e-9)
    np.testing.assert_allclose(post.edge_matrix.to_numpy(), edges, atol=1e-9)
    np.testing.assert_allclose(post.ancestor_matrix.to_numpy(), ancestors, atol=1e-9)
    np.testing.assert_allclose(post.adjacency_matrix.to_numpy(),
                               np.minimum(edges + edges.T, 1), atol=1e-9)
    cli = run_covey("exact", folder / "scores.h5", "--route", route, "--json")
    assert post.log_z == cli["log_total_weight"]
    np.testing.assert_array_equal(post.edges["probability"],
                                  [r["probability"] for r in cli["edges"]])


def test_enumeration_detects_a_wrong_posterior(five):
    """The comparison above fails for a posterior computed from other scores (prior changed)."""
    table, folder = five
    _, edges, _, _ = enumerate_posterior(read_tsv_scores(folder / "scores.tsv")[1])
    other = covey.exact(covey.score(five_variable_frame(), max_indegree=4, prior="parent-count"))
    assert np.abs(other.edge_matrix.to_numpy() - edges).max() > 1e-3
