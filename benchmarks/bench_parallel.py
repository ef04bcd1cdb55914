"""Wall time of a whole command with ``--jobs N`` against the same command with ``--jobs 1``.

The database is the demo cores replicated to at least ``--beds`` beds
(:func:`bench_scale.make_database`). The two commands run in turn, A B A B ...,
and the speed-up is taken pair by pair (wall time of ``--jobs 1`` over wall time
of ``--jobs N``), so a change of the machine's load between pairs does not enter
a ratio. The baseline is ``--jobs 1`` (every job in the one process) in the same
run. Run from the repository root::

    MPLBACKEND=Agg python benchmarks/bench_parallel.py --beds 100000 --jobs 2 --repeat 3

``--command fit`` (default) runs ``faciesseq fit F --scheme S --restarts 1 -o model.json``
(unsupervised: the four candidate tract graphs are the jobs); ``--command markov``
runs ``faciesseq markov F --scheme S --surrogates 2000 --seed 1`` (four blocks of
surrogates). The load average is printed before and after, as the machine may be
shared.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_scale import ROOT, SCHEME, make_database


def wall(cmd: list[str]) -> float:
    """Wall seconds of one finished process (which must succeed)."""
    t0 = time.perf_counter()
    proc = subprocess.run(cmd, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    seconds = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(cmd)} failed ({proc.returncode}):\n{proc.stderr.decode()}")
    return seconds


def command(name: str, data: Path, folder: Path, jobs: int) -> list[str]:
    fs = [sys.executable, "-m", "faciesseq"]
    if name == "markov":
        return [*fs, "markov", str(data), "--scheme", str(SCHEME), "--surrogates", "2000",
                "--seed", "1", "--jobs", str(jobs)]  # fmt: skip
    model = folder / f"model-{jobs}.json"
    return [*fs, "fit", str(data), "--scheme", str(SCHEME), "--restarts", "1",
            "--jobs", str(jobs), "-o", str(model), "--force"]  # fmt: skip


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--beds", type=int, default=100_000)
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--command", choices=("fit", "markov"), default="fit")
    parser.add_argument("--keep", metavar="DIR", help="write the database into DIR and keep it")
    args = parser.parse_args()
    env_path = os.environ.get("PYTHONPATH")
    os.environ["PYTHONPATH"] = str(ROOT) + (os.pathsep + env_path if env_path else "")
    os.environ.setdefault("MPLBACKEND", "Agg")
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(args.keep) if args.keep else Path(tmp)
        folder.mkdir(parents=True, exist_ok=True)
        data = folder / f"cores-{args.beds}.csv"
        if not data.exists():
            make_database(args.beds, data)
        print(f"load average before: {os.getloadavg()}")
        serial = command(args.command, data, folder, 1)
        parallel = command(args.command, data, folder, args.jobs)
        pairs = []
        for k in range(args.repeat):
            a, b = wall(serial), wall(parallel)
            pairs.append((a, b))
            print(f"pair {k + 1}: --jobs 1 {a:.1f} s, --jobs {args.jobs} {b:.1f} s, "
                  f"speed-up {a / b:.2f}", flush=True)  # fmt: skip
        ratios = [a / b for a, b in pairs]
        print(f"load average after: {os.getloadavg()}")
        print(
            f"{args.command}, {args.beds:,} beds: median wall --jobs 1 "
            f"{statistics.median(a for a, _ in pairs):.1f} s, --jobs {args.jobs} "
            f"{statistics.median(b for _, b in pairs):.1f} s; speed-up (pair by pair) median "
            f"{statistics.median(ratios):.2f}, min {min(ratios):.2f}, max {max(ratios):.2f}"
        )


if __name__ == "__main__":
    main()
