"""Fits without labels with and without a reference model, each generator held out.

Run from the repository root::

    MPLBACKEND=Agg python benchmarks/eval_reference.py --seeds 631,632,633 --out /tmp/ref

For each of the four generators written blind (``blind_generator.py``,
``shelf_generator.py``, ``ramp_generator.py``, ``delta_generator.py``): a reference
model is fitted with every core labelled on the training cores of the *other three*
(each seed of ``--seeds`` and each setting: default, every bed of one thickness, half
the sequences without a falling stage; 8 cores a seed), their facies put on one scale
of ranks (each generator's ranks stretched onto 0-10 and rounded, the nonmarine and
exposure marks kept, :func:`common_codes`), so that one scheme holds them all. Then,
on the held-out generator's own cores and scheme, a fit without labels
(``TractHMM``) and the same fit with ``reference=`` the model above; both decode
the test cores (seed + 100, 4 cores) and are scored by balanced accuracy (mean over
the tracts of the thickness decoded right, ``eval_labelled_fits.balanced_accuracy``),
as is a third fit that checks the reference against the fit without it
(``reference_use="check"``, :mod:`faciesseq.hmm.reference_check`), whose share of the
training cores' thickness given one tract by both columns is printed too.
The project's own scenarios (``--scenarios``: the stacking generator's three and
the forward model's three, the fit seeds as given) are read with a reference learnt
from all four generators. Rows print as they come; ``--csv`` appends them to a file.
``--save-reference FILE`` writes that reference (all four generators) and stops: e.g.
for ``eval_council_grove.py --reference FILE``.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
sys.path[:0] = [str(HERE.parent), str(HERE)]

GENERATORS = ("blind", "shelf", "ramp", "delta")
SETTINGS = {"default": [], "equal": ["--equal-beds"], "nofsst": ["--no-fsst-prob", "0.5"]}
MINIMAL = ["core", "top", "base", "facies"]
TOP_RANK = 10


def generated(name: str, seed: int, setting: str, out: Path) -> Path:
    """The folder of one generator's seed and setting: train.csv (8 cores), test.csv
    (4 cores of seed + 100), scheme.yaml; made once."""
    folder = out / name / setting / str(seed)
    if (folder / "test.csv").exists():
        return folder
    folder.mkdir(parents=True, exist_ok=True)
    script = HERE / ("blind_generator.py" if name == "blind" else f"{name}_generator.py")
    extra = SETTINGS[setting]
    for part, s, n, more in (
        ("train", seed, 8, ["--scheme", "scheme.yaml"]),
        ("test", seed + 100, 4, []),
    ):
        subprocess.run(
            [
                sys.executable,
                str(script),
                "--seed",
                str(s),
                "--cores",
                str(n),
                "-o",
                f"{part}.csv",
                "--prefix",
                part[:2].upper(),
                *more,
                *extra,
            ],
            cwd=folder,
            check=True,
            capture_output=True,
        )
    return folder


def scenario_folder(name: str, seed: int, out: Path) -> Path:
    """One of the project's scenarios in the same layout (true tracts as ``tract``)."""
    import yaml
    from eval_unsupervised import _cores, _runner

    folder = out / name / "default" / str(seed)
    if (folder / "test.csv").exists():
        return folder
    folder.mkdir(parents=True, exist_ok=True)
    (scheme, run), _ = _runner(HERE.parent / "configs" / f"{name}.yaml")
    for part, s in (("train", seed), ("test", seed + 100)):
        t, _ = _cores(run, [s])
        t = t.drop(columns=["tract"], errors="ignore").rename(columns={"true_tract": "tract"})
        t[[*MINIMAL, "tract"]].to_csv(folder / f"{part}.csv", index=False)
    with open(folder / "scheme.yaml", "w") as f:
        yaml.safe_dump(scheme.to_dict(), f, sort_keys=False)
    return folder


def common_codes(scheme) -> dict[str, str]:
    """Each facies of ``scheme`` named by its rank on a 0-10 scale (and ``n`` nonmarine,
    ``x`` exposure), so that cores of several schemes share one."""
    codes = list(scheme.codes)
    ranks = np.array([scheme.rank(c) for c in codes], dtype=float)
    setting = scheme.settings(codes)
    exposed = scheme.exposures(codes)
    setting = np.zeros(len(codes)) if setting is None else setting
    exposed = np.zeros(len(codes)) if exposed is None else exposed
    top = np.nanmax(ranks) or 1.0
    return {
        str(c): f"R{int(np.round(r / top * TOP_RANK))}"
        + ("n" if s == 1 else "")
        + ("x" if x == 1 else "")
        for c, r, s, x in zip(codes, ranks, setting, exposed, strict=True)
    }


def common_scheme(path: Path):
    """The scheme of :func:`common_codes`: every rank 0-10 with each mark."""
    import yaml

    from faciesseq.scheme import load_scheme

    facies = []
    for r in range(TOP_RANK + 1):
        for marks in ("", "n", "nx", "x"):
            entry = {"code": f"R{r}{marks}", "name": f"rank {r}{marks}", "rank": r}
            if "n" in marks:
                entry["setting"] = "nonmarine"
            if "x" in marks:
                entry["exposure"] = True
            facies.append(entry)
    with open(path, "w") as f:
        yaml.safe_dump({"name": "ranks 0-10", "facies": facies}, f, sort_keys=False)
    return load_scheme(path)


def reference(folders: list[Path], out: Path):
    """A model fitted with every core labelled on the training cores of ``folders``,
    their facies on the common scale."""
    from faciesseq.core import CoreSet
    from faciesseq.hmm import TractHMM
    from faciesseq.scheme import load_scheme

    frames = []
    for k, folder in enumerate(folders):
        t = pd.read_csv(folder / "train.csv")
        t["facies"] = t["facies"].astype(str).map(common_codes(load_scheme(folder / "scheme.yaml")))
        t["core"] = f"{k}-" + t["core"].astype(str)
        frames.append(t[[*MINIMAL, "tract"]])
    cores = CoreSet.from_frame(pd.concat(frames, ignore_index=True))
    model = TractHMM(scheme=common_scheme(out / "common.yaml"), random_state=1)
    return model.fit(cores, labels="tract", calibrate=False)


def compare(folder: Path, ref, seed: int) -> dict[str, float]:
    """Balanced accuracy of the test cores: a fit without labels, with ``ref``, and with
    ``ref`` checked against the fit without it (``reference_use="check"``: the share of
    the training cores' thickness the two columns give one tract, and the fit kept)."""
    from eval_labelled_fits import balanced_accuracy

    from faciesseq.core import CoreSet
    from faciesseq.hmm import TractHMM
    from faciesseq.scheme import load_scheme

    train, test = pd.read_csv(folder / "train.csv"), pd.read_csv(folder / "test.csv")
    scheme = load_scheme(folder / "scheme.yaml")
    out = {}
    for name, given, use in (
        ("without", None, "always"),
        ("reference", ref, "always"),
        ("checked", ref, "check"),
    ):
        model = TractHMM(scheme=scheme, random_state=seed, reference=given, reference_use=use)
        model.fit(CoreSet.from_frame(train[MINIMAL]), calibrate=False)
        decoded = model.decode(CoreSet.from_frame(test[MINIMAL])).tracts_table()
        out[name] = balanced_accuracy(test, decoded)
    out["agreement"] = model.reference_check_["agreement"]
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", required=True, help="comma-separated fit seeds")
    ap.add_argument("--out", type=Path, required=True, help="folder for the generated cores")
    ap.add_argument("--only", help="comma-separated held-out generators or scenarios")
    ap.add_argument("--no-scenarios", action="store_true", help="the four generators only")
    ap.add_argument("--csv", type=Path, help="append the rows to this file")
    ap.add_argument(
        "--save-reference",
        type=Path,
        metavar="FILE",
        help="only write the reference learnt from all four generators (a model file)",
    )
    a = ap.parse_args(argv)
    warnings.simplefilter("ignore")
    seeds = [int(s) for s in a.seeds.split(",")]
    only = set(a.only.split(",")) if a.only else None
    a.out.mkdir(parents=True, exist_ok=True)
    folders = {
        g: [generated(g, s, st, a.out) for st in SETTINGS for s in seeds] for g in GENERATORS
    }
    if a.save_reference:
        from faciesseq.hmm.modelfile import save_model

        model = reference([f for v in folders.values() for f in v], a.out)
        provenance = {"command": ["python", "benchmarks/eval_reference.py", *sys.argv[1:]]}
        if a.save_reference.suffix == ".gz":  # the packaged one: gzip of the same JSON
            import gzip
            import tempfile

            with tempfile.TemporaryDirectory() as tmp:
                plain = Path(tmp) / "reference.json"
                save_model(model, plain, provenance)
                with (
                    open(a.save_reference, "wb") as out,
                    gzip.GzipFile(fileobj=out, mode="wb", mtime=0) as f,
                ):
                    f.write(plain.read_bytes())
        else:
            save_model(model, a.save_reference, provenance)
        print(f"reference written to {a.save_reference}")
        return 0
    print(
        "| held out | setting | seed | without a reference | with the reference "
        "| agreement of the two on the training cores | checked (`--reference-use check`) |"
    )
    print("|---|---|---|---|---|---|---|")
    rows = []
    held = [
        (g, [f for k, v in folders.items() if k != g for f in v], folders[g]) for g in GENERATORS
    ]
    if not a.no_scenarios:
        from eval_suggested_ranks import SCENARIOS  # the project's six, as there

        everything = [f for v in folders.values() for f in v]
        held += [(n, everything, [scenario_folder(n, s, a.out) for s in seeds]) for n in SCENARIOS]
    for name, training, targets in held:
        if only and name not in only:
            continue
        ref = reference(training, a.out)
        for folder in targets:
            setting, seed = folder.parent.name, int(folder.name)
            r = compare(folder, ref, seed)
            rows.append(
                (name, setting, seed, r["without"], r["reference"], r["agreement"], r["checked"])
            )
            print(
                f"| {name} | {setting} | {seed} | {r['without']:.3f} | {r['reference']:.3f} "
                f"| {r['agreement']:.3f} | {r['checked']:.3f} |",
                flush=True,
            )
    table = pd.DataFrame(
        rows,
        columns=["held_out", "setting", "seed", "without", "reference", "agreement", "checked"],
    )
    if a.csv:
        table.to_csv(a.csv, mode="a", header=not a.csv.exists(), index=False)
    columns = ["without", "reference", "agreement", "checked"]
    means = table.groupby("held_out", sort=False)[columns].mean()
    print("\nmeans by held-out generator or scenario:\n" + means.round(3).to_string())
    return 0


if __name__ == "__main__":
    sys.exit(main())
