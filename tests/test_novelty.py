"""The findings of ``decode`` on beds beside a model's training beds
(``faciesseq.novelty``): what they name and what they leave out."""

from __future__ import annotations

from types import SimpleNamespace

import pandas as pd

import faciesseq.novelty as novelty
from faciesseq.novelty import DecodedBeds

#: A model fitted on beds of facies A alone, reading facies (no contacts, no ranks).
MODEL = SimpleNamespace(
    unit_="beds",
    units_="m",
    features_=("facies",),
    facies_=("A",),
    training_={"facies_beds": {"A": 5}},
    scheme=None,
)


def _decoded(codes: list[str]) -> DecodedBeds:
    """One bed of each of ``codes`` in its own core, each code's first place noted."""
    beds = pd.DataFrame({"core": [f"W-{c}" for c in codes], "facies": codes, "thickness": 1.0})
    decoded = DecodedBeds()
    decoded.add(beds, "m")
    decoded.first_places = {
        c: {"row": k + 2, "core": f"W-{c}", "depth": 10.0 + k, "units": "m"}
        for k, c in enumerate(codes)
    }
    return decoded


def test_only_the_places_named_are_formatted(monkeypatch):
    # the place of every unseen code was formatted though ten at most are named
    codes = [f"X{k:02d}" for k in range(25)]
    formatted, where = [], novelty.where

    def counted(**place):
        formatted.append(place["core"])
        return where(**place)

    monkeypatch.setattr(novelty, "where", counted)
    (line,) = _decoded(codes).findings(MODEL)
    assert formatted == [f"W-{c}" for c in codes[:10]]
    assert "X00 (1 bed, first at data row 2, core W-X00, depth 10.00 m)" in line
    assert "X09 (1 bed, first at data row 11, core W-X09, depth 19.00 m) and 15 more" in line
    assert "25 of 25 beds decoded" in line


def test_a_sampled_log_decoded_by_a_model_of_described_intervals_is_named_as_the_cause():
    """A sampled log (samples layout, LAS) has no described intervals: its runs of one
    facies stand for them and are thicker, which is no error of units (a new-user audit
    of 2026-12-05 was told to check the units of a LAS file in metres)."""
    model = SimpleNamespace(**{**vars(MODEL), "training_": {"bed_thickness_median": 0.3}})
    for unit, sampled, cause in [
        ("intervals", True, "this source is a sampled log"),
        ("intervals", False, "check the units"),
        ("beds", True, "check the units"),
    ]:
        decoded = _decoded(["A"] * 3)
        decoded.thickness = [pd.Series([3.0, 3.0]).to_numpy()]  # 10 times the 0.3 m
        decoded.sampled = sampled
        (line,) = DecodedBeds.findings(decoded, SimpleNamespace(**{**vars(model), "unit_": unit}))
        assert line.startswith("the beds are 10.0 times thicker") and cause in line
