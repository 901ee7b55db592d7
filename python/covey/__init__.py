"""covey from Python: posteriors over Bayesian-network structures (DAGs).

The same engines as the ``covey`` command, called in-process: local scores from a pandas
DataFrame, a NumPy array or a file; the best DAG and exact draws of the cover-bounded class D_k;
the exact posterior over all DAGs of a small table; structure MCMC chains with checkpoints and
resume; run files as arrays; convergence checks as DataFrames. Keyword arguments carry the
CLI's option names in snake_case and its defaults (docs/cli.md). All computing happens in the
compiled module ``covey._covey``; this file only turns its results into labelled pandas objects.

>>> import covey
>>> table = covey.score(df, max_indegree=3)
>>> post = covey.exact(table)
>>> post.edges.sort_values("probability", ascending=False).head(3)
"""

import os as _os
import sys as _sys
import threading as _threading

import numpy as _np
import pandas as _pd

from ._covey import (  # noqa: F401  (the public names of the compiled module)
    Error,
    FileError,
    InputError,
    OptionError,
    ResourceError,
    ScoreTable,
    __version__,
    read_scores,
)
from . import _covey

__all__ = [
    "Error", "FileError", "InputError", "OptionError", "ResourceError", "ScoreTable", "read_scores", "score",
    "best", "draw", "exact", "chain", "open_run", "check", "Best", "CoverDraws",
    "ExactPosterior", "Run", "Check", "compare", "Comparison",
]


def _seed(seed):
    """An integer seed, or one taken from a numpy.random.SeedSequence."""
    if isinstance(seed, _np.random.SeedSequence):
        return int(seed.generate_state(1, _np.uint64)[0]) >> 1
    if isinstance(seed, (bool, float)) or int(seed) != seed or seed < 0:
        raise OptionError(f"seed must be a whole number >= 0 or a SeedSequence, got {seed!r}")
    return int(seed)


def _pairs(matrix, variables, upper_only=False):
    """A from/to/probability DataFrame of an n x n matrix, in the CLI's JSON order."""
    n = len(variables)
    rows = [(variables[u], variables[v], float(matrix[u, v]))
            for u in range(n) for v in range(u + 1 if upper_only else 0, n) if u != v]
    return _pd.DataFrame(rows, columns=["from", "to", "probability"])


def _labelled(matrix, variables):
    """An n x n matrix as a DataFrame with rows `from` and columns `to`."""
    index = _pd.Index(variables, name="from")
    return _pd.DataFrame(matrix, index=index, columns=_pd.Index(variables, name="to"))


def _csv_of(data, columns):
    """(text or path, is_path, name): data as the CSV reader of `covey score` takes it."""
    if isinstance(data, (str, _os.PathLike)):
        return _os.fspath(data), True, _os.fspath(data)
    if isinstance(data, _np.ndarray):
        if data.dtype.names is None and columns is None:
            raise OptionError("columns: a NumPy array needs column names (columns=[...])")
        data = _pd.DataFrame(data, columns=columns)
        name = "array"
    elif isinstance(data, _pd.DataFrame):
        if columns is not None:
            data = data[list(columns)]
        name = "DataFrame"
    else:
        raise OptionError("data must be a pandas DataFrame, a NumPy array or a CSV path, "
                          f"not {type(data).__name__}")
    return data.to_csv(index=False, na_rep=""), False, name


def score(data, *, columns=None, kind="infer", drop_incomplete=False, allow_constant=False,
          equivalent_sample_size=None, bge_alpha_mu=None, bge_alpha_w=None, raw_units=False,
          prior="uniform", edge_penalty=None, max_indegree=3, candidates=None, forbid=None,
          require=None, memory_limit=None, threads=0, discrete_columns=(), bins=(),
          count_column="", delimiter=""):
    """Local scores from data, as ``covey score`` computes them: BDeu for discrete columns,
    BGe for Gaussian ones.

    data: a pandas DataFrame, a NumPy array (with columns=[names], or a structured array), or
    the path of a CSV file. Columns are read exactly as the CLI reads a CSV file: numbers are
    Gaussian and labels discrete unless kind="discrete" or kind="gaussian"; missing cells (NaN,
    None) are refused unless drop_incomplete=True. Defaults: equivalent_sample_size 1 (BDeu),
    bge_alpha_mu 1 and bge_alpha_w n+2 (BGe), prior "uniform" ("edge-penalty" with
    edge_penalty=1, "parent-count"), max_indegree 3, candidates all for n <= 20 variables else
    20. Gaussian columns are standardized (scores do not depend on units) unless
    raw_units=True. discrete_columns: columns read as labels even when they hold numbers;
    bins: specs "NAME=quantile:K" or "NAME=edges:E1,E2,..." cutting numeric columns into
    levels; count_column: a column of row counts (aggregated tables); delimiter: for a CSV
    path, one character or "tab" (default: detected). forbid/require: an edge file or pairs [("from", "to"), ...].

    >>> table = covey.score(pd.DataFrame({"a": ["x", "y"] * 50, "b": ["u", "v"] * 50}))
    >>> table.info()["score"]
    'bdeu'
    """
    csv, is_path, name = _csv_of(data, columns)
    return _covey._score(csv, is_path, name, kind, drop_incomplete, allow_constant,
                         equivalent_sample_size, bge_alpha_mu, bge_alpha_w, raw_units, prior,
                         edge_penalty, max_indegree, candidates, forbid, require, memory_limit,
                         threads, list(discrete_columns), list(bins), count_column, delimiter)


class Best:
    """The highest-scoring DAG of D_k (``covey best``).

    variables, log_score, cover (names of a minimum vertex cover of the moral graph), parents
    (name -> list of parent names), dag (boolean n x n array, [from, to]) and edges (DataFrame
    with columns from, to).
    """

    def __init__(self, raw):
        self.variables = raw["variables"]
        self.log_score = raw["log_score"]
        self.cover = raw["cover"]
        self.parents = raw["parents"]
        self.dag = raw["dag"]
        self.edges = _pd.DataFrame([(p, child) for child, ps in self.parents.items() for p in ps],
                                   columns=["from", "to"])

    def __repr__(self):
        return f"<covey.Best: log score {self.log_score:.6g}, {len(self.edges)} edges>"


def best(table, cover, *, threads=0):
    """The highest-scoring DAG whose moral graph has a vertex cover of at most `cover` nodes.

    table: a ScoreTable or the path of a score file.

    >>> covey.best(table, cover=3).cover   # the demo's table
    ['season', 'leaf_wetness', 'fungal_infection']
    """
    return Best(_covey._best(table, cover, threads))


class CoverDraws:
    """Exact independent draws from the posterior restricted to D_k (``covey draw``).

    log_z and log_z_ci95: the estimate of log Z_k (log U times the acceptance rate) and its 95%
    interval; log_upper_bound (log U), trials, acceptance_rate, count, seed; edges (DataFrame
    from, to, probability, se of the edges drawn at least once); edge_matrix (labelled n x n
    DataFrame); draws (boolean array [draw, from, to]).
    """

    def __init__(self, raw):
        for key in ("variables", "cover", "count", "seed", "trials", "acceptance_rate",
                    "log_upper_bound", "log_z", "log_z_ci95", "draws"):
            setattr(self, key, raw[key])
        self.edge_matrix = _labelled(raw["edge_matrix"], self.variables)
        edges = _pairs(raw["edge_matrix"], self.variables)
        edges["se"] = _pairs(raw["edge_se_matrix"], self.variables)["probability"]
        self.edges = edges[edges["probability"] > 0].reset_index(drop=True)

    def __repr__(self):
        lo, hi = self.log_z_ci95
        return (f"<covey.CoverDraws: {self.count} draws of D_{self.cover}, "
                f"log Z_k {self.log_z:.10g} [{lo:.10g}, {hi:.10g}]>")


def draw(table, cover, count, *, seed=1, memory_limit=None, threads=0):
    """`count` exact draws from the posterior over D_k (moral-graph vertex cover <= `cover`).

    Draw i uses the random stream (seed, i // 256): the result does not depend on `threads`.

    >>> d = covey.draw(table, cover=3, count=5000, seed=1)   # the demo's table
    >>> d.log_z_ci95
    (-18951.2141..., -18951.2133...)
    """
    return CoverDraws(_covey._draw(table, cover, count, _seed(seed), memory_limit, threads))


class ExactPosterior:
    """The exact posterior over all DAGs of a table (``covey exact``).

    log_z: log of the total weight Z; edges, adjacencies and ancestors: DataFrames with columns
    from, to, probability (in the order of ``covey exact --json``); edge_matrix,
    adjacency_matrix, ancestor_matrix: the same as labelled n x n DataFrames; route,
    discrepancy (largest relative difference between independent evaluations of Z),
    clamped_sums; draws: boolean array [draw, from, to] when draws= was given.
    """

    def __init__(self, raw):
        self.variables = raw["variables"]
        self.log_z = raw["log_z"]
        self.route = raw["route"]
        self.discrepancy = raw["discrepancy"]
        self.clamped_sums = raw["clamped_sums"]
        self.edges = _pairs(raw["edge_matrix"], self.variables)
        self.adjacencies = _pairs(raw["adjacency_matrix"], self.variables, upper_only=True)
        self.ancestors = _pairs(raw["ancestor_matrix"], self.variables)
        self.edge_matrix = _labelled(raw["edge_matrix"], self.variables)
        self.adjacency_matrix = _labelled(raw["adjacency_matrix"], self.variables)
        self.ancestor_matrix = _labelled(raw["ancestor_matrix"], self.variables)
        self.draws = raw.get("draws")

    def __repr__(self):
        return (f"<covey.ExactPosterior: {len(self.variables)} variables, "
                f"log Z {self.log_z:.10g} ({self.route} route)>")


def exact(table, *, route="auto", draws=0, seed=1, memory_limit=None, max_time=3600,
          threads=0):
    """The exact posterior over all DAGs whose parent sets are in the table (small n).

    route: "auto", "layered" or "signed"; draws: exact independent draws to return (layered
    route); the work is estimated first and refused (ResourceError) beyond memory_limit or
    max_time seconds of single-core time (the CLI's --max-time).

    >>> post = covey.exact(table)
    >>> post.edges.columns.tolist()
    ['from', 'to', 'probability']
    """
    return ExactPosterior(_covey._exact(table, route, memory_limit, max_time, draws,
                                        _seed(seed), threads))


def _stop_callable(stop):
    if stop is None or callable(stop):
        return stop
    if isinstance(stop, _threading.Event):
        return stop.is_set
    raise OptionError("stop must be None, a callable or a threading.Event")


class _NotebookProgress:
    """A progress line for notebooks, where stderr is no terminal: rewritten in place."""

    def __call__(self, steps, target, seconds):
        share = f" ({100 * steps / target:.0f}%)" if target else ""
        total = f" of {target:,}" if target else ""
        print(f"\rchain: {steps:,}{total} steps per chain{share}, {seconds:.1f} s", end="",
              file=_sys.stderr, flush=True)


def _progress_of(progress):
    """(library's terminal line on?, Python callback or None) for chain(progress=...)."""
    if callable(progress):
        return False, progress
    if not progress:
        return False, None
    if "ipykernel" in _sys.modules and not _sys.stderr.isatty():
        return False, _NotebookProgress()
    return True, None


def chain(table, path, *, steps=None, chains=None, thin=None, burn_in=None, seed=None,
          teleport_cover=None, teleport_rate=None, rev_rate=None, cover_limit=None, start=None,
          start_cover=None, block_size=None, block_rate=None, skip_rejections=None, max_time=None,
          checkpoint_every="5m", check_every=None, until_rhat=0.0, until_ess=0.0,
          sampler="", memory_limit=None, threads=0, resume=False, force=False,
          progress=True, stop=None):
    """Structure MCMC chains written to the HDF5 run file `path` (``covey chain``); returns the
    run's summary (the dict of ``covey chain --json``).

    Options fixed at creation, None meaning the CLI's default: chains 4, thin 1000, burn_in 0,
    seed 1, teleport_cover none, teleport_rate 0.01 with teleport_cover, rev_rate 1/15,
    cover_limit none, start "greedy" ("exact" with teleport_cover), start_cover (k of the class
    D_k of the exact start) teleport_cover or else 2, block_size and block_rate chosen from the
    cost model, skip_rejections False (True: draw the wait to the next accepted local move
    exactly instead of simulating each rejection; pays when few moves are accepted, see
    docs/chains.md). On resume=True they are read from the file (given anew, they must repeat it); an
    existing file at `path` is replaced only with force=True. Stopping: steps (total per chain),
    max_time ("10m", or seconds), until_rhat / until_ess, checked every check_every ("30s", or
    seconds; None: 10% of the run time so far, 10 s to checkpoint_every), after every checkpoint
    and at every tenth of steps. progress: True shows a progress line on a terminal and in
    Jupyter notebooks; a callable gets (steps per chain so far, step target or 0, seconds) about
    twice a second.

    Ctrl-C (KeyboardInterrupt) or stop (a callable returning True, or a threading.Event)
    ends the run at its next segment with a checkpoint; chain(..., resume=True) continues it
    exactly as if it had not stopped. KeyboardInterrupt is raised again afterwards.

    >>> summary = covey.chain(table, "run.h5", steps=100_000, thin=100, seed=7)
    >>> summary["stop_reason"]
    'steps'
    """
    path = _os.fspath(path)
    terminal_line, report = _progress_of(progress)
    try:
        return _covey._chain(table, path, chains, steps, thin, burn_in,
                             None if seed is None else _seed(seed), teleport_cover,
                             teleport_rate, rev_rate, cover_limit, start, start_cover, block_size,
                             block_rate, skip_rejections, max_time, checkpoint_every, check_every, until_rhat,
                             until_ess,
                             _os.fspath(sampler), memory_limit, threads, resume,
                             force, terminal_line, _stop_callable(stop), report)
    except KeyboardInterrupt:
        raise KeyboardInterrupt(f"covey.chain stopped; checkpoint written to {path} "
                                "(continue with resume=True)") from None
    finally:
        if isinstance(report, _NotebookProgress):
            print(file=_sys.stderr)


class Run:
    """A chain-run file opened as arrays (``covey.open_run``); an MPI run's members side by
    side.

    variables, chains, num_draws (kept draws per chain), steps (per chain), options (as stored
    at creation); edges: boolean array [chain, draw, from, to]; log_scores: [chain, draw];
    draw_steps: the step of every kept draw; edge_probabilities(): the DataFrame from, to,
    probability over all chains' draws.
    """

    def __init__(self, path):
        self.path = _os.fspath(path)
        self._run = _covey._Run(self.path)
        self.variables = self._run.variables
        self.chains = self._run.chains
        self.num_draws = self._run.num_draws
        self.steps = self._run.steps
        self.options = self._run.options
        self._edges = None

    @property
    def edges(self):
        if self._edges is None:
            self._edges = self._run.edges()
        return self._edges

    @property
    def log_scores(self):
        return self._run.log_scores()

    @property
    def draw_steps(self):
        return self._run.draw_steps()

    def edge_probabilities(self):
        """Share of all chains' kept draws holding each edge (from, to, probability)."""
        return _pairs(self.edges.mean(axis=(0, 1)), self.variables)

    def __repr__(self):
        return (f"<covey.Run {self.path}: {self.chains} chains, {self.num_draws} draws each, "
                f"{self.steps} steps>")


def open_run(path):
    """Opens a chain-run file (or an MPI run's manifest) as arrays.

    >>> run = covey.open_run("run.h5")
    >>> run.edges.shape   # chains, draws, from, to
    (4, 1000, 12, 12)
    """
    return Run(path)


class Check:
    """Convergence diagnostics of runs (``covey check``): features (DataFrame, worst first:
    kind, name, from, to, mean, rhat, ess_bulk, ess_tail, ess_mean, mcse, regenerative_se,
    status), verdict (dict), converged (bool), chains, draws_per_chain."""

    def __init__(self, raw):
        self.features = _pd.DataFrame(raw["columns"])
        self.verdict = raw["verdict"]
        self.converged = raw["verdict"]["converged"]
        self.chains = raw["chains"]
        self.draws_per_chain = raw["draws_per_chain"]

    def __repr__(self):
        state = "converged" if self.converged else "not converged"
        return f"<covey.Check: {len(self.features)} features, {state}>"


def check(runs, *, features="edges,adjacencies,ancestors,score", draws=False, max_rhat=1.01,
          min_ess=400, threads=0):
    """R-hat, bulk and tail ESS and MCSE of every feature of chain runs taken together, or with
    draws=True of every quantity of one draws CSV; judged against max_rhat and min_ess.

    >>> covey.check("run.h5", features="edges").features.head()
    """
    files = [_os.fspath(runs)] if isinstance(runs, (str, _os.PathLike)) else \
        [_os.fspath(r) for r in runs]
    return Check(_covey._check(files, features, draws, max_rhat, min_ess, threads))


class Comparison:
    """Two posteriors side by side (``covey compare``): features (DataFrame kind, from, to, a,
    b, diff = b - a, se; largest |diff| first), a and b (what each side is),
    mass_in_cover_class and log_total_weight_all (dicts, or None when no side is
    cover-bounded and no cover= was given)."""

    def __init__(self, raw):
        self.a = raw["a"]
        self.b = raw["b"]
        self.features = _pd.DataFrame(raw["columns"])
        self.mass_in_cover_class = raw["mass_in_cover_class"]
        self.log_total_weight_all = raw["log_total_weight_all"]

    def __repr__(self):
        return f"<covey.Comparison: {len(self.features)} features; a: {self.a}; b: {self.b}>"


def compare(a, b, *, features="edges,adjacencies,ancestors", cover=None, exact_draws=20000,
            seed=1, threads=0):
    """Feature probabilities of two posteriors and their differences with standard errors.

    a, b: a chain run (or a list of run files of one run), cover or exact draws, or a score
    table (its exact posterior over all DAGs). cover=k adds the posterior mass of D_k.

    >>> covey.compare("run.h5", "scores.h5").features.head()
    """
    return Comparison(_covey._compare(a, b, features, cover, exact_draws, _seed(seed), threads))
