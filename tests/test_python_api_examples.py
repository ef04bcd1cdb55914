"""The cheap Python examples of docs/io.md run as written and print or raise what their
comments say (the README's and docs/appendix.md's fit the tract model or draw
surrogates, too slow here; docs/correlation.md's is run by test_python_api.py)."""

import re
from pathlib import Path

import pandas as pd
import pytest

from faciesseq.core import CoreSet
from faciesseq.errors import InputError

ROOT = Path(__file__).resolve().parents[1]


def _blocks() -> list[str]:
    text = (ROOT / "docs" / "io.md").read_text(encoding="utf-8")
    return re.findall(r"^```python\n(.*?)^```", text, flags=re.S | re.M)


def test_reading_example_reads_a_sample_log_in_feet_and_writes_sqlite(
    tmp_path, monkeypatch, capsys
):
    monkeypatch.chdir(tmp_path)  # the inputs the example names, made here
    (tmp_path / "my-scheme.yaml").write_bytes((ROOT / "configs/scheme-shoreface.yaml").read_bytes())
    codes = ["CP", "FS", "USF", "LSF", "OTZ", "OFF"]
    rows = [
        (well, 3280.0 + 0.5 * i, codes[i // 5 % 6]) for well in ("A-1", "B-2") for i in range(40)
    ]
    pd.DataFrame(rows, columns=["Well Name", "Depth", "Facies"]).to_csv("logs.csv", index=False)
    scope: dict = {}
    exec(compile(_blocks()[0], "docs/io.md", "exec"), scope)
    assert capsys.readouterr().out == "['A-1', 'B-2'] ft 0\n"
    assert scope["cores"].units == "ft" and set(scope["summary"].to_dict()) >= {"cores", "facies"}
    assert (tmp_path / "cores.sqlite").read_bytes()[:16] == b"SQLite format 3\x00"


def test_frame_example_raises_the_messages_its_comments_quote(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "my-scheme.yaml").write_bytes((ROOT / "configs/scheme-shoreface.yaml").read_bytes())
    # data row 4 overlaps data row 3, at the depths the example's message names
    frame = pd.DataFrame(
        {
            "core": ["SF-1"] * 4,
            "top": [1000.0, 1001.26, 1002.51, 1002.61],
            "base": [1001.26, 1002.51, 1003.92, 1005.3],
            "facies": ["FS", "USF", "LSF", "USF"],
        }
    )
    scope = {"CoreSet": CoreSet, "frame": frame}
    code, quoted = [], []  # (statements, the message their comment quotes)
    for line in _blocks()[1].splitlines():
        if line.startswith("# InputError: "):
            quoted.append(["\n".join(code), line.removeprefix("# InputError: ")])
            code = []
        elif line.startswith("#  "):  # the message continued
            quoted[-1][1] += " " + line.removeprefix("#").strip()
        else:
            code.append(line)
    assert len(quoted) == 2
    for statements, message in quoted:
        with pytest.raises(InputError) as error:
            exec(compile(statements, "docs/io.md", "exec"), scope)
        said = str(error.value)
        first, *rest = message.removesuffix(" (one line)").split(" ...")
        assert said.startswith(first) and all(part.strip() in said for part in rest)
        assert "\n" not in said
