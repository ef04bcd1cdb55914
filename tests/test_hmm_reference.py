"""A reference model read in a fit without labels (``TractHMM(reference=...)``,
``faciesseq fit --reference``).

Checks: the ranks of a database are stretched linearly onto the reference's range
(a renamed scheme whose ranks are an affine map of the reference's lands on the
reference's own ranks); on the reference's own beds the piece gives exactly the
reference's stacking trees' scaled likelihoods (Bourlard & Morgan 1994, the hybrid
classifier-HMM the stacking piece is); a fit with a reference decodes, keeps its
trees through a model file, reads them on a fit of fewer tracts (the nested start),
and is refused where it cannot be read (with labels, a reference without trees, a
weight without a reference) with one line and exit 2 from the command line. A checked
reference (``reference_use="check"``) keeps the fit the columns' agreement chooses, and
the fit it keeps without the reference is the plain fit without one, bed for bed.
"""

from __future__ import annotations

import subprocess
import sys
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from _stacking import methods_text, stacking_table

from faciesseq.core import CoreSet
from faciesseq.errors import ConfigError
from faciesseq.hmm import TractHMM
from faciesseq.hmm.modelfile import load_model, save_model
from faciesseq.hmm.reference import ReferenceEmission, rescaled_ranks
from faciesseq.scheme import FaciesScheme
from faciesseq.simulate import load_stacking_scenario

ROOT = Path(__file__).resolve().parents[1]
SCENARIO = load_stacking_scenario(ROOT / "configs" / "stacking-minimal-table.yaml")
MINIMAL = ["core", "top", "base", "facies"]


def _quiet(model, cores, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return model.fit(cores, **kw)


@pytest.fixture(scope="module")
def reference():
    table = stacking_table(SCENARIO, [1, 2])
    cores = CoreSet.from_frame(table[[*MINIMAL, "true_tract"]], units="m")
    model = TractHMM(scheme=SCENARIO.scheme, random_state=1, calibration_folds=0)
    return _quiet(model, cores, labels="true_tract")


@pytest.fixture(scope="module")
def target():
    return stacking_table(SCENARIO, [3])


def _renamed(scheme: FaciesScheme) -> tuple[FaciesScheme, dict[str, str]]:
    """The scheme with every code renamed and every rank mapped to 2 r + 3."""
    doc = scheme.to_dict()
    names = {}
    for f in doc["facies"]:
        names[str(f["code"])] = f"x-{f['code']}"
        f["code"] = names[str(f["code"])]
        f["rank"] = 2 * f["rank"] + 3
        f.pop("aliases", None)
    return FaciesScheme.from_dict(doc), names


def _written(tmp_path: Path, table: pd.DataFrame, reference=None) -> tuple[Path, Path, Path]:
    """``table`` as the command line's source, the scenario's scheme as its YAML file and
    ``reference`` (where given) as a model file, in ``tmp_path``."""
    import yaml

    source, scheme, ref = (tmp_path / n for n in ("cores.csv", "scheme.yaml", "reference.json"))
    table.to_csv(source, index=False)
    scheme.write_text(yaml.safe_dump(SCENARIO.scheme.to_dict()))
    if reference is not None:
        save_model(reference, ref)
    return source, scheme, ref


def test_ranks_are_stretched_onto_the_reference_range():
    ref = np.array([0.0, 1, 2, 3, 10])
    assert np.array_equal(rescaled_ranks(np.array([3.0, 5, 23]), ref), [0, 1, 10])
    assert np.array_equal(rescaled_ranks(np.array([0.0, 1, 2]), ref), [0, 5, 10])
    got = rescaled_ranks(np.array([1.0, np.nan, 2]), np.array([0.0, 0.5, 1]))
    assert got[0] == 0 and np.isnan(got[1]) and got[2] == 1  # fractional ranks: not rounded
    assert np.array_equal(rescaled_ranks(np.array([4.0, 4]), ref), [0, 0])


def test_on_its_own_beds_the_piece_is_the_reference_trees(reference, target):
    cores = CoreSet.from_frame(target[MINIMAL], units="m")
    _, beds = reference._prepare(cores)
    marks, nonmarine = reference._facies_marks()
    piece = ReferenceEmission.of(
        reference, reference.tract_model_.order, reference.ranks_, marks, nonmarine
    )
    piece.depth_unit = reference.emission("stacking").depth_unit
    assert np.array_equal(piece.log_prob(beds), reference.emission("stacking").log_prob(beds))


def test_a_renamed_scheme_on_another_rank_scale_reads_the_same(reference, target):
    scheme, names = _renamed(SCENARIO.scheme)
    renamed = target.assign(facies=target["facies"].map(names))
    fits = []
    for sch, table in ((SCENARIO.scheme, target), (scheme, renamed)):
        model = TractHMM(scheme=sch, random_state=3, reference=reference, calibration_folds=0)
        fits.append(_quiet(model, CoreSet.from_frame(table[MINIMAL], units="m")))
    a, b = (m.emission("reference") for m in fits)
    order = [list(fits[1].facies_).index(names[c]) for c in fits[0].facies_]
    assert np.array_equal(a.ranks_, b.ranks_[order])
    assert a.depth_unit == pytest.approx(b.depth_unit)


def test_a_fit_with_a_reference_decodes_and_keeps_it_in_its_file(reference, target, tmp_path):
    cores = CoreSet.from_frame(target[MINIMAL], units="m")
    path = tmp_path / "reference.json"
    save_model(reference, path)
    model = _quiet(TractHMM(scheme=SCENARIO.scheme, random_state=3, reference=path), cores)
    assert model.features_[-1] == "reference"
    assert model.nested_start_  # the nested start fitted three tracts with the same trees
    interpretation = model.decode(cores)
    decoded = interpretation.tracts_table()
    assert set(decoded["tract"]) <= {"HST", "FSST", "LST", "TST"}
    assert any("the reference model's trees" in c for c in model.cautions_)
    assert "a reference model" in interpretation.meta["probabilities_note"]
    assert "reference model fitted with labels on other cores" in methods_text(model)
    from faciesseq.report.striplog import REFERENCE_NOTE, strip_log

    figure = strip_log(interpretation[cores.names[0]], model=model)
    assert any(REFERENCE_NOTE in ax.get_xlabel() for ax in figure.axes)
    from faciesseq.report.view import view_data

    assert view_data(interpretation, model.scheme, model.tract_model_)["reference"] is True
    save_model(model, tmp_path / "m.json")
    again = load_model(tmp_path / "m.json").decode(cores).tracts_table()
    pd.testing.assert_frame_equal(decoded, again)


def test_a_reference_is_refused_where_it_cannot_be_read(reference, target):
    table = target[[*MINIMAL, "true_tract"]]
    cores = CoreSet.from_frame(table, units="m")
    with pytest.raises(ConfigError, match="without labels"):
        _quiet(TractHMM(scheme=SCENARIO.scheme, reference=reference), cores, labels="true_tract")
    plain = CoreSet.from_frame(table[MINIMAL], units="m")
    unlabelled = _quiet(TractHMM(scheme=SCENARIO.scheme, random_state=1, n_restarts=1), plain)
    # a fit without labels that could read one says how to check its names with it
    assert any("--reference generators --reference-use check" in c for c in unlabelled.cautions_)
    with pytest.raises(ConfigError, match="fitted with labels"):
        _quiet(TractHMM(scheme=SCENARIO.scheme, reference=unlabelled), plain)
    with pytest.raises(ConfigError, match="needs a reference"):
        _quiet(TractHMM(scheme=SCENARIO.scheme, features=["trend", "reference"]), plain)
    with pytest.raises(ConfigError, match="reference_weight"):
        _quiet(TractHMM(scheme=SCENARIO.scheme, reference=reference, reference_weight=0), plain)


def test_the_command_line_refuses_a_reference_it_cannot_read(reference, target, tmp_path):
    source, scheme, ref = _written(tmp_path, target[[*MINIMAL, "true_tract"]], reference)
    fit = [sys.executable, "-m", "faciesseq", "fit", str(source), "--scheme", str(scheme)]
    cases = [
        (["--reference", str(ref), "--labels", "true_tract", "-o", str(tmp_path / "m.json")], 2),
        (["--reference-weight", "2", "-o", str(tmp_path / "m.json")], 2),
        (["--reference-use", "check", "-o", str(tmp_path / "m.json")], 2),
        (["--reference", str(ref), "-o", str(ref), "--force"], 2),
        (["--reference", str(tmp_path / "none.json"), "-o", str(tmp_path / "m.json")], 1),
    ]
    before = ref.read_bytes()
    for extra, code in cases:
        p = subprocess.run([*fit, *extra], capture_output=True, text=True, timeout=600)
        assert p.returncode == code, (extra, p.stderr)
        assert len(p.stderr.strip().splitlines()) == 1 and "Traceback" not in p.stderr
    assert ref.read_bytes() == before and not (tmp_path / "m.json").exists()


def test_the_packaged_reference_is_read_by_name(target, tmp_path):
    """`--reference generators`: the reference packaged with faciesseq (learnt from four
    generators' invented cores on the ranks 0-10), read by a fit on another scheme."""
    from faciesseq.hmm.reference import bundled_reference

    packaged = bundled_reference()
    assert "stacking" in packaged.features_ and packaged.ranks_.max() == 10
    source, scheme, _ = _written(tmp_path, target[MINIMAL])
    out = tmp_path / "m.json"
    p = subprocess.run(
        [
            sys.executable,
            "-m",
            "faciesseq",
            "fit",
            str(source),
            "--scheme",
            str(scheme),
            "--reference",
            "generators",
            "--restarts",
            "1",
            "-o",
            str(out),
        ],
        capture_output=True,
        text=True,
        timeout=900,
    )
    assert p.returncode == 0, p.stderr
    assert "the reference model's trees" in p.stdout + p.stderr
    assert load_model(out).features_[-1] == "reference"


def test_validate_measures_a_reference_on_labelled_cores(reference, target, tmp_path):
    """`validate --mode unsupervised --reference`: a geologist with interpreted cores
    measures, before using it on uninterpreted ones, what a reference gives."""
    import json

    table = stacking_table(SCENARIO, [3, 4])[[*MINIMAL, "true_tract"]]
    source, scheme, ref = _written(tmp_path, table, reference)
    validate = [
        sys.executable,
        "-m",
        "faciesseq",
        "validate",
        str(source),
        "--scheme",
        str(scheme),
        "--labels",
        "true_tract",
        "--folds",
        "2",
        "--reference",
        str(ref),
    ]
    p = subprocess.run(
        [*validate, "--mode", "unsupervised", "--restarts", "1", "--format", "json"],
        capture_output=True,
        text=True,
        timeout=900,
    )
    assert p.returncode == 0, p.stderr
    result = json.loads(p.stdout)
    assert result["settings"]["mode"] == "unsupervised"
    assert result["settings"]["reference"] == str(ref)
    p = subprocess.run(validate, capture_output=True, text=True, timeout=600)  # supervised
    assert p.returncode == 2 and "without labels" in p.stderr


def test_agreement_is_the_share_of_the_thickness_given_one_tract():
    from faciesseq.hmm.reference_check import agreement

    first = pd.DataFrame({"top": [0.0, 1, 4], "base": [1.0, 4, 10], "tract": ["TST", "HST", "LST"]})
    second = first.assign(tract=["TST", "FSST", "LST"])
    assert agreement(first, second) == pytest.approx(0.7)
    assert agreement(first, first) == 1.0


@pytest.mark.parametrize(
    "below, unsure_below, kept",
    [(0.0, 0.0, "without"), (0.0, 1.01, "without"), (1.01, 1.01, "reference")],
)
def test_a_checked_reference_keeps_the_fit_the_agreement_chooses(
    reference, target, tmp_path, monkeypatch, below, unsure_below, kept
):
    import faciesseq.hmm.reference_check as check

    monkeypatch.setattr(check, "KEEP_REFERENCE_BELOW", below)
    monkeypatch.setattr(check, "UNSURE_BELOW", unsure_below)
    cores = CoreSet.from_frame(target[MINIMAL], units="m")
    params = {"scheme": SCENARIO.scheme, "random_state": 3, "n_restarts": 1}
    params["calibration_folds"] = 0
    model = _quiet(TractHMM(**params, reference=reference, reference_use="check"), cores)
    record = model.reference_check_
    assert record["kept"] == kept and 0.0 <= record["agreement"] <= 1.0
    assert ("reference" in model.features_) == (kept == "reference")
    plain = _quiet(TractHMM(**params, reference=None if kept == "without" else reference), cores)
    pd.testing.assert_frame_equal(
        model.decode(cores).tracts_table(), plain.decode(cores).tracts_table()
    )
    save_model(model, tmp_path / "m.json")
    assert load_model(tmp_path / "m.json").reference_check_ == record
    unsure = any("the tract names are unsure" in c for c in model.cautions_)
    assert unsure == (record["agreement"] < unsure_below)
    assert f"{record['agreement']:.2f} of the thickness" in methods_text(model)
    interpretation = model.decode(cores)
    note = interpretation.meta["probabilities_note"]
    assert ("the tract names are unsure" in note) == unsure
    from faciesseq.report.striplog import strip_log

    figure = strip_log(interpretation[cores.names[0]], model=model)
    assert any("names unsure" in ax.get_xlabel() for ax in figure.axes) == unsure


def test_the_command_line_says_what_the_check_kept(reference, target, tmp_path):
    source, scheme, ref = _written(tmp_path, target[MINIMAL], reference)
    fit = [sys.executable, "-m", "faciesseq", "fit", str(source), "--scheme", str(scheme)]
    fit += ["--reference", str(ref), "--reference-use", "check", "--restarts", "1"]
    p = subprocess.run(
        [*fit, "-o", str(tmp_path / "m.json")], capture_output=True, text=True, timeout=900
    )
    assert p.returncode == 0, p.stderr
    record = load_model(tmp_path / "m.json").reference_check_
    line = next(x for x in p.stdout.splitlines() if x.startswith("reference checked"))
    assert f"{record['agreement']:.2f} of the thickness" in line
    fit += ["--format", "json", "-o", str(tmp_path / "j.json")]
    p = subprocess.run(fit, capture_output=True, text=True, timeout=900)
    assert p.returncode == 0, p.stderr
    import json

    assert json.loads(p.stdout)["diagnostics"]["reference_check"] == record
