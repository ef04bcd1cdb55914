"""Cores of the parasequence-stacking generator without their tracts, fits on them,
the balanced accuracy of a fitted model's tract column and its methods text (shared
by the tests of the starts of EM)."""

from __future__ import annotations

import warnings

import pandas as pd

from faciesseq.core import CoreSet
from faciesseq.scores import balanced_tract_accuracy
from faciesseq.simulate import simulate_stacking


def stacking_table(scenario, seeds) -> pd.DataFrame:
    """The cores of ``scenario`` at each of ``seeds`` (core names ending ``/s<seed>``),
    their true tracts in ``true_tract`` only."""
    frames = []
    for seed in seeds:
        t = simulate_stacking(scenario, seed=seed).cores.to_frame()
        t["core"] = t["core"] + f"/s{seed}"
        frames.append(t.drop(columns=["tract"], errors="ignore"))
    return pd.concat(frames, ignore_index=True)


def balanced_accuracy(model, test: pd.DataFrame) -> float:
    """Balanced tract accuracy of ``model``'s decoded column on the beds of ``test``
    against their ``true_tract`` (each bed takes the decoded tract at its middle)."""
    decoded = model.decode(CoreSet.from_frame(test, units="m")).tracts_table()
    test = test.assign(thickness=test["base"] - test["top"])
    mid = (test["top"] + test["base"]) / 2
    tract = []
    for core, depth in zip(test["core"], mid, strict=True):
        beds = decoded[decoded["core"] == core]
        inside = beds[(beds["top"] <= depth) & (beds["base"] >= depth)]
        tract.append(inside["tract"].iloc[0] if len(inside) else None)
    scored = test.assign(tract=tract).dropna(subset=["tract"])
    return balanced_tract_accuracy(scored).balanced_accuracy


def fit_quietly(scenario, table: pd.DataFrame, seed: int, **settings):
    """A ``TractHMM`` of ``scenario``'s scheme fitted without labels on ``table``
    (``random_state=seed``), its warnings silenced."""
    from faciesseq.hmm import TractHMM

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return TractHMM(scheme=scenario.scheme, random_state=seed, **settings).fit(
            CoreSet.from_frame(table, units="m")
        )


def methods_text(model) -> str:
    """The text of the appendix's methods section for ``model`` (a beds fit)."""
    from faciesseq.report.methods import methods_section

    def text(section) -> str:
        blocks = [getattr(b, "text", "") for b in section.blocks]
        return " ".join(blocks + [text(sub) for sub in section.subsections])

    return text(methods_section("beds", model))
