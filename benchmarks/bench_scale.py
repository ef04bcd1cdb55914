"""Whole commands per bed on a replicated database, against ``pandas.read_csv`` of the same file.

The demo cores (``faciesseq/data/demo/cores.csv``, 17 cores, 2,714 intervals,
524 beds) are replicated under new core names until the database holds at least
``N`` beds (10^4, 10^5, 10^6 by default), one CSV per size in a temporary folder.
For each size the script runs, as whole processes:

- ``faciesseq markov F --scheme S``
- ``faciesseq check F --scheme S``
- ``faciesseq fit F --scheme S --restarts 1 -o model.json`` (unsupervised)
- ``faciesseq fit F --scheme S -o model.json`` (unsupervised, default settings)
- ``faciesseq decode model.json F --scheme S -o out``
- the baseline ``python -c "import pandas; pandas.read_csv(F)"``

and prints, per command, the median CPU time (user + system of the finished child,
from ``os.wait4``), the peak resident memory of that child, the ratio to the
baseline's CPU time and the CPU time per bed; with two sizes or more, the exponent
of CPU time against beds fitted from the smallest to the largest size. Run from the
repository root::

    MPLBACKEND=Agg python benchmarks/bench_scale.py --sizes 10000,100000 --repeat 3

``--commands markov,fit1`` chooses the commands (``markov``, ``check``, ``fit1``, ``fit``,
``decode``; ``decode`` decodes with the model of ``fit1``, fitted once per size
and not timed when ``fit1`` is not chosen); ``--max-seconds`` skips a command at
the larger sizes once one run of it took longer than that.

``--settle`` (seconds, default 10) pauses before every timed run. This machine is a
virtual one that hands memory freed by a process back to its host a few seconds
later; a process that starts before that reuses the freed pages cheaply, one that
starts after pays the host for every fresh page. ``pandas.read_csv`` of 10^6 beds took
0.38-0.72 s of system time right after a process freed 1.5 GB and 0.70-1.00 s five
seconds or more later, with the same page faults (benchmarks/README.md, sixth pass):
without the pause a command's figure depends on what ran just before it.
"""

from __future__ import annotations

import argparse
import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "faciesseq" / "data" / "demo" / "cores.csv"
SCHEME = ROOT / "faciesseq" / "data" / "demo" / "scheme-shoreface.yaml"
DEMO_BEDS = 524  # beds of the demo database (amalgamated intervals), checked below


def make_database(n_beds: int, path: Path) -> int:
    """Write the demo cores replicated to at least ``n_beds`` beds; return the copies made.

    Written a copy at a time (the rows of the demo as text once, each copy's core names
    put in front), so that 10^7 beds need no table of them in memory."""
    demo = pd.read_csv(DEMO, dtype={"core": str})
    assert demo.columns[0] == "core"
    copies = max(1, math.ceil(n_beds / DEMO_BEDS))
    cores = demo["core"].tolist()
    rest = demo.iloc[:, 1:].to_csv(index=False, header=False).splitlines(keepends=True)
    with path.open("w", encoding="utf-8", newline="") as out:
        out.write(demo.iloc[:0].to_csv(index=False))
        for k in range(copies):
            out.write("".join(f"{c}~{k:05d},{r}" for c, r in zip(cores, rest, strict=True)))
    return copies


def run(cmd: list[str], settle: float = 0.0) -> tuple[float, float, float]:
    """CPU seconds (user + system), wall seconds and peak RSS (MB) of one finished process,
    started ``settle`` seconds after this call (the memory freed before handed back)."""
    time.sleep(settle)
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)
    err = proc.stderr.read().decode(errors="replace") if proc.stderr else ""
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(cmd)} failed ({proc.returncode}):\n{err}")
    return usage.ru_utime + usage.ru_stime, wall, usage.ru_maxrss / 1024


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--sizes", default="10000,100000,1000000")
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--commands", default="markov,fit1,fit,decode")
    parser.add_argument("--max-seconds", type=float, default=600.0)
    parser.add_argument("--keep", metavar="DIR", help="write the databases into DIR and keep them")
    parser.add_argument("--settle", type=float, default=10.0, help="pause before each run, s")
    args = parser.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    chosen = args.commands.split(",")
    py = sys.executable
    env_path = os.environ.get("PYTHONPATH")
    os.environ["PYTHONPATH"] = str(ROOT) + (os.pathsep + env_path if env_path else "")
    os.environ.setdefault("MPLBACKEND", "Agg")
    fs = [py, "-m", "faciesseq"]

    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(args.keep) if args.keep else Path(tmp)
        folder.mkdir(parents=True, exist_ok=True)
        results: dict[str, dict[int, float]] = {}
        too_slow: set[str] = set()
        print(
            f"{'beds':>9} {'command':<10} {'cpu s':>9} {'wall s':>8} {'peak MB':>8} "
            f"{'x read_csv':>10} {'ms/bed':>7}"
        )
        for n in sizes:
            data = folder / f"cores-{n}.csv"
            if not data.exists():
                make_database(n, data)
            model = folder / f"model-{n}.json"
            out = folder / f"decoded-{n}"
            commands = {
                "read_csv": [py, "-c", f"import pandas; pandas.read_csv({str(data)!r})"],
                "markov": [*fs, "markov", str(data), "--scheme", str(SCHEME)],
                "check": [*fs, "check", str(data), "--scheme", str(SCHEME)],
                "fit1": [
                    *fs,
                    "fit",
                    str(data),
                    "--scheme",
                    str(SCHEME),
                    "--restarts",
                    "1",
                    "-o",
                    str(model),
                    "--force",
                ],
                "fit": [
                    *fs,
                    "fit",
                    str(data),
                    "--scheme",
                    str(SCHEME),
                    "-o",
                    str(folder / f"model-default-{n}.json"),
                    "--force",
                ],
                "decode": [
                    *fs,
                    "decode",
                    str(model),
                    str(data),
                    "--scheme",
                    str(SCHEME),
                    "-o",
                    str(out),
                    "--force",
                ],
            }
            if "decode" in chosen and "fit1" not in chosen and not model.exists():
                run(commands["fit1"])
            base = None
            for name in ["read_csv", *[c for c in commands if c in chosen]]:
                if name in too_slow:
                    print(f"{n:>9,} {name:<10} skipped (slower than --max-seconds)")
                    continue
                rows = [run(commands[name], args.settle) for _ in range(args.repeat)]
                cpu = statistics.median(r[0] for r in rows)
                wall = statistics.median(r[1] for r in rows)
                peak = max(r[2] for r in rows)
                base = cpu if name == "read_csv" else base
                results.setdefault(name, {})[n] = cpu
                if cpu > args.max_seconds:
                    too_slow.add(name)
                print(
                    f"{n:>9,} {name:<10} {cpu:9.2f} {wall:8.2f} {peak:8.0f} "
                    f"{cpu / base:10.2f} {1000 * cpu / n:7.3f}",
                    flush=True,
                )
        if len(sizes) > 1:
            print("\nexponent of CPU time against beds (smallest to largest size measured):")
            for name, by_size in results.items():
                ns = sorted(by_size)
                if len(ns) > 1:
                    lo, hi = ns[0], ns[-1]
                    k = math.log(by_size[hi] / by_size[lo]) / math.log(hi / lo)
                    print(f"  {name:<10} {k:.2f}  ({lo:,} to {hi:,} beds)")


if __name__ == "__main__":
    main()
