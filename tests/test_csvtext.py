"""CSV text of result tables: byte for byte what pandas ``to_csv`` writes (pandas is
the reference: the files ``decode`` wrote before were written by it)."""

import io

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


def test_numbers_are_written_as_percent_6g_writes_them():
    """Six significant digits found by scaling and rounding must equal ``%.6g`` (the
    reference: pandas ``to_csv`` with ``float_format="%.6g"``) at the edges: powers of
    ten and their neighbours, halves (1234565.0), 999999.5 rounding up a place, the
    switch to exponent notation at 1e-4 and 1e6, three-place exponents, subnormals."""
    rng = np.random.default_rng(7)
    powers = 10.0 ** np.arange(-310, 308)
    numbers = np.concatenate(
        [
            rng.random(2000),
            rng.random(2000) ** 8,
            np.round(rng.random(2000) * 1000, 2),
            10 ** rng.uniform(-320, 308, 2000) * rng.choice([-1, 1], 2000),
            powers,
            np.nextafter(powers, 0),
            np.nextafter(powers, np.inf),
            powers * 0.9999995,
            powers * 9.999995,
            [0.0, -0.0, np.nan, np.inf, -np.inf, 5e-324, 1234565.0, 123456.5, 0.00012345650],
            [999999.5, 9999995.0, 99999.95, 9.999995e-5, 2.5, -1e-5, 1e22, 1e23, 123456.0],
        ]
    )
    counts = rng.integers(-(10**18), 10**18, len(numbers))
    counts[:4] = [0, -1, np.iinfo(np.int64).max, np.iinfo(np.int64).min]
    frame = pd.DataFrame(
        {
            "value": numbers,
            "count": counts,
            "kind": pd.Categorical(rng.choice(["a", "b,c", 'q"'], len(numbers))),
        }
    )
    expected = frame.to_csv(index=False, float_format="%.6g")
    assert csv_text(frame) == expected


def test_text_laid_out_from_arrow_buffers_is_the_text_pandas_writes():
    """Arrow-backed text needing no quotes is laid out from Arrow's buffers (a sliced
    column, an empty text, a missing cell, multi-byte characters); pandas is the
    reference."""
    names = pd.array(["QB-01~00000", "", None, "Ørsted sand", "QB-01~00000", "x"], dtype="str")
    frame = pd.DataFrame({"core": names, "n": np.arange(6)}).iloc[1:]
    assert csv_text(frame) == frame.to_csv(index=False)


def test_numbers_repeated_on_following_rows_are_the_text_pandas_writes():
    """A value repeated on the next rows is written once and copied (as a contact's
    depth on each surface's row): 0.0 beside -0.0, runs of NaN, runs across the
    blocks of rows; pandas is the reference."""
    import faciesseq.report.csvtext as csvtext

    rng = np.random.default_rng(3)
    values = np.repeat(rng.random(3000) * 10.0 ** rng.integers(-6, 8, 3000), 4)
    values[:8] = [0.0, -0.0, -0.0, 0.0, np.nan, np.nan, 1e-5, 1e-5]
    values[100:140] = 123456.5  # written by % itself, then copied
    frame = pd.DataFrame({"depth": values, "p": np.tile([0.1, 0.2, 0.3, 0.4], 3000)})
    expected = frame.to_csv(index=False, float_format="%.6g")
    assert csv_text(frame) == expected
    original = csvtext.BLOCK_BYTES
    try:
        csvtext.BLOCK_BYTES = 48 * 37  # 37 rows a block: runs cut at block ends
        assert csv_text(frame) == expected
    finally:
        csvtext.BLOCK_BYTES = original


def test_small_measures_laid_out_in_fewer_words_are_the_text_percent_writes():
    """Measures below 10**5 and none negative (depths of most cores) are laid out in
    three words, not five: the same text as each formatted by ``%`` (the path of a
    one-column table), a half at the eighth decimal and a float's noise included."""
    rng = np.random.default_rng(12)
    places = rng.integers(0, 9, 5000)
    depths = [float(f"{x:.{k}f}") for x, k in zip(rng.uniform(0, 99_998, 5000), places)]
    depths += [0.0, 99_998.99999999, 0.000000125, 12.345000000000001, np.nan]
    frame = pd.DataFrame({"depth": depths, "n": np.arange(len(depths))})
    rows = csv_text(frame, measures={"depth"}).split("\n")[1:-1]
    alone = csv_text(frame[["depth"]], measures={"depth"}).split("\n")[1:-1]
    assert [row.rsplit(",", 1)[0] for row in rows] == [a.strip('"') for a in alone]
    assert rows[-5:] == ["0,5000", "99998.99999999,5001", "0.00000012,5002", "12.345,5003", ",5004"]


def test_measures_are_written_so_that_they_read_back_as_themselves():
    """Depths and positions (``measures``) in decimal notation: a source's depth to
    0.01 ft at 10,000 ft, a UTM northing, read back as the same float; the noise of a
    difference (``0.040000000000363798``) not written; probabilities stay ``%.6g``."""
    rng = np.random.default_rng(11)
    places = rng.integers(0, 9, 5000)
    depths = [float(f"{x:.{k}f}") for x, k in zip(rng.uniform(-1e6, 1e7, 5000), places)]
    frame = pd.DataFrame({"depth": depths, "probability": rng.random(5000)})
    back = pd.read_csv(io.StringIO(csv_text(frame, measures={"depth"})))
    assert (back["depth"].to_numpy() == frame["depth"].to_numpy()).all()
    assert csv_text(frame, measures=()) == frame.to_csv(index=False, float_format="%.6g")
    odd = pd.DataFrame(
        {
            "top": [10004.31, 6712345.0, 0.040000000000363798, -0.0, np.nan, 1e15],
            "n": np.arange(6),
        }
    )
    assert csv_text(odd, measures={"top"}).split("\n")[1:-1] == [
        "10004.31,0",
        "6712345,1",
        "0.04,2",
        "0,3",
        ",4",
        "1e+15,5",
    ]
    # the same text where the table is left to pandas (a one-column table)
    alone = csv_text(odd[["top"]], measures={"top"})
    assert alone == 'top\n10004.31\n6712345\n0.04\n0\n""\n1e+15\n'
