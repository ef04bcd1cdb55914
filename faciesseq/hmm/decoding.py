"""Decoding with a fitted tract model: tract columns, posteriors, surfaces and picks.

Batches of whole successions (each one job of :mod:`faciesseq.parallel`) get
the tempered forward-backward posteriors, the Viterbi column of the model
itself and the two-slice surface probabilities. Batches are grouped into parts
of whole cores (:meth:`Decoding.decode_parts`, a streamed decode); the beds,
boundaries and picks of a part's cores are assembled in depth order (shallowest
first) as whole columns, one table each for all the part's cores.
:class:`~faciesseq.hmm.model.TractHMM` takes these methods from :class:`Decoding`.
"""

from __future__ import annotations

import warnings
from collections.abc import Iterable, Iterator, Sequence

import numpy as np
import pandas as pd

from faciesseq.core import (
    CoreSet,
    Succession,
    SuccessionTable,
    check_grid_step,
    in_units,
    take_text,
    text_column,
)
from faciesseq.errors import InputError
from faciesseq.hmm import engine
from faciesseq.hmm.calibration import probability_meta, temper
from faciesseq.hmm.cautions import REFERENCE_NOTE, UNLABELLED_NOTE
from faciesseq.hmm.encoding import EncodedBeds, UnseenCategoryWarning
from faciesseq.hmm.inputs import as_successions
from faciesseq.hmm.reference import REFERENCE
from faciesseq.hmm.reference_check import unsure_note
from faciesseq.hmm.said_once import said_once
from faciesseq.interpretation import PICK_COLUMNS, Interpretation
from faciesseq.parallel import run_jobs
from faciesseq.surfaces import pick_table, surface_codes, surface_pair_mask

__all__ = ["DECODE_BATCH", "DECODE_PART", "Decoding"]

#: Beds per batch decoded as one job (at most ``batch_size``). Fixed, so that the
#: batches -- whose make-up moves the posteriors in the last bit -- and hence
#: the decoded columns do not depend on the number of workers.
DECODE_BATCH = 20_000
#: Beds (at least) per part of a streamed decode: whole batches and whole cores.
DECODE_PART = 10 * DECODE_BATCH


def _succession_table(data, unit: str, step: float | None) -> SuccessionTable:
    """``data`` as one table of successions (:mod:`faciesseq.hmm.inputs` says what is
    accepted): a core set whole, without a frame per succession."""
    if isinstance(data, SuccessionTable):
        return data
    if isinstance(data, CoreSet):
        check_grid_step(unit, step)
        return data.succession_table(unit, step)
    return SuccessionTable.from_successions(as_successions(data, unit, step))


def _unseen_warning(
    what: str,
    cores: list[str],
    codes: set[str],
    n_beds: int,
    n_decoded: int,
    top: float,
    units: str,
) -> UnseenCategoryWarning:
    """The warning for ``codes`` of ``what`` (facies, contact type) the model never
    saw, in ``n_beds`` of the ``n_decoded`` beds decoded, of ``cores``, the first at
    depth ``top`` of the first core.
    It keeps these (``.unseen``), so that the warnings of many parts merge into one."""
    where = f"core {cores[0]}, depth {top:.2f} {units}"
    if len(cores) > 1:
        where += f", and {len(cores) - 1} other core(s)"
    in_cores = f" in {len(cores)} cores" if len(cores) > 1 else ""
    warning = UnseenCategoryWarning(
        f"{where}: {what} {sorted(codes)} not seen in training ({n_beds} of {n_decoded} "
        f"bed(s){in_cores}); decoded with a smoothed probability"
    )
    warning.unseen = (what, cores, codes, n_beds, n_decoded, top, units)
    return warning


def _merge_unseen(caught: list) -> list:
    """The warnings of a decode, those of codes never seen in training merged into one
    per kind (facies, contact type) across its parts; the others as they were."""
    merged: dict[str, list] = {}
    out: list = []
    for w in caught:
        found = getattr(w.message, "unseen", None)
        if found is None:
            out.append(w.message)
            continue
        what, cores, codes, n_beds, n_decoded, top, units = found
        if what not in merged:
            merged[what] = [cores, set(codes), n_beds, n_decoded, top, units]
            out.append(what)  # its place in the order
            continue
        held = merged[what]
        held[0] = list(dict.fromkeys([*held[0], *cores]))
        held[1] |= set(codes)
        held[2] += n_beds
        held[3] += n_decoded
    return [_unseen_warning(m, *merged[m]) if isinstance(m, str) else m for m in out]


def _parts(batches: list, cores: np.ndarray, size: int) -> list[list]:
    """Consecutive batches grouped into parts of at least ``size`` beds that end
    where a core ends (a part holds whole cores)."""
    parts, current, beds = [], [], 0
    for batch in batches:
        current.append(batch)
        beds += batch[1] - batch[0]
        stop = batch[3] + len(batch[2])  # the next batch's first succession
        if beds >= size and (stop == len(cores) or cores[stop] != cores[stop - 1]):
            parts.append(current)
            current, beds = [], 0
    return [*parts, current] if current else parts


class Decoding:
    """Decoding of :class:`~faciesseq.hmm.model.TractHMM` (a fitted model)."""

    def _warn_unseen(self, table: SuccessionTable, beds: EncodedBeds) -> None:
        """One warning per column (facies, contact type) holding codes the model never
        saw, naming the codes and the cores that hold them (:func:`_unseen_warning`)."""
        owner = np.repeat(np.arange(len(table)), table.lengths)
        for what, col, codes, features in (
            ("facies", "facies", beds.facies, {"facies", "facies_trend"}),
            ("contact type", "contact", beds.contact, {"contact"}),
        ):
            if not features & set(self.features_):
                continue
            rows = np.flatnonzero(codes == -2)
            if not rows.size:
                continue
            first = rows[0]
            warnings.warn(
                _unseen_warning(
                    what,
                    list(dict.fromkeys(table.cores[owner[rows]].tolist())),
                    {str(v) for v in table.beds[col].to_numpy()[rows]},
                    len(rows),
                    len(codes),
                    float(table.beds["top"].to_numpy()[first]),
                    table.units,
                ),
                stacklevel=4,
            )

    def decode(
        self,
        successions: CoreSet | Sequence[Succession] | SuccessionTable,
        mass: float = 0.9,
        labels: str | Sequence[Sequence[str | None]] | None = None,
    ) -> Interpretation:
        """Tract column, posteriors, surface probabilities and picks of every core.

        Any interpreter's ``tract`` column is ignored (it is kept in the bed
        tables as ``interpreted_tract``) unless named by ``labels``: then its
        labelled beds are clamped (they keep their tract, posterior 1) and the
        rest is decoded around them. ``mass`` is the share of a surface's
        probability its pick's uncertainty interval holds
        (:func:`faciesseq.surfaces.pick_table`).

        Returns
        -------
        Interpretation, tables in depth order (shallowest first).
        """
        table = self._to_decode(successions)
        self._refuse_foreign(table)
        with said_once(_merge_unseen):  # one warning of each kind for all the cores
            parts = list(self._decoded(table, mass, labels, None))
        return Interpretation.concat(parts)

    def _refuse_foreign(self, table: SuccessionTable) -> None:
        """Refuse cores none of whose facies codes the model saw in training, as
        ``faciesseq decode`` does (:func:`faciesseq.novelty.foreign_facies`): every bed
        would be read from its thickness and contacts alone."""
        from faciesseq.novelty import DecodedBeds, foreign_facies

        if "facies" not in table.beds.columns or not len(table.beds):
            return
        decoded = DecodedBeds()
        decoded.add(table.beds[["facies", "thickness"]], table.units)
        why = foreign_facies(decoded, self)
        if why is not None:
            raise InputError(why)

    def decode_parts(
        self,
        successions: CoreSet | Sequence[Succession] | SuccessionTable,
        mass: float = 0.9,
        labels: str | Sequence[Sequence[str | None]] | None = None,
        size: int | None = None,
    ) -> Iterator[Interpretation]:
        """:meth:`decode`, a part of whole cores (at least ``size`` beds, default
        :data:`DECODE_PART`) at a time: what a part needs is made, decoded and handed
        on before the next is begun."""
        table = self._to_decode(successions)
        yield from self._decoded(table, mass, labels, size)

    def _to_decode(self, successions) -> SuccessionTable:
        """The successions of :meth:`decode` as one table in the model's unit; an empty
        core set (or list) is refused by name, not decoded into nothing."""
        self._check_fitted()
        sized = isinstance(successions, CoreSet | SuccessionTable | list | tuple)
        if sized and not len(successions):
            raise InputError(f"no cores to decode: the {type(successions).__name__} is empty")
        step = self.grid_step(getattr(successions, "units", None))
        return _succession_table(successions, self.unit_, step)

    def decode_stream(
        self, tables: Iterable[SuccessionTable], mass: float = 0.9, size: int | None = None
    ) -> Iterator[Interpretation]:
        """:meth:`decode_parts` of successions given as tables of whole cores one after
        another (the batches of a streamed read, :func:`faciesseq.io.stream_cores`).

        The batches and parts are those of the whole table, hence so is every decoded
        column, bit for bit: a part is decoded once the successions after it are known
        (its last batch can take no more, and its last core has ended); only the
        successions not yet decoded are held."""
        self._check_fitted()
        held = None
        for table in tables:
            held = table if held is None else SuccessionTable.concat([held, table])
            done = 0
            for group in self._groups(held, size):
                stop = group[-1][3] + len(group[-1][2])
                if stop == len(held):  # the next table may add to its last batch or core
                    break
                yield self._decode_part(held.part(done, stop), group, mass, None, done)
                done = stop
            held = held.part(done, len(held)) if done else held
        if held is None:
            raise InputError("no beds to decode")
        yield from self._decoded(held, mass, None, size)

    def _decoded(self, table: SuccessionTable, mass, labels, size) -> Iterator[Interpretation]:
        """Every part of ``table``, decoded in turn."""
        if not len(table):
            raise InputError("no beds to decode")
        for group in self._groups(table, size):
            first, stop = group[0][3], group[-1][3] + len(group[-1][2])
            yield self._decode_part(table.part(first, stop), group, mass, labels, first)

    def _in_fitted_units(self, table: SuccessionTable) -> pd.DataFrame:
        """The beds of ``table`` with their thickness in the depth units of the cores the
        model was fitted on (its emissions read the log of thickness in those units;
        1 ft = 0.3048 m); depths and every output stay in the table's units."""
        fitted = getattr(self, "units_", None)
        if fitted is None or fitted == table.units:
            return table.beds
        return table.beds.assign(thickness=in_units(table.beds["thickness"], table.units, fitted))

    def grid_step(self, units: str | None) -> float | None:
        """The model's depth step (``unit="grid"``) in ``units`` (``None``, or a model
        that does not know the units of its cores: the step as fitted)."""
        fitted = getattr(self, "units_", None)
        if self.step is None or fitted is None or units is None:
            return self.step
        return float(in_units(self.step, fitted, units))

    def _groups(self, table: SuccessionTable, size: int | None) -> list[list]:
        """The batches of ``table`` grouped into parts (see :func:`_parts`)."""
        batches = list(self._batches(table.lengths, DECODE_BATCH))
        return _parts(batches, table.cores, size or DECODE_PART)

    def _decode_part(self, part: SuccessionTable, group, mass, labels, first: int):
        beds = self._encode([self._in_fitted_units(part)], part.lengths)
        self._warn_unseen(part, beds)
        clamp = None
        if labels is not None:
            named = labels if isinstance(labels, str) else labels[first : first + len(part)]
            clamp, _ = self._labels(list(part), named)
        a0 = group[0][0]
        jobs = [
            (
                beds.slice(a - a0, b - a0, lengths),
                None if clamp is None else clamp[a - a0 : b - a0],
            )
            for a, b, lengths, _ in group
        ]
        decoded = run_jobs(self._decode_batch, jobs, self.n_jobs, self.scheduler)
        gamma, vit, surf, loglik = (np.concatenate(x) for x in zip(*decoded))
        return self._interpretation(part, gamma, vit, surf, loglik, mass)

    def _decode_batch(self, beds: EncodedBeds, clamp: np.ndarray | None):
        """Tract posteriors, Viterbi tracts, surface probabilities and log-likelihoods
        of one batch of whole successions (one job of :mod:`faciesseq.parallel`), with
        one BLAS thread throughout (see :func:`~faciesseq.hmm.engine.single_thread_blas`)."""
        with engine.single_thread_blas():
            return self._decode_batch_alone(beds, clamp)

    def _decode_batch_alone(self, beds: EncodedBeds, clamp: np.ndarray | None):
        le = self._log_emission(self.emissions_, beds)
        if clamp is not None:
            le = engine.constrained_log_emission(le, clamp[:, self.states_.state_tract])
        # probabilities from the calibrated (tempered) chain; the log-likelihood
        # and the Viterbi column from the model itself
        tle, tpi, tA = temper(le, self.startprob_, self.transmat_, self.temperature_)
        pairs = surface_pair_mask(self.tract_model_, self.states_.state_tract)
        post = engine.forward_backward(
            tle, beds.lengths, tpi, tA, return_xi=True, xi_masks=pairs.astype(float)
        )
        loglik = (
            post.log_likelihood
            if self.temperature_ == 1.0
            else engine.log_likelihood(le, beds.lengths, self.startprob_, self.transmat_)
        )
        path, _ = engine.viterbi(le, beds.lengths, self.startprob_, self.transmat_)
        surf = post.xi  # as boundary_probabilities of the full two-slice posteriors
        # a sum of sub-state posteriors can round a hair above 1
        gamma = np.clip(self.states_.to_tracts(post.gamma), 0.0, 1.0)
        return gamma, self.states_.state_tract[path], surf, loglik

    def _interpretation(self, part: SuccessionTable, gamma, vit, surf, loglik, mass):
        """The decoded successions of whole cores as one :class:`Interpretation`, in
        depth order: ``vit``/``gamma`` per bed and ``surf`` per contact, base to top."""
        flow = _DepthOrder(part)
        codes = surface_codes(self.tract_model_)
        beds = self._bed_table(part, flow, gamma, vit)
        contacts = flow.contacts
        upper_row = contacts - 1  # the bed above a contact, in depth order
        tracts = list(self.states_.tracts)
        surf = surf[flow.contact_xi]  # in depth order
        bounds = pd.DataFrame(
            {
                "core": take_text(beds["core"], contacts),
                "segment": beds["segment"].to_numpy()[contacts],
                "depth": beds["top"].to_numpy(float)[contacts],
                "lower_tract": text_column(tracts, vit[flow.order[contacts]]),
                "upper_tract": text_column(tracts, vit[flow.order[upper_row]]),
            }
            | {f"p_{c}": surf[:, j] for j, c in enumerate(codes)}
        )
        state = flow.rows_in_depth_order(vit)
        picks = self._pick_frame(bounds, state, surf, flow, mass)
        core_ids, names = pd.factorize(pd.Index(part.cores, dtype=object))
        wells = pd.DataFrame(
            {
                "units": part.units,
                "log_likelihood": np.bincount(core_ids, weights=loglik, minlength=len(names)),
                "beds": np.bincount(core_ids, weights=part.lengths).astype(np.int64),
                "boundaries": np.bincount(core_ids, weights=part.lengths - 1).astype(np.int64),
                "picks": picks["core"].value_counts().reindex(names, fill_value=0).to_numpy(),
            },
            index=pd.Index(names, dtype=object, name="core"),
        )
        tables = {"beds": beds, "boundaries": bounds, "picks": picks}
        meta = {"unit": self.unit_, "step": self.step, "features": list(self.features_)}
        meta |= probability_meta(self.temperature_, self.calibration_)
        meta["tracts_labelled"] = bool(getattr(self, "n_labelled_", 0))
        if not meta["tracts_labelled"]:
            note = REFERENCE_NOTE if REFERENCE in self.features_ else UNLABELLED_NOTE
            unsure = unsure_note(getattr(self, "reference_check_", None))
            note = f"{note} {unsure}" if unsure else note
            meta["names_unsure"] = unsure is not None
            meta["probabilities_note"] = f"{meta['probabilities_note']} {note}"
        return Interpretation(tuple(self.states_.tracts), codes, wells=wells, meta=meta, **tables)

    def _pick_frame(self, bounds, state, surf, flow, mass) -> pd.DataFrame:
        """The picks of every core, depth order (then surface) within each core."""
        tm = self.tract_model_
        codes = surface_codes(tm)
        found = pick_table(
            bounds["depth"].to_numpy(float),
            state[flow.contacts],
            state[flow.contacts - 1],
            surf,
            flow.first_contact,
            tm,
            mass,
        )
        at, code = found.pop("contact"), found.pop("surface")
        code_names = np.array(codes, dtype=object)
        name_codes, names = pd.factorize(found["name"])
        picks = pd.DataFrame(
            {"core": take_text(bounds["core"], at), "surface": text_column(codes, code)}
            | found
            | {"name": text_column(list(names), name_codes)}
            | {"segment": bounds["segment"].to_numpy()[at].astype(int)}
        )
        rank = np.argsort(np.argsort(code_names.astype(str), kind="stable"))
        order = np.lexsort((rank[code], found["depth"], flow.core_of_contact[at]))
        return picks.take(order).reset_index(drop=True)[["core", *PICK_COLUMNS]]

    def _bed_table(self, part: SuccessionTable, flow, gamma, vit) -> pd.DataFrame:
        """The decoded beds of whole cores in depth order: ``core``, ``segment``, the
        described columns, then the tract and its posteriors (an interpreter's ``tract``
        kept as ``interpreted_tract``)."""
        rows = flow.order
        names = list(part.beds.columns)
        posterior = gamma[rows]
        added = {"tract": text_column(list(self.states_.tracts), vit[rows])} | {
            f"p_{t}": posterior[:, j] for j, t in enumerate(self.states_.tracts)
        }
        renamed = {"tract": "interpreted_tract"}  # an interpreter's column: kept, never used
        first = ["top", "base", "thickness", "facies"]
        order = [c for c in first if c in names] + [
            c for c in names if c not in (*first, "segment", *added) or c == "tract"
        ]
        succession = np.repeat(np.arange(len(part.lengths)), part.lengths)[rows]
        columns = {
            "core": text_column(list(part.cores), succession),
            "segment": part.segments[succession],
        }
        for c in order:
            columns[renamed.get(c, c)] = take_text(part.beds[c], rows)
        return pd.DataFrame(columns | added)


class _DepthOrder:
    """Where the rows of successions stored base to top go in depth order (each
    succession turned over; the successions of a core already shallowest first)."""

    def __init__(self, part: SuccessionTable):
        lengths = part.lengths
        starts = part.starts[:-1]
        owner = np.repeat(np.arange(len(lengths)), lengths)
        #: base-to-top row of each depth-ordered row
        self.order = (starts + lengths - 1)[owner] - (np.arange(len(owner)) - starts[owner])
        is_first = np.zeros(len(owner), dtype=bool)
        is_first[starts[lengths > 0]] = True
        #: depth-ordered rows of the lower bed of every contact (all but each
        #: succession's shallowest bed); the bed above is the row before
        self.contacts = np.flatnonzero(~is_first)
        #: the contact's row in the two-slice posteriors (base to top, one fewer per succession)
        self.contact_xi = self.order[self.contacts] - owner[self.contacts]
        self.first_contact = np.r_[True, owner[self.contacts][1:] != owner[self.contacts][:-1]]
        core_ids, _ = pd.factorize(pd.Index(part.cores, dtype=object))
        self.core_of_contact = core_ids[owner[self.contacts]]

    def rows_in_depth_order(self, values: np.ndarray) -> np.ndarray:
        return values[self.order]
