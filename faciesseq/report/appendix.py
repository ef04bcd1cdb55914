"""The statistical appendix: assemble it from results objects, write it atomically.

:func:`build_appendix` turns the results of a run (core set, Markov report,
fitted tract model, interpretation, validation) into an :class:`Appendix`: a
:class:`~faciesseq.report.document.Document` of five numbered sections, the
full-precision numbers (``appendix.json``) and the provenance record.
:func:`write_appendix` writes it to a folder::

    appendix.html       one self-contained file (figures embedded)
    appendix.tex        LaTeX supplement; figures from figures/*.pdf
    appendix.json       every number shown, full precision
    provenance.json     inputs (SHA-256), software, seeds, command line, date
    tables/<key>.csv    one file per table (the same table the HTML shows)
    figures/<key>.png   and .pdf

The folder appears complete or not at all: everything is written to a
temporary folder beside it, then renamed. A part whose results are missing
says so in its section ("not available: ...") instead of showing anything
else.
"""

from __future__ import annotations

import io
import json
import math
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from faciesseq.core import CoreSet, row_word
from faciesseq.errors import ConfigError, InputError
from faciesseq.interpretation import CoreInterpretation, Interpretation
from faciesseq.report.document import (
    Document,
    FigureBlock,
    Paragraph,
    Section,
    TableBlock,
    ViewBlock,
    depth_decimals,
)
from faciesseq.report.methods import list_references, methods_section
from faciesseq.report.style import facies_colours
from faciesseq.scheme import FaciesScheme, TractModel

__all__ = ["Appendix", "build_appendix", "core_key", "jsonable", "write_appendix"]

FORMAT = "faciesseq-appendix"
FORMAT_VERSION = 1
#: Number format of the floating-point cells of ``tables/*.csv``.
TABLE_FLOATS = "%.10g"


def jsonable(value: Any) -> Any:
    """Plain JSON values: numpy and pandas numbers as Python numbers, NaN and NA as ``None``."""
    if isinstance(value, Mapping):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, pd.DataFrame):
        return jsonable(value.to_dict(orient="split"))
    if isinstance(value, pd.Series):
        return jsonable(value.to_dict())
    if isinstance(value, np.ndarray):
        return jsonable(value.tolist())
    if isinstance(value, list | tuple | set | frozenset):
        return [jsonable(v) for v in value]
    if isinstance(value, bool | np.bool_):
        return bool(value)
    if isinstance(value, int | np.integer):
        return int(value)
    if isinstance(value, float | np.floating):
        v = float(value)
        return v if math.isfinite(v) else None
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, str):
        return value
    if hasattr(value, "to_dict"):
        return jsonable(value.to_dict())
    return str(value)


def core_key(name: str, k: int) -> str:
    """A file-name-safe key for the ``k``-th core (``core03-w-12a``), whatever its name."""
    slug = re.sub(r"[^a-z0-9]+", "-", str(name).lower()).strip("-")[:40]
    return f"core{k:02d}" + (f"-{slug}" if slug else "")


@dataclass
class Appendix:
    """A built appendix: the document, its numbers and its provenance.

    Attributes
    ----------
    document
        Sections, tables and figures (rendered by ``html`` and ``latex``).
    results
        Full-precision results by part (``data``, ``markov``, ``model``,
        ``validation``, ``cores``), as the results objects' ``to_dict()``
        give them.
    provenance
        See :func:`faciesseq.report.provenance.provenance`.
    missing
        Parts that could not be reported, with the reason.
    """

    document: Document
    results: dict[str, Any] = field(default_factory=dict)
    provenance: dict[str, Any] = field(default_factory=dict)
    missing: dict[str, str] = field(default_factory=dict)

    def tables(self) -> list[TableBlock]:
        return self.document.tables()

    def figures(self) -> list[FigureBlock]:
        return self.document.figures()

    def section_titles(self) -> list[str]:
        return [f"{n} {s.title}" for n, _, s in self.document.walk()]

    def to_dict(self) -> dict[str, Any]:
        """The content of ``appendix.json``: every table shown, and the full results."""
        numbers = self.document.numbering()
        tables = {}
        for t in self.tables():
            frame = t.to_csv_frame()
            tables[t.key] = {
                "number": numbers.get(f"table:{t.key}"),
                "caption": t.caption,
                "columns": [str(c) for c in frame.columns],
                "data": jsonable(frame.to_numpy(dtype=object).tolist()),
            }
            if t.marks is not None:
                marks = t.marks.reindex(index=t.frame.index, columns=t.frame.columns)
                tables[t.key]["marked"] = jsonable(marks.fillna(False).to_numpy(bool))
        figures = {
            f.key: {"number": numbers.get(f"figure:{f.key}"), "caption": f.caption}
            for f in self.figures()
        }
        return {
            "format": FORMAT,
            "format_version": FORMAT_VERSION,
            "title": self.document.title,
            "sections": self.section_titles(),
            "missing": dict(self.missing),
            "tables": tables,
            "figures": figures,
            "results": jsonable(self.results),
        }


# --------------------------------------------------------------------------- data


def _data_tables(cores: CoreSet, scheme: FaciesScheme) -> tuple[dict[str, pd.DataFrame], Any]:
    """The tables of section 1, from :func:`faciesseq.io.summarise` (renamed for reading)."""
    from faciesseq.io import summarise

    summary = summarise(cores, scheme)
    u = cores.units
    core_frame = summary.to_frame("cores").drop(columns=["units"])
    if core_frame["sample_step"].isna().all():
        core_frame = core_frame.drop(columns=["sample_step"])
    core_frame = core_frame.rename(
        columns={
            "top": f"top ({u})",
            "base": f"base ({u})",
            "cored_thickness": f"described ({u})",
            "gap_thickness": f"gap thickness ({u})",
            "sample_step": f"sample step ({u})",
        }
    ).set_index("core")
    facies = summary.to_frame("facies").set_index("facies")
    ranks = [scheme.rank(c) if c in scheme else np.nan for c in facies.index]
    facies.insert(1, "rank", ranks)
    facies = facies.iloc[np.argsort(np.asarray(ranks, float), kind="stable")]
    facies["name"] = facies["name"].fillna("(not in scheme)")
    proportions = facies[
        [
            "name",
            "rank",
            "intervals",
            "beds",
            "proportion_beds",
            "thickness",
            "proportion_thickness",
        ]
    ].rename(
        columns={
            "proportion_beds": "proportion of beds",
            "thickness": f"thickness ({u})",
            "proportion_thickness": "proportion of thickness",
        }
    )
    thickness = facies[
        [
            "beds",
            "bed_thickness_mean",
            "bed_thickness_std",
            "bed_thickness_median",
            "bed_thickness_min",
            "bed_thickness_max",
        ]
    ].rename(
        columns={
            "bed_thickness_mean": f"mean ({u})",
            "bed_thickness_std": f"sd ({u})",
            "bed_thickness_median": f"median ({u})",
            "bed_thickness_min": f"min ({u})",
            "bed_thickness_max": f"max ({u})",
        }
    )
    problems = summary.to_frame("problems")[
        ["severity", "kind", "file", "row", "core", "depth", "message"]
    ].copy()
    problems["row"] = problems["row"].astype("Int64")
    tables = {
        "cores": core_frame,
        "facies": proportions,
        "bed_thickness": thickness,
        "problems": problems,
    }
    return tables, summary


_HANDLED = {
    "repair": "changed on reading as described (for example a small overlap snapped); "
    "each change is listed",
    "warning": "kept as they are; worth a look, they do not stop the analysis",
    "error": "data that cannot be used until fixed; the analysis does not run while any remain",
}


#: Decimals of proportions, fractions and accuracies in the appendix's tables.
PROPORTION_DECIMALS = 3

#: What a decoded row is, by the model's unit: the trade's words.


def _depth_decimals(cores: CoreSet) -> int:
    """Decimals of the source's depths (tops and bases as described)."""
    if not len(cores):
        return 2
    return depth_decimals(np.concatenate([cores.column("top"), cores.column("base")]))


def _in_units(frame: pd.DataFrame, units: str, decimals: int) -> dict[str, int]:
    """``decimals`` for every column of ``frame`` in depth units (named ``... (m)``)."""
    return {str(c): decimals for c in frame.columns if str(c).endswith(f"({units})")}


def _data_section(cores: CoreSet, scheme: FaciesScheme, results: dict) -> Section:
    tables, summary = _data_tables(cores, scheme)
    results["data"] = summary.to_dict()
    units = cores.units
    depth = _depth_decimals(cores)
    s = Section("Data")
    s.add(_data_intro(cores, scheme, tables))
    s.sub("Cores").add(_cores_table(tables["cores"], units, depth))
    facies = s.sub("Facies")
    facies.add(*_facies_tables(tables, units, depth))
    facies.add(_facies_proportions_figure(tables["facies"], scheme))
    s.sub("Problems found by check").add(*_problem_blocks(tables["problems"], units, depth))
    return s


def _data_intro(cores: CoreSet, scheme: FaciesScheme, tables: dict[str, pd.DataFrame]) -> Paragraph:
    """How many cores, beds and facies, of which scheme, in which depth units."""
    n_beds = int(tables["cores"]["beds"].sum()) if len(tables["cores"]) else 0
    return Paragraph(
        f"{len(cores)} cores, {n_beds} beds, {len(tables['facies'])} facies of the scheme "
        f"“{scheme.name}”; depths in {cores.units}, positive downward."
    )


def _cores_table(cores: pd.DataFrame, units: str, depth: int) -> TableBlock:
    """One row per core: intervals, beds, depth range, described thickness and gaps."""
    return TableBlock(
        "data_cores",
        f"Cores: described intervals, beds (adjacent intervals of one facies amalgamated), "
        f"depth range, described thickness, and the gaps (number and thickness, {units}).",
        cores,
        decimals=_in_units(cores, units, depth),
    )


def _facies_tables(
    tables: dict[str, pd.DataFrame], units: str, depth: int
) -> tuple[TableBlock, TableBlock]:
    """Facies proportions (by proximality rank) and bed thickness per facies."""
    proportions = TableBlock(
        "data_facies",
        "Facies in order of proximality rank (0 = most landward or shallow): described "
        "intervals, beds (amalgamated) and thickness, with their proportions over all "
        "cores.",
        tables["facies"],
        decimals={
            **_in_units(tables["facies"], units, depth),
            "proportion of beds": PROPORTION_DECIMALS,
            "proportion of thickness": PROPORTION_DECIMALS,
        },
    )
    thickness = TableBlock(
        "data_bed_thickness",
        f"Bed thickness per facies ({units}): number of beds, mean, standard deviation, "
        "median, minimum and maximum.",
        tables["bed_thickness"],
        decimals=_in_units(tables["bed_thickness"], units, depth),
    )
    return proportions, thickness


def _facies_proportions_figure(facies: pd.DataFrame, scheme: FaciesScheme) -> FigureBlock:
    """Bar chart of the facies proportions by beds and by thickness, in the scheme's colours."""
    from faciesseq.report import figures as fig

    proportions = facies[["proportion of beds", "proportion of thickness"]]
    proportions.columns = ["by beds", "by thickness"]
    return FigureBlock(
        "data_facies_proportions",
        "Facies proportions by number of beds and by thickness, in the scheme's colours, "
        "from most landward (top) to most basinward.",
        fig.bar_chart(
            proportions,
            colours=facies_colours(list(proportions.index), scheme),
            xlabel="proportion",
            ylabel="facies",
        ),
    )


def _problem_blocks(problems: pd.DataFrame, units: str, depth: int) -> list[Paragraph | TableBlock]:
    """The problems found by check: a count per severity with how it was handled, then
    the table of every problem (or one line saying there were none), depths to the
    ``depth`` decimals of the input."""
    if len(problems) == 0:
        return [Paragraph("Reading and validating the data found no problems.")]
    counts = problems["severity"].value_counts()
    blocks: list[Paragraph | TableBlock] = [
        Paragraph(
            f"{int(counts[severity])} {severity}"
            f"{'s' if counts[severity] != 1 else ''}: {_HANDLED[severity]}."
        )
        for severity in ("error", "warning", "repair")
        if severity in counts
    ]
    shown, where = _problems_as_shown(problems, units)
    blocks.append(
        TableBlock(
            "data_problems",
            f"Every problem found while reading and validating the data, where it is "
            f"{where} and what it is.",
            shown,
            index=False,
            decimals={"depth": depth},
        )
    )
    return blocks


def _problems_as_shown(problems: pd.DataFrame, units: str) -> tuple[pd.DataFrame, str]:
    """The problems with file names as the reader knows them (never an installation or
    home path; the file column dropped when there is one file), and what their columns
    locate."""
    from faciesseq.report.provenance import display_path

    problems = problems.copy()
    for name in problems["file"].dropna().unique():
        problems["message"] = problems["message"].str.replace(
            str(name), display_path(name), regex=False
        )
    problems["file"] = problems["file"].map(lambda f: f if pd.isna(f) else display_path(f))
    files = problems["file"].dropna().unique()
    if len(files) == 1:
        return problems.drop(columns=["file"]), f"(data row of {files[0]}, core, depth in {units})"
    return problems, f"(file, data row, core, depth in {units})"


# --------------------------------------------------------------------- markov / model


def _not_available(title: str, reason: str, missing: dict, key: str) -> Section:
    missing[key] = reason
    return Section(title).add(Paragraph(f"Not available: {reason}.", kind="missing"))


def _markov_section(markov: Any, scheme: FaciesScheme, results: dict, missing: dict) -> Section:
    if markov is None:
        return _not_available(
            "Transition statistics", "no transition statistics were given", missing, "markov"
        )
    from faciesseq.report.markov_section import markov_section

    results["markov"] = markov.to_dict()
    return markov_section(markov, scheme)


def _model_section(
    model: Any,
    tract_model: TractModel,
    validation: Any,
    note: str,
    results: dict,
    missing: dict,
    selection: Any = None,
    scheme: FaciesScheme | None = None,
    validation_note: str = "",
    validation_notes: Sequence[str] = (),
    fit_notes: Sequence[str] = (),
) -> Section:
    if model is None:
        return _not_available(
            "The tract model", "no fitted tract model was given", missing, "model"
        )
    from faciesseq.report.model_section import model_section

    reason = validation_note or "no interpreted (labelled) cores to validate against"
    section, numbers = model_section(
        model,
        tract_model,
        validation,
        note,
        selection,
        scheme,
        validation_reason=reason,
        validation_notes=validation_notes,
        fit_notes=fit_notes,
    )
    results["model"] = numbers.get("model")
    results["model_bic_training"] = numbers.get("bic_training")
    if selection is not None:
        results["selection"] = numbers.get("selection")
    if validation is not None:
        results["validation"] = numbers.get("validation")
    else:
        missing["validation"] = reason
    return section


# -------------------------------------------------------------------------- per core


def _cores_section(
    interpretation: Interpretation | None,
    scheme: FaciesScheme,
    tract_model: TractModel,
    results: dict,
    missing: dict,
    notes: Sequence[str] = (),
) -> Section:
    """The Cores section: what the strip logs show, the notes of decoding, the view of
    every core, a summary table (second block) and one sub-section per core; each
    core's decoded tables go to ``results["cores"]``."""
    if interpretation is None:
        return _not_available("Cores", "no decoded cores were given", missing, "cores")
    s = Section("Cores")
    _cores_intro_blocks(s, interpretation, scheme, tract_model, notes)
    summary_rows = []
    results["cores"] = {}
    rows = row_word(interpretation.meta.get("unit", "beds"))
    for k, core in enumerate(interpretation, start=1):
        sub = s.sub(f"Core {core.core}")
        summary_rows.append(_core_summary_row(core, interpretation.tracts, rows))
        _core_blocks(sub, core, core_key(core.core, k), scheme, tract_model, interpretation)
        results["cores"][core.core] = {
            "log_likelihood": core.log_likelihood,
            "beds": core.beds,
            "boundaries": core.boundaries,
            "picks": core.picks,
        }
    summary = pd.DataFrame(summary_rows).set_index("core")
    units = next(iter(interpretation)).units if len(summary) else ""
    tops = [c.beds[["top", "base"]].to_numpy(float).ravel() for c in interpretation]
    depth = depth_decimals(np.concatenate(tops)) if tops else 2
    s.blocks.insert(
        1,
        TableBlock(
            "cores_summary",
            f"Decoded cores: {rows} decoded (the units the model reads), log-likelihood under "
            "the model, surfaces picked and the thickness assigned to each tract.",
            summary,
            decimals={**_in_units(summary, units, depth), "log-likelihood": 2},
        ),
    )
    return s


def _cores_intro_blocks(
    s: Section,
    interpretation: Interpretation,
    scheme: FaciesScheme,
    tract_model: TractModel,
    notes: Sequence[str],
) -> None:
    """What the strip logs show, the notes on the probabilities and from decoding, and the
    interactive view of every core."""
    from faciesseq.report.view import view_html

    s.add(
        Paragraph(
            "One strip log per core, depth downward: the facies column (box width by grain size "
            "where known, otherwise by proximality), the most likely tract column, the posterior "
            "probability of each tract, and the probability of each surface per depth cell "
            "with the picks. Picks are listed with their probability and an uncertainty "
            "interval; the per-bed tract probabilities are in the data files."
        )
    )
    if not interpretation.probabilities_checked:
        s.add(Paragraph(interpretation.probabilities_note, kind="note"))
    for note in notes:
        s.add(Paragraph(f"Note from decoding: {note}", kind="note"))
    s.add(
        ViewBlock(
            "view",
            "Every decoded core side by side: zoom and scroll in depth, hover a bed for its "
            "facies, thickness, tract probabilities and the surface probabilities at its "
            "contacts, switch tracks on and off.",
            view_html(interpretation, scheme, tract_model),
        )
    )


def _core_summary_row(
    core: CoreInterpretation, tracts: Sequence[str], rows: str = "beds"
) -> dict[str, Any]:
    """One core's row of the summary: decoded units (``rows``, e.g. described intervals),
    log-likelihood, picks and thickness per tract."""
    tract_thickness = core.beds.groupby("tract")["thickness"].sum()
    return {
        "core": core.core,
        rows: len(core.beds),
        "log-likelihood": core.log_likelihood,
        "picks": len(core.picks),
        **{f"{t} ({core.units})": float(tract_thickness.get(t, 0.0)) for t in tracts},
    }


#: What each column of a picks table holds (``faciesseq.surfaces.pick_table``).
_PICK_COLUMNS = {
    "name": "surface and name",
    "depth": "depth, of the pick contact",
    "probability": "probability, of the surface summed over its uncertainty interval",
    "p_contact": "p_contact, at the pick contact alone",
    "interval top": "interval top and interval base, of that uncertainty interval",
    "segment": (
        "segment, the core's unbroken succession the pick lies in, numbered from 0 at the "
        "top (successions are split at gaps)"
    ),
}


def _picks_caption(core: str, picks: pd.DataFrame, units: str) -> str:
    """The caption of a picks table: every column it shows and what it holds."""
    names = [str(c).split(" (")[0] for c in picks.columns]
    said = [text for c, text in _PICK_COLUMNS.items() if c in names]
    return (
        f"Surfaces picked in core {core} where the most likely tract column changes "
        f"(depths in {units}): {'; '.join(said)}."
    )


def _core_blocks(
    sub: Section,
    core: CoreInterpretation,
    key: str,
    scheme: FaciesScheme,
    tract_model: TractModel,
    interpretation: Interpretation,
) -> None:
    """One core's strip log, its picks (or a line saying there are none) and its beds."""
    from faciesseq.report.striplog import strip_log

    sub.add(
        FigureBlock(
            f"{key}_striplog",
            f"Strip log of core {core.core}: facies, most likely systems tract, tract "
            f"posteriors and surface probabilities (depth in {core.units}, downward).",
            strip_log(core, scheme, tract_model, checked=interpretation.probabilities_checked),
        )
    )
    picks = core.picks.copy()
    if len(picks):
        u = core.units
        picks = picks.set_index("surface").rename(
            columns={
                "depth": f"depth ({u})",
                "depth_top": f"interval top ({u})",
                "depth_base": f"interval base ({u})",
            }
        )
        sub.add(
            TableBlock(
                f"{key}_picks",
                _picks_caption(core.core, picks, u),
                picks,
                probabilities=("probability", "p_contact"),
                decimals=_in_units(
                    picks, u, depth_decimals(core.beds[["top", "base"]].to_numpy(float))
                ),
            )
        )
    else:
        sub.add(Paragraph(f"No surface was picked in core {core.core}."))
    beds = core.beds.drop(columns=[c for c in ("segment",) if c in core.beds])
    sub.add(
        TableBlock(
            f"{key}_beds",
            f"beds of core {core.core} with the most likely tract and the tract posteriors.",
            beds,
            index=False,
            shown=False,
        )
    )


# ------------------------------------------------------------------------- building


def build_appendix(
    cores: CoreSet,
    scheme: FaciesScheme,
    tract_model: TractModel,
    *,
    markov: Any = None,
    model: Any = None,
    interpretation: Interpretation | None = None,
    validation: Any = None,
    selection: Any = None,
    provenance: Mapping[str, Any] | None = None,
    model_note: str = "",
    validation_note: str = "",
    validation_notes: Sequence[str] = (),
    decode_notes: Sequence[str] = (),
    fit_notes: Sequence[str] = (),
    unit: str = "beds",
    title: str = "Statistical appendix: facies successions and systems tracts",
) -> Appendix:
    """Assemble the appendix from the results of a run.

    Parameters
    ----------
    cores
        The core database as read (its ``problems`` are reported in section 1).
    scheme, tract_model
        The facies scheme and tract model used.
    markov
        Transition statistics (:class:`faciesseq.markov.MarkovReport`); section 2.
    model
        The fitted tract model; section 3.
    interpretation
        Decoded cores; section 4.
    validation
        Cross-validation results on interpreted cores; in section 3.
    selection
        Candidate models compared by BIC (``ModelSelection``); in section 3.
    provenance
        The provenance record (:func:`faciesseq.report.provenance.provenance`).
    model_note
        A sentence on where the model came from (e.g. fitted with the defaults
        because no model file was given); shown in section 3.
    validation_note
        Why there is no validation (when ``validation`` is ``None``).
    validation_notes
        Warnings raised during cross-validation (e.g. labels left out).
    decode_notes
        Warnings raised while decoding (e.g. facies unseen in training); shown
        in section 4.
    fit_notes
        Warnings raised while fitting (e.g. labels left out); listed in full in
        a data file of section 3.
    unit
        ``"beds"`` or ``"grid"``: how successions were formed (methods text).
    title
        The document's title (HTML, LaTeX and ``appendix.json``).

    Returns
    -------
    Appendix
        Sections 1 Data, 2 Transition statistics, 3 The tract model, 4 Cores,
        5 Methods; a part whose results are ``None`` says it is not available.
    """
    if len(cores) == 0:
        raise InputError("the core set has no cores to report on")
    results: dict[str, Any] = {}
    missing: dict[str, str] = {}
    document = Document(
        title,
        subtitle=f"{len(cores)} cores; facies scheme “{scheme.name}”; tract model "
        f"“{tract_model.name}”",
    )
    document.sections = [
        _data_section(cores, scheme, results),
        _markov_section(markov, scheme, results, missing),
        _model_section(
            model,
            tract_model,
            validation,
            model_note,
            results,
            missing,
            selection,
            scheme,
            validation_note,
            validation_notes,
            fit_notes,
        ),
        _cores_section(interpretation, scheme, tract_model, results, missing, decode_notes),
        methods_section(unit, model),
    ]
    list_references(document)
    document.check_keys()
    return Appendix(document, results, dict(provenance or {}), missing)


def add_section(appendix: Appendix, section: Section, key: str, results: Any) -> None:
    """Add ``section`` to a built appendix before its Methods section (the last);
    ``results`` (JSON-ready) under ``key`` in ``appendix.json``."""
    appendix.document.sections.insert(len(appendix.document.sections) - 1, section)
    list_references(appendix.document)
    appendix.document.check_keys()
    appendix.results[key] = results


# -------------------------------------------------------------------------- writing


def _figure_bytes(fig, fmt: str, dpi: int) -> bytes:
    import matplotlib as mpl

    from faciesseq.report.style import STYLE, savefig_options

    buffer = io.BytesIO()
    metadata = {"CreationDate": None} if fmt == "pdf" else {"Software": None}
    with mpl.rc_context(STYLE):
        # constrained layout already fits every figure to its canvas; a tight bounding
        # box would draw each figure twice
        fig.savefig(buffer, format=fmt, dpi=dpi, metadata=metadata, **savefig_options(fmt))
    return buffer.getvalue()


def _write_json(path: Path, data: Any) -> None:
    path.write_text(
        json.dumps(jsonable(data), indent=1, ensure_ascii=False, allow_nan=False) + "\n",
        encoding="utf-8",
    )


def write_appendix(
    appendix: Appendix,
    out_dir: str | os.PathLike,
    *,
    force: bool = False,
    dpi: int = 160,
    latex: bool = True,
    extra: Mapping[str, str | bytes] | None = None,
) -> Path:
    """Write the appendix folder atomically (see the module docstring for its files).

    Parameters
    ----------
    appendix
        As built by :func:`build_appendix`.
    out_dir
        The folder to create. If it exists, ``force=True`` replaces it;
        otherwise :class:`~faciesseq.errors.ConfigError` is raised before
        anything is written.
    force
        Replace ``out_dir`` where it exists (swapped in whole: no file of the
        earlier folder remains).
    dpi
        Resolution of the PNG figures (embedded in the HTML and written to
        ``figures/``).
    latex
        Also write ``appendix.tex`` and the PDF figures.
    extra
        More files to put in the folder (relative name -> text or bytes), e.g.
        the fitted model file; written in the same atomic step.

    Returns
    -------
    pathlib.Path
        The folder written.
    """
    from faciesseq._output import new_folder
    from faciesseq.report.style import missing_glyphs_once

    out = Path(out_dir)
    if out.exists() and not force:
        raise ConfigError(
            f"{out} exists; choose another folder, or pass force=True "
            "(--force on the command line) to replace it"
        )
    if out.exists() and not out.is_dir():
        raise ConfigError(f"{out} exists and is not a folder")
    out.parent.mkdir(parents=True, exist_ok=True)
    with missing_glyphs_once(), new_folder(out) as tmp:  # the one warning once written
        _fill_folder(appendix, tmp, dpi=dpi, latex=latex, extra=extra)
    return out


def _fill_folder(
    appendix: Appendix,
    tmp: Path,
    *,
    dpi: int,
    latex: bool,
    extra: Mapping[str, str | bytes] | None,
) -> None:
    """Write every file of the appendix into the (new, empty) folder ``tmp``."""
    from faciesseq.report.html import render_html
    from faciesseq.report.latex import render_latex

    (tmp / "tables").mkdir()
    (tmp / "figures").mkdir()
    document = appendix.document
    for table in document.tables():
        # ten significant digits (TABLE_FLOATS): every digit a statistic or a depth
        # carries, none of the float noise of sums of depths (33.08999999999992)
        frame = table.to_csv_frame()
        frame.to_csv(tmp / "tables" / f"{table.key}.csv", index=False, float_format=TABLE_FLOATS)
    pngs: dict[str, bytes] = {}
    for block in document.figures():
        pngs[block.key] = _figure_bytes(block.figure, "png", dpi)
        (tmp / "figures" / f"{block.key}.png").write_bytes(pngs[block.key])
        if latex:
            pdf = _figure_bytes(block.figure, "pdf", dpi)
            (tmp / "figures" / f"{block.key}.pdf").write_bytes(pdf)
    for view in document.views():
        (tmp / f"{view.key}.html").write_text(view.html, encoding="utf-8")
    prov = appendix.provenance
    meta = []
    software = prov.get("software", {}) if isinstance(prov, Mapping) else {}
    if software:
        meta.append(f"faciesseq {software.get('faciesseq', '')}")
    if prov.get("date"):
        meta.append(f"written {prov['date']}")
    data_files = [(f"tables/{t.key}.csv", t.caption) for t in document.tables(shown=False)]
    data_files += [(f"{v.key}.html", v.caption) for v in document.views()]
    data_files += [
        ("appendix.json", "every number of this appendix at full precision"),
        ("provenance.json", "input file hashes, software versions, seeds, command line"),
    ]
    if latex:
        data_files.append(("appendix.tex", "LaTeX version (figures in figures/*.pdf)"))
    (tmp / "appendix.html").write_text(
        render_html(document, pngs, meta=meta, data_files=data_files, dpi=dpi),
        encoding="utf-8",
    )
    if latex:
        (tmp / "appendix.tex").write_text(render_latex(document, meta=meta), encoding="utf-8")
    _write_json(tmp / "appendix.json", appendix.to_dict())
    _write_json(tmp / "provenance.json", prov)
    for name, content in (extra or {}).items():
        target = tmp / name
        if (
            target.resolve().parent != tmp.resolve()
            and tmp.resolve() not in target.resolve().parents
        ):
            raise ConfigError(f"extra file {name!r} would be written outside the folder")
        target.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            target.write_bytes(content)
        else:
            target.write_text(content, encoding="utf-8")
