"""CSV text of result tables: byte for byte what pandas ``to_csv`` writes (pandas is
the reference: the files ``decode`` wrote before were written by it)."""

import numpy as np
import pandas as pd

from faciesseq.report.csvtext import csv_text


def test_csv_text_is_the_text_pandas_writes():
    frame = pd.DataFrame(
        {
            "core": ["a,b", 'say "x"', "plain", "", None, "two\nlines"],
            "depth": [1.0, np.nan, 1e-7, 123456789.0, -0.0, np.inf],
            "n": np.arange(6),
            "picked": [True, False, True, True, False, False],
            "code": pd.array(["u", None, "w,x", "v", "u", "z"], dtype="str"),
        }
    )
    for head in (True, False):
        expected = frame.to_csv(index=False, header=head, float_format="%.6g")
        assert csv_text(frame, header=head) == expected
    assert csv_text(frame.iloc[:0]) == frame.iloc[:0].to_csv(index=False)
