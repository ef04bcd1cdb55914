"""Words pandas reads as missing by default (``NA``, ``null``, ``NaN``, ``None``,
``n/a``) in a bed table: kept as text in the facies, tract and core columns (a facies
coded ``NA``, non-marine algal, is a code like any other), read as missing in number
columns (R and database exports write ``NA`` for an empty number). The same whatever
the reader: CSV (plain or general), tab-separated, .xlsx, Parquet, SQLite."""

import sqlite3

import numpy as np
import pandas as pd
import pytest

from faciesseq.io import read_cores, stream_cores

WORDS = ["NA", "null", "NaN", "None", "n/a"]


def _frame() -> pd.DataFrame:
    n = len(WORDS) + 1
    return pd.DataFrame(
        {
            "core": ["NA"] * n,
            "top": [float(i) for i in range(n)],
            "base": [float(i + 1) for i in range(n)],
            "facies": [*WORDS, "SS"],
            "tract": ["NA"] * n,
            "porosity": ["NA", "0.1", "null", "0.2", "", "0.3"],
        }
    )


def _codes(cores) -> list[str]:
    return [str(code) for core in cores for code in core.intervals["facies"]]


def _write(frame: pd.DataFrame, path, kind: str):
    if kind == "csv":
        frame.to_csv(path, index=False)
    elif kind == "csv-general":  # a byte-order mark and quotes: pandas' parser reads it
        path.write_bytes(b"\xef\xbb\xbf" + frame.to_csv(index=False, quoting=1).encode())
    elif kind == "tsv":
        frame.to_csv(path, index=False, sep="\t")
    elif kind == "xlsx":
        frame.to_excel(path, index=False)
    elif kind == "parquet":
        frame.to_parquet(path, index=False)
    elif kind == "sqlite":
        with sqlite3.connect(path) as conn:
            frame.to_sql("beds", conn, index=False)
        conn.close()


SUFFIX = {"csv": ".csv", "csv-general": ".csv", "tsv": ".tsv", "xlsx": ".xlsx"}
SUFFIX |= {"parquet": ".parquet", "sqlite": ".sqlite"}


@pytest.mark.parametrize("kind", list(SUFFIX))
def test_missing_words_are_codes_in_text_columns_and_missing_in_numbers(tmp_path, kind):
    if kind == "xlsx":
        pytest.importorskip("openpyxl")
    path = tmp_path / f"beds{SUFFIX[kind]}"
    _write(_frame(), path, kind)
    cores = read_cores(path, units="m")
    assert not [p for p in cores.problems if p.severity == "error"], cores.problems
    assert _codes(cores) == [*WORDS, "SS"]
    (core,) = list(cores)
    assert core.name == "NA"
    assert list(core.intervals["tract"]) == ["NA"] * 6
    porosity = core.intervals["porosity"].to_numpy(float)
    np.testing.assert_array_equal(np.isnan(porosity), [True, False, True, False, True, False])


def test_the_streaming_reader_keeps_the_words_too(tmp_path):
    path = tmp_path / "beds.csv"
    _frame().to_csv(path, index=False)
    stream = stream_cores(path, units="m")
    assert stream is not None
    assert [c for batch in stream for c in _codes(batch)] == [*WORDS, "SS"]


@pytest.mark.parametrize("word", ["NA", "null", ""])
def test_a_depth_written_as_a_missing_word_is_no_depth(tmp_path, word):
    path = tmp_path / "beds.csv"
    path.write_text(f"core,top,base,facies\nA,0,1,SS\nA,1,{word},MS\nA,2,3,SS\n")
    cores = read_cores(path, units="m")
    errors = [p for p in cores.problems if p.severity == "error"]
    assert [(p.kind, p.row, p.message) for p in errors] == [("missing-depth", 2, "no base depth")]
