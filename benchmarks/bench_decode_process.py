"""`faciesseq decode` of one 1,000-bed core as a whole process, against importing numpy + pandas.

Target: at most twice the time of ``python -c "import numpy, pandas"`` (the
baseline, measured in the same run). Run from the repository root::

    python benchmarks/bench_decode_process.py [--repeat 7]

Writes its section of benchmarks/hmm_model.md.
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT / "benchmarks"))

from _results import machine, stamp, write_section  # noqa: E402


def _time(cmd: list[str], repeat: int) -> list[float]:
    out = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run(cmd, check=True, cwd=ROOT, stdout=subprocess.DEVNULL)
        out.append(time.perf_counter() - t0)
    return out


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeat", type=int, default=7)
    args = parser.parse_args()
    import hmm_synthetic as synth

    from faciesseq.hmm.model import TractHMM
    from faciesseq.hmm.modelfile import save_model

    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        model = TractHMM(scheme=synth.scheme(), random_state=0).fit(
            synth.cores(10, 200, seed=5), labels="true_tract"
        )
        save_model(model, tmp / "model.json")
        core = synth.cores(1, 1000, seed=6)[0]
        beds = core.beds.iloc[::-1].drop(columns=["thickness", "true_tract"])
        beds.insert(0, "core", "B-1")
        beds.to_csv(tmp / "core.csv", index=False)
        assert len(pd.read_csv(tmp / "core.csv")) == 1000
        py = sys.executable
        baseline = _time([py, "-c", "import numpy, pandas"], args.repeat)
        decode = _time(
            [
                py,
                "-m",
                "faciesseq",
                "decode",
                str(tmp / "model.json"),
                str(tmp / "core.csv"),
                "-o",
                str(tmp / "out"),
                "--force",  # every run after the first replaces the output
            ],
            args.repeat,
        )
    b, d = statistics.median(baseline), statistics.median(decode)
    text = "\n".join(
        [
            "## `faciesseq decode` of one 1,000-bed core, whole process",
            "",
            f"Measured {stamp()} on {machine()}, "
            f"command: `python benchmarks/bench_decode_process.py --repeat {args.repeat}`.",
            "",
            "| process | median s | min s |",
            "|---|---|---|",
            f'| `python -c "import numpy, pandas"` (baseline) | {b:.3f} | {min(baseline):.3f} |',
            "| `faciesseq decode model.json core.csv -o out --force` "
            f"| {d:.3f} | {min(decode):.3f} |",
            "",
            f"Ratio decode / baseline (medians): **{d / b:.2f}** (target <= 2).",
        ]
    )
    write_section(
        ROOT / "benchmarks" / "hmm_model.md", "decode-process", text, "Tract model: measurements"
    )
    print(text)


if __name__ == "__main__":
    main()
