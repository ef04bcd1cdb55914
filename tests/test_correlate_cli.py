"""``faciesseq correlate``: outputs, section figures and one-line errors on bad input."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from faciesseq.cli import main
from faciesseq.core import CoreSet
from faciesseq.hmm.model import TractHMM
from faciesseq.hmm.modelfile import save_model
from faciesseq.scheme import load_scheme

DEMO = Path(__file__).resolve().parents[1] / "demo_cores"
WELLS = ("QB-01", "QB-03", "QB-05", "QB-07", "QB-09")


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    """Five demo cores of the central section, their wells rows and a supervised model."""
    folder = tmp_path_factory.mktemp("corr")
    cores = pd.read_csv(DEMO / "cores.csv")
    cores = cores[cores["core"].isin(WELLS)]
    cores.to_csv(folder / "cores.csv", index=False)
    wells = pd.read_csv(DEMO / "wells.csv")
    wells[wells["core"].isin(WELLS)].to_csv(folder / "wells.csv", index=False)
    scheme = load_scheme(DEMO.parent / "configs" / "scheme-shoreface.yaml")
    frame = cores.drop(columns=[c for c in cores.columns if c.startswith("true_")])
    coreset = CoreSet.from_frame(frame.drop(columns="units"), "m")
    model = TractHMM(scheme=scheme, n_restarts=1, calibration_folds=0, random_state=0)
    save_model(model.fit(coreset, labels="tract"), folder / "model.json")
    return folder


def _run(db, out, *extra, wells=None):
    return main(
        [
            "correlate",
            str(db / "cores.csv"),
            "--wells",
            str(wells or db / "wells.csv"),
            "--model",
            str(db / "model.json"),
            "-o",
            str(out),
            *extra,
        ]
    )


def test_writes_correlation_and_a_figure(database, tmp_path, capsys):
    out = tmp_path / "corr"
    assert _run(database, out, "--figure-format", "svg") == 0
    table = pd.read_csv(out / "correlation.csv")
    need = {"surface_id", "surface", "core", "depth", "probability", "confidence", "section"}
    assert need <= set(table.columns)
    assert len(table) > 0
    assert not table.duplicated(["surface_id", "core"]).any()
    assert (out / "section-central.svg").stat().st_size > 0
    assert "hypothesis" in capsys.readouterr().out


def test_view_writes_one_page_with_every_tie(database, tmp_path, capsys):
    out = tmp_path / "corr"
    assert _run(database, out, "--view") == 0
    html = (out / "section.html").read_text(encoding="utf-8")
    ties = pd.read_csv(out / "ties.csv")
    data = html.split('id="section-data">', 1)[1].split("</script>", 1)[0]
    assert data.count('"confidence":') == len(ties) > 0
    assert "section.html" in capsys.readouterr().out


def test_existing_output_needs_force(database, tmp_path, capsys):
    out = tmp_path / "corr"
    out.mkdir()
    assert _run(database, out) == 2
    assert "pass --force" in capsys.readouterr().err


@pytest.mark.parametrize(
    ("rows", "code", "message"),
    [
        ([("QB-01", 1.0), ("QB-01", 2.0)], 1, "row 2: well 'QB-01' is listed twice"),
        ([("QB-01", 1.0)], 1, "two wells"),
        (
            [("QB01", 1.0), ("QB03", 2.0)],
            1,
            "2 well(s) of the table with no core in the source: 'QB01', 'QB03' (its cores: "
            "QB-01, QB-03,",
        ),
    ],
)
def test_bad_wells_table_one_line(database, tmp_path, capsys, rows, code, message):
    wells = tmp_path / "wells.csv"
    pd.DataFrame(rows, columns=["core", "x_km"]).to_csv(wells, index=False)
    out = tmp_path / "corr"
    assert _run(database, out, wells=wells) == code
    err = capsys.readouterr().err
    assert message in err and len(err.strip().splitlines()) == 1
    assert "Traceback" not in err
    assert not out.exists()


def test_well_without_core_and_core_without_well_warn(database, tmp_path, capsys):
    wells = tmp_path / "wells.csv"
    rows = [("QB-01", 38.0), ("QB-03", 48.0), ("QB-05", 58.0), ("QB-07", 68.0), ("XX-1", 99.0)]
    pd.DataFrame(rows, columns=["core", "x_km"]).to_csv(wells, index=False)
    assert _run(database, tmp_path / "corr", "--datum", "depth", wells=wells) == 0
    err = capsys.readouterr().err
    assert "row 5" in err and "'XX-1' has no core" in err
    assert "core 'QB-09' has no row in the wells table" in err


def test_section_without_the_datum_kind_is_hung_on_the_core_tops(database, tmp_path, capsys):
    # LHB, a kind the tract model can pick, is correlated nowhere in these five wells: a
    # warning naming the section, exit 0
    assert _run(database, tmp_path / "corr", "--datum", "LHB") == 0
    err = capsys.readouterr().err
    assert "section central: no correlated LHB surface; hung on the core tops" in err
    assert (tmp_path / "corr" / "section-central.png").exists()


def test_figure_of_a_section_without_the_datum_kind_says_so(database, tmp_path, capsys):
    # the figure read "hung on depth", with nothing saying the MFS asked for was missing
    assert _run(database, tmp_path / "corr", "--datum", "LHB", "--figure-format", "svg") == 0
    svg = (tmp_path / "corr" / "section-central.svg").read_text(encoding="utf-8")
    assert "correlated surfaces, hung on the core tops" in svg
    assert "no correlated LHB surface; hung on the core tops" in svg
    assert "hung on depth" not in svg


def test_datum_of_no_kind_the_model_picks_is_a_usage_error(database, tmp_path, capsys):
    # a misspelt kind hung the section on the core tops with only a warning
    out = tmp_path / "corr"
    assert _run(database, out, "--datum", "XYZ") == 2
    err = capsys.readouterr().err.strip()
    assert err == (
        "faciesseq correlate: --datum 'XYZ' is none of depth, elevation, datum_depth, a "
        "surface kind (BSFR, SB, MRS, MFS, LHB) or a correlated surface's id (central:MFS-2)"
    )
    assert not out.exists()


def test_datum_needing_a_wells_column_names_the_flag_before_any_core_is_decoded(
    database, tmp_path, capsys, monkeypatch
):
    # the demo wells table has no elevation column: refused with the wells table, not
    # after every core was decoded
    def no_decoding(*args, **kwargs):
        raise AssertionError("decoded before the wells table was checked")

    monkeypatch.setattr(TractHMM, "decode", no_decoding)
    out = tmp_path / "corr"
    assert _run(database, out, "--datum", "elevation") == 2
    err = capsys.readouterr().err.strip()
    assert "--datum elevation needs an 'elevation' value for every well; QB-01, " in err
    assert len(err.splitlines()) == 1 and not out.exists()


def test_datum_kinds_are_read_in_any_case(database, tmp_path, capsys):
    # tract labels are read in any case; --datum mfs was refused
    assert _run(database, tmp_path / "corr", "--datum", "mfs") == 0
    assert "hung on the core tops" not in capsys.readouterr().err  # hung on MFS
    assert (tmp_path / "corr" / "section-central.png").exists()


def test_wells_with_a_distance_and_map_coordinates_say_which_position_is_used(
    database, tmp_path, capsys
):
    wells = tmp_path / "wells.csv"
    rows = [(c, 10.0 * k, k, 0.0) for k, c in enumerate(WELLS)]
    pd.DataFrame(rows, columns=["core", "x_km", "x", "y"]).to_csv(wells, index=False)
    assert _run(database, tmp_path / "corr", "--datum", "depth", wells=wells) == 0
    err = capsys.readouterr().err
    assert "positions from the column x_km; the map coordinates x, y are not used" in err


def test_unknown_surface_id_is_a_usage_error(database, tmp_path, capsys):
    assert _run(database, tmp_path / "corr", "--datum", "central:MFS-99") == 2
    err = capsys.readouterr().err.strip()
    assert "central:MFS-99" in err and len(err.splitlines()) == 1
    assert "the surfaces of its section are central:" in err  # the ids one may give
    assert not (tmp_path / "corr").exists()


def test_surface_id_of_no_section_is_a_usage_error_naming_the_sections(database, tmp_path, capsys):
    assert _run(database, tmp_path / "corr", "--datum", "centrl:MFS-1") == 2
    err = capsys.readouterr().err.strip()
    assert "no section 'centrl' (the sections are central;" in err
    assert len(err.splitlines()) == 1


def test_missing_wells_file_one_line(database, tmp_path, capsys):
    out = tmp_path / "corr"
    assert _run(database, out, wells=tmp_path / "nope.csv") == 1
    err = capsys.readouterr().err.strip()
    assert "nope.csv" in err and len(err.splitlines()) == 1
    assert not out.exists()


def test_wells_without_section_column_write_section_png_and_a_labelled_page(
    database, tmp_path, capsys
):
    """No ``section`` column: the figure is section.png (not section-section.png); the
    page's positions carry the distance unit (km) and the model's note on the pick
    probabilities is labelled as such."""
    wells = tmp_path / "wells.csv"
    rows = [("QB-01", 38.0), ("QB-03", 48.0), ("QB-05", 58.0), ("QB-07", 68.0)]
    pd.DataFrame(rows, columns=["core", "x_km"]).to_csv(wells, index=False)
    out = tmp_path / "corr"
    assert _run(database, out, "--datum", "depth", "--view", wells=wells) == 0
    assert (out / "section.png").exists()
    assert not (out / "section-section.png").exists()
    assert "section section" not in capsys.readouterr().err
    html = (out / "section.html").read_text(encoding="utf-8")
    data = html.split('id="section-data">', 1)[1].split("</script>", 1)[0]
    assert '"position_unit": "km"' in data or '"position_unit":"km"' in data
    assert "Pick probabilities (from the model file): " in data


def test_messages_of_the_one_unnamed_section_do_not_name_it():
    # a wells table without a section column printed "section section: QB-01 and ..."
    from faciesseq.correlation.chain import untied_message
    from faciesseq.correlation.wells import section_prefix

    assert untied_message("section", "QB-01", "QB-02").startswith("QB-01 and QB-02 share")
    assert untied_message("dip", "QB-01", "QB-02").startswith("section dip: QB-01 and")
    assert section_prefix("section") == ""


def test_a_pair_without_a_tie_is_said_on_stderr_and_drawn_unjoined(
    database, tmp_path, capsys, monkeypatch
):
    # the audit: a pair left without a tie was silent, and the figure shaded tracts
    # between its two columns
    from faciesseq.correlation import chain

    tie_pair = chain._tie_pair

    def no_tie_after_qb03(left, right, options):
        # QB-03 -> QB-05: nothing tied, by either reading
        return [] if left.top == columns["QB-03"] else tie_pair(left, right, options)

    cores = pd.read_csv(database / "cores.csv")
    columns = cores.groupby("core")["top"].min().to_dict()
    monkeypatch.setattr(chain, "_tie_pair", no_tie_after_qb03)
    out = tmp_path / "corr"
    assert _run(database, out) == 0
    err = capsys.readouterr().err
    message = (
        "faciesseq correlate: section central: QB-03 and QB-05 share no tied surface; "
        "their columns are drawn unjoined"
    )
    assert err.count(message) == 1
    ties = pd.read_csv(out / "ties.csv")
    assert not ((ties["core_left"] == "QB-03") & (ties["core_right"] == "QB-05")).any()


def test_cores_and_wells_from_one_sqlite_database(database, tmp_path, capsys):
    """``correlate db.sqlite --wells db.sqlite``: the cores from ``intervals``, the
    wells from ``wells``, as from the two CSV files."""
    from faciesseq.io import read_cores, write_cores

    db = tmp_path / "db.sqlite"
    wells = pd.read_csv(database / "wells.csv")
    write_cores(read_cores(database / "cores.csv"), db, tables={"wells": wells})
    out = tmp_path / "corr"
    argv = ["correlate", str(db), "--wells", str(db), "--model", str(database / "model.json")]
    assert main([*argv, "-o", str(out)]) == 0
    assert _run(database, tmp_path / "csv") == 0
    capsys.readouterr()
    pd.testing.assert_frame_equal(
        pd.read_csv(out / "correlation.csv"), pd.read_csv(tmp_path / "csv" / "correlation.csv")
    )


def test_positions_seven_metres_apart_at_utm_northings_stay_distinct(database, tmp_path):
    # written with %.6g, 6712345 and 6712352 both read 6.71235e+06
    wells = tmp_path / "wells.csv"
    rows = [(core, 6712345.0 + 7 * i) for i, core in enumerate(WELLS)]
    pd.DataFrame(rows, columns=["core", "distance"]).to_csv(wells, index=False)
    assert _run(database, tmp_path / "corr", "--datum", "depth", wells=wells) == 0
    table = pd.read_csv(tmp_path / "corr" / "correlation.csv")
    positions = table.drop_duplicates("core").set_index("core")["position"]
    assert positions.to_dict() == {core: x for core, x in rows if core in positions.index}
    assert positions.nunique() == len(positions) > 2
