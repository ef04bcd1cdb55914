"""The appendix's correlation section (``appendix --wells``,
``faciesseq.report.correlation_section``)."""

from __future__ import annotations

import itertools
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from faciesseq.cli import main
from faciesseq.correlation import correlate
from faciesseq.report.appendix import _figure_bytes, add_section
from faciesseq.report.correlation_section import correlation_section
from faciesseq.report.document import Document, FigureBlock, Paragraph, Section, TableBlock

ROOT = Path(__file__).resolve().parents[1]
SCHEME = ROOT / "configs" / "scheme-shoreface.yaml"
TRACTS = ("HST", "FSST", "LST", "TST")
DEPTH_ORDER = ["TST", "LST", "FSST", "HST", "TST", "LST", "FSST", "HST"]  # two cycles
SURFACE = {("HST", "TST"): "MFS", ("LST", "FSST"): "SB"}  # (upper, lower) -> surface


def _two_sections():
    """Invented wells on two sections (3 and 2 wells); picks at the tract changes."""
    beds, picks, extents, rows = [], [], {}, []
    for section, names in (("dip", ("D-1", "D-2", "D-3")), ("strike", ("S-1", "S-2"))):
        for w, name in enumerate(names):
            thickness = 30.0 + 5.0 * w
            extents[name] = (0.0, thickness)
            edges = np.linspace(0.0, thickness, 9)
            for k, (top, base) in enumerate(itertools.pairwise(edges)):
                beds.append({"core": name, "top": top, "base": base, "tract": DEPTH_ORDER[k]})
            for k in range(1, 8):
                kind = SURFACE.get((DEPTH_ORDER[k - 1], DEPTH_ORDER[k]))
                if kind:
                    picks.append(
                        {"core": name, "surface": kind, "depth": edges[k], "probability": 0.9}
                    )
            rows.append({"core": name, "section": section, "position": 4.0 * w})
    return correlate(pd.DataFrame(picks), extents, pd.DataFrame(rows)), pd.DataFrame(beds)


def test_one_subsection_per_section_with_its_figure_and_ties():
    corr, beds = _two_sections()
    section = correlation_section(corr, beds, TRACTS, units="m", position_label="x_km")
    assert section.title == "Correlation"
    assert isinstance(section.blocks[0], Paragraph) and section.blocks[0].kind == "note"
    assert "hypothesis" in section.blocks[0].text  # the caution heads the section
    assert [s.title for s in section.subsections] == ["Section dip", "Section strike"]
    for sub, name in zip(section.subsections, ("dip", "strike")):
        figure, table = sub.blocks
        assert isinstance(figure, FigureBlock) and isinstance(table, TableBlock)
        assert "hypothesis" in figure.caption
        ties = corr.ties[corr.ties["section"] == name]
        assert len(table.frame) == len(ties) > 0
        np.testing.assert_allclose(table.frame["depth (m)"], ties["depth_left"])
        np.testing.assert_allclose(table.frame["confidence"], ties["confidence"])
        assert list(table.frame["tied well"]) == list(ties["core_right"])
        # the figure draws: a PNG of some size
        assert len(_figure_bytes(figure.figure, "png", 100)) > 20_000


def test_add_section_goes_before_methods_and_keeps_keys_unique():
    from faciesseq.report.appendix import Appendix

    corr, beds = _two_sections()
    doc = Document("t", sections=[Section("Data"), Section("Methods")])
    appendix = Appendix(doc)
    add_section(appendix, correlation_section(corr, beds, TRACTS), "correlation", corr.to_dict())
    assert [s.title for s in doc.sections] == ["Data", "Correlation", "Methods"]
    assert appendix.results["correlation"]["sections"]["dip"]["wells"] == ["D-1", "D-2", "D-3"]
    with pytest.raises(ValueError):  # the same keys twice
        add_section(appendix, correlation_section(corr, beds, TRACTS), "again", {})


def test_appendix_bad_wells_table_fails_first_in_one_line(tmp_path, capsys):
    cores = pd.read_csv(ROOT / "demo_cores" / "cores.csv", keep_default_na=False)
    source = tmp_path / "cores.csv"
    cores[cores["core"].isin(["QB-01", "QB-03"])].to_csv(source, index=False)
    wells = tmp_path / "wells.csv"
    pd.DataFrame({"core": ["QB-01", "QB-01"], "x_km": [1.0, 2.0]}).to_csv(wells, index=False)
    out = tmp_path / "app"
    argv = ["appendix", str(source), "--scheme", str(SCHEME), "--wells", str(wells), "-o", str(out)]
    assert main(argv) == 1
    err = capsys.readouterr().err.strip()
    assert "wells.csv" in err and "listed twice" in err and len(err.splitlines()) == 1
    assert not out.exists()


@pytest.mark.slow
def test_appendix_with_wells_has_a_correlation_section(tmp_path, capsys, recwarn):
    cores = pd.read_csv(ROOT / "demo_cores" / "cores.csv", keep_default_na=False)
    names = ["QB-01", "QB-03", "QB-05"]
    source = tmp_path / "cores.csv"
    cores[cores["core"].isin(names)].to_csv(source, index=False)
    wells = pd.read_csv(ROOT / "demo_cores" / "wells.csv")
    wells[wells["core"].isin(names[:2])].to_csv(tmp_path / "wells.csv", index=False)
    out = tmp_path / "app"
    fast = ["--surrogates", "19", "--restarts", "1", "--folds", "2", "--no-latex"]
    argv = [
        "appendix",
        str(source),
        "--scheme",
        str(SCHEME),
        "--wells",
        str(tmp_path / "wells.csv"),
    ]
    assert main([*argv, "-o", str(out), *fast]) == 0, capsys.readouterr().err
    # a core without a well row: said once, in the command's words, not again by Python
    err = capsys.readouterr().err
    assert err.count("core 'QB-05' has no row in the wells table") == 1
    assert "UserWarning" not in err and "faciesseq appendix: warning: " in err
    assert not [w for w in recwarn if "QB-05" in str(w.message)]  # not a Python warning too
    data = json.loads((out / "appendix.json").read_text(encoding="utf-8"))
    titles = data["sections"]
    assert titles.index("5 Correlation") == titles.index("6 Methods") - 2  # one sub-section
    ties = [k for k in data["tables"] if k.endswith("_ties")]
    assert len(ties) == 1 and data["results"]["correlation"]["sections"]
    assert (out / "figures" / f"{ties[0].replace('_ties', '_figure')}.png").exists()
