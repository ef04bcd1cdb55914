"""Exports of decode that other geoscience software reads: LAS 2.0 files, a tops table and
the user's sample rows with their decoded tract (synthetic cores from tests/hmm_synthetic.py,
invented)."""

import hmm_synthetic as synth
import lasio
import numpy as np
import pandas as pd
import pyarrow.parquet as pq
import pytest

from faciesseq.cli import main
from faciesseq.report.exports import (
    LAS_NULL,
    TOPS_COLUMNS,
    default_las_step,
    samples_table,
    tidy_step,
    tops_table,
)

STEP = 0.05  # sample spacing of the sample-layout source
GAP = (3.0, 3.6)  # no samples of the first core between these depths
TRACTS = ("HST", "FSST", "LST", "TST")


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    """Interval cores (to fit on) and the same cores as a facies log sampled every 5 cm,
    with columns named as a user's (Well, Depth, Facies), a gamma-ray column, the
    interpreter's tract and a gap in the first core."""
    folder = tmp_path_factory.mktemp("db")
    synth.write_database(folder, 6, 50, seed=71)
    beds = pd.read_csv(folder / "cores.csv")
    rows = []
    for core, part in beds.groupby("core", sort=False):
        depth = np.round(np.arange(STEP / 2, part["base"].max(), STEP), 6)
        for x in depth:
            if core == "S-71-1" and GAP[0] < x < GAP[1]:
                continue
            bed = part[(part["top"] <= x) & (part["base"] > x)].iloc[0]
            rows.append(
                {
                    "Well": core,
                    "Depth": x,
                    "Facies": bed["facies"],
                    "GR": round(60 + 20 * np.sin(3 * x), 3),
                    "tract": bed["tract"],
                }
            )
    pd.DataFrame(rows).to_csv(folder / "samples.csv", index=False)
    model = folder / "model.json"
    argv = ["fit", str(folder / "cores.csv"), "--scheme", str(folder / "scheme.yaml")]
    assert main([*argv, "-o", str(model), "--restarts", "1", "--calibration-folds", "0"]) == 0
    return folder


@pytest.fixture(scope="module")
def decoded(database, tmp_path_factory):
    """``decode --format las`` of the sample-layout source."""
    out = tmp_path_factory.mktemp("decoded") / "out"
    source = database / "samples.csv"
    argv = ["decode", str(database / "model.json"), str(source), "--units", "m"]
    assert main([*argv, "--format", "las", "-o", str(out)]) == 0
    return out


def _read(path) -> pd.DataFrame:
    return pd.read_csv(path, skiprows=1)  # the first line is the probability note


def _tract_at(tracts: pd.DataFrame, core: str, depth: float) -> str:
    """The decoded tract at ``depth``: the bed with top <= depth < base (tracts.csv)."""
    beds = tracts[tracts["core"] == core]
    hit = beds[(beds["top"] <= depth) & (depth < beds["base"])]
    assert len(hit) == 1, (core, depth)
    return hit["tract"].iloc[0]


# ---------------------------------------------------------------- LAS


def test_las_format_writes_the_csv_tables_and_one_las_file_per_well(decoded):
    names = {p.name for p in decoded.iterdir()}
    assert {"tracts.csv", "surfaces.csv", "picks.csv", "tops.csv", "samples.csv"} <= names
    wells = sorted(p.name for p in (decoded / "las").iterdir())
    assert wells == [f"S-71-{k}.las" for k in range(1, 7)]


def test_las_file_reads_back_with_lasio_curves_units_null_and_well(decoded):
    """LAS 2.0 (Canadian Well Logging Society 1992: ~Version, ~Well with STRT, STOP,
    STEP, NULL, WELL; ~Curve; ~Parameter; ~Other; ~ASCII), read back by lasio."""
    las = lasio.read(decoded / "las" / "S-71-2.las")
    assert las.version["VERS"].value == 2.0
    assert las.well["WELL"].value == "S-71-2"
    assert las.well["NULL"].value == LAS_NULL
    mnemonics = [c.mnemonic for c in las.curves]
    assert mnemonics == ["DEPT", "FACIES", "TRACT", *[f"P_{t}" for t in TRACTS]]
    assert las.curves["DEPT"].unit == "M"
    for key in ("STRT", "STOP", "STEP"):
        assert las.well[key].unit == "M"
    depth = las["DEPT"]
    step = float(las.well["STEP"].value)
    assert np.allclose(np.diff(depth), step)
    assert float(las.well["STRT"].value) == pytest.approx(depth[0])
    assert float(las.well["STOP"].value) == pytest.approx(depth[-1])
    tracts = _read(decoded / "tracts.csv")
    beds = tracts[tracts["core"] == "S-71-2"]
    # cell centres from the top (LAS 2.0: STRT and STOP are the first and last sample)
    assert depth[0] == pytest.approx(beds["top"].min() + step / 2)
    assert depth[-1] < beds["base"].max() <= depth[-1] + step
    p = np.column_stack([las[f"P_{t}"] for t in TRACTS])
    assert np.allclose(p.sum(axis=1), 1.0, atol=4 * 0.5e-4)  # no gap; 4 decimals each


def test_las_step_default_is_half_the_median_bed_thickness_made_tidy(decoded):
    tracts = _read(decoded / "tracts.csv")
    median = float(np.median(tracts["base"] - tracts["top"]))
    las = lasio.read(decoded / "las" / "S-71-3.las")
    expected = tidy_step(median / 2)
    assert float(las.well["STEP"].value) == pytest.approx(expected)
    assert expected <= median / 2 < 2.5 * expected
    assert "half the median bed thickness" in las.well["STEP"].descr
    assert f"Depth step {expected:g} m" in las.other


@pytest.mark.parametrize(
    "value, tidy", [(0.52, 0.5), (0.5, 0.5), (0.19, 0.1), (0.2, 0.2), (3.7, 2.0), (12.0, 10.0)]
)
def test_tidy_step_is_one_two_or_five_times_a_power_of_ten(value, tidy):
    assert tidy_step(value) == pytest.approx(tidy)


def test_las_code_tables_and_values_equal_the_decoded_tracts(decoded):
    las = lasio.read(decoded / "las" / "S-71-4.las")
    tract_of = {
        int(p.mnemonic.split("_")[1]): p.value for p in las.params if "TRACT_" in p.mnemonic
    }
    assert tract_of == {1: "HST", 2: "FSST", 3: "LST", 4: "TST"}
    assert las.params["TRACT_1"].descr == "highstand systems tract"
    facies_of = {
        int(p.mnemonic.split("_")[1]): str(p.value) for p in las.params if "FACIES_" in p.mnemonic
    }
    assert facies_of == dict(enumerate(synth.CODES, start=1))  # the scheme's order
    assert "TRACT codes: 1 = HST" in las.other
    tracts = _read(decoded / "tracts.csv")
    beds = tracts[tracts["core"] == "S-71-4"]
    depth = las["DEPT"]
    for i in np.linspace(0, len(depth) - 2, 7).astype(int):
        d = float(depth[i])
        assert tract_of[int(las["TRACT"][i])] == _tract_at(tracts, "S-71-4", d)
        bed = beds[(beds["top"] <= d) & (d < beds["base"])].iloc[0]
        assert facies_of[int(las["FACIES"][i])] == bed["facies"]
        for t in TRACTS:
            assert las[f"P_{t}"][i] == pytest.approx(bed[f"p_{t}"], abs=0.5e-4 + 1e-6)


def test_las_probabilities_are_written_to_four_decimals(decoded):
    with open(decoded / "las" / "S-71-4.las", encoding="utf-8") as f:
        text = f.read()
    rows = [line.split() for line in text.split("~A")[1].splitlines()[1:] if line.strip()]
    probabilities = [cell for row in rows for cell in row[3:]]  # after DEPT, FACIES, TRACT
    assert probabilities and all(len(c.partition(".")[2]) <= 4 for c in probabilities)
    assert any(len(c.partition(".")[2]) == 4 for c in probabilities)
    assert "(to 4 decimals)" in lasio.read(decoded / "las" / "S-71-4.las").other


def _thin_bed_interpretation():
    """Core W of beds 1 m thick or more with a 0.4 m FSST bed at 2.3-2.7 m, between two
    samples of a 0.5 m step (2.25 and 2.75 m); core V of 1 m beds only."""
    from faciesseq.interpretation import CoreInterpretation, Interpretation

    def core(name, top, base, tracts):
        beds = pd.DataFrame(
            {
                "segment": 0,
                "top": top,
                "base": base,
                "facies": ["A"] * len(top),
                "tract": tracts,
                **{f"p_{t}": [float(x == t) for x in tracts] for t in TRACTS},
            }
        )
        empty = pd.DataFrame()
        return CoreInterpretation(name, "m", TRACTS, (), beds, empty, empty, 0.0)

    cores = {
        "W": core(
            "W",
            [0.0, 1.0, 2.3, 2.7, 4.0],
            [1.0, 2.3, 2.7, 4.0, 5.0],
            ["HST", "HST", "FSST", "LST", "TST"],
        ),
        "V": core("V", [10.0, 11.0], [11.0, 12.0], ["HST", "TST"]),
    }
    return Interpretation.from_cores(cores, TRACTS, (), {"unit": "intervals"})


def test_las_step_that_misses_a_thin_bed_is_warned_with_the_step_that_keeps_it(tmp_path):
    """A bed between two samples of the grid was dropped from the curves in silence."""
    from faciesseq.report.exports import beds_without_sample, write_las_files

    interp = _thin_bed_interpretation()
    with pytest.warns(UserWarning) as caught:
        write_las_files(interp, tmp_path / "a", step=0.5)
    (line,) = [str(w.message) for w in caught]
    assert line == (
        "LAS step 0.5 m leaves 1 of 7 described intervals without a sample, in 1 of 2 "
        "well(s) (W 1; 1 FSST; the thinnest 0.4 m): --las-step 0.2 gives each one"
    )
    # the file of the well that lost a bed says so; the other's does not
    assert (
        "1 of the 5 described intervals of this well are thinner than the step and hold "
        "no sample (1 FSST): they are not in the curves; --las-step 0.2 gives every "
        "described interval of the run a sample."
    ) in lasio.read(tmp_path / "a" / "W.las").other
    assert "no sample" not in lasio.read(tmp_path / "a" / "V.las").other
    assert beds_without_sample(interp, 0.2) is None
    las = lasio.read(write_las_files(interp, tmp_path / "b", step=0.2)[0])
    assert 2 in set(las["TRACT"])  # TRACT_2 = FSST
    assert "no sample" not in las.other


def test_las_step_longer_than_a_well_is_refused_and_one_sample_keeps_its_step(tmp_path):
    # a step of twice core V (2 m) wrote files of no sample and STRT = STOP = STEP = 0;
    # one sample wrote STEP 0, lasio working it out from the depths
    from faciesseq.errors import ConfigError
    from faciesseq.report.exports import write_las_files

    interp = _thin_bed_interpretation()
    with pytest.raises(ConfigError, match=r"core V: LAS step 4 is longer than the well"):
        write_las_files(interp, tmp_path / "a", step=4.0)  # the first centre on the base
    assert not (tmp_path / "a").exists()
    with pytest.warns(UserWarning):  # core W's thin beds
        paths = write_las_files(interp, tmp_path / "b", step=2.0)
    one = lasio.read(next(p for p in paths if p.stem == "V"))
    assert len(one["DEPT"]) == 1 and one.well["STEP"].value == 2.0
    assert one.well["STRT"].value == one.well["STOP"].value == 11.0


@pytest.mark.parametrize("step", [2.5, 3.0, 3.9])
def test_las_step_between_a_wells_length_and_twice_it_is_refused(tmp_path, step):
    # core V (10-12 m) got one sample at 10 + step/2, its cell running to 10 + step,
    # past the well's base: read back, the well was up to twice as long
    from faciesseq.errors import ConfigError
    from faciesseq.report.exports import write_las_files

    with pytest.raises(ConfigError) as err:
        write_las_files(_thin_bed_interpretation(), tmp_path / "a", step=step)
    assert str(err.value) == (
        f"core V: LAS step {step:g} is longer than the well (2 m): its one sample would "
        "stand for a cell past the well's base; give a --las-step of at most the well's "
        "length, e.g. 2"
    )
    assert not (tmp_path / "a").exists()


def test_the_default_las_step_is_lowered_for_a_well_shorter_than_it(tmp_path):
    # the default step (half the median bed thickness) must not stop the export for one
    # short core: it is lowered to a tidy step the shortest well holds, and each file says so
    from faciesseq.interpretation import CoreInterpretation, Interpretation
    from faciesseq.report.exports import write_las_files

    interp = _thin_bed_interpretation()
    cores = {c.core: c for c in interp}
    beds = cores["V"].beds.iloc[:1].assign(base=10.3)  # a 0.3 m core
    empty = pd.DataFrame()
    cores["V"] = CoreInterpretation("V", "m", TRACTS, (), beds, empty, empty, 0.0)
    interp = Interpretation.from_cores(cores, TRACTS, (), {"unit": "intervals"})
    paths = write_las_files(interp, tmp_path / "a")  # default: 1 m beds -> 0.5, lowered
    short = lasio.read(next(p for p in paths if p.stem == "V"))
    assert short.well["STEP"].value == 0.2 and len(short["DEPT"]) == 1
    assert "lowered to 0.2 so that the shortest well (V) holds a sample" in short.other


def test_a_well_one_step_long_up_to_rounding_holds_its_one_cell():
    # 10.3 - 10.0 is a hair above 0.3 and 10.0 + 0.6 / 2 a hair below 10.3: the grid and
    # the refusal read depths a millionth of a step apart as one
    from faciesseq.report.exports import _grid, _holds_a_cell

    assert _holds_a_cell(10.0, 10.3, 0.3) and len(_grid(10.0, 10.3, 0.3)) == 1
    assert _holds_a_cell(0.0, 0.1 + 0.2, 0.3)  # 0.30000000000000004 against 0.3
    assert _holds_a_cell(0.0, 0.3, 0.1 + 0.2)
    assert not _holds_a_cell(10.0, 10.3, 0.6) and not _holds_a_cell(10.0, 10.3, 0.31)


def test_las_of_decode_and_of_write_cores_sample_the_same_cell_centres(tmp_path):
    """Both writers put a sample at the centre of each cell one step thick from the
    core's top (STRT = top + step/2, as the samples layout reads a sample back), so
    either file reads back as the core from 0 to 5 m, not half a step beyond."""
    from faciesseq.core import CoreSet
    from faciesseq.io import read_cores, write_cores
    from faciesseq.report.exports import write_las_files

    interp = _thin_bed_interpretation()
    write_las_files(interp, tmp_path / "d", step=0.1)
    decoded = lasio.read(tmp_path / "d" / "W.las")
    beds = interp["W"].beds
    cores = CoreSet.from_frame(
        pd.DataFrame(
            {"core": "W", "top": beds["top"], "base": beds["base"], "facies": beds["tract"]}
        ),
        units="m",
    )
    written = tmp_path / "W.las"
    write_cores(cores, written, step=0.1)
    plain = lasio.read(written)
    assert decoded["DEPT"] == pytest.approx(plain["DEPT"])
    assert decoded["DEPT"][0] == pytest.approx(0.05) and decoded["DEPT"][-1] == pytest.approx(4.95)
    for las in (decoded, plain):
        assert float(las.well["STRT"].value) == pytest.approx(0.05)
        assert float(las.well["STOP"].value) == pytest.approx(4.95)
    extent = read_cores(tmp_path / "d" / "W.las").extents().loc["W"]
    assert (extent["top"], extent["base"]) == pytest.approx((0.0, 5.0))


def test_decode_las_warns_on_stderr_of_beds_without_a_sample(database, tmp_path, capsys):
    out = tmp_path / "out"
    argv = ["decode", str(database / "model.json"), str(database / "cores.csv")]
    assert main([*argv, "--format", "las", "--las-step", "5", "-o", str(out)]) == 0
    err = capsys.readouterr().err
    lines = [x for x in err.splitlines() if "without a sample" in x]
    assert len(lines) == 1 and lines[0].startswith("faciesseq decode: warning: LAS step 5 ")


def test_las_gap_in_the_core_is_null(decoded):
    """lasio reads the NULL value as NaN (lasio 0.32, its default "null policy")."""
    las = lasio.read(decoded / "las" / "S-71-1.las")
    depth = las["DEPT"]
    in_gap = (depth > GAP[0] + STEP) & (depth < GAP[1] - STEP)
    assert in_gap.any()
    for name in ("FACIES", "TRACT", *[f"P_{t}" for t in TRACTS]):
        assert np.isnan(las[name][in_gap]).all()
        assert not np.isnan(las[name][~in_gap]).any()
    with open(decoded / "las" / "S-71-1.las", encoding="utf-8") as f:
        assert "-999.25" in f.read().split("~A")[1]  # written as the stated NULL


def test_las_step_option_and_feet(database, tmp_path):
    out = tmp_path / "out"
    argv = ["decode", str(database / "model.json"), str(database / "samples.csv")]
    argv += ["--units", "ft", "--format", "las", "--las-step", "0.25", "-o", str(out)]
    assert main(argv) == 0
    las = lasio.read(out / "las" / "S-71-5.las")
    assert float(las.well["STEP"].value) == 0.25
    assert las.curves["DEPT"].unit == "FT" and las.well["STOP"].unit == "FT"
    assert np.allclose(np.diff(las["DEPT"]), 0.25)
    top = _read(out / "tracts.csv").query("core == 'S-71-5'")["top"].min()
    assert las["DEPT"][0] == pytest.approx(top + 0.125)  # cell centres from the top
    assert "given (--las-step)" in las.well["STEP"].descr


def test_las_step_without_las_format_is_refused_before_any_work(database, tmp_path, capsys):
    out = tmp_path / "out"
    argv = ["decode", str(database / "model.json"), str(database / "samples.csv")]
    assert main([*argv, "--las-step", "0.5", "-o", str(out)]) == 2
    assert "--las-step" in capsys.readouterr().err
    assert not out.exists()
    assert main([*argv, "--format", "las", "--las-step", "0", "-o", str(out)]) == 2
    assert not out.exists()


def test_missing_lasio_is_one_line_naming_the_extra(database, tmp_path, capsys, monkeypatch):
    import sys

    monkeypatch.setitem(sys.modules, "lasio", None)  # import lasio now fails
    out = tmp_path / "out"
    argv = ["decode", str(database / "model.json"), str(database / "samples.csv")]
    assert main([*argv, "--format", "las", "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and "faciesseq[las]" in err
    assert not out.exists()


# ---------------------------------------------------------------- tops


def test_tops_table_has_one_row_per_pick_and_the_note_line(decoded):
    with open(decoded / "tops.csv", encoding="utf-8") as f:
        assert f.readline().startswith("# Tract and surface probabilities")
    tops = _read(decoded / "tops.csv")
    picks = _read(decoded / "picks.csv")
    assert list(tops.columns) == list(TOPS_COLUMNS)
    assert len(tops) == len(picks) > 0
    assert (tops["units"] == "m").all()
    key = ["well", "surface", "depth"]
    mine = tops.sort_values(key).reset_index(drop=True)
    theirs = picks.rename(columns={"core": "well"}).sort_values(key).reset_index(drop=True)
    for col in ("well", "surface", "name"):
        assert (mine[col] == theirs[col]).all()
    for col in ("depth", "depth_top", "depth_base", "probability"):
        assert np.allclose(mine[col], theirs[col])
    for _, part in tops.groupby("well"):
        assert part["depth"].is_monotonic_increasing


def test_tops_are_also_written_as_parquet_and_csv_with_format_parquet(database, tmp_path):
    out = tmp_path / "out"
    argv = ["decode", str(database / "model.json"), str(database / "cores.csv")]
    assert main([*argv, "--format", "parquet", "-o", str(out)]) == 0
    table = pq.read_table(out / "tops.parquet")
    assert table.column_names == list(TOPS_COLUMNS)
    assert b"faciesseq.probabilities" in table.schema.metadata
    assert len(_read(out / "tops.csv")) == table.num_rows
    assert not (out / "samples.parquet").exists()  # an interval-layout source


def test_tops_table_of_no_picks_has_the_columns():
    from faciesseq.interpretation import Interpretation

    empty = Interpretation.from_cores({}, TRACTS, ("MFS",))
    assert list(tops_table(empty).columns) == list(TOPS_COLUMNS)


# ---------------------------------------------------------------- samples


def test_samples_table_keeps_every_source_row_and_column(database, decoded):
    source = pd.read_csv(database / "samples.csv")
    samples = _read(decoded / "samples.csv")
    assert len(samples) == len(source)
    assert list(samples.columns) == [
        "Well",
        "Depth",
        "Facies",
        "GR",
        "source_tract",  # the interpreter's column, kept under another name
        "tract",
        *[f"p_{t}" for t in TRACTS],
    ]
    assert (samples["Well"] == source["Well"]).all()
    assert np.allclose(samples["Depth"], source["Depth"])
    assert np.allclose(samples["GR"], source["GR"])
    labelled = source["tract"].notna()
    assert (samples.loc[labelled, "source_tract"] == source.loc[labelled, "tract"]).all()


def test_each_sample_takes_the_tract_of_the_bed_that_holds_it(decoded):
    samples = _read(decoded / "samples.csv")
    tracts = _read(decoded / "tracts.csv")
    assert samples["tract"].notna().all()
    for i in np.linspace(0, len(samples) - 1, 25).astype(int):
        row = samples.iloc[i]
        assert row["tract"] == _tract_at(tracts, row["Well"], row["Depth"])
    p = samples[[f"p_{t}" for t in TRACTS]].to_numpy()
    assert np.allclose(p.sum(axis=1), 1.0, atol=1e-6)
    best = np.array(TRACTS)[p.argmax(axis=1)]
    assert (best == samples["tract"]).mean() > 0.9  # Viterbi mostly agrees with the posterior


def test_samples_join_boundaries_gaps_and_unknown_cores():
    """top <= depth < base; the base of the last bed above a gap is in that bed; a depth
    in a gap, outside the core or in a core not decoded has no tract."""
    from faciesseq.interpretation import CoreInterpretation, Interpretation
    from faciesseq.io.samples import CORE_KEY, DEPTH_KEY

    beds = pd.DataFrame(
        {
            "segment": [0, 0, 1],
            "top": [0.0, 1.0, 3.0],
            "base": [1.0, 2.0, 4.0],
            "facies": ["A", "B", "A"],
            "tract": ["HST", "TST", "LST"],
            "p_HST": [0.9, 0.1, 0.0],
            "p_TST": [0.1, 0.9, 0.2],
            "p_LST": [0.0, 0.0, 0.8],
        }
    )
    empty = pd.DataFrame()
    core = CoreInterpretation("W", "m", ("HST", "TST", "LST"), (), beds, empty, empty, 0.0)
    interp = Interpretation.from_cores({"W": core}, ("HST", "TST", "LST"), ())
    depth = [0.0, 0.99, 1.0, 2.0, 2.5, 3.0, 4.0, 4.5, -0.1, 1.5, np.nan]
    samples = pd.DataFrame({"d": depth, CORE_KEY: ["W"] * 9 + ["X", "W"], DEPTH_KEY: depth})
    out = samples_table(interp, samples)
    assert list(out.columns) == ["d", "tract", "p_HST", "p_TST", "p_LST"]
    expected = ["HST", "HST", "TST", "TST", None, "LST", "LST", None, None, None, None]
    assert [None if pd.isna(t) else t for t in out["tract"]] == expected
    assert out["p_LST"].iloc[6] == 0.8 and np.isnan(out["p_HST"].iloc[4])


def test_samples_from_a_las_source_get_a_core_column(decoded, tmp_path):
    """A LAS source (no core column: the well is the WELL item) read back as samples."""
    from faciesseq.io.samples import CORE_KEY, DEPTH_KEY, read_samples

    rows = read_samples(decoded / "las")
    assert rows.columns[0] == "core"
    assert set(rows["core"]) == {f"S-71-{k}" for k in range(1, 7)}
    described = rows["FACIES"].notna()  # the cells of a gap hold the null value
    assert (rows["core"] == rows[CORE_KEY])[described].all()
    assert rows[DEPTH_KEY][described].notna().all()
    assert rows[CORE_KEY][~described].isna().all()


def test_default_las_step_of_no_beds_is_refused():
    from faciesseq.errors import ConfigError
    from faciesseq.interpretation import Interpretation

    with pytest.raises(ConfigError):
        default_las_step(Interpretation.from_cores({}, TRACTS, ()))


def test_las_written_by_decode_reads_back_without_tract_labels(decoded, tmp_path):
    """The TRACT curve of decode's LAS files is the model's output: read back, it is the
    column decoded_tract (one warning per file), not the interpreter's tract role that a
    fit with labels trains on; the same curve in an interpreter's file stays labels."""
    from faciesseq.io import read_cores

    cores = read_cores(decoded / "las", columns={"facies": "FACIES"})
    assert "tract" not in cores.source_columns
    said = [p for p in cores.problems if p.kind == "decoded-tract"]
    assert len(said) == 6 and "read as the column decoded_tract" in said[0].message
    las = lasio.read(decoded / "las" / "S-71-2.las")
    del las.params["FSQ_DECODED"]
    las.write(str(tmp_path / "interpreted.las"), version=2.0)
    cores = read_cores(tmp_path / "interpreted.las", columns={"facies": "FACIES"})
    assert cores.source_columns["tract"] == "TRACT"
    assert not [p for p in cores.problems if p.kind == "decoded-tract"]


def test_json_export_writes_non_ascii_codes_as_characters(tmp_path):
    """The decoded JSON holds ``grès`` and ``砂岩`` as written (UTF-8), not ``\\u00e8``."""
    from faciesseq.cli.decode import _write_json

    frame = pd.DataFrame({"core": ["Bohrung-ä"], "facies": ["grès"], "tract": ["砂岩"]})
    for probabilities in (None, {"note": "n"}):
        path = tmp_path / "decoded.json"
        _write_json(frame, path, probabilities)
        text = path.read_bytes().decode("utf-8")
        assert "\\u" not in text
        assert all(word in text for word in ("Bohrung-ä", "grès", "砂岩"))


def test_samples_table_renames_source_columns_spelt_otherwise_than_its_own():
    """A source's ``Tract`` or ``P HST`` is the same column name to the readers (roles are
    matched ignoring case, spaces and underscores), so it is kept as ``source_<name>``:
    the samples table reads back as a source without two tract columns."""
    from faciesseq.interpretation import CoreInterpretation, Interpretation
    from faciesseq.io.columns import match_columns
    from faciesseq.io.samples import CORE_KEY, DEPTH_KEY

    tracts = ("HST", "TST")
    beds = pd.DataFrame(
        {"segment": [0], "top": [0.0], "base": [1.0], "facies": ["A"], "tract": ["HST"]}
        | {"p_HST": [0.8], "p_TST": [0.2]}
    )
    empty = pd.DataFrame()
    core = CoreInterpretation("W", "m", tracts, (), beds, empty, empty, 0.0)
    interp = Interpretation.from_cores({"W": core}, tracts, ())
    samples = pd.DataFrame(
        {"Well": ["W"], "Depth": [0.5], "Facies": ["A"], "Tract": ["TST"], "P HST": [0.1]}
        | {CORE_KEY: ["W"], DEPTH_KEY: [0.5]}
    )
    out = samples_table(interp, samples)
    assert list(out.columns) == [
        "Well",
        "Depth",
        "Facies",
        "source_Tract",
        "source_P HST",
        "tract",
        "p_HST",
        "p_TST",
    ]
    assert out["source_Tract"].iloc[0] == "TST" and out["tract"].iloc[0] == "HST"
    assert match_columns(out.columns).roles["tract"] == "tract"


def test_samples_of_a_las_source_keep_the_samples_whose_facies_is_null(database, tmp_path):
    """A LAS well whose facies curve holds the NULL value at some depths: every line of
    its ~A section is a row of the samples table, the null ones with a blank tract
    (a sample without a facies code), as a CSV source's rows are."""
    source = pd.read_csv(database / "samples.csv")
    well = source[source["Well"] == "S-71-2"].reset_index(drop=True)
    codes = sorted(set(well["Facies"]))  # text codes, written as 1, 2, ... (docs/io.md)
    number = {c: k + 1.0 for k, c in enumerate(codes)}
    facies = well["Facies"].map(number).to_numpy(float, copy=True)
    facies[[10, 11, 40]] = LAS_NULL
    las = lasio.LASFile()
    las.well["WELL"].value = "S-71-2"
    las.well["NULL"].value = LAS_NULL
    for k, c in enumerate(codes):
        las.params.append(lasio.HeaderItem(f"FACIES_{k + 1}", value=c, descr=f"facies {k + 1}"))
    las.append_curve("DEPT", well["Depth"].to_numpy(), unit="M")
    las.append_curve("FACIES", facies)
    las.append_curve("GR", well["GR"].to_numpy())
    path = tmp_path / "S-71-2.las"
    las.write(str(path), version=2.0)
    out = tmp_path / "out"
    assert main(["decode", str(database / "model.json"), str(path), "-o", str(out)]) == 0
    samples = _read(out / "samples.csv")
    assert len(samples) == len(well)
    assert np.allclose(samples["DEPT"], well["Depth"])
    blank = samples["tract"].isna()
    assert np.flatnonzero(blank).tolist() == [10, 11, 40]
    assert samples["FACIES"].iloc[[10, 11, 40]].isna().all()
