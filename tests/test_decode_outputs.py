"""What decode and fit write and print: whether the probabilities were checked, and the
per-well summary (synthetic cores from tests/hmm_synthetic.py, invented)."""

import json
import math
from pathlib import Path

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest
from matplotlib.figure import Figure

from faciesseq.cli import build_parser, main
from faciesseq.cli._summary import WELL_LIMIT, summary_lines
from faciesseq.hmm.calibration import (
    calibration_checked,
    describe_calibration,
    probability_note,
)
from faciesseq.hmm.cautions import UNLABELLED_NOTE
from faciesseq.hmm.modelfile import load_model
from faciesseq.interpretation import Interpretation, core_summary
from faciesseq.report.document import TableBlock, format_probability
from faciesseq.report.html import table_html
from faciesseq.report.latex import table_latex
from faciesseq.report.striplog import UNCHECKED_NOTE, strip_log
from faciesseq.report.striplog import UNLABELLED_NOTE as STRIP_UNLABELLED
from faciesseq.scheme import load_scheme

UNCHECKED = "the model's own and were not checked against known tracts"
TABLES = ("tracts", "surfaces", "picks")


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    folder = tmp_path_factory.mktemp("db")
    synth.write_database(folder, 8, 60, seed=71)
    return folder


def _fit(database, model, *extra):
    argv = ["fit", str(database / "cores.csv"), "--scheme", str(database / "scheme.yaml")]
    assert main([*argv, "-o", str(model), "--restarts", "1", *extra]) == 0


@pytest.fixture(scope="module")
def models(database, tmp_path_factory):
    """``checked``: labelled, calibrated on held-out cores; ``unchecked``: unsupervised with
    calibration turned off; ``bootstrap``: unsupervised, checked on simulated cores."""
    folder = tmp_path_factory.mktemp("models")
    paths = {k: folder / f"{k}.json" for k in ("checked", "unchecked", "bootstrap")}
    _fit(database, paths["checked"], "--labels", "tract")
    _fit(database, paths["unchecked"], "--calibration-folds", "0")
    _fit(database, paths["bootstrap"])
    return paths


def _decode(database, model, out, *extra):
    return main(["decode", str(model), str(database / "cores.csv"), "-o", str(out), *extra])


def _first_line(path) -> str:
    with open(path, encoding="utf-8") as f:
        return f.readline().rstrip("\n")


# ---------------------------------------------------------------- checked or not


def test_checked_means_an_after_record_of_either_method(models):
    checked = load_model(models["checked"])
    unchecked = load_model(models["unchecked"])
    boot = load_model(models["bootstrap"])
    assert "folds" in checked.calibration_ and calibration_checked(checked.calibration_)
    assert boot.calibration_["method"] == "parametric bootstrap"
    assert calibration_checked(boot.calibration_)
    assert "skipped" in unchecked.calibration_ and not calibration_checked(unchecked.calibration_)
    for odd in (None, "junk", {}, {"after": "x"}):
        assert not calibration_checked(odd)


def test_the_bootstrap_is_named_in_the_calibration_sentence(models):
    boot = load_model(models["bootstrap"])
    text = describe_calibration(boot.temperature_, boot.calibration_)
    assert "parametric bootstrap" in text and "does not say" not in text
    at_one = describe_calibration(1.0, {**boot.calibration_, "temperature": 1.0})
    assert "parametric bootstrap" in at_one and "held-out labelled" not in at_one
    # a temperature at the top of the search says so: the probabilities are as flat
    # as the search allows, not a measured degree of doubt
    assert "largest the search allows" not in describe_calibration(2.0, boot.calibration_)
    assert "largest the search allows" in describe_calibration(20.0, boot.calibration_)


def test_decode_puts_the_flag_and_the_note_in_the_interpretation_meta(database, models):
    cores = synth.cores(2, 20, seed=5)
    for key, expected in (("checked", True), ("unchecked", False), ("bootstrap", True)):
        model = load_model(models[key])
        interp = model.decode(cores)
        assert interp.meta["probabilities_checked"] is expected
        assert interp.probabilities_checked is expected
        # every core taken from it says the same (strip_log reads it for its note)
        assert all(core.probabilities_checked is expected for core in interp)
        note = probability_note(model.temperature_, model.calibration_)
        labelled = key == "checked"  # the other two were fitted without labels
        assert interp.tracts_labelled is labelled
        assert all(core.tracts_labelled is labelled for core in interp)
        if not labelled:
            note = f"{note} {UNLABELLED_NOTE}"
        assert interp.meta["probabilities_note"] == interp.probabilities_note == note
        assert "\n" not in note
        assert (UNCHECKED in note) is (not expected)
    bare = Interpretation.from_cores({}, ("HST",), ("MFS",))  # built without a model: not checked
    assert not bare.probabilities_checked and "not checked" in bare.probabilities_note


# ---------------------------------------------------------------- decode files


def test_unchecked_csv_tables_open_with_one_comment_line(database, models, tmp_path):
    out = tmp_path / "out"
    assert _decode(database, models["unchecked"], out) == 0
    for name in TABLES:
        lines = (out / f"{name}.csv").read_text(encoding="utf-8").splitlines()
        assert lines[0].startswith("# ") and UNCHECKED in lines[0], name
        assert "no labelled beds" in lines[0]
        assert not lines[1].startswith("#"), name  # exactly one comment line
        with_comment = pd.read_csv(out / f"{name}.csv", comment="#")
        skipped = pd.read_csv(out / f"{name}.csv", skiprows=1)
        pd.testing.assert_frame_equal(with_comment, skipped)
    assert len(pd.read_csv(out / "tracts.csv", skiprows=1)) == 8 * 60
    assert not _first_line(out / "agreement.csv").startswith("#")  # no probabilities in it


def test_checked_csv_tables_say_how_they_were_checked(database, models, tmp_path):
    out = tmp_path / "out"
    assert _decode(database, models["checked"], out) == 0
    model = load_model(models["checked"])
    expected = "# " + describe_calibration(model.temperature_, model.calibration_)
    for name in TABLES:
        assert _first_line(out / f"{name}.csv") == expected
    assert "cross-validation" in expected and UNCHECKED not in expected


def test_json_tables_carry_a_probabilities_key(database, models, tmp_path):
    out = tmp_path / "out"
    assert _decode(database, models["unchecked"], out, "--format", "json") == 0
    for name in TABLES:
        doc = json.loads((out / f"{name}.json").read_text())
        assert set(doc) == {"probabilities", "records"}
        assert doc["probabilities"]["checked"] is False
        assert UNCHECKED in doc["probabilities"]["note"]
    tracts = pd.DataFrame(json.loads((out / "tracts.json").read_text())["records"])
    assert len(tracts) == 8 * 60 and "p_HST" in tracts
    assert isinstance(json.loads((out / "agreement.json").read_text()), list)


def test_parquet_tables_carry_the_record_as_file_metadata(database, models, tmp_path):
    out = tmp_path / "out"
    assert _decode(database, models["checked"], out, "--format", "parquet") == 0
    for name in TABLES:
        meta = pq.read_schema(out / f"{name}.parquet").metadata
        record = json.loads(meta[b"faciesseq.probabilities"])
        assert record["checked"] is True and "cross-validation" in record["note"]
    assert len(pd.read_parquet(out / "tracts.parquet")) == 8 * 60


# ---------------------------------------------------------------- strip logs


def _xlabels(fig: Figure) -> str:
    return "\n".join(ax.get_xlabel() for ax in fig.axes)


def test_every_probability_note_ends_before_the_surface_track_label(database, models):
    """The note under the probability track (checked or not, labelled or not, a
    reference read, names unsure, beds held at the geologist's label) never runs into
    the surface track's label."""
    from itertools import product

    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from faciesseq.report.striplog import _probability_note

    model = load_model(models["unchecked"])
    core = next(iter(model.decode(synth.cores(1, 30, seed=9))))
    fig = strip_log(core, load_scheme(database / "scheme.yaml"), model.tract_model_)
    FigureCanvasAgg(fig).draw()
    renderer = fig.canvas.get_renderer()
    probability, surface = fig.axes[2], fig.axes[3]
    begins = surface.xaxis.label.get_window_extent(renderer).x0
    for flags in product((False, True), repeat=5):
        note = _probability_note(*flags)
        assert ("held at" in note) is flags[4]
        probability.set_xlabel("posterior (stacked)" + note)
        ends = probability.xaxis.label.get_window_extent(renderer).x1
        assert ends < begins, (flags, probability.get_xlabel())


def test_strip_log_says_when_the_probabilities_were_not_checked(database, models):
    model = load_model(models["unchecked"])
    core = next(iter(model.decode(synth.cores(1, 30, seed=9))))
    scheme = load_scheme(database / "scheme.yaml")
    tm = model.tract_model_
    assert not core.probabilities_checked
    # by default the note follows the decoding: this model's probabilities were not checked
    # this model was also fitted without labels: both notes, in one line
    for drawn in (strip_log(core, scheme, tm), strip_log(core, scheme, tm, checked=False)):
        assert "not checked; names from priors" in _xlabels(drawn)
        assert len(drawn.axes[2].get_xlabel().splitlines()) == 2
    assert UNCHECKED_NOTE not in _xlabels(strip_log(core, scheme, tm, checked=True))
    # fitted without labels: the names rest on the priors, whatever the check
    assert STRIP_UNLABELLED in _xlabels(strip_log(core, scheme, tm, checked=True))


def test_outputs_of_a_fit_without_labels_say_the_names_rest_on_priors(database, models, tmp_path):
    # checked by simulation (the bootstrap), yet no geologist named a tract: every
    # output says so beside the check
    out = tmp_path / "out"
    assert _decode(database, models["bootstrap"], out, "--view") == 0
    for name in TABLES:
        first = _first_line(out / f"{name}.csv")
        assert "parametric bootstrap" in first and UNLABELLED_NOTE in first, name
    page = (out / "view.html").read_text(encoding="utf-8")
    assert '"labelled":false' in page and '"reference":false' in page
    assert '"Tract names from " + names' in page and "the model's priors" in page
    labelled = tmp_path / "labelled"
    assert _decode(database, models["checked"], labelled, "--view") == 0
    assert UNLABELLED_NOTE not in _first_line(labelled / "tracts.csv")
    assert '"labelled":true' in (labelled / "view.html").read_text(encoding="utf-8")
    model = load_model(models["checked"])
    core = next(iter(model.decode(synth.cores(1, 30, seed=9))))
    assert core.tracts_labelled
    assert STRIP_UNLABELLED not in _xlabels(strip_log(core, model=model))


# ---------------------------------------------------------------- appendix tables


@pytest.mark.parametrize(
    ("value", "shown"),
    [
        (0.9998, "> 0.99"),
        (1.0, "> 0.99"),
        (0.991, "> 0.99"),
        (0.99, "0.99"),
        (0.5, "0.50"),
        (0.123456, "0.12"),
        (0.01, "0.01"),
        (0.004, "< 0.01"),
        (0.0, "< 0.01"),
        (math.nan, ""),
        (None, ""),
    ],
)
def test_probabilities_shown_with_two_decimals_and_bounds(value, shown):
    assert format_probability(value) == shown


def test_probability_columns_are_coarse_in_html_and_latex_and_exact_in_csv():
    frame = pd.DataFrame({"depth (m)": [12.3456, 20.5], "probability": [0.99984, 0.00213]})
    table = TableBlock("t_picks", "picks", frame, index=False, probabilities=("probability",))
    html, latex = table_html(table, 1), table_latex(table)
    for text in (html, latex):
        assert "0.9998" not in text and "0.00213" not in text
        assert "12.35" in text  # other columns keep 4 significant digits
    assert "&gt; 0.99" in html and "&lt; 0.01" in html
    assert '<td class="num">&gt; 0.99</td>' in html  # still aligned as a number
    assert r"\begin{tabular}{lr}" in latex  # the bounded column right-aligned too
    np.testing.assert_array_equal(table.to_csv_frame()["probability"], [0.99984, 0.00213])


# ---------------------------------------------------------------- --threshold is gone


def test_decode_has_no_threshold_option(database, models, tmp_path, capsys):
    with pytest.raises(SystemExit) as exc:
        _decode(database, models["checked"], tmp_path / "out", "--threshold", "0.6")
    assert exc.value.code == 2 and "--threshold" in capsys.readouterr().err
    assert not (tmp_path / "out").exists()
    sub = build_parser()._subparsers._group_actions[0].choices["decode"]
    assert "--threshold" not in sub.format_help()


# ---------------------------------------------------------------- per-well summary


def _expected_wells(out, scheme) -> dict:
    """The summary recomputed from the written tables (an independent path)."""
    tracts = pd.read_csv(out / "tracts.csv", skiprows=1)
    picks = pd.read_csv(out / "picks.csv", skiprows=1)
    ranks = scheme.ranks()
    wells = {}
    for core, beds in tracts.groupby("core", sort=False):
        upward = beds.sort_values("top", ascending=False)  # base to top, one segment
        r = upward["facies"].map(ranks).to_numpy(float)
        p = beds.apply(lambda b: b[f"p_{b['tract']}"], axis=1)
        wells[core] = {
            "thickness": (beds["base"] - beds["top"]).groupby(beds["tract"]).sum().to_dict(),
            "beds": beds.groupby("tract").size().to_dict(),
            "deepest": float(beds["base"].max()),
            "cycles": 1 + int(np.sum(np.diff(r) >= 1)),  # a rise of a rank or more
            "picks": int(np.sum(picks["core"] == core)),
            "mean_probability": float(p.mean()),
        }
    return wells


def test_decode_summary_json_lists_every_well_with_the_tables_numbers(
    database, models, tmp_path, capsys
):
    out = tmp_path / "out"
    capsys.readouterr()
    assert _decode(database, models["unchecked"], out, "--summary", "json") == 0
    doc = json.loads(capsys.readouterr().out)  # stdout is one JSON document
    assert doc["schema"] == "faciesseq.wells/1" and doc["command"] == "decode"
    assert doc["probabilities"]["checked"] is False and doc["n_wells"] == 8
    expected = _expected_wells(out, load_scheme(database / "scheme.yaml"))
    for well in doc["wells"]:
        want = expected[well["core"]]
        assert well["units"] == "m"
        for tract in ("HST", "FSST", "LST", "TST"):
            got = well["thickness"][tract]
            # depths are written to six significant digits: each bed's thickness is off
            # by up to 1e-5 of the deepest depth, and the sum by that per bed
            rounding = 1e-4 + 1e-5 * want["deepest"] * want["beds"].get(tract, 0)
            assert got == pytest.approx(want["thickness"].get(tract, 0.0), abs=rounding)
        assert well["cycles"] == want["cycles"]
        assert well["picks"] == want["picks"]
        assert well["mean_probability"] == pytest.approx(want["mean_probability"], abs=1e-5)


def test_decode_text_summary_is_one_line_per_well_and_notes_unchecked(
    database, models, tmp_path, capsys
):
    capsys.readouterr()
    assert _decode(database, models["unchecked"], tmp_path / "a") == 0
    out = capsys.readouterr().out
    lines = [line for line in out.splitlines() if line.startswith("  S-71-")]
    assert len(lines) == 8
    assert all("cycle(s)" in line and "pick(s)" in line and " m," in line for line in lines)
    assert f"note: Tract and surface probabilities are {UNCHECKED}" in out
    assert _decode(database, models["checked"], tmp_path / "b") == 0
    assert "note:" not in capsys.readouterr().out


def test_summary_of_thousands_of_wells_stops_at_thirty(database, models, tmp_path, capsys):
    many = tmp_path / "many"
    many.mkdir()
    synth.write_database(many, WELL_LIMIT + 7, 8, seed=3)
    argv = ["decode", str(models["unchecked"]), str(many / "cores.csv"), "-o", str(tmp_path / "o")]
    capsys.readouterr()
    assert main(argv) == 0
    out = capsys.readouterr().out
    wells = [line for line in out.splitlines() if line.startswith("  S-3-")]
    assert len(wells) == WELL_LIMIT
    assert "  ... and 7 more (see the output files)" in out
    assert main([*argv[:-2], "-o", str(tmp_path / "j"), "--summary", "json"]) == 0
    assert json.loads(capsys.readouterr().out)["n_wells"] == WELL_LIMIT + 7


def test_fit_report_of_many_wells_decodes_and_lists_thirty(tmp_path, capsys, monkeypatch):
    """The text report of ``fit`` lists the first thirty wells, decoded alone, and
    counts the rest; ``--format json`` still has every well."""
    from faciesseq.hmm.model import TractHMM

    synth.write_database(tmp_path, WELL_LIMIT + 7, 8, seed=3)
    decoded = []
    decode = TractHMM.decode
    monkeypatch.setattr(
        TractHMM, "decode", lambda self, s, *a, **k: decoded.append(len(s)) or decode(self, s)
    )
    argv = ["fit", str(tmp_path / "cores.csv"), "--scheme", str(tmp_path / "scheme.yaml")]
    argv += ["--restarts", "1", "--max-iter", "5", "-o", str(tmp_path / "m.json")]
    capsys.readouterr()
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert len([line for line in out.splitlines() if line.startswith("  S-3-")]) == WELL_LIMIT
    assert "  ... and 7 more (all in --format json)" in out
    assert decoded == [WELL_LIMIT]  # one succession per synthetic core
    assert main([*argv, "--force", "--format", "json"]) == 0
    assert json.loads(capsys.readouterr().out)["n_wells"] == WELL_LIMIT + 7


def test_without_a_scheme_the_cycles_are_left_out(models):
    model = load_model(models["unchecked"])
    core = next(iter(model.decode(synth.cores(1, 20, seed=4))))
    well = core_summary(core)
    assert "cycles" not in well
    lines = summary_lines([well], "more")
    assert "cycle" not in "\n".join(lines) and well["core"] in lines[1]
    assert sum(well["thickness"].values()) == pytest.approx(float(core.beds["thickness"].sum()))


def test_fit_prints_the_training_wells_and_takes_format_json(database, tmp_path, capsys):
    capsys.readouterr()
    _fit(database, tmp_path / "m.json", "--calibration-folds", "0")
    text = capsys.readouterr().out
    assert sum(line.startswith("  S-71-") for line in text.splitlines()) == 8
    assert "model written to" in text
    _fit(database, tmp_path / "j.json", "--calibration-folds", "0", "--format", "json")
    doc = json.loads(capsys.readouterr().out)
    assert doc["command"] == "fit" and doc["output"] == str(tmp_path / "j.json")
    assert doc["n_wells"] == 8 and doc["probabilities"]["checked"] is False
    assert [w["core"] for w in doc["wells"]] == [f"S-71-{k}" for k in range(1, 9)]
    # the training cores decoded by the fitted model: the same numbers decode prints
    out = tmp_path / "dec"
    assert _decode(database, tmp_path / "j.json", out, "--summary", "json") == 0
    decoded = json.loads(capsys.readouterr().out)
    assert decoded["wells"] == doc["wells"]
    # the share of labelled beds agreeing, a fraction, to six decimals
    assert len(repr(decoded["agreement"]).split(".")[1]) <= 6


def test_a_tract_lasts_as_long_as_its_phase_type_chain_says():
    # one sub-state: a geometric number of beds, whose mean scipy knows; two in a
    # Coxian chain entered at the first: (1 + b m2) / (1 - a) with m2 = 1 / (1 - c)
    from scipy.stats import geom

    from faciesseq.hmm.states import StateSpace
    from faciesseq.scheme import default_tract_model

    space = StateSpace.build(default_tract_model(), {"HST": 1, "FSST": 2, "LST": 1, "TST": 1})
    K = space.n_states
    A = np.zeros((K, K))
    A[0, 0], A[0, 1] = 0.8, 0.2  # HST
    A[1, 1], A[1, 2], A[1, 3] = 0.5, 0.3, 0.2  # FSST.1: stay, to FSST.2, leave
    A[2, 2], A[2, 3] = 0.75, 0.25  # FSST.2
    A[3, 3], A[3, 4] = 0.6, 0.4  # LST
    A[4, 4], A[4, 0] = 0.9, 0.1  # TST
    beds = space.mean_beds(A)
    assert beds[0] == pytest.approx(geom(0.2).mean())
    assert beds[1] == pytest.approx((1 + 0.3 * 4.0) / 0.5)
    assert beds[2] == pytest.approx(geom(0.4).mean()) and beds[3] == pytest.approx(10.0)
    A[4, 4], A[4, 0] = 1.0, 0.0  # a tract never left
    assert np.isinf(space.mean_beds(A)[3])


def test_tract_runs_end_where_the_tract_the_core_or_the_depth_changes():
    from faciesseq.interpretation import tract_runs

    table = pd.DataFrame(
        {
            "core": ["A", "A", "A", "A", "B"],
            "top": [0.0, 1.0, 2.0, 5.0, 0.0],
            "base": [1.0, 2.0, 3.0, 6.0, 2.0],
            "tract": ["HST", "HST", "TST", "TST", "TST"],
        }
    )
    runs = tract_runs(table)
    assert runs["tract"].tolist() == ["HST", "TST", "TST", "TST"]  # a gap at 3-5 m
    assert runs["thickness"].tolist() == [2.0, 1.0, 1.0, 2.0]
    assert runs["beds"].tolist() == [2, 1, 1, 1]
    assert tract_runs(table.iloc[:0]).empty  # an empty column has no runs


def test_bed_cycles_cut_at_flooding_surfaces_and_tract_runs_count_them():
    # Upward in core A: SHM (rank 6), LSF (3), FS (1) shallow, then OFF (5) lies four
    # ranks deeper on FS, a flooding surface, and USF (2) shallows again: two cycles
    # (Van Wagoner et al. 1990); the bed below a gap and core B start cycles of their own.
    from faciesseq.interpretation import bed_cycles, tract_runs
    from faciesseq.scheme import load_scheme

    scheme = load_scheme(Path(__file__).resolve().parents[1] / "configs" / "scheme-shoreface.yaml")
    table = pd.DataFrame(
        {
            "core": ["A"] * 6 + ["B"],
            "top": [0.0, 1.0, 2.0, 3.0, 4.0, 6.0, 0.0],
            "base": [1.0, 2.0, 3.0, 4.0, 5.0, 7.0, 1.0],
            # the beds below the gap and of core B are as deep as the bed above the
            # gap: only the gap and the core's end cut them off
            "facies": ["USF", "OFF", "FS", "LSF", "SHM", "SHM", "SHM"],
            "tract": ["HST", "HST", "HST", "TST", "TST", "TST", "TST"],
        }
    )
    cycles = bed_cycles(table, scheme)
    same = cycles[:, None] == cycles[None, :]
    groups = [[0, 1], [2, 3, 4], [5], [6]]
    for g in groups:
        assert same[np.ix_(g, g)].all()
    assert len(set(cycles.tolist())) == len(groups)
    runs = tract_runs(table, cycles)
    # HST over the two cycles of core A; TST in the lower cycle, below the gap, core B
    assert runs["tract"].tolist() == ["HST", "TST", "TST", "TST"]
    assert runs["cycles"].tolist() == [2, 1, 1, 1]
    assert "cycles" not in tract_runs(table).columns


def test_fit_reports_how_long_each_tract_lasts(database, tmp_path, capsys):
    capsys.readouterr()
    _fit(database, tmp_path / "m.json", "--format", "json")
    doc = json.loads(capsys.readouterr().out)
    durations = doc["tract_durations"]
    assert set(durations) == {"HST", "FSST", "LST", "TST"}
    used = [d for d in durations.values() if d["runs"]]
    assert used and all(d["beds_per_visit"] >= 1 and d["median_thickness"] > 0 for d in used)
    # thicknesses to six decimals, without the float noise of sums of beds
    thicknesses = [d["median_thickness"] for d in used]
    thicknesses += [v for w in doc["wells"] for v in w["thickness"].values()]
    assert all(len(repr(v).split(".")[1]) <= 6 for v in thicknesses)
    # in cycles too, the scheme giving ranks: every run touches at least one
    assert all(d["median_cycles"] >= 1 for d in used)
    # the diagnostics fit --verbose prints, as the model file keeps them
    training = json.loads((tmp_path / "m.json").read_text())["training"]
    diagnostics = doc["diagnostics"]
    assert diagnostics["log_likelihood"] == training["log_likelihood"]
    assert diagnostics["graph_selection"] == training["graph_selection"]
    assert diagnostics["selection"] == training["selection"]
    assert (
        diagnostics["best_restart"]["seed"]
        == training["restarts"][training["best_restart"]]["seed"]
    )
    # a fit with labels reads the described intervals; its runs are counted in cycles too
    _fit(database, tmp_path / "l.json", "--labels", "tract", "--format", "json")
    doc = json.loads(capsys.readouterr().out)
    assert load_model(tmp_path / "l.json").unit_ == "intervals"
    used = [d for d in doc["tract_durations"].values() if d["runs"]]
    assert used and all(d["median_cycles"] >= 1 for d in used)
    _fit(database, tmp_path / "t.json", "--verbose")
    assert "tract lengths, beds per visit of the fitted chain" in capsys.readouterr().out


def test_summary_json_rounds_thickness_and_probability_to_six_decimals():
    # a sum of bed thicknesses carries float noise (22.699999999999818 for 22.7); the
    # synthetic beds have thicknesses of 16 digits, and so do their sums unrounded
    from _synthetic import synthetic_interpretation

    from faciesseq.cli._summary import summary_document
    from faciesseq.scheme import default_tract_model

    interp = synthetic_interpretation(default_tract_model())
    doc = summary_document(interp, None, "decode")
    for well in doc["wells"]:
        assert set(well) == {"core", "units", "thickness", "picks", "mean_probability"}
        for value in [*well["thickness"].values(), well["mean_probability"]]:
            assert value == round(value, 6) and len(repr(value).split(".")[1]) <= 6


def test_deep_thin_beds_keep_their_depths_in_every_csv_table(models, tmp_path):
    """Beds of 0.04 ft at 10,000 ft: every row of tracts.csv has top < base and joins
    back to the source on (core, top, base); tops.csv agrees with tops.json."""
    rng = np.random.default_rng(5)
    rows = []
    for core in ("D-1", "D-2"):
        depth = 10000.0
        for i in range(40):
            thickness = 0.04 if i % 5 == 2 else round(rng.uniform(0.5, 3.0), 2)
            facies = ("CP", "USF", "LSF", "OTZ")[i % 4]
            rows.append((core, round(depth, 2), round(depth + thickness, 2), facies))
            depth += thickness
    source = pd.DataFrame(rows, columns=["core", "top", "base", "facies"])
    source.to_csv(tmp_path / "deep.csv", index=False)
    out = tmp_path / "out"
    argv = ["decode", str(models["checked"]), str(tmp_path / "deep.csv"), "-o", str(out)]
    assert main([*argv, "--format", "json"]) == 0
    tracts = pd.read_csv(out / "tops.csv", comment="#")
    as_json = pd.DataFrame(json.loads((out / "tops.json").read_text())["records"])
    assert tracts["depth_top"].tolist() == as_json["depth_top"].tolist()
    assert main([*argv, "--force"]) == 0
    tracts = pd.read_csv(out / "tracts.csv", comment="#")
    assert (tracts["top"] < tracts["base"]).all()
    joined = source.merge(tracts, on=["core", "top", "base"])
    assert len(joined) == len(source) == len(tracts)
