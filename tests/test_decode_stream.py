"""Decoding a part of whole cores at a time: the same tables and files as in one
piece, picks the same as found contact by contact, nothing left behind when writing
fails (synthetic cores from tests/hmm_synthetic.py, invented)."""

import hmm_synthetic as synth
import numpy as np
import pandas as pd
import pytest

import faciesseq.cli.decode as decode_cli
from faciesseq.cli import main
from faciesseq.hmm import decoding
from faciesseq.interpretation import Interpretation
from faciesseq.scheme import default_tract_model
from faciesseq.surfaces import pick_table, slice_sums, surface_codes


@pytest.fixture(scope="module")
def database(tmp_path_factory):
    folder = tmp_path_factory.mktemp("db")
    synth.write_database(folder, 9, 40, seed=17)
    model = folder / "model.json"
    argv = ["fit", str(folder / "cores.csv"), "--scheme", str(folder / "scheme.yaml")]
    assert main([*argv, "-o", str(model), "--restarts", "1"]) == 0
    return folder


def test_slice_sums_are_numpys_sums_to_the_last_bit():
    rng = np.random.default_rng(5)
    values = rng.random(5000) * rng.choice([1e-6, 1.0, 1e6], 5000)
    start = rng.integers(0, 4000, 3000)
    length = rng.integers(0, 300, 3000)
    expected = [values[a : a + n].sum() for a, n in zip(start, length)]
    assert slice_sums(values, start, length).tolist() == expected


def _picks_one_by_one(depth, lower, upper, surf, first, tract_model, mass=0.9, floor=0.02):
    """The picks as the straightforward loop finds them, contact by contact."""
    codes, rows = surface_codes(tract_model), []
    tracts = list(tract_model.order)
    for i in np.flatnonzero(lower != upper):
        found = tract_model.surface(tracts[lower[i]], tracts[upper[i]])
        if found is None:
            continue
        p = surf[:, codes.index(found.code)]
        a0 = max([k for k in range(i + 1) if first[k]])  # the succession's first contact
        z0 = min([k for k in range(i + 1, len(p)) if first[k]] + [len(p)]) - 1
        lo, hi = i, i
        while lo > a0 and floor <= p[lo - 1] <= p[lo]:
            lo -= 1
        while hi < z0 and floor <= p[hi + 1] <= p[hi]:
            hi += 1
        target, a, b = mass * p[lo : hi + 1].sum(), i, i
        while p[a : b + 1].sum() < target and (a > lo or b < hi):
            left = p[a - 1] if a > lo else -1.0
            right = p[b + 1] if b < hi else -1.0
            a, b = (a - 1, b) if left >= right else (a, b + 1)
        rows.append((i, found.name, min(1.0, p[a : b + 1].sum()), depth[a], depth[b]))
    return rows


def test_picks_of_many_successions_at_once_are_those_of_the_contact_by_contact_loop():
    tm = default_tract_model()
    rng = np.random.default_rng(11)
    n = 400
    lower = rng.integers(0, len(tm.order), n)
    upper = np.where(rng.random(n) < 0.7, lower, rng.integers(0, len(tm.order), n))
    surf = rng.random((n, len(surface_codes(tm)))) ** 3
    first = rng.random(n) < 0.05
    first[0] = True
    depth = np.arange(n) * 0.5
    found = pick_table(depth, lower, upper, surf, first, tm)
    expected = _picks_one_by_one(depth, lower, upper, surf, first, tm)
    assert len(expected) > 20
    got = zip(found["contact"], found["name"], found["probability"], found["depth_top"])
    assert [g[:4] for g in got] == [e[:4] for e in expected]
    assert found["depth_base"].tolist() == [e[4] for e in expected]


def test_decoding_in_parts_gives_the_tables_of_one_piece(database, monkeypatch):
    from faciesseq.hmm.modelfile import load_model

    monkeypatch.setattr(decoding, "DECODE_BATCH", 75)  # two cores of 30 beds a batch
    model = load_model(database / "model.json")
    cores = synth.cores(7, 30, seed=3)
    whole = model.decode(cores)
    parts = list(model.decode_parts(cores, size=1))
    assert len(whole) == 7 and len(parts) == 4  # whole batches, whole cores
    joined = Interpretation.concat(parts)
    for name in ("beds", "boundaries", "picks", "wells"):
        pd.testing.assert_frame_equal(getattr(joined, name), getattr(whole, name))
    assert [c.core for c in joined] == [c.core for c in whole]


def test_a_decode_that_fails_while_writing_leaves_nothing_behind(database, tmp_path, monkeypatch):
    seen = []

    def fail_on_the_second(part):
        seen.append(part)
        if len(seen) == 2:
            raise RuntimeError("disk full")
        return part.picks_table()

    monkeypatch.setattr(decoding, "DECODE_BATCH", 45)
    monkeypatch.setattr(decoding, "DECODE_PART", 1)
    monkeypatch.setitem(decode_cli._TABLES, "picks", fail_on_the_second)
    argv = ["decode", str(database / "model.json"), str(database / "cores.csv")]
    with pytest.raises(RuntimeError):
        main([*argv, "-o", str(tmp_path / "new")])
    assert not (tmp_path / "new").exists()
    old = tmp_path / "old"
    old.mkdir()
    (old / "tracts.csv").write_text("kept\n")
    seen.clear()
    with pytest.raises(RuntimeError):
        main([*argv, "-o", str(old), "--force"])
    assert [p.name for p in old.iterdir()] == ["tracts.csv"]
    assert (old / "tracts.csv").read_text() == "kept\n"
    assert not [p for p in tmp_path.iterdir() if p.name not in ("old",)]


def test_decode_has_no_threshold_parameter(database):
    from faciesseq.hmm.modelfile import load_model

    model = load_model(database / "model.json")
    with pytest.raises(TypeError):
        model.decode(synth.cores(1, 10, seed=1), threshold=0.5)


@pytest.mark.parametrize("fmt", ["csv", "json"])
def test_files_written_a_part_at_a_time_are_those_written_at_once(
    database, tmp_path, monkeypatch, fmt
):
    monkeypatch.setattr(decoding, "DECODE_BATCH", 75)
    argv = ["decode", str(database / "model.json"), str(database / "cores.csv"), "--format", fmt]
    for name, size in (("parts", 1), ("once", 10**9)):
        monkeypatch.setattr(decoding, "DECODE_PART", size)
        assert main([*argv, "-o", str(tmp_path / name)]) == 0
    names = sorted(p.name for p in (tmp_path / "once").iterdir())
    assert names == sorted(p.name for p in (tmp_path / "parts").iterdir())
    assert {"tracts", "surfaces", "picks", "tops"} <= {n.split(".")[0] for n in names}
    for name in names:
        assert (tmp_path / "parts" / name).read_bytes() == (tmp_path / "once" / name).read_bytes()


def test_a_contact_type_the_model_never_saw_is_named_once_per_decode(database):
    from dataclasses import replace

    from faciesseq.hmm.encoding import UnseenCategoryWarning
    from faciesseq.hmm.modelfile import load_model

    model = load_model(database / "model.json")
    first, second = synth.cores(2, 20, seed=8)
    beds = second.beds.copy()
    assert "contact" in model.features_
    beds.loc[[2, 5], "contact"] = "zigzag"  # base to top: row 2 is the lower of the two
    with pytest.warns(UnseenCategoryWarning) as caught:
        model.decode([first, replace(second, beds=beds)])
    messages = [str(w.message) for w in caught]
    depth = float(beds["top"].iloc[2])
    assert messages == [
        f"core {second.core}, depth {depth:.2f} m: contact type ['zigzag'] not seen in training "
        f"(2 of {len(first.beds) + len(beds)} bed(s)); decoded with a smoothed probability"
    ]


def test_the_decode_processs_habits_change_no_byte(database, tmp_path, monkeypatch):
    """One BLAS thread (for the command and each batch) against the BLAS's own threads,
    and the allocators' habits left out: the same files, byte for byte."""
    import contextlib

    from faciesseq.hmm import engine

    argv = ["decode", str(database / "model.json"), str(database / "cores.csv")]
    assert main([*argv, "-o", str(tmp_path / "habits")]) == 0
    monkeypatch.setattr(engine, "single_thread_blas", contextlib.nullcontext)
    monkeypatch.setattr(decode_cli, "_memory_habits", lambda: None)
    assert main([*argv, "-o", str(tmp_path / "plain")]) == 0
    names = sorted(p.name for p in (tmp_path / "plain").iterdir())
    assert names == sorted(p.name for p in (tmp_path / "habits").iterdir())
    for name in names:
        assert (tmp_path / "habits" / name).read_bytes() == (tmp_path / "plain" / name).read_bytes()


def test_freed_memory_is_kept_unless_the_user_set_glibcs_thresholds(monkeypatch):
    import ctypes
    import sys

    from faciesseq._memory import keep_freed_memory

    calls = []

    class _Libc:
        def __init__(self, name):
            self.mallopt = _Mallopt()

    class _Mallopt:
        def __call__(self, param, value):
            calls.append((param, value))
            return 1

    monkeypatch.setattr(ctypes, "CDLL", _Libc)
    monkeypatch.setattr(sys, "platform", "linux")
    for name in ("MALLOC_MMAP_THRESHOLD_", "MALLOC_TRIM_THRESHOLD_"):
        monkeypatch.delenv(name, raising=False)
    keep_freed_memory()
    # M_MMAP_THRESHOLD (-3) 256 MiB, M_TRIM_THRESHOLD (-1) 512 MiB
    assert calls == [(-3, 1 << 28), (-1, 1 << 29)]
    calls.clear()
    monkeypatch.setenv("MALLOC_TRIM_THRESHOLD_", "131072")
    keep_freed_memory()
    assert calls == []


def test_agreement_per_core_is_the_core_by_core_sum_to_the_last_bit():
    """The thickness-weighted agreement of every core, taken for all cores at once, is
    numpy's sum over each core's beds bit for bit (cores of 1 to 300 beds, a core of
    zero thickness, unlabelled beds)."""
    from types import SimpleNamespace

    rng = np.random.default_rng(4)
    sizes = [1, 3, 7, 8, 9, 16, 130, 300, 5]
    core = np.repeat([f"C{k}" for k in range(len(sizes))], sizes)
    thickness = rng.random(len(core)) * rng.choice([1e-3, 1.0, 1e3], len(core))
    thickness[core == "C8"] = 0.0
    tract = rng.choice(["HST", "LST"], len(core))
    labels = rng.choice(["HST", "LST", ""], len(core))
    beds = pd.DataFrame(
        {"core": core, "thickness": thickness, "tract": tract, "interpreted_tract": labels}
    )
    table = decode_cli._agreement(
        SimpleNamespace(beds=beds, tracts=("HST", "FSST", "LST", "TST")), "interpreted_tract"
    )
    for row in table.itertuples():
        mine = beds[(beds["core"] == row.core) & (beds["interpreted_tract"] != "")]
        weight = mine["thickness"].to_numpy()
        same = (mine["interpreted_tract"] == mine["tract"]).to_numpy()
        expected = np.sum(weight * same) / np.sum(weight) if weight.sum() else np.nan
        assert row.beds == len(mine)
        assert np.array_equal(row.agreement_thickness, expected, equal_nan=True), row.core
