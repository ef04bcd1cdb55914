"""``--jobs`` and ``--scheduler``: where the independent jobs of a command run."""

from __future__ import annotations

import argparse
import os

from faciesseq.errors import ConfigError

#: Most local worker processes (far above the cores of any one machine; stops a typo).
MAX_JOBS = 256


def add_parallel_arguments(parser: argparse.ArgumentParser, what: str) -> None:
    """The options of :mod:`faciesseq.parallel`; ``what`` names the command's jobs."""
    from faciesseq.parallel import SCHEDULER_ENV

    group = parser.add_argument_group("parallel and distributed runs")
    group.add_argument(
        "--jobs",
        type=int,
        default=1,
        metavar="N",
        help=f"run the independent jobs ({what}) in N local processes; "
        "the results do not depend on N",
    )
    group.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="run them on the Dask cluster at ADDRESS (tcp://host:8786) instead; default: "
        f"the environment variable {SCHEDULER_ENV} when set; needs faciesseq[dask]",
    )


def parallel_options(args: argparse.Namespace) -> tuple[int, str | None]:
    """``(n_jobs, scheduler)`` of checked options; a given scheduler is contacted once
    here, so that a wrong address fails before any job is started.

    Raises
    ------
    ConfigError
        ``--jobs`` out of range, a malformed address, a scheduler that does not
        answer or has no workers, or the ``dask`` extra missing (exit code 2).
    """
    from faciesseq.parallel import SchedulerError, check_scheduler, scheduler_address

    limit = max(MAX_JOBS, os.cpu_count() or 1)
    if not 1 <= args.jobs <= limit:
        raise ConfigError(f"--jobs must be from 1 to {limit} (processes), got {args.jobs}")
    scheduler = scheduler_address(args.scheduler)
    if scheduler is not None and check_scheduler(scheduler) == 0:
        raise SchedulerError(f"the Dask scheduler at {scheduler} has no workers")
    return args.jobs, scheduler
