"""The Python API at its boundary: natural wrong inputs give one-line messages naming
what is accepted (no pandas or numpy internals), natural right inputs are accepted,
and the docs' Python example runs."""

import inspect
import re
from pathlib import Path

import pandas as pd
import pytest

import faciesseq
import faciesseq.hmm
import faciesseq.io
from faciesseq.correlation import correlate, correlate_interpretation, read_wells
from faciesseq.correlation.wells import wells_from_frame
from faciesseq.errors import ConfigError
from faciesseq.hmm import TractHMM, load_model, save_model
from faciesseq.io import read_cores
from faciesseq.markov import analyse
from faciesseq.report.appendix import write_appendix
from faciesseq.report.exports import TOPS_COLUMNS, tops_table
from faciesseq.report.section import draw_section
from faciesseq.report.striplog import strip_log, strip_logs
from faciesseq.scheme import load_scheme

ROOT = Path(__file__).resolve().parents[1]
CORES = ROOT / "demo_cores" / "cores.csv"
WELLS = ROOT / "demo_cores" / "wells.csv"
SCHEME = ROOT / "configs" / "scheme-shoreface.yaml"


@pytest.fixture(scope="module")
def cores():
    return read_cores(CORES, scheme=SCHEME)


@pytest.fixture(scope="module")
def model(cores):
    return TractHMM(scheme=load_scheme(SCHEME), random_state=0, n_restarts=1).fit(
        cores, labels="tract"
    )


@pytest.fixture(scope="module")
def interp(model, cores):
    return model.decode(cores)


def _one_line(error: pytest.ExceptionInfo) -> str:
    text = str(error.value)
    assert "\n" not in text
    assert "unsized" not in text and "iloc" not in text and "get_loc" not in text
    return text


# 1. wrong inputs: one line naming the accepted types or the known cores


def test_analyse_of_a_data_frame_names_the_readers():
    with pytest.raises(TypeError) as error:
        analyse(pd.read_csv(CORES))
    assert "read_cores" in _one_line(error) and "DataFrame" in str(error.value)


def test_analyse_of_a_path_or_plain_strings_is_refused_in_one_line():
    with pytest.raises(TypeError) as error:
        analyse(str(CORES))
    assert "CoreSet" in _one_line(error)
    with pytest.raises(TypeError) as error:
        analyse(["SF-1", "SF-2"])
    assert "succession 1 is a str" in _one_line(error)


def test_unknown_core_names_the_cores_there(interp):
    with pytest.raises(KeyError) as error:
        interp["nope"]
    text = _one_line(error)
    assert "no core 'nope' in this interpretation; cores: QB-01, QB-02" in text
    assert re.search(r"\(and \d+ more\)", text)
    with pytest.raises(KeyError, match="no core 'nope'"):
        interp.cores["nope"]
    assert "nope" not in interp.cores and "QB-01" in interp.cores


def test_strip_log_of_many_cores_or_a_name_is_refused(interp, model):
    with pytest.raises(TypeError) as error:
        strip_log(interp, model=model)
    assert f"holds {len(interp)}" in _one_line(error) and "interp['QB-01']" in error.value.args[0]
    with pytest.raises(TypeError) as error:
        strip_log("QB-02", model=model)
    assert "CoreInterpretation" in _one_line(error) and "'QB-02'" in str(error.value)


def test_strip_log_of_a_one_core_interpretation_draws_that_core(interp, model):
    one = interp.head(1)
    fig = strip_log(one, model=model)
    assert fig.get_suptitle() == "Core QB-01"
    assert len(strip_logs(interp.head(2), model=model)) == 2


# 2. a scheme given as the path of its YAML file


def test_analyse_reads_a_scheme_path_as_read_cores_does(cores):
    by_path = analyse(cores, scheme=str(SCHEME))
    by_object = analyse(cores, scheme=load_scheme(SCHEME))
    assert by_path.codes == by_object.codes
    assert by_path.n_transitions == by_object.n_transitions > 0
    with pytest.raises(TypeError) as error:
        analyse(cores, scheme=3)
    assert "FaciesScheme, the path of a scheme YAML file or None" in _one_line(error)


def test_run_appendix_reads_a_scheme_path():
    from faciesseq.pipeline import run_appendix

    here = ROOT / "tests" / "data" / "two_labelled_cores"
    scheme = here / "myscheme.yaml"
    cores = read_cores(here / "labelled.csv", scheme=scheme, units="m")
    result = run_appendix(cores, str(scheme), surrogates=0, n_restarts=1, labels=None)
    assert result.model.scheme.codes == load_scheme(scheme).codes


# 3. correlation from Python


def test_correlate_takes_extents_table_well_table_and_a_frame_without_section(cores, interp):
    wells = pd.read_csv(WELLS)
    reference = correlate_interpretation(interp, wells).to_frame()
    picks = interp.picks_table()
    from_extents = correlate(picks, cores.extents(), wells).to_frame()
    from_table = correlate(picks, cores.extents(), read_wells(str(WELLS))).to_frame()
    checked = correlate(picks, cores.extents(), wells_from_frame(wells)).to_frame()
    pd.testing.assert_frame_equal(from_extents, reference)
    pd.testing.assert_frame_equal(from_table, reference)
    pd.testing.assert_frame_equal(checked, reference)
    # one section, as `faciesseq correlate` reads a table with no section column
    central = wells[wells["section"] == "central"].drop(columns="section")
    one = correlate(picks, cores.extents(), central.rename(columns={"x_km": "distance"}))
    assert set(one.wells["section"]) == {"section"} and len(one.ties) > 0


def test_correlate_refuses_other_wells_and_extents_in_one_line(interp):
    with pytest.raises(TypeError) as error:
        correlate(interp.picks_table(), {"QB-01": (0.0, 1.0)}, "wells.csv")
    assert "WellTable" in _one_line(error)
    with pytest.raises(TypeError) as error:
        correlate(interp.picks_table(), [(0.0, 1.0)], pd.read_csv(WELLS))
    assert "CoreSet.extents()" in _one_line(error)
    with pytest.raises(TypeError) as error:
        correlate_interpretation(interp["QB-01"], pd.read_csv(WELLS))
    assert "Interpretation" in _one_line(error)


def test_python_example_of_the_correlation_docs_runs(monkeypatch, tmp_path):
    text = (ROOT / "docs" / "correlation.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.S)
    assert len(blocks) == 1
    monkeypatch.chdir(ROOT)
    figure = tmp_path / "section.png"  # not written into the checkout
    code = blocks[0].replace('"section.png"', repr(str(figure)))
    assert code != blocks[0]
    scope: dict = {}
    exec(compile(code, "docs/correlation.md", "exec"), scope)
    corr = scope["corr"]
    assert len(corr.ties) > 0 and set(corr.wells["section"]) == {"central", "north", "south"}
    assert figure.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    with pytest.raises(ConfigError, match="has 3 sections"):  # which one, asked
        draw_section(corr, scope["interp"], tmp_path / "s.png")
    with pytest.raises(ConfigError, match=r"written as \.png, \.pdf or \.svg"):
        draw_section(corr, scope["interp"], tmp_path / "s.txt", section="central")
    with pytest.raises(ConfigError, match="datum 'bogus' is none of depth"):
        draw_section(corr, scope["interp"], tmp_path / "s.png", section="central", datum="bogus")


# 4. messages read by both users


def test_option_messages_name_the_argument_and_the_flag(cores):
    with pytest.raises(ConfigError) as error:
        analyse(cores, surrogates=-1)
    assert str(error.value) == "surrogates must be 0 or more (--surrogates), got -1"
    with pytest.raises(ConfigError) as error:
        analyse(cores, max_order=0)
    assert str(error.value) == "max_order must be at least 1 (--max-order), got 0"
    with pytest.raises(ConfigError, match=r"^unit='grid' needs a positive step"):
        analyse(cores, unit="grid")


def test_arguments_of_the_wrong_kind_are_refused_in_one_line_naming_what_to_pass(cores):
    # a script's slips that gave an AttributeError, a "not subscriptable" TypeError and
    # numpy's SeedSequence message from deep inside
    beds = pd.read_csv(CORES)
    with pytest.raises(TypeError) as error:
        read_cores(beds, columns=["core"])
    assert "columns= maps a role to the column that holds it" in _one_line(error)
    with pytest.raises(TypeError) as error:
        TractHMM(n_restarts=1, max_iter=2).fit(cores, labels=True)
    assert "labels= is the name of the bed column" in _one_line(error)
    for seed in ("x", -1, 2**40):  # the last reached the trees' own range check
        with pytest.raises(ConfigError) as error:
            TractHMM(random_state=seed).fit(cores)
        assert "random_state must be an integer from 0 to 4294967295" in _one_line(error)


def test_write_appendix_into_an_existing_folder_names_force_both_ways(tmp_path):
    (tmp_path / "out").mkdir()
    with pytest.raises(ConfigError) as error:
        write_appendix(None, tmp_path / "out")
    assert "pass force=True (--force on the command line)" in _one_line(error)


# 5. figure files


def test_strip_log_refuses_other_suffixes_and_missing_folders(interp, model, tmp_path):
    core = interp["QB-01"]
    with pytest.raises(ConfigError) as error:
        strip_log(core, model=model, path=tmp_path / "x.jpg")
    assert "written as .png, .pdf or .svg" in _one_line(error) and "'.jpg'" in str(error.value)
    with pytest.raises(ConfigError) as error:
        strip_log(core, model=model, path=tmp_path / "nodir" / "x.png")
    assert "does not exist" in _one_line(error)
    assert not (tmp_path / "nodir").exists() and not (tmp_path / "x.jpg").exists()
    strip_log(core, model=model, path=tmp_path / "x.svg")
    assert (tmp_path / "x.svg").read_text(encoding="utf-8").lstrip().startswith("<?xml")


# 6. interpretation tables


def test_tracts_table_keeps_the_interpreters_tract(interp):
    assert "interpreted_tract" in interp.beds.columns  # the demo cores are labelled
    table = interp.tracts_table()
    assert table.columns[-1] == "interpreted_tract"
    assert table["interpreted_tract"].tolist() == interp.beds["interpreted_tract"].tolist()


def test_tops_table_is_the_tops_csv_of_decode(interp):
    tops = interp.tops_table()
    assert list(tops.columns) == list(TOPS_COLUMNS)
    assert len(tops) == len(interp.picks) > 0
    pd.testing.assert_frame_equal(tops, tops_table(interp))
    first = tops[tops["well"] == "QB-01"]
    assert first["depth"].is_monotonic_increasing


# 7. short reprs


def test_interpretations_have_short_reprs(interp):
    whole, one = repr(interp), repr(interp["QB-01"])
    assert len(whole) < 200 and len(one) < 200
    assert whole.startswith(f"Interpretation(cores={len(interp)} [QB-01, ")
    assert f"beds={len(interp.beds)}" in whole and "picks=" in whole
    core = interp["QB-01"]
    assert one == (
        f"CoreInterpretation(core='QB-01', beds={len(core.beds)}, "
        f"tracts={list(core.tracts)}, picks={len(core.picks)}, units='m')"
    )


def test_tract_model_repr_shows_the_hyper_parameters_set(model):
    # scikit-learn's habit: the parameters away from their defaults, nothing else
    assert repr(TractHMM()) == "TractHMM()"
    grid = TractHMM(scheme=str(SCHEME), unit="grid", step=0.5, prior_strength=2, random_state=3)
    assert repr(grid) == f"TractHMM(scheme={str(SCHEME)!r}, unit='grid', step=0.5, random_state=3)"
    # a fitted model's scheme by its name, not every facies field by field
    assert repr(model) == (
        "TractHMM(scheme=<FaciesScheme 'wave-dominated shoreface-shelf', 7 facies>, "
        "n_restarts=1, random_state=0)"
    )


# 8. the public names: listed, documented, their documented parameters real


def _documented_parameters(doc: str) -> list[str] | None:
    """The names of a numpydoc ``Parameters`` section (``a, b`` lines count as two,
    ``**params`` as ``params``)."""
    found = re.search(r"^Parameters\n-+\n(.*?)(?=^\S[^\n]*\n-+\n|\Z)", doc, flags=re.S | re.M)
    if found is None:
        return None
    heads = [line for line in found.group(1).splitlines() if line and not line[0].isspace()]
    return [name.strip(" *") for head in heads for name in head.split(" : ")[0].split(",")]


def _public_callables():
    for module in (faciesseq, faciesseq.hmm, faciesseq.io):
        for name in module.__all__:
            yield f"{module.__name__}.{name}", getattr(module, name)
    for name, method in inspect.getmembers(TractHMM, inspect.isfunction):
        if not name.startswith("_"):
            yield f"TractHMM.{name}", method


def test_public_names_are_listed_by_dir_and_documented():
    for module in (faciesseq, faciesseq.hmm, faciesseq.io):
        assert set(module.__all__) <= set(dir(module)), module.__name__
    undocumented = [name for name, obj in _public_callables() if not inspect.getdoc(obj)]
    assert undocumented == []


def test_documented_parameters_are_those_of_the_signature():
    wrong = {}
    for name, obj in _public_callables():
        documented = _documented_parameters(inspect.getdoc(obj) or "")
        if documented is None or not callable(obj):
            continue
        taken = {p for p in inspect.signature(obj).parameters if p not in ("self", "cls")}
        if set(documented) != taken:  # in any order: related ones are documented together
            wrong[name] = (documented, taken)
    assert wrong == {}


# 9. a saved model read back has the fitted attributes the estimator documents


def test_a_loaded_model_keeps_the_evidence_weights_of_its_fit(cores, model, tmp_path):
    unlabelled = TractHMM(scheme=SCHEME, n_restarts=1, random_state=0)
    unlabelled.fit(cores.subset(cores.names[:5]))
    for fitted in (unlabelled, model):  # weighted (stacking context), and with labels: none
        save_model(fitted, tmp_path / "model.json")
        loaded = load_model(tmp_path / "model.json")
        assert loaded.evidence_weights_ == fitted.evidence_weights_
    assert unlabelled.evidence_weights_ and model.evidence_weights_ == {}
