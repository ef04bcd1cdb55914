"""Facies schemes and tract models: loading and validation."""

import pytest
import yaml

from faciesseq.errors import ConfigError
from faciesseq.scheme import (
    FaciesScheme,
    TractModel,
    default_tract_model,
    draft_scheme,
    load_scheme,
    permissive_tract_model,
)


def test_shipped_schemes_load_with_ranks_in_order():
    for path in ("configs/scheme-shoreface.yaml", "configs/scheme-mixed-shelf.yaml"):
        scheme = load_scheme(path)
        assert len(scheme) == 7
        ranks = [scheme.rank(c) for c in scheme.codes_by_rank]
        assert ranks == sorted(ranks)
    assert load_scheme("configs/scheme-shoreface.yaml").resolve("foreshore") == "FS"


@pytest.mark.parametrize(
    ("facies", "needle"),
    [
        (
            [{"code": "A", "name": "a", "rank": 0}, {"code": "A", "name": "b", "rank": 1}],
            "duplicate",
        ),
        ([{"code": "A", "name": "a"}], "missing 'rank'"),
        ([{"code": "A", "name": "a", "rank": 0, "colour": "red"}], "hex colour"),
        ([{"code": "A", "name": "a", "rank": 0, "depth": 3}], "unknown key"),
        (
            [
                {"code": "A", "name": "a", "rank": 0, "aliases": ["B"]},
                {"code": "B", "name": "b", "rank": 1},
            ],
            "clashes",
        ),
        ([{"code": False, "name": "a", "rank": 0}], "in quotes"),
    ],
)
def test_bad_schemes_name_the_entry_and_problem(facies, needle):
    with pytest.raises(ConfigError) as err:
        FaciesScheme.from_dict({"facies": facies}, source="bad.yaml")
    assert "bad.yaml" in str(err.value)
    assert needle in str(err.value)


def test_draft_scheme_does_not_load_until_ranks_are_filled(tmp_path):
    path = tmp_path / "draft.yaml"
    path.write_text(draft_scheme(["2", "10", "1"]))
    with pytest.raises(ConfigError, match="missing 'rank'"):
        load_scheme(path)
    data = yaml.safe_load(path.read_text())
    assert [f["code"] for f in data["facies"]] == ["1", "2", "10"]


def test_draft_scheme_writes_codes_and_names_as_written_and_reads_them_back(tmp_path):
    """Non-ASCII codes are written as their characters (UTF-8), not YAML escapes
    (``"gr\\xE8s"``); codes YAML would misread (``#3``, ``a: b``, ``null``) are quoted;
    every one reads back identically, with its name ``facies CODE``."""
    codes = ["grès", "Kalkstein-ä", "砂岩", "#3", "a: b", "null", "NA"]
    text = draft_scheme(codes, name="Grès d'Annot", suggested={c: i for i, c in enumerate(codes)})
    assert "\\x" not in text and "\\u" not in text
    assert "  - code: grès  #" in text and "  - code: 砂岩  #" in text
    path = tmp_path / "draft.yaml"
    path.write_bytes(text.encode("utf-8"))
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    assert data["name"] == "Grès d'Annot"
    assert [f["code"] for f in data["facies"]] == codes
    assert [f["name"] for f in data["facies"]] == [f"facies {c}" for c in codes]


def test_default_tract_model_order_skips_and_surfaces():
    # Cyclic order upward HST -> FSST -> LST -> TST -> HST (Catuneanu et al. 2009,
    # Earth-Science Reviews 92:1-33), strict by default: only the FSST (subsidence
    # outpaces the fall) and the TST (supply outpaces the rise) may be missing
    # (common practice); every other boundary is a structural zero.
    model = default_tract_model()
    assert model.order == ("HST", "FSST", "LST", "TST")
    assert set(model.skips) == {"FSST", "TST"}
    assert model.successors("HST") == ("FSST", "LST")
    assert model.successors("LST") == ("TST", "HST")
    assert model.successors("TST") == ("HST",)
    assert model.successors("FSST") == ("LST",)
    assert model.surface("TST", "HST").code == "MFS"
    assert model.surface("LST", "TST").code == "MRS"
    assert model.surface("HST", "FSST").code == "BSFR"
    assert model.surface("FSST", "LST").code == "SB"
    assert model.surface("HST", "LST").code == "SB"
    allowed = model.allowed()
    assert sum(map(sum, allowed)) == 4 + 6


def test_permissive_tract_model_allows_every_boundary_and_names_it():
    # at one well any tract may be missing: each boundary named by its chief surface
    model = permissive_tract_model()
    assert set(model.skips) == {"HST", "FSST", "LST", "TST"}
    assert model.surface("TST", "FSST").code == "MFS"
    assert model.surface("FSST", "TST").code == "SB"
    allowed = model.allowed()
    for i, lower in enumerate(model.order):
        for j, upper in enumerate(model.order):
            assert allowed[i][j]
            if i != j:
                assert model.surface(lower, upper) is not None, (lower, upper)


def test_tract_model_with_only_the_cycle_order():
    data = default_tract_model().to_dict()
    data["skips"] = []
    data["surfaces"] = [s for s in data["surfaces"] if s["code"] in ("BSFR", "SB", "MRS", "MFS")][
        :4
    ]
    model = TractModel.from_dict(data)
    assert model.successors("HST") == ("FSST",)
    assert model.successors("TST") == ("HST",)
    assert model.surface("HST", "TST") is None


def test_tract_model_rejects_a_skip_listed_twice():
    data = default_tract_model().to_dict()
    data["skips"] = ["HST", "HST"]
    with pytest.raises(ConfigError, match="listed twice"):
        TractModel.from_dict(data, source="t.yaml")


def test_tract_model_rejects_a_surface_on_a_forbidden_boundary():
    data = default_tract_model().to_dict()
    data["skips"] = ["FSST", "TST"]
    old = {("HST", "FSST"), ("FSST", "LST"), ("HST", "LST"), ("LST", "TST"), ("TST", "HST")}
    data["surfaces"] = [s for s in data["surfaces"] if (s["lower"], s["upper"]) in old]
    TractModel.from_dict(data)  # the cycle with FSST and TST skippable is valid
    data["surfaces"].append({"lower": "TST", "upper": "FSST", "code": "X", "name": "x"})
    with pytest.raises(ConfigError, match="not a boundary"):
        TractModel.from_dict(data, source="t.yaml")


@pytest.mark.parametrize(
    ("entries", "line", "needle"),
    [
        ("  - {code: A, name: a, rank: 0}\n  - {code: B, name: b}\n", 4, "missing 'rank'"),
        (
            "  - {code: A, name: a, rank: 0}\n  - code: B\n    name: b\n    rank: deep\n",
            4,
            "'rank' must be a number",
        ),
        ("  - {code: A, name: a, rank: 0}\n\n  - {code: A, name: b, rank: 1}\n", 5, "duplicate"),
        (
            "  - {code: A, name: a, rank: 0}\n  - {code: B, name: b, rank: 1, aliases: [A]}\n",
            4,
            "clashes",
        ),
    ],
)
def test_bad_scheme_file_names_the_line_of_the_entry(tmp_path, entries, line, needle):
    path = tmp_path / "bad.yaml"
    path.write_text(f"# a scheme\nfacies:\n{entries}")
    with pytest.raises(ConfigError) as err:
        load_scheme(path)
    assert str(err.value).startswith(f"{path}: line {line}: facies ")
    assert needle in str(err.value)


def test_scheme_show_keeps_codes_and_names_in_columns(tmp_path, capsys):
    """Codes longer than a few letters (``coastal plain``) stay apart from their names,
    and every name starts in the same column."""
    from faciesseq.cli import main

    path = tmp_path / "long.yaml"
    path.write_text(
        "facies:\n"
        "  - {code: coastal plain, name: rooted mudstone, rank: 0}\n"
        "  - {code: FS, name: foreshore, rank: 1.5}\n"
        "  - {code: ÖTZ, name: offshore transition, rank: 12}\n"
    )
    assert main(["scheme", "show", str(path)]) == 0
    rows = capsys.readouterr().out.splitlines()[1:]
    names = ("rooted mudstone", "foreshore", "offshore transition")
    assert [row.index(name) for row, name in zip(rows, names)] == [rows[0].index(names[0])] * 3
    assert "coastal plain  rooted mudstone" in rows[0]


@pytest.mark.parametrize("name", ["scenario-ramp.yaml", "stacking-shoreface.yaml"])
def test_scheme_show_of_a_scenario_says_what_the_file_is(name, capsys):
    from faciesseq.cli import main

    assert main(["scheme", "show", f"configs/{name}"]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and name in err
    assert "a simulation scenario, not a facies scheme or tract model" in err
