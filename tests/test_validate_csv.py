"""The CSV tables of ``faciesseq validate``: depths exact, statistics to 6 significant
digits (synthetic cores, invented, hung from a deep datum)."""

import hmm_synthetic as synth
import pandas as pd
import pytest

from faciesseq.cli import main

#: A depth whose seven significant digits 6 significant digits would cut (10004.3).
DATUM = 10004.31


@pytest.fixture(scope="module")
def validated(tmp_path_factory):
    folder = tmp_path_factory.mktemp("deep")
    synth.write_database(folder, 4, 40, seed=71)
    table = pd.read_csv(folder / "cores.csv")
    # described to the centimetre, as a core description is
    table[["top", "base"]] = (table[["top", "base"]] + DATUM).round(2)
    table.to_csv(folder / "cores.csv", index=False)
    out = folder / "val"
    source = [str(folder / "cores.csv"), "--scheme", str(folder / "scheme.yaml"), "--units", "m"]
    options = ["--labels", "tract", "--folds", "2", "--restarts", "1", "-o", str(out)]
    assert main(["validate", *source, *options]) == 0
    return table, out


def test_bed_depths_are_written_as_the_source_has_them(validated, capsys):
    table, out = validated
    text = (out / "beds.csv").read_text(encoding="utf-8")
    beds = pd.read_csv(out / "beds.csv", dtype={"top": str, "base": str})
    # the depths as written in the source's own digits, never rounded to 10004.3
    source = {f"{v:.15g}" for v in table["top"]} | {f"{v:.15g}" for v in table["base"]}
    assert set(beds["top"]) | set(beds["base"]) <= source
    assert ",10004.3," not in text
    # statistics keep 6 significant digits, as pandas' %.6g writes them
    probabilities = pd.read_csv(out / "beds.csv", dtype=str).filter(like="p_").stack()
    assert len(probabilities) and all(v == f"{float(v):.6g}" for v in probabilities)
