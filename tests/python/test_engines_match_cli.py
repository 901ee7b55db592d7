"""The module's engines give the CLI's results (`covey ... --json`) on the demo table
(examples/orchard_inspections.csv, 12 discrete variables) and the Gaussian sensors table."""
import numpy as np
import pandas as pd
import pytest

import covey
from conftest import run_covey


def by_pair(records):
    return {(r["from"], r["to"]): r["probability"] for r in records}


def test_exact_equals_cli_json(demo_scores):
    cli = run_covey("exact", demo_scores, "--json")
    post = covey.exact(covey.read_scores(demo_scores))
    assert isinstance(post.log_z, float)  # the stable minimum of issue 17, item 5
    assert post.log_z == cli["log_total_weight"]
    assert post.route == cli["route"]
    assert post.variables == cli["variables"]
    for kind in ("edges", "adjacencies", "ancestors"):
        frame = getattr(post, kind)
        assert list(frame.columns) == ["from", "to", "probability"]
        # Same pairs in the same order as the CLI's JSON, the same doubles.
        assert list(zip(frame["from"], frame["to"])) == [(r["from"], r["to"]) for r in cli[kind]]
        np.testing.assert_array_equal(frame["probability"].to_numpy(),
                                      [r["probability"] for r in cli[kind]])
    assert post.edge_matrix.loc["season", "rainfall"] == by_pair(cli["edges"])[
        ("season", "rainfall")]


def test_exact_draws_are_exact_dags(demo_scores):
    post = covey.exact(demo_scores, draws=300, seed=5)
    assert post.draws.shape == (300, 12, 12) and post.draws.dtype == bool
    # Statistical: every edge's draw frequency within 5 binomial SEs (+1/300) of its exact
    # probability; a sampler ignoring the scores would miss the edges near 0 or 1.
    freq = post.draws.mean(axis=0)
    prob = post.edge_matrix.to_numpy()
    assert np.all(np.abs(freq - prob) <= 5 * np.sqrt(prob * (1 - prob) / 300) + 1 / 300)


def test_best_equals_cli_json(demo_scores):
    cli = run_covey("best", demo_scores, "--cover", 3, "--json")
    best = covey.best(demo_scores, cover=3)
    assert best.log_score == cli["log_score"]
    assert best.cover == cli["cover"]
    assert best.parents == cli["parents"]
    assert sorted(zip(best.edges["from"], best.edges["to"])) == sorted(
        (p, child) for child, ps in cli["parents"].items() for p in ps)


def test_cover_draws_equal_cli_json(demo_scores):
    cli = run_covey("draw", demo_scores, "--cover", 3, "--draws", 2000, "--seed", 9, "--json")
    draws = covey.draw(covey.read_scores(demo_scores), cover=3, count=2000, seed=9)
    assert draws.trials == cli["trials"]
    assert draws.log_upper_bound == cli["log_upper_bound"]
    assert draws.log_z == cli["log_total_weight"]
    assert list(draws.log_z_ci95) == cli["log_total_weight_ci95"]
    expected = by_pair(cli["edges"])
    got = {(f, t): p for f, t, p in draws.edges[["from", "to", "probability"]].itertuples(
        index=False)}
    assert got == {pair: p for pair, p in expected.items() if p > 0}
    assert draws.draws.shape == (2000, 12, 12)
    np.testing.assert_array_equal(draws.draws.mean(axis=0), draws.edge_matrix.to_numpy())


def test_seed_sequence_gives_an_integer_seed(demo_scores):
    seq = np.random.SeedSequence(42)
    a = covey.draw(demo_scores, cover=2, count=50, seed=seq)
    b = covey.draw(demo_scores, cover=2, count=50, seed=np.random.SeedSequence(42))
    np.testing.assert_array_equal(a.draws, b.draws)


@pytest.mark.parametrize("fixture,csv", [("demo_scores", "demo_csv"),
                                         ("sensors_scores", "sensors_csv")])
def test_pandas_round_trip_gives_the_cli_table(request, fixture, csv):
    """A DataFrame read by pandas scores to the very table `covey score` makes of the CSV
    (same kinds, levels and score bits: the fingerprints cover every score)."""
    cli_table = covey.read_scores(request.getfixturevalue(fixture))
    frame = pd.read_csv(request.getfixturevalue(csv))
    indegree = cli_table.info()["max_indegree"]
    table = covey.score(frame, max_indegree=indegree)
    assert table.fingerprint == cli_table.fingerprint
    assert table.info()["variables"] == cli_table.info()["variables"]
    # The same through a NumPy array with column names, and through the CSV path.
    array_table = covey.score(frame.to_numpy(), columns=list(frame.columns),
                              max_indegree=indegree)
    assert array_table.fingerprint == cli_table.fingerprint
    assert covey.score(request.getfixturevalue(csv), max_indegree=indegree).fingerprint == \
        cli_table.fingerprint


def test_saved_table_reads_back(tmp_path, demo_scores):
    table = covey.read_scores(demo_scores)
    table.save(tmp_path / "scores.tsv")
    again = covey.read_scores(tmp_path / "scores.tsv")
    assert again.variables == table.variables
    assert again.total_parent_sets == table.total_parent_sets
    assert covey.exact(again).log_z == pytest.approx(covey.exact(table).log_z, abs=1e-9)
    # A second save over the same file is refused unless force=True, like `--force`.
    with pytest.raises(covey.OptionError, match="exists; force replaces it"):
        table.save(tmp_path / "scores.tsv")
    table.save(tmp_path / "scores.tsv", force=True)


def test_bins_and_column_kinds_give_the_cli_table(tmp_path, sensors_csv):
    """Binning, columns named discrete and a semicolon file: the same table as `covey score`
    with --bin, --discrete-columns and --delimiter (one reader, in the library)."""
    frame = pd.read_csv(sensors_csv)
    frame["spray_litres"] = frame["spray_litres"].round()
    semicolon = tmp_path / "sensors.csv"
    frame.to_csv(semicolon, sep=";", index=False)
    out = tmp_path / "binned.h5"
    run_covey("score", semicolon, "-o", out, "--delimiter", ";", "--max-indegree", 2,
              "--bin", "air_temp_c=quantile:3", "--bin", "sugar_brix=edges:12,13",
              "--discrete-columns", "spray_litres")
    cli_table = covey.read_scores(out)
    assert cli_table.info()["score"] == "cg"
    table = covey.score(frame, max_indegree=2, bins=["air_temp_c=quantile:3",
                                                     "sugar_brix=edges:12,13"],
                        discrete_columns=["spray_litres"])
    assert table.fingerprint == cli_table.fingerprint
    by_path = covey.score(semicolon, max_indegree=2, delimiter=";",
                          bins=["air_temp_c=quantile:3", "sugar_brix=edges:12,13"],
                          discrete_columns=["spray_litres"])
    assert by_path.fingerprint == cli_table.fingerprint
    with pytest.raises(covey.OptionError, match="delimiter"):
        covey.score(semicolon, delimiter=";;")
