"""Forward model: synthetic cores whose systems tracts and surfaces are known.

From a base-level history, subsidence and sediment supply, the model builds
dip sections through a shoreline-shelf system (:mod:`faciesseq.simulate.model`),
records the layers at wells and describes them as cores with noise
(:mod:`faciesseq.simulate.wells`). Scenarios are YAML files
(:mod:`faciesseq.simulate.scenario`). The truth travels with the cores:
``true_tract`` per bed, the surfaces table and the time-step table.

A second generator, different in kind, builds tracts as stacks of parasequences
with no physics at all (:mod:`faciesseq.simulate.stacking`; scenario files with
``generator: stacking``), so a tract model tuned on one can be checked on the
other. :func:`load_any_scenario` reads a scenario file of either kind.

Example
-------
>>> from faciesseq.simulate import load_scenario, simulate
>>> result = simulate(load_scenario("configs/scenario-ramp.yaml"), seed=7)  # doctest: +SKIP
>>> result.cores.names[:2]  # doctest: +SKIP
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from faciesseq.core import Core, CoreSet
from faciesseq.errors import ConfigError
from faciesseq.scheme import TractModel, _read_yaml, permissive_tract_model
from faciesseq.simulate.model import SectionHistory, run_section
from faciesseq.simulate.scenario import Scenario, load_scenario, scenario_from_dict
from faciesseq.simulate.stacking import (
    StackingResult,
    StackingScenario,
    load_stacking_scenario,
    simulate_stacking,
    stacking_scenario_from_dict,
)
from faciesseq.simulate.wells import describe_well

__all__ = [
    "Scenario",
    "SectionHistory",
    "SimulationResult",
    "StackingResult",
    "StackingScenario",
    "load_any_scenario",
    "load_scenario",
    "load_stacking_scenario",
    "scenario_from_dict",
    "simulate",
    "simulate_stacking",
    "stacking_scenario_from_dict",
]


@dataclass(frozen=True)
class SimulationResult:
    """What :func:`simulate` produced.

    Attributes
    ----------
    scenario, seed
        The scenario run and the seed used.
    cores
        The described cores (depth in m from the top of each core): ``facies``,
        ``contact``, ``grain_size``, ``tract`` (interpreter's label, filled for
        labelled wells only), ``true_tract``, ``true_facies``,
        ``true_water_depth``, ``true_age_kyr``.
    surfaces
        True surfaces at the wells: ``core``, ``depth``, ``surface``, ``name``,
        ``lower_tract``, ``upper_tract``, ``cored``.
    steps
        Truth per time step and section: ``section``, ``step``, ``time_kyr``
        (end of step), ``base_level_m``, ``relative_rate_m_per_kyr``,
        ``sedimentation_rate_m_per_kyr`` (at the shoreline), ``supply_m2_per_kyr``,
        ``shoreline_km``, ``shoreline_shift_km``, ``tract``.
    wells
        ``core``, ``section``, ``x_km``, ``labelled``, ``thickness_m`` (0 where
        nothing was preserved; such a well has no core in ``cores``).
    budget
        Sediment budget per section (m^2 of section): ``supplied``, ``eroded``,
        ``deposited``, ``bypassed``, ``preserved``.
    sections
        The full history of each section (for figures and checks).
    """

    scenario: Scenario
    seed: int
    cores: CoreSet
    surfaces: pd.DataFrame
    steps: pd.DataFrame
    wells: pd.DataFrame
    budget: pd.DataFrame
    sections: Mapping[str, SectionHistory] = field(repr=False)

    def to_frame(self) -> pd.DataFrame:
        """All described intervals in one table (``core`` first, depth order)."""
        return self.cores.to_frame()

    def to_dict(self) -> dict:
        """A JSON-ready summary: scenario, seed, counts, budget, tracts per section."""
        tracts = {
            name: {str(k): int(v) for k, v in part["tract"].value_counts().sort_index().items()}
            for name, part in self.steps.groupby("section", sort=False)
        }
        beds = {name: len(core) for name, core in self.cores.cores.items()}
        return {
            "scenario": self.scenario.name,
            "seed": int(self.seed),
            "cores": len(self.cores),
            "intervals": int(sum(beds.values())),
            "intervals_per_core": beds,
            "surfaces": len(self.surfaces),
            "steps_per_tract": tracts,
            "budget_m2": {
                row["section"]: {k: float(row[k]) for k in self.budget.columns if k != "section"}
                for row in self.budget.to_dict("records")
            },
        }


def simulate(
    scenario: Scenario | StackingScenario | str | Path,
    seed: int | None = None,
    tract_model: TractModel | None = None,
) -> SimulationResult | StackingResult:
    """Run the forward model of a scenario and describe its wells as cores.

    Parameters
    ----------
    scenario
        A scenario (see :func:`load_scenario`), or the path of a scenario file of
        either generator (:func:`load_any_scenario`); a stacking scenario is run by
        :func:`~faciesseq.simulate.stacking.simulate_stacking`, as ``faciesseq
        simulate`` runs it.
    seed
        Seed of the description noise; ``None`` uses the scenario's ``seed``.
        The same scenario and seed give bit-for-bit the same tables.
    tract_model
        Names the surfaces; the package default when ``None``.

    Returns
    -------
    SimulationResult
        Cores with their truth, surfaces, the time-step truth and section histories.

    Notes
    -----
    The tracts follow from the rates (Catuneanu et al. 2009, Earth-Science Reviews
    92:1-33; Helland-Hansen & Martinsen 1996, J. Sed. Research 66): see
    :mod:`faciesseq.simulate.model` for the equations.
    """
    if isinstance(scenario, (str, Path)):
        scenario = load_any_scenario(scenario)
    if isinstance(scenario, StackingScenario):
        return simulate_stacking(scenario, seed=seed, tract_model=tract_model)
    if not isinstance(scenario, Scenario):
        raise TypeError(
            "simulate() takes a Scenario, a StackingScenario or the path of a scenario "
            f"file, not {type(scenario).__name__}"
        )
    seed = scenario.seed if seed is None else int(seed)
    model = permissive_tract_model() if tract_model is None else tract_model
    sections = {s.name: run_section(scenario, s) for s in scenario.sections}

    steps = []
    for name, hist in sections.items():
        steps.append(
            pd.DataFrame(
                {
                    "section": name,
                    "step": np.arange(1, hist.n_steps + 1),
                    "time_kyr": hist.time_kyr[1:],
                    "base_level_m": hist.base_level_m[1:],
                    "relative_rate_m_per_kyr": hist.relative_rate_m_per_kyr,
                    "sedimentation_rate_m_per_kyr": hist.sedimentation_rate_m_per_kyr,
                    "supply_m2_per_kyr": hist.supply_m2_per_kyr,
                    "shoreline_km": hist.shoreline_km[1:],
                    "shoreline_shift_km": np.diff(hist.shoreline_km),
                    "tract": hist.tract,
                }
            )
        )
    steps_table = pd.concat(steps, ignore_index=True)

    # one generator per well, spawned from the seed: a well's core does not depend
    # on the other wells, so adding a well leaves the others unchanged
    children = np.random.SeedSequence(seed).spawn(len(scenario.wells))
    frames, surfaces, wells = [], [], []
    for well, child in zip(scenario.wells, children):
        rng = np.random.default_rng(child)
        intervals, picks = describe_well(sections[well.section], well, scenario, model, rng)
        if len(intervals):  # a well where nothing was preserved has no core
            intervals.insert(0, "core", well.name)
            picks.insert(0, "core", well.name)
            frames.append(intervals)
            surfaces.append(picks)
        wells.append(
            {
                "core": well.name,
                "section": well.section,
                "x_km": well.x_km,
                "labelled": well.labelled,
                "thickness_m": float(intervals["base"].max()) if len(intervals) else 0.0,
            }
        )
    cores = CoreSet(
        {f["core"].iloc[0]: Core(f["core"].iloc[0], f.drop(columns="core"), "m") for f in frames},
        "m",
        sources=(scenario.source or scenario.name,),
    )
    surface_columns = ["core", "depth", "surface", "name", "lower_tract", "upper_tract", "cored"]
    budget = pd.DataFrame([{"section": name, **hist.budget} for name, hist in sections.items()])
    return SimulationResult(
        scenario=scenario,
        seed=seed,
        cores=cores,
        surfaces=pd.concat(surfaces, ignore_index=True)
        if surfaces
        else pd.DataFrame(columns=surface_columns),
        steps=steps_table,
        wells=pd.DataFrame(wells),
        budget=budget,
        sections=sections,
    )


def load_any_scenario(path: str | Path) -> Scenario | StackingScenario:
    """Read a scenario file of either generator.

    ``generator: stacking`` at the top level gives a
    :class:`~faciesseq.simulate.stacking.StackingScenario`; a file without a
    ``generator`` key is a forward-model :class:`Scenario`.

    Raises
    ------
    ConfigError
        Naming the file and the key, for any problem in the scenario.
    """
    data = _read_yaml(path)
    if isinstance(data, Mapping) and ("tracts" in data or isinstance(data.get("facies"), list)):
        kind = "a tract model" if "tracts" in data else "a facies scheme"
        raise ConfigError(
            f"{kind}, not a simulation scenario; a scenario names its scheme under "
            "'scheme' (generator: stacking) or 'facies.scheme' (docs/simulate.md)",
            file=str(path),
        )
    generator = data.get("generator") if isinstance(data, Mapping) else None
    if generator is None:
        return scenario_from_dict(data, source=str(path))
    if generator != "stacking":
        raise ConfigError(
            f"generator: must be 'stacking' (or left out for the forward model), got {generator!r}",
            file=str(path),
        )
    return stacking_scenario_from_dict(data, source=str(path))
