"""Writing a simulation to a folder: tables (CSV and SQLite), summary and figures.

This is the simulate command's output writer (its job is writing files). The
folder is built under a temporary name beside the target and swapped into
place at the end, so an interrupted run leaves nothing half-written.
"""

from __future__ import annotations

import json
import re
import shutil
from pathlib import Path

import pandas as pd

from faciesseq.errors import ConfigError, InputError
from faciesseq.simulate import SimulationResult, StackingResult

__all__ = ["TABLES", "write_simulation"]

#: Table files written (name -> what it holds); in the SQLite file the cores are
#: the table ``intervals``, as :func:`faciesseq.io.write_cores` writes them.
TABLES = {
    "cores": "described intervals with their truth (one row per interval)",
    "surfaces": "true surfaces at each core",
    "steps": "truth per time step and section",
    "wells": "wells: section, position along dip, labelled or not, cored thickness",
    "budget": "sediment budget per section (m^2 of section)",
    "parasequences": "stacking generator only: true parasequences (tract, depths, facies)",
}

#: Names of the files a simulation writes; older ones are never carried over.
_OUTPUT_NAME = re.compile(
    r"^(?:(?:cores|surfaces|steps|wells|budget|parasequences)\.csv|cores\.sqlite|summary\.json|scenario\.yaml"
    r"|(?:section|base-level|cores)-.+\.png)$"
)


def _tables(result: SimulationResult | StackingResult) -> dict[str, pd.DataFrame]:
    """The tables beside the cores (the cores go through :func:`faciesseq.io.write_cores`)."""
    if isinstance(result, StackingResult):
        return result.tables()
    return {
        "surfaces": result.surfaces,
        "steps": result.steps,
        "wells": result.wells,
        "budget": result.budget,
    }


def _write_tables(result: SimulationResult | StackingResult, folder: Path) -> None:
    """CSV files and one SQLite file holding the same tables (cores as ``intervals``)."""
    from faciesseq.io import write_cores

    tables = _tables(result)
    write_cores(result.cores, folder / "cores.csv")
    for name, table in tables.items():
        table.to_csv(folder / f"{name}.csv", index=False, lineterminator="\n")
    write_cores(result.cores, folder / "cores.sqlite", tables=tables)


def write_simulation(
    result: SimulationResult | StackingResult,
    directory: str | Path,
    *,
    figures: bool = True,
    force: bool = False,
    dpi: int = 130,
) -> list[Path]:
    """Write a simulation to ``directory`` (atomically) and return the files written.

    Files: ``cores.csv``, ``surfaces.csv``, ``steps.csv``, ``wells.csv``,
    ``budget.csv``, ``cores.sqlite`` (the same tables; the cores as ``intervals``),
    ``summary.json``,
    ``scenario.yaml`` (a copy of the scenario file, when it came from one) and,
    unless ``figures`` is false, ``section-<name>.png``,
    ``base-level-<name>.png`` and ``cores-<name>.png`` per dip section. A
    :class:`~faciesseq.simulate.StackingResult` writes ``surfaces.csv``,
    ``parasequences.csv`` and ``wells.csv`` beside the cores and no figures (they
    draw the section history it does not have). With ``force`` an existing
    folder is replaced as a whole: files of an earlier simulation in it are gone,
    but files no simulation writes (e.g. a README) are carried over.

    Raises
    ------
    ConfigError
        When ``directory`` exists and ``force`` is false.
    """
    target = Path(directory)
    if target.exists() and not force:
        raise ConfigError(
            "output folder exists; choose another -o or pass --force to replace it",
            file=str(target),
        )
    if target.exists() and not target.is_dir():
        raise ConfigError("output path exists and is not a folder", file=str(target))
    parent = target.resolve().parent
    if not parent.is_dir():
        raise ConfigError("the parent folder of the output does not exist", file=str(target))
    from faciesseq._output import new_folder

    try:
        with new_folder(target) as temp:
            _fill_folder(result, temp, figures=figures, dpi=dpi)
            if target.exists():
                _carry_over(target, temp)
    except OSError as exc:
        raise InputError(f"could not write the output ({exc.strerror})", file=str(target)) from None
    return sorted(p for p in target.iterdir())


def _fill_folder(
    result: SimulationResult | StackingResult, temp: Path, *, figures: bool, dpi: int
) -> None:
    """Every file of the simulation into the (new, empty) folder ``temp``."""
    _write_tables(result, temp)
    (temp / "summary.json").write_text(
        json.dumps(result.to_dict(), indent=2, ensure_ascii=False) + "\n", encoding="utf-8"
    )
    source = result.scenario.source
    if source and Path(source).is_file():
        shutil.copyfile(source, temp / "scenario.yaml")
    if figures and isinstance(result, SimulationResult):
        _write_figures(result, temp, dpi)


def _carry_over(old: Path, new: Path) -> None:
    """Copy the files of ``old`` that no simulation writes (a README...) into ``new``."""
    for item in old.iterdir():
        if _OUTPUT_NAME.match(item.name) or (new / item.name).exists():
            continue
        if item.is_dir():
            shutil.copytree(item, new / item.name, symlinks=True)
        else:
            shutil.copy2(item, new / item.name)


def _write_figures(result: SimulationResult, folder: Path, dpi: int) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from faciesseq.report.simulation_figures import (
        base_level_figure,
        cores_figure,
        section_figure,
    )
    from faciesseq.report.style import savefig_options

    scenario = result.scenario
    for name, history in result.sections.items():
        wells = [w for w in scenario.wells if w.section == name]
        for stem, fig in (
            (f"section-{name}", section_figure(history, scenario, wells)),
            (f"base-level-{name}", base_level_figure(history, scenario)),
            (f"cores-{name}", cores_figure(result, name)),
        ):
            options = savefig_options("png")
            fig.savefig(folder / f"{stem}.png", dpi=dpi, metadata={"Software": None}, **options)
            plt.close(fig)
