"""Facies ranks suggested from the upward transitions (faciesseq.markov.seriation).

Outside checks: the real Council Grove wells (Dubois, Bohling & Chakrabarti 2007,
Computers & Geosciences 33:599-617; the data's own marine/nonmarine column); the
spectral seriation recovers the order of a banded similarity, as Atkins, Boman &
Hendrickson (1998, SIAM J. Comput. 28:297-310) prove for such matrices; and the
shallowing-upward parasequence, gradual upward and abrupt at its flooding surface
(Van Wagoner et al. 1990, AAPG Methods in Exploration 7; common practice).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from markov_data import council_grove_coreset, council_grove_samples

from faciesseq.cli import main
from faciesseq.core import CoreSet
from faciesseq.io import read_cores, summarise
from faciesseq.markov.seriation import _best_path, _spectral_order, suggest_ranks, upward_steps
from faciesseq.scheme import FaciesScheme

ROOT = Path(__file__).resolve().parents[1]


def _parasequences(order: list[str], n: int, seed: int) -> list[list[str]]:
    """Successions of shallowing-upward cycles over ``order`` (landward first): each
    cycle starts at a random facies (its flooding surface), steps landward one facies
    at a time (now and then two) and stops at a random shallower one."""
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(n):
        beds: list[str] = []
        for _ in range(8):
            k = int(rng.integers(2, len(order)))
            top = int(rng.integers(0, k))
            while k >= top:
                beds.append(order[k])
                k -= 2 if rng.random() < 0.2 else 1
        out.append([c for i, c in enumerate(beds) if i == 0 or c != beds[i - 1]])
    return out


def test_shallowing_upward_cycles_give_the_order_and_its_direction():
    order = ["coastal", "foreshore", "upper", "lower", "transition", "offshore"]
    for seed in range(5):
        suggestion = suggest_ranks(_parasequences(order, 6, seed=seed))
        assert suggestion.order() == order  # rank 0 landward: where the gradual steps lead
        assert suggestion.share > 0.8  # floods one facies deep count
        # without any deepening step, the end facies are joined to their neighbours one
        # way only: nothing tells a flood from a neighbour there, so the ends are unclear
        ends = {tuple(order[:2]), tuple(order[-2:])}
        one_way = {tuple(sorted((b, a), key=order.index)) for b, a, _ in suggestion.one_way}
        assert one_way and one_way <= ends | {tuple(order[-3:-1])}
        assert not suggestion.clear


def test_the_codes_names_do_not_change_the_order():
    order = ["a", "b", "c", "d", "e"]
    renamed = dict(zip(order, ["Zq", "b9", "A", "mm", "c"]))
    cycles = _parasequences(order, 5, seed=8)
    first = suggest_ranks(cycles).order()
    second = suggest_ranks([[renamed[c] for c in s] for s in cycles]).order()
    assert [renamed[c] for c in first] == second


def test_the_fiedler_order_of_a_banded_similarity_is_its_line():
    rng = np.random.default_rng(0)
    n = 9
    line = np.arange(n)
    band = np.maximum(0, 3 - np.abs(line[:, None] - line[None, :])).astype(float)
    np.fill_diagonal(band, 0)
    shuffle = rng.permutation(n)
    order = _spectral_order(band[np.ix_(shuffle, shuffle)] / 2)
    recovered = shuffle[order].tolist()
    assert recovered in (line.tolist(), line[::-1].tolist())


def test_the_best_path_is_that_of_every_ordering_tried():
    # the dynamic programme (Held & Karp 1962) against all 720 orders of 6 facies
    import itertools

    rng = np.random.default_rng(4)
    for _ in range(5):
        w = rng.random((6, 6))
        np.fill_diagonal(w, 0)
        best = max(
            sum(w[a, b] for a, b in itertools.pairwise(p)) for p in itertools.permutations(range(6))
        )
        path = _best_path(w)
        assert sorted(path.tolist()) == list(range(6))
        assert sum(w[a, b] for a, b in itertools.pairwise(path)) == pytest.approx(best)


def test_council_grove_nonmarine_facies_come_out_landward_of_the_marine_ones():
    suggestion = suggest_ranks(council_grove_coreset().successions("beds"))
    raw = council_grove_samples()
    majority = raw.groupby(raw["Facies"].astype(str))["NM_M"].median()  # 1 nonmarine
    nonmarine = set(majority.index[majority < 1.5])
    assert nonmarine == {"1", "2", "3"}
    ranks = suggestion.ranks
    assert max(ranks[c] for c in nonmarine) < min(ranks[c] for c in ranks if c not in nonmarine)


def test_too_few_facies_suggest_nothing():
    assert suggest_ranks([["a", "b", "a", "b"], ["b", "a"]]) is None


def _minimal_table(tmp_path: Path) -> Path:
    t = pd.read_csv(ROOT / "demo_cores" / "cores.csv")
    out = tmp_path / "beds.csv"
    t[["core", "top", "base", "facies"]].to_csv(out, index=False)
    return out


def test_draft_writes_the_suggestion_and_fill_ranks_makes_a_scheme_that_loads(tmp_path, capsys):
    source = _minimal_table(tmp_path)
    draft = tmp_path / "draft.yaml"
    assert main(["scheme", "draft", str(source), "-o", str(draft)]) == 0
    assert "suggested order, landward to basinward:" in capsys.readouterr().out
    assert draft.read_text().count("suggested from the transitions:") == 7
    with pytest.raises(Exception, match="rank"):  # the ranks are still to fill in
        FaciesScheme.from_dict(yaml.safe_load(draft.read_text()))
    filled = tmp_path / "filled.yaml"
    assert main(["scheme", "draft", str(source), "--fill-ranks", "-o", str(filled)]) == 0
    scheme = FaciesScheme.from_dict(yaml.safe_load(filled.read_text()))
    # the demo's offshore end is basinward, its coastal end landward
    assert scheme.rank("SHM") == 6 and scheme.rank("USF") < scheme.rank("OFF")


def test_fit_with_suggested_ranks_reads_the_stacking_context(tmp_path, capsys):
    source = _minimal_table(tmp_path)
    model = tmp_path / "m.json"
    args = ["fit", str(source), "-o", str(model), "--restarts", "1"]
    assert main([*args, "--suggest-ranks", "--verbose"]) == 0
    captured = capsys.readouterr()
    assert "ranks suggested from the data, landward to basinward" in captured.err
    assert "scheme: ranks suggested from the data (no --scheme)" in captured.err
    assert "features cycle_stacking" in captured.out
    # every output says the ranks were not a geologist's: fit, the model file, decode
    assert "caution: the facies ranks were suggested from the data" in captured.out
    recorded = json.loads(model.read_text())["training"]["cautions"]
    assert any("ranks were suggested" in c for c in recorded)
    assert main(["decode", str(model), str(source), "-o", str(tmp_path / "d")]) == 0
    assert "ranks were suggested from the data" in capsys.readouterr().out
    # without labels the ranks are suggested by default; refused, the fit warns
    assert main([*args, "--force"]) == 0
    assert "ranks suggested from the data, landward" in capsys.readouterr().err
    assert main([*args, "--force", "--no-suggest-ranks"]) == 0
    captured = capsys.readouterr()
    assert "without facies ranks the tracts are not identified" in captured.err
    assert "scheme: none" in captured.err
    # labelled fits read them too (their rank features and stacking context), unless refused
    labelled = tmp_path / "labelled.csv"
    t = pd.read_csv(ROOT / "demo_cores" / "cores.csv").rename(columns={"true_tract": "tract_"})
    columns = ["core", "top", "base", "facies", "tract"]
    t.assign(tract=t["tract_"])[columns].to_csv(labelled, index=False)
    fit = ["fit", str(labelled), "--labels", "tract", "-o", str(tmp_path / "l.json")]
    assert main(fit) == 0
    assert "ranks suggested from the data, landward" in capsys.readouterr().err
    assert (
        "rank_step" in json.loads((tmp_path / "l.json").read_text())["hyperparameters"]["features"]
    )
    assert main([*fit, "--force", "--no-suggest-ranks"]) == 0
    assert "ranks suggested" not in capsys.readouterr().err
    # validate's fits read them, with labels or without
    check = ["validate", str(labelled), "--labels", "tract", "--folds", "2", "--restarts", "1"]
    assert main([*check, "--mode", "unsupervised"]) == 0
    assert "faciesseq validate: ranks suggested from the data" in capsys.readouterr().err
    assert main(check) == 0
    assert "faciesseq validate: ranks suggested from the data" in capsys.readouterr().err
    scheme = ROOT / "configs" / "scheme-shoreface.yaml"
    assert main([*args, "--force", "--suggest-ranks", "--scheme", str(scheme)]) == 2


def test_a_table_of_successions_gives_what_the_successions_give():
    cores = council_grove_coreset()
    assert suggest_ranks(cores.succession_table("beds")) == suggest_ranks(cores.successions("beds"))
    assert suggest_ranks(cores) == suggest_ranks(cores.successions("beds"))  # a core set too
    assert suggest_ranks(cores.subset([])) is None  # no core: nothing to order
    with pytest.raises(TypeError, match=r"CoreSet\.from_frame"):
        suggest_ranks(cores.to_frame())


def _reversed_scheme(tmp_path: Path) -> tuple[Path, dict]:
    """The shoreface scheme with its ranks written 0 = deepest: the file and its data."""
    data = yaml.safe_load((ROOT / "configs" / "scheme-shoreface.yaml").read_text())
    for f in data["facies"]:
        f["rank"] = 10 - f["rank"]
    path = tmp_path / "reversed.yaml"
    path.write_text(yaml.safe_dump(data))
    return path, data


def test_fit_warns_where_the_schemes_ranks_run_against_the_data(tmp_path, capsys):
    # a scheme written 0 = deepest (the wrong way round) names the tracts wrongly
    source = _minimal_table(tmp_path)
    reversed_scheme, data = _reversed_scheme(tmp_path)
    args = ["fit", str(source), "-o", str(tmp_path / "m.json"), "--restarts", "1"]
    assert main([*args, "--scheme", str(reversed_scheme)]) == 0
    assert "run against the order the data suggest (Spearman's rho -1.00" in capsys.readouterr().err
    scheme = ROOT / "configs" / "scheme-shoreface.yaml"
    assert main([*args, "--force", "--scheme", str(scheme)]) == 0
    assert "run against" not in capsys.readouterr().err
    suggestion = suggest_ranks(CoreSet.from_frame(pd.read_csv(source), units="m").successions())
    assert suggestion.agreement(FaciesScheme.from_dict(data)) == pytest.approx(-1.0)


def test_check_shows_the_suggested_order_and_warns_of_a_reversed_scheme(tmp_path, capsys):
    source = _minimal_table(tmp_path)
    reversed_scheme, _ = _reversed_scheme(tmp_path)
    assert main(["check", str(source), "--units", "m", "--scheme", str(reversed_scheme)]) == 0
    out = capsys.readouterr().out
    assert "facies order the upward transitions suggest, landward to basinward:" in out
    assert "Spearman's rho -1.00" in out and "WARNING: the scheme's ranks run against" in out
    scheme = ROOT / "configs" / "scheme-shoreface.yaml"
    assert main(["check", str(source), "--scheme", str(scheme), "--format", "json"]) == 0
    order = json.loads(capsys.readouterr().out)["suggested_order"]
    assert order["agreement_with_scheme"] == pytest.approx(1.0) and order["clear"]
    # the streamed summary (a batch of cores at a time) adds up to the whole one
    cores = CoreSet.from_frame(pd.read_csv(source), units="m")
    assert order["landward_to_basinward"] == suggest_ranks(cores.successions()).order()
    assert summarise(cores).order == suggest_ranks(cores.successions())  # core by core
    halves = [cores.subset(cores.names[:4]), cores.subset(cores.names[4:])]
    steps = upward_steps(halves[0].successions()).add(
        upward_steps(halves[1].successions()), fill_value=0
    )
    assert suggest_ranks(steps) == suggest_ranks(cores.successions())


def test_agreement_is_spearmans_rho_of_scipy():
    # scipy.stats.spearmanr (Spearman 1904), ties given average ranks
    from scipy.stats import spearmanr

    suggestion = suggest_ranks(council_grove_coreset().successions("beds"))
    data = yaml.safe_load((ROOT / "tests" / "data" / "council_grove" / "scheme.yaml").read_text())
    scheme = FaciesScheme.from_dict(data)
    codes = [c for c in suggestion.ranks if c in scheme]
    expected = spearmanr([suggestion.ranks[c] for c in codes], [scheme.rank(c) for c in codes])[0]
    assert suggestion.agreement(scheme) == pytest.approx(expected, abs=1e-12)
    for f in data["facies"]:  # ties: every nonmarine facies one rank
        f["rank"] = min(f["rank"], 2)
    tied = FaciesScheme.from_dict(data)
    expected = spearmanr([suggestion.ranks[c] for c in codes], [tied.rank(c) for c in codes])[0]
    assert suggestion.agreement(tied) == pytest.approx(expected, abs=1e-12)


def _cycles_to_a_top_facies(seed: int, n_cores: int = 4) -> list[list[str]]:
    """Shallowing-upward cycles that climb from offshore mud one facies at a time and
    stop at foreshore or coastal plain, now and then deepening one facies on the way
    (from lower or upper shoreface: a flood, not a deepening, leaves the top facies);
    each flooding surface puts offshore mud (or lower shoreface) on the top facies
    (Van Wagoner et al. 1990: gradual upward, abrupt at the flooding surface)."""
    order = ["offshore", "lower", "upper", "foreshore", "coastal"]  # deep first
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(n_cores):
        beds: list[str] = []
        for _ in range(12):
            k, top = int(rng.integers(0, 2)), int(rng.integers(3, 5))
            while k <= top:
                beds.append(order[k])
                k += -1 if (0 < k < 3 and rng.random() < 0.15) else 1
        out.append([c for i, c in enumerate(beds) if i == 0 or c != beds[i - 1]])
    return out


def test_a_flooding_step_taken_for_neighbours_makes_the_direction_unclear():
    # the trade's cue (Van Wagoner et al. 1990; common practice): neighbours on the
    # profile are joined both ways, a flooding surface is a one-way jump. Coastal plain
    # is only ever left by a flood, so its place in the order rests on a one-way step
    for seed in range(3):
        cycles = _cycles_to_a_top_facies(seed)
        suggestion = suggest_ranks(cycles)
        steps = upward_steps(cycles)
        assert suggestion.share >= 0.6  # the share alone would call it clear
        assert not suggestion.clear
        for below, above, n in suggestion.one_way:
            assert steps[(below, above)] == n > 0
            assert (above, below) not in steps.index
        assert suggestion.one_way
        assert "never seen the other way up" in suggestion.describe()
        assert "direction clear" not in suggestion.describe()


def test_neighbours_joined_both_ways_keep_a_clear_direction():
    # Van Wagoner et al. (1990) cycles with one-step deepening now and then: every
    # neighbour of the order is joined both ways
    order = ["coastal", "foreshore", "upper", "lower", "transition", "offshore"]
    cycles = _parasequences(order, 6, seed=0)
    # a one-step deepening between every pair of neighbours, twice
    cycles += [[order[k], order[k + 1]] for k in range(len(order) - 1)] * 2
    suggestion = suggest_ranks(cycles)
    assert suggestion.order() == order
    assert suggestion.one_way == () and suggestion.clear


def test_the_anchored_path_starts_at_the_facies_floods_bring_in():
    # Hattori (1976): below the facies that starts each cycle lies any facies (high
    # E_pre), above it the next one up (low E_post)
    cycles = _cycles_to_a_top_facies(0)
    anchored = suggest_ranks(cycles, anchored=True)
    assert anchored.order()[-1] == "offshore"
    assert anchored.order() == ["coastal", "foreshore", "upper", "lower", "offshore"]


def test_fit_refuses_an_order_without_a_clear_direction_where_nothing_names_the_tracts(
    tmp_path, capsys
):
    # cycles that deepen and shallow one step at a time both ways (an invented table): the
    # transitions cannot tell landward from basinward, and a new user's fit on such an
    # order, read the wrong way round, named every tract wrongly
    codes = ["A", "B", "C", "D", "E"]
    rows, depth = [], 0.0
    for core in ("S-1", "S-2", "S-3"):
        walk = (codes + codes[-2:0:-1]) * 6
        for code in walk:
            rows.append((core, depth, depth + 1.0, code))
            depth += 1.0
    source = tmp_path / "symmetric.csv"
    pd.DataFrame(rows, columns=["core", "top", "base", "facies"]).to_csv(source, index=False)
    args = ["fit", str(source), "-o", str(tmp_path / "m.json"), "--restarts", "1"]
    assert main(args) == 1
    err = capsys.readouterr().err
    assert "has no direction" in err and "--suggest-ranks" in err
    assert len(err.strip().splitlines()) == 1 and not (tmp_path / "m.json").exists()
    assert main([*args, "--suggest-ranks"]) == 0  # asked for: fitted, with the order printed
    assert "direction unclear" in capsys.readouterr().err
    # from Python the suggestion prints its verdict beside the share
    suggestion = suggest_ranks(read_cores(source, units="m").succession_table("beds"))
    assert "clear=False" in repr(suggestion) and "share=0.511" in repr(suggestion)


def test_clean_shallowing_upward_cycles_are_fitted_without_a_scheme(tmp_path, capsys):
    # every step of textbook parasequences leads landward and none is ever reversed (the
    # neighbour steps are one way): the direction is clear by its share, so no refusal
    codes = ["OSH", "OTZ", "LSF", "USF", "FS", "CP"]
    rows, depth = [], 0.0
    for core in ("P-1", "P-2", "P-3"):
        for _cycle in range(6):
            for code in reversed(codes):  # listed top-down: CP at the top of each cycle
                rows.append((core, depth, depth + 1.0, code))
                depth += 1.0
    source = tmp_path / "parasequences.csv"
    pd.DataFrame(rows, columns=["core", "top", "base", "facies"]).to_csv(source, index=False)
    assert main(["fit", str(source), "-o", str(tmp_path / "m.json"), "--restarts", "1"]) == 0
    err = capsys.readouterr().err
    assert "ranks suggested from the data, landward to basinward: CP, FS, USF, LSF" in err
