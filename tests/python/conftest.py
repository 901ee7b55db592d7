"""Fixtures of the Python module's tests: the covey binary and the demo score table it makes.

Run by ctest (label `python`, python/CMakeLists.txt), which sets PYTHONPATH to build/python,
COVEY to the binary and COVEY_SOURCE to the source tree.
"""
import json
import os
import subprocess
from pathlib import Path

import pytest

SOURCE = Path(os.environ.get("COVEY_SOURCE", Path(__file__).resolve().parents[2]))
COVEY = os.environ.get("COVEY", str(SOURCE / "build" / "covey"))


def run_covey(*args):
    """Runs the covey binary; returns its stdout (parsed when --json is among the args)."""
    done = subprocess.run([COVEY, *map(str, args)], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout) if "--json" in args else done.stdout


@pytest.fixture(scope="session")
def demo_csv():
    return SOURCE / "examples" / "orchard_inspections.csv"


@pytest.fixture(scope="session")
def sensors_csv():
    return SOURCE / "examples" / "orchard_sensors.csv"


@pytest.fixture(scope="session")
def demo_scores(tmp_path_factory, demo_csv):
    """The demo's score table, made by the CLI (`covey score`, as examples/run_demo.sh does)."""
    path = tmp_path_factory.mktemp("demo") / "scores.h5"
    run_covey("score", demo_csv, "-o", path, "--max-indegree", 3)
    return path


@pytest.fixture(scope="session")
def sensors_scores(tmp_path_factory, sensors_csv):
    path = tmp_path_factory.mktemp("sensors") / "scores.h5"
    run_covey("score", sensors_csv, "-o", path)
    return path
