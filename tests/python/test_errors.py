"""Library errors reach Python as ValueError / MemoryError subclasses with the library's
message, option fields spelled as the keyword arguments."""
import pandas as pd
import pytest

import covey


@pytest.fixture
def frame():
    return pd.DataFrame({"a": ["x", "y", "y", "x"] * 10, "b": ["u", "u", "v", "v"] * 10})


def test_option_errors_name_the_keyword(frame):
    with pytest.raises(covey.OptionError, match=r"^max_indegree must be 0 or more$"):
        covey.score(frame, max_indegree=-1)
    with pytest.raises(ValueError, match=r"^equivalent_sample_size must be a positive number"):
        covey.score(frame, equivalent_sample_size=0)
    with pytest.raises(covey.InputError, match=r"^route: expected"):
        covey.exact(covey.score(frame), route="sideways")
    with pytest.raises(covey.InputError, match=r"^cover -1: the cover bound must be at least 0"):
        covey.best(covey.score(frame), cover=-1)


def test_kind_specific_options_are_refused(frame):
    # The library's rule (check_score_parameters), worded as `covey score` words it, by keyword.
    with pytest.raises(covey.OptionError, match="^raw_units applies to Gaussian data"):
        covey.score(frame, raw_units=True)
    with pytest.raises(covey.OptionError, match="^edge_penalty needs prior edge-penalty$"):
        covey.score(frame, edge_penalty=2.0)


def test_resource_error_is_a_memory_error(frame):
    with pytest.raises(MemoryError, match="beyond the limits"):
        covey.exact(covey.score(frame), memory_limit=16)
    assert issubclass(covey.ResourceError, MemoryError)


def test_bad_input_names_the_file(tmp_path):
    path = tmp_path / "missing.h5"
    with pytest.raises(covey.InputError, match="missing.h5"):
        covey.read_scores(path)
    # A file that cannot be read is an OSError too, as Python's own readers raise.
    with pytest.raises(OSError, match="missing.h5: cannot open for reading"):
        covey.read_scores(path)
    assert issubclass(covey.FileError, covey.InputError)
    with pytest.raises(covey.InputError, match=r"forbid\[0\]"):
        covey.score(pd.DataFrame({"a": [1.0, 2.0, 3.0], "b": [2.0, 1.0, 0.5]}),
                    forbid=[("a", "nope")])


def test_missing_cells_follow_the_csv_reader():
    frame = pd.DataFrame({"a": ["x", None, "y", "x"] * 5, "b": ["u", "v", "v", "u"] * 5})
    with pytest.raises(covey.InputError, match="missing"):
        covey.score(frame)
    assert covey.score(frame, drop_incomplete=True).info()["num_rows"] == 15


def test_flags_in_library_messages_read_as_keywords(tmp_path):
    """Messages that still name the CLI's flags ("--teleport-rate") name the keywords instead;
    a path holding "--" stays as it is."""
    table = covey.score(pd.DataFrame({"a": ["x", "y"] * 20, "b": ["u", "v", "v", "u"] * 10}))
    with pytest.raises(covey.InputError, match=r"^teleport_rate must lie in \[0, 1\]$"):
        covey.chain(table, tmp_path / "run.h5", steps=10, teleport_cover=1, teleport_rate=2)
    with pytest.raises(covey.InputError, match="^give a stopping rule: steps N, max_time"):
        covey.chain(table, tmp_path / "run.h5")
    with pytest.raises(covey.ResourceError, match=r"\(raise memory_limit or max_time"):
        covey.exact(table, memory_limit=16)
    with pytest.raises(covey.InputError, match="/--odd/scores.h5: cannot open"):
        covey.read_scores(tmp_path / "--odd" / "scores.h5")
