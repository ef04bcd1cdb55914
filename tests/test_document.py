"""The appendix document: cell formatting, escaping round trips (property tests)."""

import math
import re

import numpy as np
import pandas as pd
from _html_tables import read_tables
from hypothesis import example, given, settings
from hypothesis import strategies as st

from faciesseq.report.document import TableBlock, format_value
from faciesseq.report.html import table_html
from faciesseq.report.latex import latex_escape

# Printable text without surrogates; HTML cannot carry control characters.
TEXT = st.text(
    st.characters(blacklist_categories=("Cs", "Cc", "Co", "Cn"), blacklist_characters="\r"),
    max_size=30,
)


@settings(max_examples=60, deadline=None)
@given(TEXT, TEXT)
def test_any_text_in_a_cell_reads_back_unchanged_from_the_html(label, value):
    frame = pd.DataFrame({"name": [value]}, index=pd.Index([label], name="core"))
    html = table_html(TableBlock("t", "caption <b>", frame), 1)
    table = read_tables(html).tables["table-t"]
    assert table["header"] == ["core", "name"]
    assert table["rows"] == [[label, value]]


@settings(max_examples=60, deadline=None)
@given(TEXT)
@example("\u00a0~ & <x>")
def test_latex_escape_leaves_no_special_character_bare(text):
    out = latex_escape(text)
    # strip the commands the escaper writes; what is left must hold no active character
    for command in (
        r"\textbackslash{}",
        r"\textasciitilde{}",
        r"\textasciicircum{}",
        r"\textless{}",
        r"\textgreater{}",
        r"\textbar{}",
        r"\ldots{}",
    ):
        out = out.replace(command, "")
    # symbols mapped to mathematics are whole groups the escaper wrote
    out = re.sub(r"\\ensuremath\{[^{}]*\}", "", out)
    for ch in "&%$#_{}":
        out = out.replace("\\" + ch, "")
    # a no-break space is written as LaTeX's tie, the only bare ~ allowed
    assert out.count("~") == text.count("\u00a0")
    assert not set(out) & set("&%$#_^<>|")


def test_format_value_shows_four_significant_digits():
    # the display rule the HTML/CSV comparison relies on (documented in docs/appendix.md)
    assert format_value(0.123456) == "0.1235"
    assert format_value(12345.678) == "12345.7"
    assert format_value(3.0) == "3"
    assert format_value(np.int64(17)) == "17"
    assert format_value(1.5e-7) == "1.500e-07"
    assert format_value(float("nan")) == ""
    assert format_value(True) == "yes"
    assert format_value(-math.inf) == "−∞"
