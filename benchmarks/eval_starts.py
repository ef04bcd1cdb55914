"""Which start a fit without labels keeps, and what each scores, on many seed sets.

Run from the repository root::

    MPLBACKEND=Agg python benchmarks/eval_starts.py \\
        configs/stacking-missing-transgression.yaml:121,122/123 \\
        configs/stacking-shoreface.yaml:131,132/133

Each argument is ``SCENARIO:FIT_SEEDS/DECODE_SEEDS``. For each, the default
``TractHMM`` (graph choice from the nested start and from the priors alone:
:func:`faciesseq.hmm.nested.kept_start`) and ``TractHMM(nested_start=False)`` are
fitted without labels on the cores of the fit seeds (``random_state`` = the first
fit seed) and decode those of the decode seeds; printed per case: the balanced
accuracy of each (:func:`eval_unsupervised.score`), the start the default kept,
and the TST deepening score of the lowest-BIC fit of each start
(:func:`faciesseq.hmm.identity.deepening_scores`). One line per case, as it
finishes; a mean over the cases at the end.
"""

from __future__ import annotations

import sys
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import eval_unsupervised as ev  # noqa: E402

from faciesseq.core import CoreSet  # noqa: E402
from faciesseq.hmm import TractHMM  # noqa: E402


def _case(spec: str) -> tuple[str, dict]:
    path, sets = spec.rsplit(":", 1)
    fit, decode = (tuple(int(x) for x in part.split(",")) for part in sets.split("/"))
    (scheme, run), _ = ev._runner(Path(path))
    train, _ = ev._cores(run, fit)
    test, surfaces = ev._cores(run, decode)
    held_out = CoreSet.from_frame(test.drop(columns=["tract"], errors="ignore"), units="m")
    cores, _ = ev._training_set(train, "unsupervised", [])
    out = {}
    for name, nested in (("default", True), ("priors", False)):
        model = TractHMM(scheme=scheme, random_state=fit[0], nested_start=nested).fit(cores)
        out[name] = ev.score(model.decode(held_out), test, surfaces)["balanced_accuracy"]
        if nested:
            out["record"] = model.nested_start_ or {}
    return f"{Path(path).stem} {sets}", out


def main(argv: list[str]) -> int:
    warnings.simplefilter("ignore")
    totals = {"default": 0.0, "priors": 0.0}
    for spec in argv:
        label, out = _case(spec)
        deep = out["record"].get("tst_deepening") or {}
        scores = ", ".join(f"{k} {v:+.2f}" for k, v in deep.items() if v is not None)
        print(
            f"{label}: default {out['default']:.3f} (kept {out['record'].get('kept')}; "
            f"TST deepening {scores or '-'}), from the priors alone {out['priors']:.3f}",
            flush=True,
        )
        for k in totals:
            totals[k] += out[k]
    n = max(len(argv), 1)
    print(
        f"mean over {len(argv)} cases: default {totals['default'] / n:.3f}, "
        f"from the priors alone {totals['priors'] / n:.3f}"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
