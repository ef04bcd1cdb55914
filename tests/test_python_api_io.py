"""The Python route into a core database: a DataFrame checked as a file is, one-line
errors for what is no table or path, the top-level names and short reprs."""

import importlib
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import faciesseq
from faciesseq.core import CoreSet, CoreTable
from faciesseq.errors import ConfigError, InputError
from faciesseq.io import read_cores

ROOT = Path(__file__).resolve().parents[1]
SCHEME = ROOT / "faciesseq/data/demo/scheme-shoreface.yaml"


def _table() -> pd.DataFrame:
    # two cores of the demo's shoreface codes, in metres
    return pd.DataFrame(
        {
            "core": ["SF-1"] * 4 + ["SF-2"] * 3,
            "top": [1000.0, 1001.26, 1002.51, 1003.92, 50.0, 51.0, 52.5],
            "base": [1001.26, 1002.51, 1003.92, 1005.3, 51.0, 52.5, 53.0],
            "facies": ["FS", "USF", "LSF", "USF", "LSF", "OTZ", "LSF"],
        }
    )


def _one_line(error: BaseException) -> str:
    text = str(error)
    # no traceback text, nothing from inside pandas or pathlib
    for inside in ("\n", "Traceback", "site-packages", "File name too long", "object has no"):
        assert inside not in text
    return text


def _first_error(cores: CoreSet) -> str:
    with pytest.raises(InputError) as found:
        cores.require_valid()
    return _one_line(found.value)


def test_frame_and_file_give_the_same_problems_and_cores(tmp_path):
    table = _table()
    table.loc[3, "top"] = 1002.61  # overlaps data row 3 by 1.31 m
    path = tmp_path / "cores.csv"
    table.to_csv(path, index=False)
    from_file = read_cores(path, units="m")
    for from_frame in (CoreSet.from_frame(table, units="m"), read_cores(table, units="m")):
        assert [(p.kind, p.row, p.core) for p in from_frame.problems] == [
            (p.kind, p.row, p.core) for p in from_file.problems
        ]
        pd.testing.assert_frame_equal(from_frame.to_frame(), from_file.to_frame())
        message = _first_error(from_frame)
        # the file's message, the frame named in the place of the file
        assert message == _first_error(from_file).replace(str(path), "DataFrame")
        assert message.startswith(
            "DataFrame, data row 4, core SF-1, depth 1002.61 m: interval 1002.61-1005.3 "
            "overlaps data row 3 (1002.51-1003.92)"
        )


@pytest.mark.parametrize(
    ("change", "kind", "row"),
    [
        (lambda t: t.assign(top=t["top"].where(t.index != 2, 1004.5)), "top-below-base", 3),
        (lambda t: t.assign(facies=t["facies"].where(t.index != 1, "XX")), "unknown-facies", 2),
        (lambda t: t.assign(facies=t["facies"].where(t.index != 5, " ")), "missing-facies", 6),
        (lambda t: t.assign(base=t["base"].where(t.index != 4, np.nan)), "missing-depth", 5),
        (
            lambda t: t.assign(top=t["top"].astype(object).where(t.index != 6, "52,x")),
            "bad-depth",
            7,
        ),
    ],
    ids=["top-below-base", "unknown-facies", "blank-facies", "nan-depth", "text-depth"],
)
def test_a_bad_row_of_a_frame_is_an_error_naming_its_row(change, kind, row):
    cores = CoreSet.from_frame(change(_table()), units="m", scheme=SCHEME)
    errors = cores.errors
    assert [(p.kind, p.row, p.file) for p in errors] == [(kind, row, "DataFrame")]
    assert f"DataFrame, data row {row}" in _first_error(cores)
    # the row is left out of the cores, as a file's would be
    assert sum(len(core) for core in cores) == len(_table()) - 1


def test_text_depths_of_a_frame_are_read_as_numbers_as_a_files_are():
    text = _table().astype({"top": str, "base": str})
    cores = CoreSet.from_frame(text, units="m")
    assert cores.errors == []
    assert cores["SF-2"].intervals["top"].tolist() == [50.0, 51.0, 52.5]


def test_units_of_a_frame_are_checked_and_stated_units_converted():
    # the option takes the spellings a units column takes (feet, metres, FT...)
    assert CoreSet.from_frame(_table(), units="feet").units == "ft"
    assert read_cores(_table(), units="Metres").units == "m"
    with pytest.raises(ConfigError) as found:
        CoreSet.from_frame(_table(), units="furlongs")
    assert _one_line(found.value) == (
        "units must be 'm' or 'ft' (or metres, feet...), got 'furlongs'"
    )
    with pytest.raises(ConfigError, match="got 'usft'"):  # not the international foot
        read_cores(_table(), units="usft")
    # a units column says feet: converted to the metres asked for (1 ft = 0.3048 m)
    feet = _table().assign(units="ft")
    cores = CoreSet.from_frame(feet, units="m")
    assert cores.units == "m"
    assert cores["SF-2"].intervals["top"].iloc[0] == pytest.approx(50.0 * 0.3048)
    assert [p.kind for p in cores.problems] == ["units-converted"]


def test_frame_without_units_is_read_as_metres_with_a_python_hint():
    cores = CoreSet.from_frame(_table())
    (warning,) = [p for p in cores.problems if p.kind == "units"]
    assert warning.message == (
        "no depth units stated in the source; taken as metres (give units='ft' if not)"
    )


def test_messages_of_a_frame_name_the_python_arguments():
    with pytest.raises(InputError) as found:
        CoreSet.from_frame(_table().drop(columns="base"), units="m")
    assert _one_line(found.value) == (
        "DataFrame: missing required column(s) base for the intervals layout; the columns "
        "are 'core', 'top', 'facies'; map them with columns={'base': 'NAME'}"
    )
    # mapped as the message says, it reads
    renamed = _table().rename(columns={"base": "Bottom of bed"})
    cores = CoreSet.from_frame(renamed, units="m", columns={"base": "Bottom of bed"})
    assert cores.errors == [] and len(cores) == 2
    one = CoreSet.from_frame(_table().drop(columns="core"), units="m")
    (warning,) = [p for p in one.problems if p.kind == "no-core-column"]
    assert warning.message.endswith("(map one with columns={'core': 'NAME'})")
    samples = pd.DataFrame({"core": ["A"] * 3, "depth": [1.0, 1.0, 1.5], "facies": list("xyz")})
    repeated = CoreSet.from_frame(samples, units="m")
    assert _first_error(repeated).endswith(
        "remove one, or keep the first with repeated_depths='keep-first'"
    )
    kept = CoreSet.from_frame(samples, units="m", repeated_depths="keep-first")
    assert kept.errors == []


def test_the_same_messages_of_a_file_keep_the_command_line_options(tmp_path):
    path = tmp_path / "c.csv"
    _table().drop(columns="base").to_csv(path, index=False)
    with pytest.raises(InputError, match=r"map them with --column base=NAME$"):
        read_cores(path)


def test_records_and_dicts_of_columns_are_tables():
    records = _table().to_dict("records")
    assert (
        CoreSet.from_frame(records, units="m")
        .to_frame()
        .equals(CoreSet.from_frame(_table(), units="m").to_frame())
    )
    assert len(CoreSet.from_frame(_table().to_dict("list"), units="m")) == 2


@pytest.mark.parametrize("given", ["cores.csv", 3, np.zeros((2, 2)), None])
def test_from_frame_of_what_is_no_table_is_a_one_line_type_error(given):
    with pytest.raises(TypeError) as found:
        CoreSet.from_frame(given)
    message = _one_line(found.value)
    assert message.startswith("CoreSet.from_frame takes a pandas DataFrame, records")
    if isinstance(given, str):
        assert message.endswith("to read a file, give its path to read_cores")


def test_read_cores_takes_a_frame_and_refuses_what_is_no_path():
    cores = read_cores(_table(), units="m", scheme=SCHEME)
    assert isinstance(cores.cores, CoreTable) and cores.names == ["SF-1", "SF-2"]
    with pytest.raises(TypeError) as found:
        read_cores(_table().to_dict("records"))
    assert _one_line(found.value) == (
        "read_cores takes a path (str or pathlib.Path) or a database URL, or a pandas "
        "DataFrame, got list; make a DataFrame of records with pandas.DataFrame(records)"
    )
    with pytest.raises(TypeError, match=r"got int$"):
        read_cores(12)
    with pytest.raises(ConfigError, match=r"^sheet= does not apply to a DataFrame$"):
        read_cores(_table(), sheet="logs")


def test_a_frame_with_provenance_keeps_its_files_and_rows(tmp_path):
    path = tmp_path / "cores.csv"
    _table().iloc[::-1].to_csv(path, index=False)  # base to top: rows sorted on reading
    read = read_cores(path, units="m")
    again = CoreSet.from_frame(read.to_frame(provenance=True), units="m")
    for name in read.names:
        pd.testing.assert_frame_equal(again[name].intervals, read[name].intervals)
    assert again.sources == (str(path),)


def test_duplicate_column_names_are_one_line_errors():
    table = pd.concat([_table(), _table()[["facies"]]], axis=1)
    with pytest.raises(InputError) as found:
        CoreSet.from_frame(table, units="m")
    assert _one_line(found.value) == (
        "DataFrame: column name(s) 'facies' given more than once; rename or drop the copies"
    )


def test_every_top_level_name_imports_and_is_listed():
    assert dir(faciesseq) == sorted(faciesseq.__all__)
    for name in faciesseq.__all__:
        assert getattr(faciesseq, name) is not None, name
    for name in ("read_cores", "load_scheme", "CoreSet", "TractHMM", "load_model"):
        assert name in faciesseq.__all__
    for name in ("save_model", "analyse", "strip_log", "correlate", "run_appendix"):
        assert name in faciesseq.__all__
    assert "write_appendix" in faciesseq.__all__
    with pytest.raises(AttributeError, match="no attribute 'nope'"):
        faciesseq.nope  # noqa: B018
    # the names are what their own modules define
    assert faciesseq.read_cores is importlib.import_module("faciesseq.io").read_cores


def test_reprs_are_short_and_say_cores_intervals_depths_and_units(tmp_path):
    path = tmp_path / "cores.csv"
    _table().to_csv(path, index=False)
    read = read_cores(path, units="m")
    summary = "2 cores, 7 intervals, depths 50.00-1005.30 m"
    assert repr(read) == f"<CoreSet: {summary}; problems: 0 errors, 0 warnings, 0 repairs>"
    assert repr(read.cores) == f"<CoreTable: {summary}>"
    assert repr(CoreSet.from_frame(_table(), units="m")) == repr(read)
    assert repr(read["SF-2"]) == "<Core SF-2: 3 intervals, depths 50.00-53.00 m>"
    empty = CoreSet({}, "ft")
    assert (
        repr(empty)
        == "<CoreSet: 0 cores, 0 intervals, no depths; problems: 0 errors, 0 warnings, 0 repairs>"
    )
