"""Seconds per E-step of one EM run: over every bed at once, in chunks in this process,
and in chunks on two local processes (:class:`faciesseq.hmm.em.ChunkedEStep`).

The database is a ``bench_scale`` replica of the demo cores (``bench_parallel.py --keep
DIR`` writes one); the parameters are EM's starting ones (the cost of an E-step does not
depend on them). Each way is run five times (after one call that starts the workers) and
the median, minimum and maximum are printed. Run from the repository root::

    MPLBACKEND=Agg python benchmarks/bench_chunked_estep.py DIR/cores-400000.csv --chunk 200000
    MPLBACKEND=Agg python benchmarks/bench_chunked_estep.py DIR/cores-400000.csv --labels tract

``--labels tract`` fits with the demo's interpreted tracts (the per-bed E-step of a
labelled fit); without it the E-step works on the distinct combinations of codes.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

from faciesseq.hmm.em import ChunkedEStep
from faciesseq.hmm.model import TractHMM, _training_successions
from faciesseq.io import read_cores
from faciesseq.parallel import Workers, stop_local_workers
from faciesseq.scheme import load_scheme

SCHEME = "faciesseq/data/demo/scheme-shoreface.yaml"


def seconds(e_step, pieces, startprob, transmat, data=None, repeat: int = 5) -> str:
    """Median, min and max wall seconds of ``repeat`` calls of ``e_step``."""
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        e_step(pieces, startprob, transmat, data)
        times.append(time.perf_counter() - t0)
    return f"median {statistics.median(times):.4f} s (min {min(times):.4f}, max {max(times):.4f})"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("source")
    parser.add_argument("--chunk", type=int, default=200_000, help="chunk_beds")
    parser.add_argument("--labels", default=None)
    args = parser.parse_args()
    read = read_cores(args.source)
    cores = read[0] if isinstance(read, tuple) else read
    model = TractHMM(scheme=load_scheme(SCHEME), graph="fixed", chunk_beds=args.chunk)
    model._check_hyper()
    data, _ = model._training_data(
        _training_successions(cores, "beds", None, args.labels), args.labels
    )
    pieces, startprob, transmat = model._initial(data, np.random.default_rng(0), 0)
    print(f"{len(data.beds):,} beds, labels {args.labels}")
    parameters = (pieces, startprob, transmat)
    print("one E-step over every bed:", seconds(model._e_step, *parameters, data))
    for n_jobs in (1, 2):
        with Workers(n_jobs) as workers:
            e_step = ChunkedEStep(model, data, pieces, workers)
            e_step(*parameters)  # the workers start and read their chunks
            print(f"{e_step.n_chunks} chunks, --jobs {n_jobs}:", seconds(e_step, *parameters))
    stop_local_workers()


if __name__ == "__main__":
    main()
