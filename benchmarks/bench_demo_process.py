"""`faciesseq demo` as a whole process: CPU time (user + system) against a baseline.

Target: at most 20 s of CPU for the whole demo (default options: PNG figures,
no LaTeX). Measured in the same run, taking turns (A B A B ...):

* baseline: ``python -c "import numpy, pandas, matplotlib, sklearn"``, the
  imports every run of the demo pays before any work;
* ``faciesseq demo -o TMP`` of this source tree;
* with ``--before REF``: the same command on the source tree of git commit
  ``REF`` (exported with ``git archive``), for a before/after ratio.

CPU time is the child's user + system time (``getrusage``), which a loaded
machine inflates less than wall time. Run from the repository root::

    MPLBACKEND=Agg python benchmarks/bench_demo_process.py --repeat 3 --before 6a3e104
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tarfile
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _run(cmd: list[str], source: Path, out: Path) -> tuple[float, float]:
    """Wall and CPU (user + system) seconds of one run of ``cmd``."""
    env = {**os.environ, "PYTHONPATH": str(source), "MPLBACKEND": "Agg"}
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(cmd, check=True, cwd=out.parent, env=env, stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def _export(ref: str, into: Path) -> Path:
    """The source tree of commit ``ref``, exported into ``into``."""
    archive = into / "src.tar"
    subprocess.run(
        ["git", "archive", "-o", str(archive), ref], check=True, cwd=ROOT, capture_output=True
    )
    with tarfile.open(archive) as tar:
        tar.extractall(into / "src", filter="data")
    return into / "src"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3, help="counted runs of each command")
    parser.add_argument("--before", metavar="REF", help="also time the demo of this git commit")
    parser.add_argument("--latex", action="store_true", help="pass --latex to the demo")
    args = parser.parse_args()
    py = sys.executable
    flags = ["--latex"] if args.latex else []
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        out = tmp / "demo"
        demo = [py, "-m", "faciesseq", "demo", "-o", str(out), "--force", *flags]
        candidates = {
            'python -c "import numpy, pandas, matplotlib, sklearn"': (
                [py, "-c", "import numpy, pandas, matplotlib, sklearn"],
                ROOT,
            ),
            "faciesseq demo (this tree)": (demo, ROOT),
        }
        if args.before:
            candidates[f"faciesseq demo ({args.before})"] = (demo, _export(args.before, tmp))
        times: dict[str, list[tuple[float, float]]] = {name: [] for name in candidates}
        for cmd, source in candidates.values():  # warm-up: file caches, .pyc
            _run(cmd, source, out)
        for _ in range(args.repeat):
            for name, (cmd, source) in candidates.items():
                times[name].append(_run(cmd, source, out))
    print(
        f"# {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())}, {os.cpu_count()} CPUs, "
        f"load average {os.getloadavg()[0]:.1f}; {args.repeat} runs each after a warm-up"
        + (", demo with --latex" if args.latex else "")
    )
    medians = {}
    for name, runs in times.items():
        wall = statistics.median(w for w, _ in runs)
        cpu = statistics.median(c for _, c in runs)
        medians[name] = cpu
        cpus = ", ".join(f"{c:.1f}" for _, c in runs)
        print(f"{name:55s} CPU median {cpu:6.2f} s ({cpus}); wall median {wall:6.2f} s")
    names = list(times)
    base = medians[names[0]]
    for name in names[1:]:
        print(f"CPU ratio {name} / baseline: {medians[name] / base:.1f}")
    if args.before:
        ratios = [c / b for (_, c), (_, b) in zip(times[names[1]], times[names[2]], strict=True)]
        print(
            f"CPU ratio this tree / {args.before}, run by run: "
            + ", ".join(f"{r:.2f}" for r in ratios)
            + f" (median {statistics.median(ratios):.2f})"
        )


if __name__ == "__main__":
    main()
