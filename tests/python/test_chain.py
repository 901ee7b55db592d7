"""Chains from Python: the CLI's run with the same options, a run stopped (stop= callback or
Ctrl-C) and resumed equals a straight run, run files as arrays, check as DataFrames."""
import os
import signal

import numpy as np
import pytest

import covey
from conftest import run_covey

OPTIONS = dict(chains=2, thin=100, seed=3)


def same_run(a, b):
    a, b = covey.open_run(a), covey.open_run(b)
    assert (a.chains, a.num_draws, a.steps) == (b.chains, b.num_draws, b.steps)
    np.testing.assert_array_equal(a.edges, b.edges)
    np.testing.assert_array_equal(a.log_scores, b.log_scores)
    np.testing.assert_array_equal(a.draw_steps, b.draw_steps)


def test_chain_equals_cli_run(tmp_path, sensors_scores):
    run_covey("chain", sensors_scores, "-o", tmp_path / "cli.h5", "--steps", 20000, "--chains", 2,
              "--thin", 100, "--seed", 3)
    summary = covey.chain(sensors_scores, tmp_path / "py.h5", steps=20000, **OPTIONS)
    assert summary["stop_reason"] == "steps" and summary["steps"] == 20000
    same_run(tmp_path / "cli.h5", tmp_path / "py.h5")
    run = covey.open_run(tmp_path / "py.h5")
    assert run.edges.shape == (2, 200, 8, 8) and run.edges.dtype == bool
    assert run.options["seed"] == 3 and run.options["thin"] == 100
    probabilities = run.edge_probabilities()
    assert list(probabilities.columns) == ["from", "to", "probability"]
    np.testing.assert_allclose(probabilities["probability"].sum(),
                               run.edges.sum(axis=(2, 3)).mean())


def test_stopped_and_resumed_equals_straight(tmp_path, sensors_scores):
    covey.chain(sensors_scores, tmp_path / "straight.h5", steps=20000, **OPTIONS)
    stopped = covey.chain(sensors_scores, tmp_path / "stopped.h5", steps=20000,
                          stop=lambda: True, **OPTIONS)
    assert stopped["stop_reason"] == "signal" and 0 < stopped["steps"] < 20000
    resumed = covey.chain(sensors_scores, tmp_path / "stopped.h5", steps=20000, resume=True)
    assert resumed["stop_reason"] == "steps" and resumed["session_steps"] == 20000 - stopped[
        "steps"]
    same_run(tmp_path / "straight.h5", tmp_path / "stopped.h5")


def test_ctrl_c_leaves_a_resumable_run(tmp_path, sensors_scores):
    """SIGINT during a long run raises KeyboardInterrupt after a checkpoint; resuming to a
    step count past it equals a straight run to that count."""
    path = tmp_path / "interrupted.h5"
    # The SIGINT is sent once the run reports progress, so it always lands inside the run.
    with pytest.raises(KeyboardInterrupt, match="resume=True"):
        covey.chain(sensors_scores, path, steps=10**12,
                    progress=lambda *_: os.kill(os.getpid(), signal.SIGINT), **OPTIONS)
    reached = covey.open_run(path).steps
    assert 0 < reached < 10**12
    target = reached + 5000
    covey.chain(sensors_scores, path, steps=target, resume=True)
    covey.chain(sensors_scores, tmp_path / "straight.h5", steps=target, **OPTIONS)
    same_run(tmp_path / "straight.h5", path)


def test_resume_refuses_changed_options(tmp_path, sensors_scores):
    covey.chain(sensors_scores, tmp_path / "run.h5", steps=2000, **OPTIONS)
    with pytest.raises(covey.InputError, match="seed cannot be changed on resume"):
        covey.chain(sensors_scores, tmp_path / "run.h5", steps=4000, resume=True, seed=4)


def test_check_equals_cli_json(tmp_path, sensors_scores):
    path = tmp_path / "run.h5"
    covey.chain(sensors_scores, path, steps=20000, **OPTIONS)
    cli = run_covey("check", path, "--features", "edges,score", "--json")
    result = covey.check(path, features="edges,score")
    assert result.converged == cli["verdict"]["converged"]
    assert len(result.features) == len(cli["features"])
    # Same order (worst first) and the same numbers; undefined values are NaN here, null there.
    for (_, row), expected in zip(result.features.iterrows(), cli["features"]):
        assert (row["kind"], row["from"] or None, row["to"] or None) == (
            expected["kind"], expected.get("from"), expected.get("to"))
        assert row["status"] == expected["status"]
        for key in ("rhat", "ess_bulk", "ess_tail", "mcse"):
            value = expected[key]
            if value is None:
                assert np.isnan(row[key])
            else:
                assert row[key] == pytest.approx(value, rel=1e-12)


def test_progress_callback_sees_the_steps(tmp_path, sensors_scores):
    seen = []
    covey.chain(sensors_scores, tmp_path / "run.h5", steps=20000,
                progress=lambda steps, target, seconds: seen.append((steps, target)), **OPTIONS)
    assert seen and seen[-1] == (20000, 20000)
    assert all(0 < steps <= 20000 for steps, _ in seen)


def test_compare_equals_cli_json(tmp_path, sensors_scores):
    """A run against the exact posterior of its table: the same rows as `covey compare`."""
    path = tmp_path / "run.h5"
    covey.chain(sensors_scores, path, steps=20000, **OPTIONS)
    cli = run_covey("compare", path, sensors_scores, "--cover", 2, "--json")
    result = covey.compare(path, sensors_scores, cover=2)
    assert len(result.features) == len(cli["features"])
    for (_, row), expected in zip(result.features.iterrows(), cli["features"]):
        assert (row["kind"], row["from"], row["to"]) == (expected["kind"], expected["from"],
                                                         expected["to"])
        assert row["diff"] == pytest.approx(expected["diff"], rel=1e-12, abs=1e-15)
    assert result.mass_in_cover_class["estimate"] == pytest.approx(
        cli["mass_in_cover_class"]["estimate"], rel=1e-12)


def test_notebook_progress_line(tmp_path, sensors_scores, monkeypatch, capsys):
    """Under a Jupyter kernel (stderr no terminal) progress=True writes the Python line."""
    import sys
    monkeypatch.setitem(sys.modules, "ipykernel", object())
    covey.chain(sensors_scores, tmp_path / "run.h5", steps=20000, **OPTIONS)
    err = capsys.readouterr().err
    assert "\rchain: 20,000 of 20,000 steps per chain (100%)" in err and err.endswith("\n")


def test_stopping_rule_and_exact_start_equal_cli_json(tmp_path, sensors_scores):
    """start="exact" without teleports (its own D_2 sampler) and the stopping rule's verdict
    with check's keys: the module's summary equals `covey chain --json` of the same run."""
    args = dict(chains=2, thin=20, seed=5, steps=400000, start="exact", start_cover=2,
                until_rhat=1.05, until_ess=100, checkpoint_every="1h", check_every="1h")
    cli = run_covey("chain", sensors_scores, "-o", tmp_path / "cli.h5", "--chains", 2, "--thin",
                    20, "--seed", 5, "--steps", 400000, "--start", "exact", "--start-cover", 2,
                    "--until-rhat", 1.05, "--until-ess", 100, "--checkpoint-every", "1h",
                    "--check-every", "1h", "--json")
    summary = covey.chain(sensors_scores, tmp_path / "py.h5", **args)
    same_run(tmp_path / "cli.h5", tmp_path / "py.h5")
    assert covey.open_run(tmp_path / "py.h5").options["start_cover"] == 2
    assert summary["stop_reason"] == cli["stop_reason"] == "converged"
    assert summary["steps"] % 40000 == 0  # at a tenth of the steps
    for key in ("converged", "state", "features", "passing", "failing", "undefined", "rhat",
                "ess_bulk", "ess_tail", "text", "caveats", "checks", "thresholds"):
        assert summary["convergence"][key] == cli["convergence"][key], key
    assert summary["convergence"]["text"].startswith("converged: ")


def test_skip_rejections_equals_the_cli_run(tmp_path, sensors_scores):
    """skip_rejections=True is --skip-rejections: the same draws, stored as a fixed option."""
    run_covey("chain", sensors_scores, "-o", tmp_path / "cli.h5", "--chains", 2, "--thin", 50,
              "--seed", 9, "--steps", 100000, "--skip-rejections", "--json")
    covey.chain(sensors_scores, tmp_path / "py.h5", chains=2, thin=50, seed=9, steps=100000,
                skip_rejections=True, progress=False)
    same_run(tmp_path / "cli.h5", tmp_path / "py.h5")
    assert covey.open_run(tmp_path / "py.h5").options["skip_rejections"] is True
