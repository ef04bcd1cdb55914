"""Real wells: decoded half-cycle boundaries against the marine / nonmarine column.

Run from the repository root::

    python benchmarks/eval_council_grove.py
    python benchmarks/eval_council_grove.py --ranks benchmarks/data/council-grove-ranks-tied.yaml

Data: the Council Grove facies logs (Panoma-Hugoton field, Kansas; Permian
stacked marine-nonmarine cycles) of Dubois, M.K., Bohling, G.C., Chakrabarti, S.
(2007), "Comparison of four approaches to a rock facies classification problem",
Computers & Geosciences 33(5):599-617, as published by Hall, B. (2016), "Facies
classification using machine learning", The Leading Edge 35(10):906-909
(Apache-2.0); see ``tests/data/council_grove/README.md`` (an unchanged copy of
the shared file read here by default). Samples every 0.5 ft, depth in ft.

The model (:func:`eval_unsupervised.make_model`, the one factory of the
benchmarks) is fitted without labels on the wells and decodes each of them;
``NM_M`` (1 nonmarine, 2 marine) is never shown to it. Decoded half-cycle
boundaries are changes between {TST, HST} and {FSST, LST}; true ones are
changes of ``NM_M`` between successive samples (never across a gap). They are
matched one to one within +-5 ft (:func:`faciesseq.scores.boundary_f1`). Two
references get the same scores: the trend rule
(:func:`faciesseq.hmm.baseline.trend_rule`, the model's starting point) and
the one-line facies rule "facies 4-9 marine". The pseudo-well ``Recruit F9``
(scattered bafflestone samples, not a succession: README) is left out unless
``--with-pseudo-well``.

``--held-out`` decodes each well with a model fitted on the other wells only
(leave one well out), the check closest to decoding wells that were never in the
fit.

``--ranks FILE`` (repeatable) adds a run with another facies scheme, e.g.
``benchmarks/data/council-grove-ranks-tied.yaml`` (nonmarine facies 1-3 tied):
the scores should not hang on one geologist's ranking.
"""

from __future__ import annotations

import argparse
import sys
import time
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

from _results import write_json  # noqa: E402
from eval_unsupervised import (  # noqa: E402
    _decoded_on_intervals,
    make_model,
    trend_rule_table,
)

from faciesseq.io import read_cores  # noqa: E402
from faciesseq.scheme import load_scheme  # noqa: E402
from faciesseq.scores import boundary_f1, half_cycle_boundaries  # noqa: E402

SHARED = ROOT.parent / "shared" / "data" / "council-grove" / "facies_vectors_subset.csv"
COPY = ROOT / "tests" / "data" / "council_grove" / "facies_vectors_subset.csv"
SCHEME = ROOT / "tests" / "data" / "council_grove" / "scheme.yaml"
PSEUDO_WELL = "Recruit F9"
TOLERANCE_FT = 5.0
SEED = 0
MARINE_TRACTS = ("TST", "HST")


def read_wells(csv: Path, scheme: Path, pseudo_well: bool):
    cores = read_cores(
        csv,
        layout="samples",
        columns={"core": "Well Name", "depth": "Depth", "facies": "Facies"},
        units="ft",
        repeated_depths="keep-first",
        scheme=scheme,
    )
    if not pseudo_well:
        cores = cores.subset([n for n in cores.names if n != PSEUDO_WELL])
    return cores


def _score(pred: pd.DataFrame, truth: pd.DataFrame, wells) -> dict:
    """Per well and pooled: boundary matching at +-5 ft; pred/truth boundary tables."""
    per = {}
    for w in wells:
        per[w] = boundary_f1(
            pred.loc[pred["core"] == w, "depth"],
            truth.loc[truth["core"] == w, "depth"],
            TOLERANCE_FT,
        )
    n_pred = sum(m.n_pred for m in per.values())
    n_true = sum(m.n_true for m in per.values())
    n_matched = sum(m.n_matched for m in per.values())
    return {
        "per_well": {w: m.to_dict() for w, m in per.items()},
        "precision": n_matched / n_pred if n_pred else float("nan"),
        "recall": n_matched / n_true if n_true else float("nan"),
        "f1": 2 * n_matched / (n_pred + n_true) if n_pred + n_true else float("nan"),
        "n_pred": n_pred,
        "n_true": n_true,
        "n_matched": n_matched,
        "ratio": n_pred / n_true if n_true else float("nan"),
    }


def _agreement(column: pd.Series, intervals: pd.DataFrame, marine) -> float:
    """Share of the sampled thickness whose marine / nonmarine call matches ``NM_M``."""
    w = (intervals["base"] - intervals["top"]).to_numpy(float)
    called = column.astype(str).isin(marine).to_numpy()
    true = intervals["NM_M"].to_numpy(float) == 2
    return float(np.sum(w * (called == true)) / np.sum(w))


#: A reference model file (``--reference``) the fits without labels read, or None, and
#: how they read it (``--reference-use``).
REFERENCE = None
REFERENCE_USE = "always"


def _model(scheme):
    model = make_model(scheme, "unsupervised", SEED)
    if REFERENCE is None:
        return model
    return model.set_params(reference=REFERENCE, reference_use=REFERENCE_USE)


def _fit_and_decode(cores, scheme, held_out: bool):
    """The decoded tract table of every well: fitted on all wells and decoding them, or
    (``held_out``) each well decoded by a model fitted on the others."""
    if not held_out:
        model = _model(scheme).fit(cores, labels=None)
        return model.decode(cores).tracts_table()
    tables = []
    for well in cores.names:
        others = cores.subset([n for n in cores.names if n != well])
        model = _model(scheme).fit(others, labels=None)
        tables.append(model.decode(cores.subset([well])).tracts_table())
    return pd.concat(tables, ignore_index=True)


def evaluate(csv: Path, scheme_path: Path, pseudo_well: bool, held_out: bool = False) -> dict:
    scheme = load_scheme(scheme_path)
    cores = read_wells(csv, scheme_path, pseudo_well)
    wells = list(cores.names)
    samples = cores.to_frame()
    truth = half_cycle_boundaries(samples, column="NM_M", marine=(2,))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        t0 = time.perf_counter()
        decoded = _fit_and_decode(cores, scheme, held_out)
        fit_s = time.perf_counter() - t0
    rule = trend_rule_table(cores, scheme)
    facies_rule = samples.assign(marine=samples["facies"].astype(int) >= 4)
    methods = {
        "tract model (unsupervised)": (decoded, "tract", MARINE_TRACTS),
        "trend rule": (rule, "tract", MARINE_TRACTS),
        "facies rule (facies >= 4 marine)": (facies_rule, "marine", (True,)),
    }
    out = {}
    for name, (table, column, marine) in methods.items():
        pred = half_cycle_boundaries(table, column=column, marine=marine)
        on_samples = table if table is facies_rule else _decoded_on_intervals(table, samples)
        out[name] = {
            **_score(pred, truth, wells),
            "agreement": _agreement(on_samples[column], samples, [str(m) for m in marine]),
        }
    return {
        "data": str(csv),
        "scheme": str(
            scheme_path.relative_to(ROOT) if scheme_path.is_relative_to(ROOT) else scheme_path
        ),
        "wells": wells,
        "n_samples": len(samples),
        "n_beds": len(decoded),
        "thickness_ft": float((samples["base"] - samples["top"]).sum()),
        "held_out": held_out,
        "fit_s": fit_s,
        "warnings": sorted({str(w.message).split("\n")[0] for w in caught}),
        "methods": out,
    }


def _f(x: float, nd: int = 2) -> str:
    return "-" if x is None or (isinstance(x, float) and np.isnan(x)) else f"{x:.{nd}f}"


def markdown(result: dict) -> str:
    lines = [
        f"### Scheme `{result['scheme']}`",
        "",
        f"{len(result['wells'])} wells ({', '.join(result['wells'])}), "
        f"{result['n_samples']} samples, {result['thickness_ft']:.0f} ft, {result['n_beds']} "
        f"decoded beds; fit and decode {result['fit_s']:.1f} s"
        + (", each well decoded by a fit on the others" if result["held_out"] else "")
        + ". "
        f"Half-cycle boundaries matched one to one within +-{TOLERANCE_FT:g} ft.",
        "",
        "| method | precision | recall | F1 | boundaries / true | matched "
        "| thickness agreement with NM_M |",
        "|---|---|---|---|---|---|---|",
    ]
    for name, r in result["methods"].items():
        lines.append(
            f"| {name} | {_f(r['precision'])} | {_f(r['recall'])} | {_f(r['f1'])} "
            f"| {_f(r['ratio'])} ({r['n_pred']}/{r['n_true']}) | {r['n_matched']} "
            f"| {_f(r['agreement'], 3)} |"
        )
    lines += [
        "",
        "Per well (precision / recall / decoded boundaries per true boundary):",
        "",
        "| well | " + " | ".join(result["methods"]) + " |",
        "|---|" + "---|" * len(result["methods"]),
    ]
    for w in result["wells"]:
        cells = []
        for r in result["methods"].values():
            m = r["per_well"][w]
            cells.append(
                f"{_f(m['precision'])} / {_f(m['recall'])} / {_f(m['ratio'])} "
                f"({m['n_pred']}/{m['n_true']})"
            )
        lines.append(f"| {w} | " + " | ".join(cells) + " |")
    if result["warnings"]:
        lines += ["", "Warnings during fit / decode: " + "; ".join(result["warnings"])]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n", 1)[0])
    parser.add_argument(
        "--data", type=Path, default=SHARED if SHARED.exists() else COPY, help="the CSV"
    )
    parser.add_argument(
        "--ranks", action="append", default=[], type=Path, help="another facies scheme file"
    )
    parser.add_argument(
        "--with-pseudo-well", action="store_true", help=f"keep {PSEUDO_WELL} (not a succession)"
    )
    parser.add_argument(
        "--held-out", action="store_true", help="decode each well by a fit on the others"
    )
    parser.add_argument("--json", type=Path, help="also write the results as JSON here")
    parser.add_argument(
        "--per-bed-evidence",
        action="store_true",
        help="fit with weigh_evidence=False (the default before 2026-12-03)",
    )
    parser.add_argument(
        "--reference",
        metavar="FILE",
        help="a reference model file the fits read (benchmarks/eval_reference.py "
        "--save-reference), or 'generators' for the packaged one",
    )
    parser.add_argument(
        "--reference-use",
        choices=("always", "check"),
        default="always",
        help="read the reference always, or check it against the fit without it",
    )
    args = parser.parse_args(argv)
    if args.reference:
        global REFERENCE, REFERENCE_USE
        REFERENCE = args.reference
        if args.reference != "generators":
            REFERENCE = Path(args.reference).resolve()
        REFERENCE_USE = args.reference_use
    if args.per_bed_evidence:
        import eval_unsupervised

        eval_unsupervised.MODEL = "per-bed-evidence"
    t0 = time.perf_counter()
    print(f"## Council Grove half-cycles (`{args.data}`)\n")
    results = []
    for scheme in [SCHEME, *[p.resolve() for p in args.ranks]]:
        results.append(evaluate(args.data, scheme, args.with_pseudo_well, args.held_out))
        print(markdown(results[-1]) + "\n", flush=True)
    print(f"(whole evaluation: {time.perf_counter() - t0:.0f} s)")
    if args.json:
        write_json(args.json, results)
    return 0


if __name__ == "__main__":
    sys.exit(main())
