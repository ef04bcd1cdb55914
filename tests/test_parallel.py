"""Parallel and distributed runs: the same results in this process, in local worker
processes (``--jobs 2``) and on a Dask cluster (``--scheduler``), and one-line errors.

The byte-for-byte comparisons hold the project to its own contract (a model file's
``parameters`` are byte-identical between reruns, :mod:`faciesseq.hmm.modelfile`);
the seeds of the jobs follow numpy's documented ``SeedSequence.spawn`` (numpy
"Parallel random number generation" guide), checked against numpy itself.
"""

import io
import json
import os
from contextlib import redirect_stderr, redirect_stdout

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

from faciesseq import parallel
from faciesseq.cli import main
from faciesseq.errors import ConfigError


def _run(*args):
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    folder = tmp_path_factory.mktemp("parallel")
    synth.write_database(folder, n_cores=12, n_beds=40, seed=5)  # even cores labelled
    return folder


@pytest.fixture(scope="module")
def cluster():
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
    ) as local:
        yield local.scheduler_address


# ----------------------------------------------------------------- the module
def _pid(_):
    return os.getpid()


def _square(x):
    return x * x


def test_jobs_come_back_in_order_from_other_processes():
    assert parallel.run_jobs(_square, [(k,) for k in range(7)], n_jobs=2) == [
        k * k for k in range(7)
    ]
    pids = parallel.run_jobs(_pid, [(k,) for k in range(4)], n_jobs=2)
    assert os.getpid() not in pids  # loky workers, not this process
    assert parallel.run_jobs(_pid, [(0,), (1,)], n_jobs=1) == [os.getpid()] * 2


def _total(values, k):
    return int(np.sum(values)) + k


def test_shared_values_are_read_by_local_workers_and_removed_after():
    with parallel.Workers(n_jobs=2) as workers:
        shared = workers.share([np.arange(5), np.arange(3)])
        folder = workers._folder
        assert os.path.isdir(folder)
        for k in range(3):  # rounds of jobs read the values written once
            assert workers.run(_total, [(v, k) for v in shared]) == [10 + k, 3 + k]
    assert not os.path.exists(folder)
    with parallel.Workers(n_jobs=1) as workers:  # in this process nothing is written
        assert workers.run(_total, [(v, 0) for v in workers.share([np.arange(4)])]) == [6]
        assert workers._folder is None


def test_job_seeds_are_numpys_spawned_seed_sequences():
    # numpy documentation, "Parallel random number generation": SeedSequence.spawn
    ours = [np.random.default_rng(s).random(3) for s in parallel.job_seeds(11, 4)]
    theirs = [np.random.default_rng(s).random(3) for s in np.random.SeedSequence(11).spawn(4)]
    np.testing.assert_array_equal(ours, theirs)
    assert len({tuple(x) for x in ours}) == 4


def test_scheduler_from_option_then_environment_and_checked():
    env = {parallel.SCHEDULER_ENV: "tcp://cluster.example:8786"}
    assert parallel.scheduler_address(None, env) == "tcp://cluster.example:8786"
    assert parallel.scheduler_address("tcp://10.0.0.5:9000", env) == "tcp://10.0.0.5:9000"
    assert parallel.scheduler_address(None, {}) is None
    for bad in ("localhost:8786", "tcp://host", "tcp://host:99999", "http://host:8786"):
        with pytest.raises(ConfigError, match="tcp://host:8786"):
            parallel.scheduler_address(bad, {})


def test_missing_dask_extra_is_named(monkeypatch):
    import builtins

    real = builtins.__import__

    def no_distributed(name, *args, **kwargs):
        if name == "distributed":
            raise ModuleNotFoundError("No module named 'distributed'", name="distributed")
        return real(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_distributed)
    code, _, err = _run("markov", "x.csv", "--scheduler", "tcp://127.0.0.1:8786")
    assert code == 2
    assert err.count("\n") == 1 and 'pip install "faciesseq[dask]"' in err


# ---------------------------------------------------------- the command line
COMMANDS = {
    "fit": ["fit", "{cores}", "-o", "{out}"],
    "validate": ["validate", "{cores}", "--labels", "tract", "-o", "{out}"],
    "decode": ["decode", "model.json", "{cores}", "-o", "{out}"],
    "markov": ["markov", "{cores}", "-o", "{out}"],
    "appendix": ["appendix", "{cores}", "--scheme", "{scheme}", "-o", "{out}"],
}


@pytest.mark.parametrize("command", sorted(COMMANDS))
@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--jobs", "0"], "--jobs must be from 1"),
        (["--jobs", "100000"], "--jobs must be from 1"),
        (["--scheduler", "my-cluster"], "--scheduler must be a Dask scheduler address"),
    ],
)
def test_bad_parallel_options_exit_2_with_one_line(database, tmp_path, command, args, message):
    out = tmp_path / "out"
    names = {"cores": database / "cores.csv", "scheme": database / "scheme.yaml", "out": out}
    code, _, err = _run(*[a.format(**names) for a in COMMANDS[command]], *args)
    assert code == 2
    assert err.count("\n") == 1 and message in err
    assert not out.exists()


def test_unreachable_scheduler_exits_2_with_one_line(database, tmp_path, monkeypatch):
    monkeypatch.setattr(parallel, "CONNECT_TIMEOUT", 1.0)
    out = tmp_path / "markov"
    monkeypatch.setenv(parallel.SCHEDULER_ENV, "tcp://127.0.0.1:1")  # nothing listens
    code, _, err = _run("markov", str(database / "cores.csv"), "--surrogates", "9", "-o", str(out))
    assert code == 2
    assert err.count("\n") == 1
    assert "cannot reach a Dask scheduler at tcp://127.0.0.1:1" in err
    assert "Traceback" not in err and not out.exists()


def _fit(database, folder, *extra):
    path = folder / "model.json"
    args = ["fit", str(database / "cores.csv"), "--scheme", str(database / "scheme.yaml")]
    code, _, err = _run(*args, "--restarts", "2", *extra, "-o", str(path), "--force")
    assert code == 0, err
    doc = json.loads(path.read_text())
    return {k: json.dumps(doc[k]) for k in ("parameters", "training")}


@pytest.mark.parametrize(
    "labels",
    [
        pytest.param([], id="unlabelled"),
        pytest.param(["--labels", "tract"], id="labelled", marks=pytest.mark.slow),  # 45 s
    ],
)
def test_fit_gives_byte_identical_parameters_serial_local_and_on_dask(
    database, tmp_path, cluster, labels
):
    # unlabelled: the four candidate graphs are the jobs; labelled (6 of 12 cores):
    # the restarts and the 5 calibration folds
    serial = _fit(database, tmp_path, *labels)
    local = _fit(database, tmp_path, *labels, "--jobs", "2")
    dask = _fit(database, tmp_path, *labels, "--scheduler", cluster)
    assert local["parameters"] == serial["parameters"]
    assert dask["parameters"] == serial["parameters"]
    assert local["training"] == serial["training"] == dask["training"]
    if labels:
        assert json.loads(serial["training"])["calibration"]["folds"] == 5


def _p_values(database, *extra):
    code, out, err = _run(
        "markov",
        str(database / "cores.csv"),
        "--scheme",
        str(database / "scheme.yaml"),
        "--surrogates",
        "1200",  # three blocks of surrogates
        "--seed",
        "4",
        "--format",
        "json",
        *extra,
    )
    assert code == 0, err
    tests = json.loads(out)["tests"]
    return [(t["name"], t["p_value"]) for t in tests if t.get("method") == "monte carlo"]


def test_surrogate_p_values_do_not_depend_on_where_the_blocks_ran(database, cluster):
    serial = _p_values(database)
    assert len(serial) == 2
    assert _p_values(database, "--jobs", "2") == serial
    assert _p_values(database, "--scheduler", cluster) == serial


def test_no_local_worker_outlives_the_command(database):
    psutil = pytest.importorskip("psutil")

    def workers():
        children = psutil.Process().children(recursive=True)
        return [p for p in children if "LokyProcess" in " ".join(p.cmdline())]

    _p_values(database, "--jobs", "2")
    assert workers() == []


def test_decoded_columns_identical_serial_local_and_on_dask(
    database, tmp_path, cluster, monkeypatch
):
    from faciesseq.hmm import decoding as decoding_module

    _fit(database, tmp_path, "--restarts", "1")
    model = tmp_path / "model.json"
    monkeypatch.setattr(decoding_module, "DECODE_BATCH", 100)  # 480 beds: several jobs
    tables = {}
    for name, extra in (("serial", []), ("local", ["--jobs", "2"]), ("dask", ["--scheduler"])):
        extra = [*extra, cluster] if name == "dask" else extra
        out = tmp_path / name
        code, _, err = _run(
            "decode", str(model), str(database / "cores.csv"), *extra, "-o", str(out)
        )
        assert code == 0, err
        tables[name] = [(out / f).read_bytes() for f in ("tracts.csv", "surfaces.csv", "picks.csv")]
    assert tables["local"] == tables["serial"]
    assert tables["dask"] == tables["serial"]
    tracts = pd.read_csv(tmp_path / "serial" / "tracts.csv", comment="#")
    assert tracts["core"].nunique() == 12


# ------------------------------------------------- the chunked E-step of one large run
def _chunked_fit(labels=None, **settings):
    from faciesseq.hmm.model import TractHMM
    from faciesseq.hmm.modelfile import model_to_dict

    settings = {
        "graph": "fixed",
        "n_restarts": 1,
        "calibration_folds": 0,
        "chunk_beds": 100,  # 480 beds: four chunks of whole cores (CHUNK_BEDS is 200,000)
        "random_state": 3,
        **settings,
    }
    cores = synth.cores(12, 40, 5)
    tracts = [  # the labels: the known tracts of the even cores
        list(c.beds["true_tract"]) if k % 2 == 0 else [None] * len(c) for k, c in enumerate(cores)
    ]
    model = TractHMM(scheme=synth.scheme(), **settings)
    model.fit(cores, labels=tracts if labels else None)
    return model, json.dumps(model_to_dict(model)["parameters"])


def test_chunks_are_whole_successions_fixed_by_the_beds_alone():
    from faciesseq.hmm.em import chunk_bounds

    lengths = np.array([40] * 12)
    assert chunk_bounds(lengths, 100) == [
        (0, 120, 0, 3),
        (120, 240, 3, 6),
        (240, 360, 6, 9),
        (360, 480, 9, 12),
    ]
    assert chunk_bounds(lengths, 241) == []  # below two chunks: one E-step, as before
    uneven = np.array([7, 300, 5, 5, 90, 1, 60, 33])
    bounds = chunk_bounds(uneven, 100)
    assert [b[0] for b in bounds[1:]] == [b[1] for b in bounds[:-1]]
    assert bounds[0][:3:2] == (0, 0) and bounds[-1][1:4:2] == (int(uneven.sum()), len(uneven))
    assert all(b[1] - b[0] == uneven[b[2] : b[3]].sum() for b in bounds)


def test_chunked_e_step_byte_identical_serial_local_and_on_dask(cluster, monkeypatch):
    from faciesseq.hmm import em

    made = []

    class Recorded(em.ChunkedEStep):
        def __init__(self, estimator, data, pieces, workers):
            super().__init__(estimator, data, pieces, workers)
            made.append((self.n_chunks, workers.n_jobs, workers.scheduler))

    monkeypatch.setattr(em, "ChunkedEStep", Recorded)
    serial, serial_parameters = _chunked_fit()
    _, local_parameters = _chunked_fit(n_jobs=2)
    _, dask_parameters = _chunked_fit(scheduler=cluster)
    # the chunks left here: each fit's E-steps and those of the fit it starts from
    # (faciesseq.hmm.nested), on the same workers
    assert made == [(4, 1, None)] * 2 + [(4, 2, None)] * 2 + [(4, 1, cluster)] * 2
    assert local_parameters == serial_parameters
    assert dask_parameters == serial_parameters
    # EM never lowers its objective (Dempster et al. 1977, theorem 1); the chunk sums
    # are checked against it at every iteration, up to rounding
    history = np.array(serial.monitor_.history)
    assert len(history) > 5
    assert np.all(np.diff(history) >= -1e-9 * np.abs(history[:-1]))
    # the same statistics as one E-step over every bed, summed in another order
    _, whole = _chunked_fit(chunk_beds=10_000)
    a, b = json.loads(whole)["transmat"], json.loads(serial_parameters)["transmat"]
    np.testing.assert_allclose(np.array(a), np.array(b), rtol=1e-6)


def test_restarts_as_jobs_run_their_chunks_in_turn_with_the_same_result(monkeypatch):
    from faciesseq.hmm import em, restarts

    _, serial = _chunked_fit(labels=True, n_restarts=2)  # labelled: the per-bed E-step
    _, local = _chunked_fit(labels=True, n_restarts=2, n_jobs=2)  # restarts in two processes
    assert local == serial
    # the restarts of a parallel fit run in this process here, to see their workers
    monkeypatch.setattr(restarts, "run_jobs", lambda f, jobs, n, s: [f(*a) for a in jobs])
    workers = []

    class Recorded(em.Workers):
        def __init__(self, n_jobs=1, scheduler=None):
            super().__init__(n_jobs, scheduler)
            workers.append((n_jobs, scheduler))

    monkeypatch.setattr(em, "Workers", Recorded)
    _, inside = _chunked_fit(labels=True, n_restarts=2, n_jobs=2)
    assert workers == [(1, None), (1, None)]  # no jobs started inside a job
    assert inside == serial


# ------------------------------------------------- a cluster that loses its workers
@pytest.fixture
def workerless_cluster(monkeypatch):
    """A scheduler whose workers are gone (as when the last one is killed mid-run)."""
    distributed = pytest.importorskip("distributed")
    monkeypatch.setattr(parallel, "NO_WORKERS_TIMEOUT", 1.0, raising=False)
    with distributed.LocalCluster(n_workers=0, processes=True, dashboard_address=None) as local:
        yield local.scheduler_address


def _in_thread(function, *args):
    """What ``function(*args)`` returns or raises, or ``"hung"`` after 30 s."""
    import threading

    outcome = ["hung"]

    def call():
        try:
            outcome[0] = function(*args)
        except BaseException as exc:  # handed to the test
            outcome[0] = exc

    thread = threading.Thread(target=call, daemon=True)
    thread.start()
    thread.join(30)
    return outcome[0]


def test_jobs_on_a_cluster_without_workers_fail_instead_of_waiting(workerless_cluster):
    outcome = _in_thread(parallel.run_jobs, _square, [(2,), (3,)], 1, workerless_cluster)
    assert isinstance(outcome, parallel.SchedulerError), outcome
    assert "no workers" in str(outcome)
    with parallel.Workers(scheduler=workerless_cluster) as workers:
        outcome = _in_thread(workers.run, _square, [(2,), (3,)])
    assert isinstance(outcome, parallel.SchedulerError), outcome


def test_workers_lost_mid_run_exit_2_with_one_line(
    database, tmp_path, workerless_cluster, monkeypatch
):
    monkeypatch.setattr(parallel, "check_scheduler", lambda address: 1)  # alive when checked
    out = tmp_path / "markov"
    args = ["markov", str(database / "cores.csv"), "--surrogates", "600", "--seed", "1"]
    outcome = _in_thread(_run, *args, "--scheduler", workerless_cluster, "-o", str(out))
    assert outcome != "hung"
    code, _, err = outcome
    assert code == 2
    assert err.count("\n") == 1 and "no workers" in err, err
    assert "Traceback" not in err and not out.exists()
    assert not list(tmp_path.iterdir())  # no temporary folder left beside the output
