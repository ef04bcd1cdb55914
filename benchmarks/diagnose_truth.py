"""What the true tracts look like at simulated wells; writes a section of benchmarks/hmm_model.md.

Run from the repository root::

    python benchmarks/diagnose_truth.py

For each shipped scenario (noise seed 21, a training seed of
``eval_recovery.py``) and the demo: the true tract changes between successive
*beds* (adjacent intervals of one facies amalgamated, as the tract model reads
a core; a bed's truth is the tract of most of its thickness) and between
successive described intervals; how many beds hold a true tract boundary; the
thickness of each tract per well; and where the true maximum flooding surface
lies relative to the deepest facies of its cycle.
"""

from __future__ import annotations

import itertools
import sys
from collections import Counter
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from _results import machine, stamp, write_section  # noqa: E402

from faciesseq.simulate import load_scenario, simulate  # noqa: E402

SEED = 21
ORDER = ("HST", "FSST", "LST", "TST")


def _changes(columns) -> Counter:
    out: Counter = Counter()
    for tracts in columns:
        for a, b in itertools.pairwise(tracts):
            if a != b:
                out[(a, b)] += 1
    return out


def _mfs_offsets(cores, surfaces, scheme) -> list[int]:
    """Beds between each true MFS and the deepest bed of its TST + following tracts.

    Positive: the deepest facies lies above the MFS (younger). Window: the beds
    from the MFS down to the previous change out of TST and up to the next TST.
    """
    out = []
    for core in cores:
        for s in core.successions("beds"):
            beds = s.beds  # base to top
            tract = beds["true_tract"].to_numpy(dtype=object)
            rank = beds["facies"].map(scheme.rank).to_numpy(dtype=float)
            for i in range(1, len(beds)):
                if tract[i - 1] == "TST" and tract[i] != "TST" and tract[i] in ("HST", "FSST"):
                    lo = i - 1
                    while lo > 0 and tract[lo - 1] == "TST":
                        lo -= 1
                    hi = i
                    while hi + 1 < len(beds) and tract[hi + 1] != "TST":
                        hi += 1
                    window = rank[lo : hi + 1]
                    deepest = lo + int(np.argmax(window))  # lowest of the deepest beds
                    out.append(deepest - i + (1 if deepest >= i else 0))
    return out


def scenario_section(path: Path) -> str:
    scenario = load_scenario(path)
    result = simulate(scenario, seed=SEED)
    cores = result.cores
    bed_columns, interval_columns = [], []
    n_beds = split = 0
    minority = []
    for core in cores:
        for s in core.successions("beds"):
            bed_columns.append(list(s.beds["true_tract"]))
        interval_columns.append(list(core.intervals["true_tract"])[::-1])
        iv = core.intervals
        facies = iv["facies"].to_numpy(dtype=object)
        seg = core.segment_ids()
        bed = np.cumsum(np.r_[True, (facies[1:] != facies[:-1]) | (seg[1:] != seg[:-1])])
        thick = (iv["base"] - iv["top"]).to_numpy(float)
        truth = iv["true_tract"].to_numpy(dtype=object)
        for b in np.unique(bed):
            m = bed == b
            n_beds += 1
            if len(set(truth[m])) > 1:
                split += 1
                w = pd.Series(thick[m]).groupby(truth[m]).sum()
                minority.append(1 - w.max() / w.sum())
    by_bed, by_interval = _changes(bed_columns), _changes(interval_columns)
    frame = cores.to_frame()
    frame["thickness"] = frame["base"] - frame["top"]
    thick = frame.pivot_table(
        index="core", columns="true_tract", values="thickness", aggfunc="sum", fill_value=0.0
    )
    thick = thick.reindex(columns=list(ORDER), fill_value=0.0)
    offsets = np.array(_mfs_offsets(cores, result.surfaces, scenario.scheme))
    pairs = sorted(set(by_bed) | set(by_interval), key=lambda p: (ORDER.index(p[0]), p[1]))
    lines = [
        f"### `{path.relative_to(ROOT)}` (seed {SEED}): {len(cores)} cores, "
        f"{len(frame)} described intervals, {n_beds} beds",
        "",
        "| upward change | between beds | between intervals |",
        "|---|---|---|",
    ]
    for p in pairs:
        lines.append(f"| {p[0]} -> {p[1]} | {by_bed.get(p, 0)} | {by_interval.get(p, 0)} |")
    skipped = sum(
        v for (a, b), v in by_bed.items() if (ORDER.index(b) - ORDER.index(a)) % len(ORDER) != 1
    )
    lines += [
        "",
        f"Bed-scale changes that jump over a tract: {skipped} of {sum(by_bed.values())}; "
        f"beds holding a true tract boundary: {split} of {n_beds} ({split / n_beds:.0%}), the "
        f"minority tract making {np.mean(minority) if minority else 0:.0%} of such a bed's "
        "thickness on average.",
        "",
        "True tract thickness per well (m): "
        + "; ".join(
            f"{c} " + " ".join(f"{t} {thick.loc[c, t]:.1f}" for t in ORDER) for c in thick.index
        )
        + ".",
        "",
        f"True MFS (TST -> HST/FSST between beds, {len(offsets)}): the deepest bed of its "
        f"cycle is the bed just above it for {np.mean(offsets == 1):.0%}, within one bed "
        f"of it for {np.mean(np.abs(offsets - 0.5) <= 1.5):.0%}, below it (in the TST) for "
        f"{np.mean(offsets <= 0):.0%}, two or more beds above for {np.mean(offsets >= 2):.0%}.",
    ]
    return "\n".join(lines)


def main() -> None:
    parts = [
        "## True tracts at the wells (diagnosis)",
        "",
        f"Measured {stamp()} on {machine()}; command: `python benchmarks/diagnose_truth.py`.",
    ]
    for name in ("scenario-ramp.yaml", "scenario-hinge-table.yaml", "demo-quillerby.yaml"):
        parts += ["", scenario_section(ROOT / "configs" / name)]
    text = "\n".join(parts)
    write_section(ROOT / "benchmarks" / "hmm_model.md", "truth", text, "Tract model: measurements")
    print(text)


if __name__ == "__main__":
    main()
