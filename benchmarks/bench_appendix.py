"""Time every step of the demo appendix, against reading the demo database.

Steps, on the packaged demo database (17 cores), each timed once in one
process: reading the cores (the baseline: ``read_cores``), Markov statistics
with 199 surrogates, fitting the tract model (3 restarts), decoding,
3-fold cross-validation, building the document (drawing the figures), and
writing the folder without and with LaTeX (PDF figures). Prints one line per
step with wall and CPU time and the ratio to the baseline (wall time).

Run from the repository root::

    MPLBACKEND=Agg /work/venv/bin/python benchmarks/bench_appendix.py
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path


def main() -> None:
    from faciesseq.hmm.model import TractHMM
    from faciesseq.io import read_cores
    from faciesseq.markov import analyse
    from faciesseq.pipeline import demo_source
    from faciesseq.report.appendix import build_appendix, write_appendix
    from faciesseq.scheme import default_tract_model, load_scheme
    from faciesseq.validation import cross_validate

    folder = demo_source()
    rows: list[tuple[str, float, float]] = []

    def timed(name, fn):
        wall, cpu = time.perf_counter(), time.process_time()
        out = fn()
        rows.append((name, time.perf_counter() - wall, time.process_time() - cpu))
        return out

    scheme = load_scheme(folder / "scheme-shoreface.yaml")
    tm = default_tract_model()
    cores = timed("read (baseline)", lambda: read_cores(folder / "cores.csv", scheme=scheme))
    markov = timed(
        "markov",
        lambda: analyse(cores, scheme=scheme, surrogates=199, seed=0, by="core"),
    )
    model = timed(
        "fit",
        lambda: TractHMM(tract_model=tm, scheme=scheme, random_state=0).fit(cores, labels="tract"),
    )
    interp = timed("decode", lambda: model.decode(cores))
    validation = timed(
        "validate",
        lambda: cross_validate(cores, "tract", folds=3, random_state=0, scheme=scheme),
    )
    appendix = timed(
        "build (draw figures)",
        lambda: build_appendix(
            cores,
            scheme,
            tm,
            markov=markov,
            model=model,
            interpretation=interp,
            validation=validation,
        ),
    )
    with tempfile.TemporaryDirectory() as tmp:
        timed("write, PNG only", lambda: write_appendix(appendix, Path(tmp) / "a", latex=False))
        timed("write, PNG + PDF + LaTeX", lambda: write_appendix(appendix, Path(tmp) / "b"))
    base = rows[0][1]
    print(f"{'step':28s} {'wall s':>8s} {'cpu s':>8s} {'wall / read':>12s}")
    for name, wall, cpu in rows:
        print(f"{name:28s} {wall:8.2f} {cpu:8.2f} {wall / base:12.1f}")
    print(f"{'total':28s} {sum(r[1] for r in rows):8.2f} {sum(r[2] for r in rows):8.2f}")
    print(f"figures: {len(appendix.figures())}, tables: {len(appendix.tables())}")


if __name__ == "__main__":
    main()
