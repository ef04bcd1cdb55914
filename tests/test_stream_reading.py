"""Reading a plain CSV file a batch of whole cores at a time: the same cores, Markov
report and decoded files as reading it whole; a file that cannot be streamed read
whole; an error in a late batch leaves nothing written (the invented demo database,
and synthetic cores from tests/hmm_synthetic.py)."""

import json
from pathlib import Path

import hmm_synthetic as synth
import pandas as pd
import pytest

import faciesseq.io.plaincsv as plaincsv
import faciesseq.io.stream as stream_module
from faciesseq.cli import main
from faciesseq.hmm import decoding
from faciesseq.io import NotStreamable, read_cores, stream_cores, summarise
from faciesseq.markov import analyse, analyse_batches
from faciesseq.scheme import load_scheme

DEMO = Path(__file__).resolve().parents[1] / "faciesseq" / "data" / "demo"
CORES, SCHEME = DEMO / "cores.csv", DEMO / "scheme-shoreface.yaml"


@pytest.fixture
def small_batches(monkeypatch):
    """Blocks of about 20 kB and batches of at least 300 rows: the demo in several."""
    monkeypatch.setattr(plaincsv, "BLOCK_BYTES", 20_000)
    monkeypatch.setattr(stream_module, "BATCH_ROWS", 300)


def _batches(source, **options):
    return list(stream_cores(source, scheme=SCHEME, **options))


def test_batches_of_whole_cores_hold_the_cores_read_whole(small_batches):
    batches = _batches(CORES)
    assert len(batches) > 3
    names = [n for b in batches for n in b.names]
    whole = read_cores(CORES, scheme=SCHEME)
    assert names == whole.names  # each core in one batch, in file order
    joined = pd.concat([b.to_frame() for b in batches], ignore_index=True)
    pd.testing.assert_frame_equal(joined, whole.to_frame())
    rows = pd.concat([b.to_frame(provenance=True) for b in batches])["_row"]
    assert rows.tolist() == whole.to_frame(provenance=True)["_row"].tolist()


@pytest.mark.parametrize("by", ["core", "tract"])
def test_counts_summed_over_batches_are_those_of_the_whole_file(small_batches, by):
    stream = stream_cores(CORES, scheme=SCHEME)
    scheme = load_scheme(SCHEME)
    streamed = analyse_batches(stream, scheme=scheme, by=by, per_core=True)
    whole = analyse(read_cores(CORES, scheme=scheme), scheme=scheme, by=by, per_core=True)
    assert json.dumps(streamed.to_dict()) == json.dumps(whole.to_dict())
    assert streamed.n_transitions == int(whole.counts.sum()) > 0


def test_a_core_found_again_in_a_later_batch_is_read_whole(small_batches, tmp_path, capsys):
    table = pd.read_csv(CORES, dtype=str, keep_default_na=False)
    first = table["core"] == table["core"].iloc[0]
    apart = pd.concat([table[first].iloc[:20], table[~first], table[first].iloc[20:]])
    source = tmp_path / "apart.csv"
    apart.to_csv(source, index=False)
    with pytest.raises(NotStreamable):
        _batches(source)
    capsys.readouterr()
    assert main(["markov", str(source), "--scheme", str(SCHEME), "--format", "json"]) == 0
    scheme = load_scheme(SCHEME)
    whole = analyse(read_cores(source, scheme=scheme), scheme=scheme, by="core")
    assert json.loads(capsys.readouterr().out) == json.loads(json.dumps(whole.to_dict()))


def test_a_column_of_numbers_that_turns_to_text_is_not_streamed(small_batches, tmp_path):
    table = pd.read_csv(CORES, dtype=str, keep_default_na=False)
    table.loc[len(table) - 1, "true_age_kyr"] = "young"  # in the last batch only
    source = tmp_path / "text.csv"
    table.to_csv(source, index=False)
    with pytest.raises(NotStreamable):
        _batches(source)


def test_columns_with_no_role_left_unread_change_nothing_else(small_batches):
    """``others``: the attribute columns with no role that are wanted; the rest are not
    read, and every other column of every batch is the one read with them all."""
    every = _batches(CORES)
    some = _batches(CORES, others={"true_facies", "source_units"})
    assert [b.names for b in some] == [b.names for b in every]
    for few, full in zip(some, every):
        frame, whole = few.to_frame(provenance=True), full.to_frame(provenance=True)
        assert {"true_facies", "grain_size", "contact", "tract"} <= set(frame.columns)
        assert not {"true_tract", "true_water_depth", "true_age_kyr"} & set(frame.columns)
        pd.testing.assert_frame_equal(frame, whole[list(frame.columns)])


def test_a_ragged_row_in_a_column_left_unread_is_still_found(small_batches, tmp_path):
    lines = CORES.read_text().splitlines()
    lines[-5] = lines[-5].rsplit(",", 2)[0]  # two cells short, at the end of the row
    source = tmp_path / "ragged.csv"
    source.write_text("\n".join(lines) + "\n")
    with pytest.raises(NotStreamable):
        _batches(source, others=set())


def test_an_unread_column_of_numbers_that_turns_to_text_streams(small_batches, tmp_path):
    table = pd.read_csv(CORES, dtype=str, keep_default_na=False)
    table.loc[len(table) - 1, "true_age_kyr"] = "young"  # in the last batch only
    source = tmp_path / "text.csv"
    table.to_csv(source, index=False)
    batches = _batches(source, others=set())
    assert [n for b in batches for n in b.names] == read_cores(CORES, scheme=SCHEME).names


def test_sources_other_than_one_plain_csv_file_are_read_whole(tmp_path):
    table = pd.read_csv(CORES, dtype=str, keep_default_na=False)
    table.to_csv(tmp_path / "cores.tsv", sep="\t", index=False)
    table.drop(columns="core").to_csv(tmp_path / "one.csv", index=False)
    assert stream_cores(tmp_path / "cores.tsv") is None
    assert stream_cores(tmp_path / "one.csv") is None  # no core column
    assert stream_cores(tmp_path) is None  # a folder
    assert stream_cores(CORES, sheet="Sheet1") is None  # whole reading names the mistake


def test_an_error_in_a_late_batch_is_the_whole_files_error(small_batches, tmp_path, capsys):
    table = pd.read_csv(CORES, dtype=str, keep_default_na=False)
    last = len(table) - 3
    table.loc[last, "top"] = "abc"
    source = tmp_path / "bad.csv"
    table.to_csv(source, index=False)
    core = table.loc[last, "core"]
    capsys.readouterr()
    assert main(["markov", str(source), "--scheme", str(SCHEME)]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1
    assert f"row {last + 1}" in err[0] and core in err[0] and "'abc' is not a number" in err[0]


def test_a_long_row_in_a_late_batch_is_one_line_naming_it(small_batches, tmp_path, capsys):
    lines = CORES.read_text().splitlines()
    last = len(lines) - 4
    lines[last] += ",9"  # one cell more than the header, in the last batch
    source = tmp_path / "long.csv"
    source.write_text("\n".join(lines) + "\n")
    core = lines[last].split(",")[0]
    capsys.readouterr()
    assert main(["markov", str(source), "--scheme", str(SCHEME)]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err
    assert f"data row {last}, core {core}, depth " in err[0]
    assert "13 cells, but the header names 12 columns" in err[0]
    assert "tokenizing" not in err[0]


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    folder = tmp_path_factory.mktemp("db")
    synth.write_database(folder, 12, 40, seed=23)
    model = folder / "model.json"
    argv = ["fit", str(folder / "cores.csv"), "--scheme", str(folder / "scheme.yaml")]
    assert main([*argv, "-o", str(model), "--restarts", "1"]) == 0
    # a fit with labels reads the described intervals, and its decode streams them too
    labelled = folder / "model-labelled.json"
    assert main([*argv, "-o", str(labelled), "--restarts", "1", "--labels", "tract"]) == 0
    assert json.loads(labelled.read_text())["hyperparameters"]["unit"] == "intervals"
    return folder


def _counted(calls: list):
    """The decode command's ``_Streamed.tables``, noting each call in ``calls``."""
    from faciesseq.cli.decode import _Streamed

    def tables(self, model):
        calls.append(model.unit_)
        return _Streamed.tables(self, model)

    return tables


def _decode_argv(database, source, out, model="model.json"):
    model, scheme = database / model, database / "scheme.yaml"
    return ["decode", str(model), str(source), "--scheme", str(scheme), "-o", str(out)]


@pytest.mark.parametrize(
    ("fmt", "model"),
    [("csv", "model.json"), ("parquet", "model.json"), ("csv", "model-labelled.json")],
)
def test_decoded_batch_by_batch_the_files_are_those_of_the_whole_file(
    database, tmp_path, monkeypatch, fmt, model
):
    import faciesseq.cli.decode as decode_cli

    streamed, original = [], decode_cli._Streamed
    monkeypatch.setattr(
        decode_cli, "_Streamed", type("Counted", (original,), {"tables": _counted(streamed)})
    )
    monkeypatch.setattr(decoding, "DECODE_BATCH", 45)  # batches and parts across cores
    monkeypatch.setattr(decoding, "DECODE_PART", 100)
    monkeypatch.setattr(plaincsv, "BLOCK_BYTES", 2_000)
    for name, rows in (("whole", 10**9), ("batches", 30)):
        monkeypatch.setattr(stream_module, "BATCH_ROWS", rows)
        argv = _decode_argv(database, database / "cores.csv", tmp_path / name, model)
        assert main([*argv, "--format", fmt]) == 0
    assert len(streamed) == 2  # both decodes streamed the source, a batch at a time
    names = sorted(p.name for p in (tmp_path / "whole").iterdir())
    assert names == sorted(p.name for p in (tmp_path / "batches").iterdir())
    for name in names:
        whole = (tmp_path / "whole" / name).read_bytes()
        assert (tmp_path / "batches" / name).read_bytes() == whole


def test_a_decode_that_reads_only_the_columns_it_uses_writes_the_same_files(
    database, tmp_path, monkeypatch, capsys
):
    """The columns with no role that no output shows and the model does not use are not
    read: the files and the printed summary are those of a decode reading them all."""
    import faciesseq.cli.decode as decode_cli

    table = pd.read_csv(database / "cores.csv", dtype=str, keep_default_na=False)
    table["depth_note"] = [f"note {k}" if k % 3 else str(k / 7) for k in range(len(table))]
    table["gamma"] = [str(k % 17 * 1.5) for k in range(len(table))]
    source = tmp_path / "more.csv"
    table.to_csv(source, index=False)
    monkeypatch.setattr(decoding, "DECODE_BATCH", 45)
    monkeypatch.setattr(stream_module, "BATCH_ROWS", 30)
    read = []
    real = stream_module.CoreStream._raw
    monkeypatch.setattr(
        stream_module.CoreStream, "_raw", lambda self, *a: read.append(self.read) or real(self, *a)
    )
    printed = {}
    for name, used in (("some", decode_cli._attributes_used), ("all", lambda *a: None)):
        monkeypatch.setattr(decode_cli, "_attributes_used", used)
        capsys.readouterr()
        assert main(_decode_argv(database, source, tmp_path / name)) == 0
        printed[name] = capsys.readouterr().out.replace(str(tmp_path / name), "OUT")
    assert printed["some"] == printed["all"]
    assert "gamma" not in read[0] and "depth_note" not in read[0] and "tract" in read[0]
    assert "gamma" in read[-1] and "depth_note" in read[-1]
    names = sorted(p.name for p in (tmp_path / "all").iterdir())
    assert names == sorted(p.name for p in (tmp_path / "some").iterdir())
    for name in names:
        assert (tmp_path / "some" / name).read_bytes() == (tmp_path / "all" / name).read_bytes()


def test_decoding_a_stream_gives_the_parts_of_the_whole_table(database, monkeypatch):
    from faciesseq.hmm.modelfile import load_model
    from faciesseq.interpretation import Interpretation

    monkeypatch.setattr(decoding, "DECODE_BATCH", 45)
    monkeypatch.setattr(plaincsv, "BLOCK_BYTES", 2_000)
    model = load_model(database / "model.json")
    source = database / "cores.csv"
    whole = list(model.decode_parts(read_cores(source), size=100))
    tables = [b.succession_table() for b in stream_cores(source, rows=30)]
    assert len(tables) > 3
    streamed = list(model.decode_stream(tables, size=100))
    assert len(streamed) == len(whole) > 2
    for name in ("beds", "boundaries", "picks", "wells"):
        pd.testing.assert_frame_equal(
            getattr(Interpretation.concat(streamed), name),
            getattr(Interpretation.concat(whole), name),
        )


@pytest.mark.parametrize("damage", ["no facies", "long row"])
def test_an_error_in_a_late_batch_leaves_no_output_half_written(
    database, tmp_path, monkeypatch, capsys, damage
):
    monkeypatch.setattr(decoding, "DECODE_BATCH", 45)
    monkeypatch.setattr(decoding, "DECODE_PART", 50)
    monkeypatch.setattr(plaincsv, "BLOCK_BYTES", 2_000)
    monkeypatch.setattr(stream_module, "BATCH_ROWS", 30)
    written = []
    original = decoding.Decoding._decode_part

    def counted(self, *args):
        written.append(1)
        return original(self, *args)

    monkeypatch.setattr(decoding.Decoding, "_decode_part", counted)
    table = pd.read_csv(database / "cores.csv", dtype=str, keep_default_na=False)
    source = tmp_path / "bad.csv"
    if damage == "no facies":
        table.loc[len(table) - 5, "facies"] = ""  # in the last core
        table.to_csv(source, index=False)
    else:
        table.to_csv(source, index=False)
        lines = source.read_text().splitlines()
        lines[len(table) - 4] += ",9"  # one cell more than the header, in the last core
        source.write_text("\n".join(lines) + "\n")
    old = tmp_path / "old"
    old.mkdir()
    (old / "tracts.csv").write_text("kept\n")
    capsys.readouterr()
    for out, force in ((tmp_path / "new", []), (old, ["--force"])):
        assert main([*_decode_argv(database, source, out), *force]) == 1
    if damage == "no facies":
        assert written  # parts were decoded and written before the error was read
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2 and err[0] == err[1]
    assert f"row {len(table) - 4}" in err[0]
    why = "no facies code" if damage == "no facies" else "but the header names"
    assert why in err[0]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.csv", "old"]
    assert [p.name for p in old.iterdir()] == ["tracts.csv"]
    assert (old / "tracts.csv").read_text() == "kept\n"


@pytest.mark.parametrize("damage", [None, "facies", "depth"])
def test_check_of_batches_is_the_check_of_the_whole_file(tmp_path, monkeypatch, capsys, damage):
    table = pd.read_csv(CORES, dtype=str, keep_default_na=False)
    if damage is not None:  # an error in a late batch: summarised with the rest
        table.loc[len(table) - 40, {"facies": "facies", "depth": "base"}[damage]] = "??"
    source = tmp_path / "cores.csv"
    table.to_csv(source, index=False)
    argv = ["check", str(source), "--scheme", str(SCHEME), "--format", "json"]
    out = []
    for rows, block in ((10**9, 10**9), (300, 20_000)):
        monkeypatch.setattr(plaincsv, "BLOCK_BYTES", block)
        monkeypatch.setattr(stream_module, "BATCH_ROWS", rows)
        code = main(argv)
        out.append((code, capsys.readouterr()))
    assert out[0] == out[1]
    assert out[0][0] == (0 if damage is None else 1)
    whole = summarise(read_cores(source, scheme=SCHEME), load_scheme(SCHEME))
    doc = json.loads(out[0][1].out)
    labels = doc.pop("labels")  # the command's count of the tract column, beside the summary
    assert doc == json.loads(json.dumps(whole.to_dict()))
    given = table["tract"].str.strip() != ""
    assert labels["intervals"] == given.sum() and labels["cores"] == table["core"].nunique()
    assert labels["cores_labelled"] == table.loc[given, "core"].nunique()
