"""Core names with accented letters, which can be stored in two Unicode forms.

An accented letter is one character (``é``, composed) or a letter and a combining accent
(``e`` + U+0301, decomposed); the two look the same and are the same text by Unicode's
canonical equivalence (Unicode Standard Annex 15, normalization forms). Spreadsheets and
file systems of different machines store either, so rows of one core pasted from two
machines, or a name typed on the command line, may hold the other form than the source.
"""

from __future__ import annotations

import unicodedata
from pathlib import Path

import pandas as pd

from faciesseq.cli import main
from faciesseq.io import read_cores

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_cores" / "cores.csv"
COMPOSED = unicodedata.normalize("NFC", "Île de Ré 3")
DECOMPOSED = unicodedata.normalize("NFD", COMPOSED)


def _cores(names: dict[str, str]) -> pd.DataFrame:
    """The demo cores of ``names`` (demo name -> new name), as ``core, top, base, facies``."""
    table = pd.read_csv(DEMO)
    table = table[table["core"].isin(names)][["core", "top", "base", "facies"]]
    return table.assign(core=table["core"].map(names)).reset_index(drop=True)


def test_one_core_name_in_two_unicode_forms_is_an_error_naming_the_rows(tmp_path):
    # rows of one core in both forms were read as two cores that look the same,
    # with nothing said: `check` listed "Île de Ré 3" twice
    table = _cores({"QB-03": COMPOSED})
    later = table.index[40:]
    table.loc[later, "core"] = DECOMPOSED
    source = tmp_path / "cores.csv"
    table.to_csv(source, index=False)
    cores = read_cores(source, units="m")
    (problem,) = [p for p in cores.problems if p.kind == "bad-core"]
    assert problem.severity == "error"
    assert problem.row == later[0] + 1  # data rows counted from 1
    assert problem.core == DECOMPOSED
    assert "two Unicode forms" in problem.message and "data row 1" in problem.message


def test_decode_core_matches_a_name_typed_in_the_other_unicode_form(tmp_path, capsys):
    # `--core 'Île de Ré 3'` (composed, as typed) on a source storing the name
    # decomposed was refused as "no core 'Île de Ré 3' (its cores: ..., Île de Ré 3)"
    table = _cores({"QB-03": DECOMPOSED, "QB-02": "QB-02"})
    source = tmp_path / "cores.csv"
    table.to_csv(source, index=False)
    model = tmp_path / "model.json"
    fit = ["fit", str(source), "--units", "m", "--suggest-ranks", "--restarts", "1"]
    assert main([*fit, "--max-iter", "5", "--calibration-folds", "0", "-o", str(model)]) == 0
    capsys.readouterr()
    out = tmp_path / "out"
    argv = ["decode", str(model), str(source), "--units", "m", "--core", COMPOSED]
    assert main([*argv, "-o", str(out)]) == 0, capsys.readouterr().err
    decoded = pd.read_csv(out / "tracts.csv", skiprows=1)
    assert set(decoded["core"]) == {DECOMPOSED}  # the source's own spelling, to join on
