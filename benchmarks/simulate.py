"""Time the forward model on the demo scenario.

Run from the repository root::

    MPLBACKEND=Agg python benchmarks/simulate.py

Reports the median wall time of ``simulate()`` on configs/demo-quillerby.yaml
(three dip sections, 800 steps, 601 cells, 17 wells), of each part, and the
ratio to a baseline measured in the same run: evaluating the equilibrium
profile once per time step and cell on the same grids (the least work any
step-by-step model of these sections does; the forward model evaluates it
once per evaluation of the sediment balance, about 19 times per time step).
"""

from __future__ import annotations

import platform
import statistics
import time

import numpy as np

from faciesseq.simulate import load_scenario, simulate
from faciesseq.simulate.model import _template, run_section


def _median(fn, repeat: int = 3) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def main() -> None:
    scenario = load_scenario("configs/demo-quillerby.yaml")
    p = scenario.profile
    x = np.linspace(0.0, p.length_km, round(p.length_km / p.cell_km) + 1)
    n_steps = round(scenario.duration_kyr / scenario.step_kyr)

    def baseline() -> None:
        for _section in scenario.sections:
            for k in range(n_steps):
                _template(x, 50.0 + 1e-3 * k, 0.0, scenario)

    t_base = _median(baseline)
    t_sections = _median(lambda: [run_section(scenario, s) for s in scenario.sections])
    t_total = _median(lambda: simulate(scenario))
    print(
        f"machine: {platform.machine()} {platform.processor() or ''} python "
        f"{platform.python_version()} numpy {np.__version__}"
    )
    print(f"baseline, one profile per step and cell: {t_base:.3f} s")
    print(
        f"forward model, 3 sections:               {t_sections:.3f} s "
        f"({t_sections / t_base:.1f} x baseline)"
    )
    print(
        f"simulate() incl. 17 described cores:      {t_total:.3f} s "
        f"({t_total / t_base:.1f} x baseline)"
    )


if __name__ == "__main__":
    main()
