"""Independent jobs run in this process, in local processes or on a Dask cluster.

Every loop of the project whose turns do not depend on each other -- EM
restarts, calibration folds, the fits of the candidate tract graphs, blocks of
Monte Carlo surrogates, batches of cores to decode -- hands its turns to
:func:`run_jobs` as a function and one tuple of arguments per job:

- ``n_jobs=1`` (the default): one after the other, in this process;
- ``n_jobs=N``: ``N`` local worker processes (joblib, loky backend);
- ``scheduler="tcp://host:port"``: the workers of that Dask cluster
  (``distributed.Client``; needs the ``dask`` extra).

Results come back in the order of the jobs, whoever ran them. A job that draws
random numbers takes its own seed, made before any job runs
(:func:`job_seeds`), so the results never depend on how many workers there
are or which of them ran what.
"""

from __future__ import annotations

import contextlib
import os
import re
import sys
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np

from faciesseq._optional import import_optional
from faciesseq.errors import ConfigError

__all__ = [
    "CONNECT_TIMEOUT",
    "NO_WORKERS_TIMEOUT",
    "SCHEDULER_ENV",
    "SchedulerError",
    "Workers",
    "check_scheduler",
    "job_seeds",
    "run_jobs",
    "scheduler_address",
    "stop_local_workers",
]

#: Environment variable holding a Dask scheduler address used when ``--scheduler`` is not given.
SCHEDULER_ENV = "FACIESSEQ_SCHEDULER"
#: Seconds to wait for a Dask scheduler to answer before giving up.
CONNECT_TIMEOUT = 5.0
#: Seconds a run waits on a Dask cluster left with no workers (the last one killed or
#: stopped mid-run) before giving up; a worker joining in that time carries the run on.
NO_WORKERS_TIMEOUT = 30.0
#: A scheduler address: protocol, host and port (``tcp://10.0.0.5:8786``).
_ADDRESS = re.compile(r"^(tcp|tls|ws|wss)://[^\s/:]+:\d{1,5}$")


class SchedulerError(ConfigError):
    """A Dask scheduler that cannot be reached (exit code 2)."""


def scheduler_address(option: str | None, environ: dict[str, str] | None = None) -> str | None:
    """The scheduler to use: ``option``, else :data:`SCHEDULER_ENV`, else ``None``.

    Raises
    ------
    ConfigError
        The address is not of the form ``tcp://host:port``.
    """
    env = os.environ if environ is None else environ
    address = option if option is not None else (env.get(SCHEDULER_ENV) or None)
    if address is None:
        return None
    where = "--scheduler" if option is not None else SCHEDULER_ENV
    if not _ADDRESS.match(address) or not 0 < int(address.rsplit(":", 1)[1]) < 65536:
        raise ConfigError(
            f"{where} must be a Dask scheduler address such as tcp://host:8786, got {address!r}"
        )
    return address


def job_seeds(seed: int | None, n: int) -> list[np.random.SeedSequence]:
    """One independent seed per job: ``numpy.random.SeedSequence(seed).spawn(n)``.

    Each job makes its generator with ``numpy.random.default_rng(seeds[k])``; the
    streams do not overlap (O'Neill 2015, PCG, as used by numpy's ``SeedSequence``)
    and do not depend on the number of workers.
    """
    return np.random.SeedSequence(seed).spawn(int(n))


def _distributed():
    return import_optional("distributed", "running jobs on a Dask cluster (--scheduler)")


def _unreachable(address: str, exc: BaseException) -> SchedulerError:
    return SchedulerError(
        f"cannot reach a Dask scheduler at {address} ({type(exc).__name__}, waited at most "
        f"{CONNECT_TIMEOUT:g} s); start one (dask scheduler) or check the address"
    )


def check_scheduler(address: str) -> int:
    """Ask the scheduler at ``address`` who it is; return its number of workers.

    Nothing but one request is made (no client is started), and it is given up
    after :data:`CONNECT_TIMEOUT` seconds.

    Raises
    ------
    SchedulerError
        Nothing, or something else than a Dask scheduler, answered in time.
    MissingExtraError
        The ``dask`` extra is not installed.
    """
    import asyncio

    rpc = _distributed().rpc

    async def identity() -> dict:
        async with rpc(address, timeout=CONNECT_TIMEOUT) as scheduler:
            return await scheduler.identity(n_workers=0)

    try:
        info = asyncio.run(asyncio.wait_for(identity(), CONNECT_TIMEOUT))
        return int(info["n_workers"])
    except Exception as exc:  # whatever answered was no scheduler we can use
        raise _unreachable(address, exc) from None


def _client(address: str):
    try:
        return _distributed().Client(address, timeout=CONNECT_TIMEOUT, set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise _unreachable(address, exc) from None


def _gather(client, futures: list, address: str) -> list[Any]:
    """The results of ``futures`` on ``client``, in order.

    The scheduler keeps the jobs of a cluster without workers waiting for ever, so the
    workers are counted every second of the wait.

    Raises
    ------
    SchedulerError
        The cluster had no workers for :data:`NO_WORKERS_TIMEOUT` seconds, or its
        scheduler stopped answering; the jobs are cancelled.
    """
    import time

    alone_since = None
    asked = time.monotonic()
    while not all(future.done() for future in futures):
        time.sleep(0.05)
        if time.monotonic() - asked < 1.0:
            continue
        asked = time.monotonic()
        try:
            workers = len(client.nthreads())
        except (OSError, TimeoutError) as exc:
            raise _unreachable(address, exc) from None
        alone_since = None if workers else (alone_since or asked)
        if alone_since is not None and asked - alone_since >= NO_WORKERS_TIMEOUT:
            client.cancel(futures)
            raise SchedulerError(
                f"the Dask cluster at {address} has had no workers for "
                f"{NO_WORKERS_TIMEOUT:g} s (they stopped mid-run); start workers "
                "(dask worker) and run again"
            )
    return client.gather(futures)


def run_jobs(
    function: Callable[..., Any],
    arguments: Sequence[tuple],
    n_jobs: int = 1,
    scheduler: str | None = None,
) -> list[Any]:
    """``[function(*a) for a in arguments]``, run serially, in processes or on a cluster.

    Parameters
    ----------
    function
        A module-level function or a method of a picklable object (it is sent to
        other processes); it must not print, and a job must not start jobs of
        its own (pass ``n_jobs=1, scheduler=None`` down).
    arguments
        One tuple of arguments per job.
    n_jobs
        Local worker processes (1: in this process, one job after the other).
    scheduler
        Address of a Dask scheduler (``tcp://host:port``); when given, the jobs
        run on its workers and ``n_jobs`` is not used.

    Returns
    -------
    list
        The results, in the order of ``arguments``.
    """
    jobs = [tuple(a) for a in arguments]
    if scheduler:
        with _client(scheduler) as client:
            futures = [client.submit(function, *a, pure=False) for a in jobs]
            return _gather(client, futures, scheduler)
    if int(n_jobs) <= 1 or len(jobs) <= 1:
        return [function(*a) for a in jobs]
    from joblib import Parallel, delayed

    from faciesseq._memory import keep_freed_memory

    workers = min(int(n_jobs), len(jobs))
    # each new worker takes memory as a command of this project does (an EM run
    # frees and makes arrays of a few MiB every iteration)
    local = Parallel(n_jobs=workers, backend="loky", initializer=keep_freed_memory)
    return local(delayed(function)(*a) for a in jobs)


class Workers:
    """Workers kept for many rounds of jobs, with data sent to them once where the
    backend allows: the rounds are the iterations of one EM run, each a job per chunk
    of beds (:class:`faciesseq.hmm.em.ChunkedEStep`).

    Used as a context manager. On a Dask cluster one client serves every round and
    :meth:`share` scatters the data to the workers' memory once; a job given a shared
    value runs where the value is. Local processes (joblib, loky) keep no data between
    jobs, so :meth:`share` writes each value once to a file of a temporary folder
    (``joblib.dump``; :func:`faciesseq._output.temporary_folder`, made with the
    signals held and removed when the context ends), and each worker process reads
    it the first time a job takes it (``joblib.load(mmap_mode="r")``: arrays mapped
    read-only, shared through the operating system's page cache) and keeps it for
    the later rounds. Why not send the values with
    every job: measured on 10^5 beds, one E-step of a labelled fit took 0.027 s in
    one process and 0.12-0.22 s when its two chunks (10 MB each) went to two local
    processes with every iteration (``benchmarks/parallel.md``, 2026-12-03 chunked
    E-step). In this process (``n_jobs=1``) nothing is sent.
    """

    def __init__(self, n_jobs: int = 1, scheduler: str | None = None) -> None:
        self.n_jobs = n_jobs
        self.scheduler = scheduler
        self._client = None
        self._folder: str | None = None
        self._stack = contextlib.ExitStack()

    def __enter__(self) -> Workers:
        if self.scheduler:
            self._client = _client(self.scheduler)
        return self

    def __exit__(self, *exc) -> None:
        if self._client is not None:
            self._client.close()
            self._client = None
        if self._folder is not None:
            for path in [p for p in _READ if os.path.dirname(p) == self._folder]:
                del _READ[path]  # read here when a round had a single job
            self._folder = None
        self._stack.close()  # the shared folder, deleted

    def share(self, values: Sequence[Any]) -> list[Any]:
        """``values`` as the jobs of :meth:`run` should take them: Dask futures of the
        scattered values on a cluster, the values themselves elsewhere."""
        if self._client is not None:
            return self._client.scatter(list(values))
        if int(self.n_jobs) <= 1:
            return list(values)
        import tempfile
        from pathlib import Path

        from joblib import dump

        from faciesseq._output import temporary_folder

        shared = temporary_folder("faciesseq-shared-", Path(tempfile.gettempdir()))
        self._folder = str(self._stack.enter_context(shared))
        stored = []
        for k, value in enumerate(values):
            path = os.path.join(self._folder, f"{k}.joblib")
            dump(value, path)
            stored.append(_Stored(path))
        return stored

    def run(self, function: Callable[..., Any], arguments: Sequence[tuple]) -> list[Any]:
        """:func:`run_jobs` on these workers: the results in the order of ``arguments``."""
        if self._client is not None:
            futures = [self._client.submit(function, *a, pure=False) for a in arguments]
            return _gather(self._client, futures, self.scheduler)
        if self._folder is not None:
            jobs = [(function, tuple(a)) for a in arguments]
            return run_jobs(_with_stored, jobs, self.n_jobs, None)
        return run_jobs(function, arguments, self.n_jobs, None)


#: In a local worker process: the values of one :class:`Workers` context read so far,
#: by path. Why kept: reading the boosted trees of a ``stacking`` piece back (joblib's
#: unpickler is written in Python) cost more than a chunk's E-step every iteration.
#: Holds one context's values at a time (a new folder empties it).
_READ: dict[str, Any] = {}


class _Stored:
    """A value :meth:`Workers.share` wrote to ``path``, read back by the job that takes it
    (once per worker process)."""

    def __init__(self, path: str) -> None:
        self.path = path

    def load(self) -> Any:
        if self.path not in _READ:
            from joblib import load

            folder = os.path.dirname(self.path)
            for path in [p for p in _READ if os.path.dirname(p) != folder]:
                del _READ[path]
            _READ[self.path] = load(self.path, mmap_mode="r")
        return _READ[self.path]


def _with_stored(function: Callable[..., Any], arguments: tuple) -> Any:
    """``function(*arguments)`` with every stored value read back first (one job)."""
    return function(*(a.load() if isinstance(a, _Stored) else a for a in arguments))


def stop_local_workers() -> None:
    """End the local worker processes of :func:`run_jobs` and wait for them.

    joblib keeps its workers between calls (a fit dispatches several loops); a
    command stops them when it is done, so that none outlives it.
    """
    loky = sys.modules.get("joblib.externals.loky.reusable_executor")
    executor = getattr(loky, "_executor", None)
    if executor is not None:
        executor.shutdown(wait=True)
