"""The fit, decode and validate commands end to end (synthetic cores, invented)."""

import json

import hmm_synthetic as synth
import pandas as pd
import pytest

from faciesseq.cli import main


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    folder = tmp_path_factory.mktemp("db")
    synth.write_database(folder, 8, 60, seed=71)
    return folder


def test_fit_then_decode_writes_the_documented_tables(database, tmp_path, capsys):
    model = tmp_path / "model.json"
    rc = main(
        [
            "fit",
            str(database / "cores.csv"),
            "--scheme",
            str(database / "scheme.yaml"),
            "-o",
            str(model),
            "--labels",
            "tract",
            "--restarts",
            "2",
        ]
    )
    assert rc == 0
    out = capsys.readouterr().out
    assert "semi-supervised" in out
    # the interpreter's column keeps the cyclic order, so the strict graph is fitted
    assert "tracts that may be absent: FSST, TST (strict cyclic order: all " in out
    # what was fitted in two lines, then the cautions; the diagnostics only with --verbose
    head = out.split("per well")[0].splitlines()
    assert head[0].startswith("fitted on 8 core(s)") and head[1].startswith("tract graph:")
    assert all(line.startswith(("caution:", "note:")) for line in head[2:]), head
    assert "log-likelihood" not in out and "calibrated by a temperature" not in out
    doc = json.loads(model.read_text())
    assert doc["format"] == "faciesseq-tract-model" and doc["version"] == 1
    assert doc["training"]["input_hashes"]
    assert doc["training"]["cores"] == [f"S-71-{k}" for k in range(1, 9)]

    rc = main(["decode", str(model), str(database / "cores.csv"), "-o", str(tmp_path / "out")])
    assert rc == 0
    out = capsys.readouterr().out
    assert "agreement with the interpreter's 'tract' column" in out
    # the cores were in the labelled fit: said, so that the figure is not read as accuracy
    assert "all of these cores labelled in the model's fit" in out and "not a test" in out
    tracts = pd.read_csv(tmp_path / "out" / "tracts.csv", skiprows=1)  # the '# ' line
    assert tracts.columns.tolist() == [
        "core",
        "top",
        "base",
        "facies",
        "tract",
        "p_HST",
        "p_FSST",
        "p_LST",
        "p_TST",
        "interpreted_tract",  # the source's own tract column, beside the decoded one
    ]
    assert len(tracts) == 8 * 60
    surfaces = pd.read_csv(tmp_path / "out" / "surfaces.csv", skiprows=1)
    assert surfaces.columns.tolist() == ["core", "depth", "surface", "probability", "picked"]
    assert surfaces["picked"].any()
    agreement = pd.read_csv(tmp_path / "out" / "agreement.csv")
    assert len(agreement) == 4  # the labelled cores only
    assert agreement["agreement_beds"].mean() > 0.7


def test_decode_says_which_labelled_cores_were_in_the_fit(database, tmp_path, capsys):
    cores = pd.read_csv(database / "cores.csv")
    names = list(dict.fromkeys(cores["core"]))  # cores 1, 3, 5 and 7 carry labels
    train = cores[cores["core"].isin(names[:5])].copy()
    train.loc[train["core"] == names[4], "tract"] = None  # core 5 fitted, but unlabelled
    train.to_csv(tmp_path / "train.csv", index=False)
    model = tmp_path / "model.json"
    scheme = str(database / "scheme.yaml")
    fit = ["fit", str(tmp_path / "train.csv"), "--scheme", scheme, "--labels", "tract"]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    assert json.loads(model.read_text())["training"]["labelled_cores"] == names[0:4:2]

    def agreement_line(wanted: list[str], out: str) -> str:
        capsys.readouterr()
        source = cores_of(cores, wanted, tmp_path)
        assert main(["decode", str(model), str(source), "-o", str(tmp_path / out)]) == 0
        out_lines = capsys.readouterr().out.splitlines()
        return next(x for x in out_lines if x.startswith("agreement"))

    # cores 3 (labelled in the fit) and 5 (in the fit without its labels)
    line = agreement_line([names[2], names[4]], "a")
    assert "in 2 core(s); 1 of these cores labelled in the model's fit" in line, line
    # cores 5 and 7: labels the fit never saw, a test
    line = agreement_line([names[4], names[6]], "b")
    assert "model's fit" not in line, line
    # the JSON summary names the cores whose agreement tests nothing, as the line does
    source = cores_of(cores, [names[2], names[4]], tmp_path)
    capsys.readouterr()
    argv = ["decode", str(model), str(source), "--summary", "json", "-o", str(tmp_path / "c")]
    assert main(argv) == 0
    assert json.loads(capsys.readouterr().out)["agreement_cores_labelled_in_fit"] == [names[2]]


def cores_of(cores: pd.DataFrame, names: list[str], folder) -> object:
    path = folder / "some.csv"
    cores[cores["core"].isin(names)].to_csv(path, index=False)
    return path


def test_decode_json_and_parquet(database, tmp_path, capsys):
    model = tmp_path / "model.json"
    csv = str(database / "cores.csv")
    assert main(["fit", csv, "--scheme", str(database / "scheme.yaml"), "-o", str(model)]) == 0
    for fmt in ("json", "parquet"):
        out = tmp_path / fmt
        assert main(["decode", str(model), csv, "-o", str(out), "--format", fmt]) == 0
        frame = (
            pd.DataFrame(json.loads((out / "tracts.json").read_text())["records"])
            if fmt == "json"
            else pd.read_parquet(out / "tracts.parquet")
        )
        assert len(frame) == 8 * 60
    capsys.readouterr()


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (json.dumps({"format": "something-else", "version": 1}), "not a faciesseq model file"),
        ('{"format": "faciesseq-tract-model", "vers', "not JSON"),  # truncated
        ("format: faciesseq-tract-model\nversion: 1\n", "not JSON"),  # YAML
    ],
)
def test_a_corrupt_model_file_is_bad_data_one_line_exit_1_and_nothing_written(
    database, tmp_path, capsys, text, message
):
    # a corrupt input file is bad data (exit 1), as a corrupt table is; 2 is for usage
    bad = tmp_path / "bad.json"
    bad.write_text(text)
    out = tmp_path / "out"
    rc = main(["decode", str(bad), str(database / "cores.csv"), "-o", str(out)])
    assert rc == 1
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "bad.json" in err and message in err
    assert not out.exists()
    assert list(tmp_path.iterdir()) == [bad]


def test_grid_without_step_is_a_usage_error(database, tmp_path, capsys):
    rc = main(
        ["fit", str(database / "cores.csv"), "-o", str(tmp_path / "m.json"), "--unit", "grid"]
    )
    assert rc == 2
    assert "--step" in capsys.readouterr().err
    assert not (tmp_path / "m.json").exists()


def test_validate_scores_only_labelled_beds_and_writes_json(database, tmp_path, capsys):
    rc = main(
        [
            "validate",
            str(database / "cores.csv"),
            "--scheme",
            str(database / "scheme.yaml"),
            "--labels",
            "tract",
            "--folds",
            "2",
            "--restarts",
            "1",
            "--format",
            "json",
            "-o",
            str(tmp_path / "val"),
        ]
    )
    assert rc == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["settings"]["n_beds_scored"] == 4 * 60
    summary = {row["method"]: row for row in doc["summary"]}
    assert summary["model"]["accuracy"] < 1.0  # held-out cores, never their own labels
    assert summary["model"]["accuracy"] > summary["baseline"]["accuracy"]
    assert (tmp_path / "val" / "confusion_model.csv").exists()


def test_validate_names_the_rows_it_scored(database, tmp_path, capsys):
    """A labelled fit reads described intervals and the header says so, a fit without
    labels reads beds (the two counts differ on the same cores)."""
    common = ["validate", str(database / "cores.csv"), "--scheme", str(database / "scheme.yaml")]
    common += ["--labels", "tract", "--folds", "2", "--restarts", "1"]
    assert main([*common, "--unit", "intervals"]) == 0
    assert "labelled described intervals scored (supervised)" in capsys.readouterr().out
    assert main([*common, "--mode", "unsupervised", "--unit", "beds"]) == 0
    assert "labelled beds scored (unsupervised)" in capsys.readouterr().out


def test_decode_plot_draws_a_strip_log_per_core(database, tmp_path, capsys):
    csv = tmp_path / "two.csv"
    table = pd.read_csv(database / "cores.csv")
    table[table["core"] == "S-71-1"].to_csv(csv, index=False)
    model = tmp_path / "model.json"
    assert main(["fit", str(csv), "--scheme", str(database / "scheme.yaml"), "-o", str(model)]) == 0
    out = tmp_path / "out"
    assert main(["decode", str(model), str(csv), "-o", str(out), "--plot"]) == 0
    pngs = sorted(p.name for p in (out / "striplogs").iterdir())
    assert pngs == ["S-71-1.png"]
    assert all((out / "striplogs" / p).read_bytes()[:4] == b"\x89PNG" for p in pngs)
    capsys.readouterr()


def test_a_model_fitted_without_a_scheme_decodes_a_facies_its_cores_lacked(
    database, tmp_path, capsys
):
    # no --scheme: the model keeps ranks suggested from its cores; a code those cores
    # lacked is a facies never seen in training (one line), not a missing scheme entry,
    # and a model fitted with the geologist's scheme decodes it the same way (it refused
    # the whole core)
    table = pd.read_csv(database / "cores.csv")
    train, model = tmp_path / "train.csv", tmp_path / "model.json"
    table[["core", "top", "base", "facies", "tract"]].to_csv(train, index=False)
    assert main(["fit", str(train), "--labels", "tract", "--restarts", "1", "-o", str(model)]) == 0
    odd = table[["core", "top", "base", "facies"]].copy()
    odd.loc[odd.index[:3], "facies"] = "XX"
    odd.to_csv(tmp_path / "odd.csv", index=False)
    capsys.readouterr()
    assert main(["decode", str(model), str(tmp_path / "odd.csv"), "-o", str(tmp_path / "o")]) == 0
    beds = pd.read_csv(tmp_path / "o" / "tracts.csv", comment="#")
    assert (beds["facies"] == "XX").sum() == 3 and beds["tract"].notna().all()
    lines = [x for x in capsys.readouterr().err.splitlines() if "never seen" in x]
    assert len(lines) == 1 and "no rank for them" in lines[0]
    cores = odd.loc[odd.index[:3], "core"].nunique()
    in_cores = f" in {cores} core(s)" if cores > 1 else ""
    # the first place as check names a bad row: data row (header not counted), core, depth
    first = f"data row 1, core {odd['core'].iat[0]}, depth {odd['top'].iat[0]:.2f} m"
    assert f"first place: XX (3 beds{in_cores}, first at {first}); 3 of" in lines[0]
    given = ["--scheme", str(database / "scheme.yaml")]
    assert (
        main(
            [
                "fit",
                str(train),
                *given,
                "--labels",
                "tract",
                "--restarts",
                "1",
                "-o",
                str(model),
                "--force",
            ]
        )
        == 0
    )
    capsys.readouterr()
    assert main(["decode", str(model), str(tmp_path / "odd.csv"), "-o", str(tmp_path / "p")]) == 0
    beds = pd.read_csv(tmp_path / "p" / "tracts.csv", comment="#")
    assert (beds["facies"] == "XX").sum() == 3 and beds["tract"].notna().all()
    lines = [x for x in capsys.readouterr().err.splitlines() if "never seen" in x]
    assert len(lines) == 1 and "XX (3 beds" in lines[0] and "no rank for them" in lines[0]


def test_decode_takes_a_scheme_that_only_adds_facies_and_names_what_differs(
    database, tmp_path, capsys
):
    import yaml

    table = pd.read_csv(database / "cores.csv")
    train, model = tmp_path / "train.csv", tmp_path / "model.json"
    table[["core", "top", "base", "facies", "tract"]].to_csv(train, index=False)
    scheme = ["--scheme", str(database / "scheme.yaml")]
    fit = ["fit", str(train), *scheme, "--labels", "tract", "--restarts", "1", "-o", str(model)]
    assert main(fit) == 0
    odd = table[["core", "top", "base", "facies"]].copy()
    odd.loc[odd.index[:2], "facies"] = "XX"
    odd.to_csv(tmp_path / "odd.csv", index=False)
    doc = yaml.safe_load((database / "scheme.yaml").read_text())
    first = doc["facies"][0]
    added = {**doc, "facies": [*doc["facies"], {"code": "XX", "name": "new", "rank": 1}]}
    (tmp_path / "added.yaml").write_text(yaml.safe_dump(added))
    capsys.readouterr()
    argv = ["decode", str(model), str(tmp_path / "odd.csv")]
    assert main([*argv, "--scheme", str(tmp_path / "added.yaml"), "-o", str(tmp_path / "a")]) == 0
    assert "XX (2 beds" in capsys.readouterr().err
    # another rank and a facies left out: the refusal says which (it quoted two equal names)
    changed = {
        **doc,
        "facies": [{**first, "rank": first["rank"] + 7}, *doc["facies"][2:]],
    }
    (tmp_path / "changed.yaml").write_text(yaml.safe_dump(changed))
    assert main([*argv, "--scheme", str(tmp_path / "changed.yaml"), "-o", str(tmp_path / "c")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and not (tmp_path / "c").exists()
    assert f"it lacks the model's facies {doc['facies'][1]['code']!r}" in err
    rank = f"{first['code']!r} rank {first['rank'] + 7:g} here, rank {first['rank']:g} in the model"
    assert rank in err


def test_decode_names_facies_the_fit_never_saw_and_beds_of_another_scale(
    database, tmp_path, capsys
):
    # a fit on cores without SHM (a code of the scheme), decoded on cores with it and
    # on the same cores with every depth ten times larger
    table = pd.read_csv(database / "cores.csv")
    train, model = tmp_path / "train.csv", tmp_path / "model.json"
    table[table["facies"] != "SHM"].to_csv(train, index=False)
    scheme = ["--scheme", str(database / "scheme.yaml"), "--units", "m"]
    assert main(["fit", str(train), *scheme, "--restarts", "1", "-o", str(model)]) == 0
    recorded = json.loads(model.read_text())["training"]
    assert "SHM" not in recorded["facies_beds"] and recorded["bed_thickness_median"] > 0
    capsys.readouterr()
    out = tmp_path / "out"
    assert main(["decode", str(model), str(database / "cores.csv"), "-o", str(out)]) == 0
    beds = pd.read_csv(out / "tracts.csv", skiprows=1)
    shm = int((beds["facies"] == "SHM").sum())
    assert shm > 0
    lines = [x for x in capsys.readouterr().err.splitlines() if "never seen" in x]
    n_cores = beds.loc[beds["facies"] == "SHM", "core"].nunique()
    k = int(table.index[table["facies"] == "SHM"][0])  # the first SHM of the source
    first = f"data row {k + 1}, core {table['core'].iat[k]}, depth {table['top'].iat[k]:.2f} m"
    assert lines == [
        "faciesseq decode: warning: facies code(s) never seen in training, with their beds, "
        f"cores and first place: SHM ({shm} beds in {n_cores} core(s), first at {first}); "
        f"{shm} of {len(beds)} beds decoded with "
        "the scheme's rank of SHM; "
        "the tract read from the beds around them"
    ]
    for factor, said in ((2.0, False), (10.0, True)):
        scaled = table.assign(top=table["top"] * factor, base=table["base"] * factor)
        scaled = scaled[scaled["facies"] != "SHM"]
        scaled.to_csv(tmp_path / "scaled.csv", index=False)
        argv = ["decode", str(model), str(tmp_path / "scaled.csv"), "--units", "m"]
        assert main([*argv, "-o", str(tmp_path / f"x{factor:g}")]) == 0
        err = capsys.readouterr().err
        assert ("times thicker than the training beds" in err) == said, err
        assert "never seen" not in err
    # a fit on cores without erosional contacts, decoded on cores with them: one line
    # for the whole decode, not one per core
    train = tmp_path / "no-erosional.csv"
    table.assign(contact=table["contact"].replace("erosional", "sharp")).to_csv(train, index=False)
    other = tmp_path / "contacts.json"
    assert main(["fit", str(train), *scheme, "--restarts", "1", "-o", str(other)]) == 0
    capsys.readouterr()
    assert main(["decode", str(other), str(database / "cores.csv"), "-o", str(tmp_path / "c")]) == 0
    erosional = int((table["contact"] == "erosional").sum())
    lines = [x for x in capsys.readouterr().err.splitlines() if "contact type" in x]
    assert lines == [
        "faciesseq decode: warning: contact type(s) never seen in training, with their beds: "
        f"erosional ({erosional}); {erosional} of {table['contact'].notna().sum()} beds with a "
        "contact decoded with a smoothed contact probability (the stacking window reads them "
        "as missing)"
    ]
    # a model file made before the record: loads, and says nothing of thickness
    doc = json.loads(model.read_text())
    del doc["training"]["bed_thickness_median"], doc["training"]["facies_beds"]
    model.write_text(json.dumps(doc))
    assert main([*argv, "-o", str(tmp_path / "old")]) == 0
    assert "thicker" not in capsys.readouterr().err


def test_codes_outside_a_model_without_scheme_are_one_line_for_every_core(
    database, tmp_path, capsys
):
    # the decode warned once per core ("core X, depth D: facies ['BAS'] not seen ...")
    model = tmp_path / "model.json"
    fit = ["fit", str(database / "cores.csv"), "--no-suggest-ranks", "--restarts", "1"]
    assert main([*fit, "--units", "m", "-o", str(model)]) == 0
    table = pd.read_csv(database / "cores.csv")
    table.loc[table.index[::25], "facies"] = "BAS"  # in every core
    table.to_csv(tmp_path / "new.csv", index=False)
    capsys.readouterr()
    argv = ["decode", str(model), str(tmp_path / "new.csv"), "--units", "m"]
    assert main([*argv, "-o", str(tmp_path / "out")]) == 0
    err = capsys.readouterr().err
    beds = pd.read_csv(tmp_path / "out" / "tracts.csv", skiprows=1)
    n = int((beds["facies"] == "BAS").sum())
    assert beds.loc[beds["facies"] == "BAS", "core"].nunique() > 1
    assert "not seen in training" not in err
    (line,) = [x for x in err.splitlines() if "never seen" in x]
    n_cores = beds.loc[beds["facies"] == "BAS", "core"].nunique()
    first = f"data row 1, core {table['core'].iat[0]}, depth {table['top'].iat[0]:.2f} m"
    listed = f"BAS ({n} beds in {n_cores} core(s), first at {first}); {n} of {len(beds)} beds"
    assert f"cores and first place: {listed} decoded" in line
    # a folder of files: the file is named too; read whole (--keep-labels), the same place
    (tmp_path / "folder").mkdir()
    table.to_csv(tmp_path / "folder" / "a.csv", index=False)
    whole = ["--labels", "tract", "--keep-labels", "-o", str(tmp_path / "whole")]
    assert main(["decode", str(model), str(tmp_path / "folder"), "--units", "m", *whole]) == 0
    (line,) = [x for x in capsys.readouterr().err.splitlines() if "never seen" in x]
    assert f"first at {tmp_path / 'folder' / 'a.csv'}, {first})" in line, line


def test_a_long_grid_decode_says_how_long_before_it_starts(database, tmp_path, capsys, monkeypatch):
    # 7 million cells ran for minutes without a word; the line comes before any cell
    from faciesseq.cli import decode

    model = tmp_path / "grid.json"
    fit = ["fit", str(database / "cores.csv"), "--unit", "grid", "--step", "0.05"]
    fit += ["--suggest-ranks"]  # no scheme, no labels: the order suggested is taken as it is
    assert main([*fit, "--restarts", "1", "--units", "m", "-o", str(model)]) == 0
    capsys.readouterr()
    said = []

    def decode_parts(self, successions):
        said.append(capsys.readouterr().err)  # what was written before the first part
        yield from original(self, successions)

    from faciesseq.hmm.model import TractHMM

    original = TractHMM.decode_parts
    monkeypatch.setattr(TractHMM, "decode_parts", decode_parts)
    monkeypatch.setattr(decode, "LONG_GRID_CELLS", 100)
    argv = ["decode", str(model), str(database / "cores.csv"), "-o", str(tmp_path / "out")]
    assert main(argv) == 0
    cells = len(pd.read_csv(tmp_path / "out" / "tracts.csv", skiprows=1))
    (line,) = said[0].splitlines()
    assert line.startswith(f"faciesseq decode: {cells:,} grid cells of 0.05 m to decode: about ")
    assert "ms a cell" in line
    monkeypatch.setattr(decode, "LONG_GRID_CELLS", 10**9)
    assert main([*argv, "--force"]) == 0
    assert "to decode: about" not in capsys.readouterr().err


def test_decode_warns_of_a_labels_column_the_source_lacks(database, tmp_path, capsys):
    # `--labels Tract_2` (a column that is not there) was silently ignored: no
    # agreement line and no word of why; the default column may be absent unsaid
    model = tmp_path / "model.json"
    fit = ["fit", str(database / "cores.csv"), "--scheme", str(database / "scheme.yaml")]
    assert main([*fit, "--restarts", "1", "-o", str(model)]) == 0
    table = pd.read_csv(database / "cores.csv").drop(columns="tract")
    table.to_csv(tmp_path / "unlabelled.csv", index=False)
    capsys.readouterr()
    decode = ["decode", str(model), str(tmp_path / "unlabelled.csv"), "--units", "m"]
    assert main([*decode, "-o", str(tmp_path / "a")]) == 0
    assert "--labels" not in capsys.readouterr().err
    assert main([*decode, "--labels", "Tract_2", "-o", str(tmp_path / "b")]) == 0
    err = capsys.readouterr().err
    (line,) = [x for x in err.splitlines() if "--labels" in x]
    assert line == (
        "faciesseq decode: warning: no column 'Tract_2' in the source to compare the "
        "decoded tracts with (--labels); no agreement reported"
    )


@pytest.mark.parametrize("suffix", [".csv", ".tsv"])  # a plain CSV file is streamed
def test_decode_core_decodes_only_the_named_cores(database, tmp_path, capsys, suffix):
    table = pd.read_csv(database / "cores.csv")
    source = tmp_path / f"cores{suffix}"
    table.to_csv(source, index=False, sep="," if suffix == ".csv" else "\t")
    model = tmp_path / "model.json"
    fit = ["fit", str(source), "--units", "m", "--restarts", "1", "--max-iter", "5"]
    assert main([*fit, "--suggest-ranks", "-o", str(model)]) == 0
    names = list(dict.fromkeys(table["core"].astype(str)))
    wanted = [names[2], names[0]]
    capsys.readouterr()
    argv = ["decode", str(model), str(source), "--units", "m"]
    out = tmp_path / "out"
    assert main([*argv, "--core", wanted[0], "--core", wanted[1], "-o", str(out)]) == 0
    beds = pd.read_csv(out / "tracts.csv", skiprows=1)
    assert list(dict.fromkeys(beds["core"].astype(str))) == [names[0], names[2]]
    capsys.readouterr()
    missing = tmp_path / "missing"
    assert main([*argv, "--core", names[1], "--core", "NOPE", "-o", str(missing)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and not missing.exists()
    assert f"--core: no core 'NOPE' in the source (its cores: {', '.join(names[:10])}" in err


def test_decode_core_naming_no_core_of_a_streamed_source_is_a_usage_error(
    database, tmp_path, capsys
):
    # a labelled fit decodes described intervals, whose table an empty batch of a streamed
    # source (none of --core's names in it) once broke with an IndexError traceback
    model = tmp_path / "model.json"
    fit = ["fit", str(database / "cores.csv"), "--labels", "tract", "--units", "m"]
    options = ["--restarts", "1", "--max-iter", "5", "--calibration-folds", "0"]
    assert main([*fit, *options, "--suggest-ranks", "-o", str(model)]) == 0
    capsys.readouterr()
    out = tmp_path / "out"
    decode = ["decode", str(model), str(database / "cores.csv"), "--units", "m"]
    assert main([*decode, "--core", "NOPE", "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and not out.exists()
    assert "--core: no core 'NOPE' in the source (its cores: S-71-1, S-71-2," in err


def test_the_graph_line_says_so_where_no_labelled_boundary_tests_the_strict_order():
    # labels on scattered beds (every fifth) leave no two labelled neighbours of
    # different tracts: "all 0 labelled boundaries follow it" misled
    from types import SimpleNamespace

    from faciesseq.hmm.graphs import graph_line
    from faciesseq.scheme import default_tract_model

    chosen = {"graph": "strict", "n_boundaries": 0, "n_forbidden": 0, "forbidden": []}
    model = SimpleNamespace(tract_model_=default_tract_model(), label_graph_=chosen)
    line = graph_line(model)
    assert "no two labelled neighbours differ in tract" in line and "all 0" not in line
    chosen["n_boundaries"] = 5
    assert "all 5 labelled boundaries follow it" in graph_line(model)


def test_force_never_replaces_the_data_a_yaml_source_file_names(database, tmp_path, capsys):
    """A YAML source file reads the data at its ``path``: fit -o that file, or decode -o the
    folder holding it, with --force wrote over the user's data (the guard knew only the
    YAML file itself)."""
    data = tmp_path / "logs"
    data.mkdir()
    (data / "cores.csv").write_bytes((database / "cores.csv").read_bytes())
    source = tmp_path / "cores.yaml"
    source.write_text("path: logs/cores.csv\nunits: m\n")
    before = (data / "cores.csv").read_bytes()
    argv = ["fit", str(source), "--scheme", str(database / "scheme.yaml"), "--force"]
    assert main([*argv, "-o", str(data / "cores.csv")]) == 2
    err = capsys.readouterr().err
    assert "which this command reads" in err and len(err.strip().splitlines()) == 1
    model = str(tmp_path / "model.json")
    assert main([*argv, "--restarts", "1", "--calibration-folds", "0", "-o", model]) == 0
    capsys.readouterr()
    assert main(["decode", model, str(source), "-o", str(data), "--force"]) == 2
    assert "holds" in capsys.readouterr().err
    assert sorted(p.name for p in data.iterdir()) == ["cores.csv"]
    assert (data / "cores.csv").read_bytes() == before


def test_validate_leaves_out_the_irregular_cores_fit_leaves_out(database, tmp_path, capsys):
    """validate fitted its fold models on a scattered pseudo-core that fit leaves out, so
    it scored another model than fit makes; it now screens as fit does (one warning),
    and --keep-irregular keeps the core, as on fit."""
    cores = pd.read_csv(database / "cores.csv")
    first = cores[cores["core"] == cores["core"].iloc[0]].head(4)
    scattered = first.assign(core="SCATTERED")
    scattered["top"] = [0.0, 40.0, 80.0, 120.0]
    scattered["base"] = scattered["top"] + 1.0  # 4 m described over a 121 m span
    path = tmp_path / "cores.csv"
    pd.concat([cores, scattered]).to_csv(path, index=False)
    argv = ["validate", str(path), "--scheme", str(database / "scheme.yaml"), "--labels"]
    argv += ["tract", "--folds", "2", "--restarts", "1", "--format", "json"]
    assert main(argv) == 0
    captured = capsys.readouterr()
    assert "irregularly sampled core(s) left out" in captured.err
    assert "SCATTERED" in captured.err
    assert "SCATTERED" not in json.loads(captured.out)["fold_of_core"]
    assert main([*argv, "--keep-irregular"]) == 0
    assert "SCATTERED" in json.loads(capsys.readouterr().out)["fold_of_core"]
