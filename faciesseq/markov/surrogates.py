"""Surrogate successions for exact (Monte Carlo) tests on small samples.

Two kinds, both drawn for many surrogates at once with numpy:

- :func:`transition_surrogates`: successions drawn **uniformly among all
  successions with the same first-order transition counts and the same first
  facies** as each observed one (Pethel & Hahs 2014, Physica D 269:42–47;
  their count is Whittle's formula, Whittle 1955, J. R. Stat. Soc. B 17).
  Such a succession is an Eulerian trail of the transition multigraph; a
  uniform one is drawn by the "last-exit tree" construction (Kandel et al.
  1996, Discrete Appl. Math. 71:171–185, after the BEST theorem): a random
  arborescence of last exits towards the final facies, with probability
  proportional to the product of its edge multiplicities, sampled by cycle
  popping (Propp & Wilson 1998, J. Algorithms 27:170–217, the array form of
  Wilson's algorithm); then the other exits of each facies in random order.
  Under a first-order chain these are exchangeable with the data, so they
  give an exact test of first order against higher orders.
- :func:`restricted_permutations`: random orderings of each succession's
  beds with no facies directly above itself (the permutation null of an
  embedded chain), by a swap Markov chain run with the "parallel" scheme of
  Besag & Clifford (1989, Biometrika 76:633–642): the chain runs from the
  data to a hub and then independently from the hub to each surrogate, so
  data and surrogates are exchangeable and the Monte Carlo p-value is exact
  even without full mixing.

Own implementations: no library draws either for many successions at once.
Surrogates keep each succession's length, so pooled counts never cross a core
boundary or gap.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterator

import numpy as np

from faciesseq.markov.counts import EncodedSuccessions

__all__ = [
    "monte_carlo_p_value",
    "permutation_hub",
    "restricted_permutations",
    "transition_surrogates",
    "transition_surrogates_loop",
]

#: Sweeps of the swap chain from the data to the hub, and from the hub to each surrogate.
PERMUTATION_SWEEPS = 10
#: Elements (surrogates x states) drawn per batch; bounds memory (about 8 bytes each).
BATCH_ELEMENTS = 50_000_000


def monte_carlo_p_value(observed: float, surrogate: np.ndarray) -> float:
    """``(1 + #{surrogate >= observed}) / (1 + n)`` (Davison & Hinkley 1997, eq. 4.11).

    A small relative tolerance counts ties that differ only by rounding.
    """
    s = np.asarray(surrogate, dtype=float)
    tol = 1e-9 * max(1.0, abs(observed))
    return float((1 + np.count_nonzero(s >= observed - tol)) / (1 + len(s)))


class _Graphs:
    """The transition multigraphs of all successions, as flat arrays.

    Global vertex ``g = i * m + v`` is facies ``v`` of succession ``i``; its
    exits (the facies above each occurrence of ``v`` that has one) occupy
    ``exits[offset[g] : offset[g] + degree[g]]``, sorted by facies.
    """

    def __init__(self, enc: EncodedSuccessions) -> None:
        m = enc.m
        n_succ = len(enc)
        self.m, self.n_succ = m, n_succ
        states = enc.states.astype(np.int64)
        starts, lengths = enc.starts, enc.lengths
        owner = np.repeat(np.arange(n_succ), lengths)
        has_next = enc.position_in_succession() < (lengths[owner] - 1)
        src = owner[has_next] * m + states[has_next]
        dst = states[np.nonzero(has_next)[0] + 1]
        order = np.lexsort((dst, src))
        self.exits = dst[order]
        self.exit_vertex = src[order]
        n_vert = n_succ * m
        self.degree = np.bincount(src, minlength=n_vert)
        self.offset = np.r_[0, np.cumsum(self.degree)[:-1]]
        self.n_edges = len(self.exits)
        # the fixed label (position) of the first exit of g to facies v
        first = np.full((n_vert, m), -1, dtype=np.int64)
        pos = np.arange(self.n_edges)
        key = self.exit_vertex * m + self.exits
        uniq, idx = np.unique(key, return_index=True)
        first.reshape(-1)[uniq] = pos[idx]
        self.first_label = first
        nonempty = lengths > 0
        self.start = np.where(nonempty, states[np.minimum(starts[:-1], len(states) - 1)], 0)
        last = np.where(nonempty, states[np.maximum(starts[1:] - 1, 0)], 0)
        self.root = np.arange(n_succ) * m + last
        self.lengths = lengths
        self.state_start = starts[:-1]
        is_root = np.zeros(n_vert, dtype=bool)
        is_root[self.root[nonempty]] = True
        self.tree_vertices = np.nonzero((self.degree > 0) & ~is_root)[0]
        self.root_vertices = self.root[nonempty & (lengths > 1)]


def _last_exit_trees(gr: _Graphs, batch: int, rng: np.random.Generator) -> np.ndarray:
    """Last-exit facies of every non-root vertex, one arborescence per surrogate.

    Cycle popping: each vertex points to a uniformly chosen exit (probability
    of a facies = its multiplicity / degree); every cycle is "popped" (its
    vertices choose again) until none is left. The result is a spanning
    arborescence towards the root with probability proportional to the product
    of the multiplicities of its edges (Propp & Wilson 1998, sec. 6). Each
    (surrogate, succession) pair is its own small problem of at most ``m``
    vertices; only the problems that still hold a cycle are worked on.
    Returns ``(batch, len(tree_vertices))`` facies.
    """
    tv = gr.tree_vertices
    if len(tv) == 0:
        return np.zeros((batch, 0), dtype=np.int64)
    m = gr.m
    is_tree = np.zeros((gr.n_succ, m), dtype=bool)
    is_tree.reshape(-1)[tv] = True
    needing = np.nonzero(is_tree.any(axis=1))[0]
    n_need = len(needing)
    prob_succ = np.tile(needing, batch)
    tmask = is_tree[prob_succ]

    def draw(vertex: np.ndarray) -> np.ndarray:
        deg = gr.degree[vertex]
        u = rng.random(len(vertex))
        pick = gr.offset[vertex] + np.minimum((u * deg).astype(np.int64), deg - 1)
        return gr.exits[pick]

    choice = np.full(tmask.shape, -1, dtype=np.int64)
    r, v = np.nonzero(tmask)
    choice[r, v] = draw(prob_succ[r] * m + v)
    here = np.arange(m)[None, :]
    active = np.arange(len(prob_succ))
    while len(active):
        ch = choice[active]
        tm = tmask[active]
        points_to_tree = np.take_along_axis(tm, np.maximum(ch, 0), axis=1) & (ch >= 0)
        nxt = np.where(points_to_tree, ch, -1)  # -1: the root, which ends the walk
        on_cycle = np.zeros(tm.shape, dtype=bool)
        cur = nxt
        for _ in range(m):
            on_cycle |= cur == here
            cur = np.where(cur >= 0, np.take_along_axis(nxt, np.maximum(cur, 0), axis=1), -1)
        on_cycle &= tm
        r, v = np.nonzero(on_cycle)
        rows = active[r]
        choice[rows, v] = draw(prob_succ[rows] * m + v)
        active = active[on_cycle.any(axis=1)]
    pos = np.searchsorted(needing, tv // m)
    row = np.arange(batch)[:, None] * n_need + pos[None, :]
    return choice[row, (tv % m)[None, :]]


def _shuffle_segments(
    labels: np.ndarray, offset: np.ndarray, length: np.ndarray, rng: np.random.Generator
) -> None:
    """Shuffle ``labels[:, offset[s] : offset[s] + length[s]]`` in place, row by row.

    Few long segments: numpy's ``Generator.permuted`` per segment. Many short
    ones: Fisher–Yates run over all segments at once (Knuth, TAOCP vol. 2,
    Algorithm P).
    """
    keep = length > 1
    offset, length = offset[keep], length[keep]
    if len(offset) == 0:
        return
    if len(offset) <= 64:
        for o, n in zip(offset, length):
            labels[:, o : o + n] = rng.permuted(labels[:, o : o + n], axis=1)
        return
    rows = np.arange(labels.shape[0])[:, None]
    for k in range(int(length.max()) - 1, 0, -1):
        sel = length > k
        o = offset[sel]
        j = (rng.random((labels.shape[0], len(o))) * (k + 1)).astype(np.int64)
        a = o[None, :] + k
        b = o[None, :] + j
        tmp = labels[rows, a].copy()
        labels[rows, a] = labels[rows, b]
        labels[rows, b] = tmp


def _batches(n: int, per_item: int) -> Iterator[int]:
    size = max(1, min(n, BATCH_ELEMENTS // max(per_item, 1)))
    done = 0
    while done < n:
        b = min(size, n - done)
        yield b
        done += b


def transition_surrogates(
    enc: EncodedSuccessions, n_surrogates: int, random_state: int | np.random.Generator | None
) -> Iterator[np.ndarray]:
    """Surrogates with each succession's first-order transition counts and first facies.

    Parameters
    ----------
    enc
        Observed successions (base to top).
    n_surrogates
        How many surrogate databases to draw.
    random_state
        Seed or generator; the same seed gives the same surrogates.

    Yields
    ------
    numpy.ndarray
        Batches of shape ``(batch, len(enc.states))``: each row is a surrogate
        of ``enc.states`` (same succession layout). Batches add up to
        ``n_surrogates`` rows.

    Notes
    -----
    Uniform among the successions with the same transition counts and first
    facies (Pethel & Hahs 2014; module docstring for the construction).
    """
    rng = np.random.default_rng(random_state)
    gr = _Graphs(enc)
    m = gr.m
    n_states = len(enc.states)
    dtype = np.int16 if gr.n_edges < 2**15 else (np.int32 if gr.n_edges < 2**31 else np.int64)
    base_labels = np.arange(gr.n_edges, dtype=dtype)
    tv = gr.tree_vertices
    # shuffle everything but the last exit of tree vertices, all exits of roots
    seg_off = np.r_[gr.offset[tv], gr.offset[gr.root_vertices]]
    seg_len = np.r_[gr.degree[tv] - 1, gr.degree[gr.root_vertices]]
    active = np.nonzero(gr.lengths > 1)[0]
    max_len = int(gr.lengths.max(initial=0))
    ends = set(gr.lengths.tolist())
    for batch in _batches(n_surrogates, max(gr.n_edges, n_states)):
        labels = np.broadcast_to(base_labels, (batch, gr.n_edges)).copy()
        if len(tv):
            last = _last_exit_trees(gr, batch, rng)
            last_label = gr.first_label[tv[None, :], last]
            end = (gr.offset[tv] + gr.degree[tv] - 1)[None, :]
            rows = np.arange(batch)[:, None]
            # swap the chosen last exit to the end of its vertex's exits
            moved = labels[rows, end].copy()
            labels[rows, end] = labels[rows, last_label]
            labels[rows, last_label] = moved
        _shuffle_segments(labels, seg_off, seg_len, rng)
        # each walker reads its own exit lists in order (cache-friendly); the
        # output is written one position (a contiguous row of walkers) per step
        flat_exits = gr.exits.astype(enc.states.dtype)[labels].reshape(-1)
        del labels
        out_t = np.empty((n_states, batch), dtype=enc.states.dtype)
        nonempty = gr.lengths > 0
        out_t[gr.state_start[nonempty], :] = gr.start[nonempty][:, None]
        n_vert = gr.n_succ * m
        # next exit slot of every (walker, vertex), as a flat index into flat_exits
        ptr = (gr.offset[None, :] + (np.arange(batch) * gr.n_edges)[:, None]).reshape(-1)
        row_v = (np.arange(batch, dtype=np.int64) * n_vert)[:, None]
        cur = np.broadcast_to((active * m + gr.start[active])[None, :], (batch, len(active)))
        for t in range(max_len - 1):
            if t + 1 in ends:
                keep = gr.lengths[active] > t + 1
                active = active[keep]
                cur = cur[:, keep]
            if len(active) == 0:
                break
            vi = row_v + cur
            slot = ptr[vi]
            ptr[vi] = slot + 1
            nxt = flat_exits[slot]
            out_t[gr.state_start[active] + t + 1, :] = nxt.T
            cur = active[None, :] * m + nxt
        out = np.ascontiguousarray(out_t.T)
        active = np.nonzero(gr.lengths > 1)[0]
        yield out


def transition_surrogates_loop(
    sequence: np.ndarray, m: int, n_surrogates: int, random_state: int | None
) -> list[np.ndarray]:
    """Plain-Python version of :func:`transition_surrogates` for one succession.

    The baseline of ``benchmarks/bench_surrogates.py`` and a cross-check in
    the tests: Wilson's loop-erased random walk for the last-exit tree, then
    ``random.shuffle`` of the other exits, then the walk.
    """
    import random

    rnd = random.Random(random_state)
    seq = [int(x) for x in sequence]
    exits: dict[int, list[int]] = {v: [] for v in range(m)}
    for a, b in itertools.pairwise(seq):
        exits[a].append(b)
    root = seq[-1]
    present = [v for v in range(m) if exits[v] and v != root]
    out = []
    for _ in range(n_surrogates):
        in_tree = {root}
        nxt: dict[int, int] = {}
        for v in present:
            u = v
            while u not in in_tree:
                nxt[u] = exits[u][rnd.randrange(len(exits[u]))]
                u = nxt[u]
            u = v
            while u not in in_tree:
                in_tree.add(u)
                u = nxt[u]
        order: dict[int, list[int]] = {}
        for v in range(m):
            rest = list(exits[v])
            if v in nxt:
                rest.remove(nxt[v])
                rnd.shuffle(rest)
                rest.append(nxt[v])
            else:
                rnd.shuffle(rest)
            order[v] = rest
        walk = [seq[0]]
        used = dict.fromkeys(range(m), 0)
        for _ in range(len(seq) - 1):
            v = walk[-1]
            walk.append(order[v][used[v]])
            used[v] += 1
        out.append(np.array(walk))
    return out


def _block_pairs(
    starts: np.ndarray, lengths: np.ndarray, o: int, delta: int, d: int
) -> tuple[np.ndarray, np.ndarray]:
    """Disjoint position pairs for one block-swap step, for every succession at once.

    Within each succession, positions ``o + 8k`` are paired with positions
    ``o + delta + 8(k + d)`` (``2 <= delta <= 6``), so no two chosen positions
    are adjacent and every position is in at most one pair. The pairs depend
    only on ``(o, delta, d)``, never on the beds.
    """
    k_i = np.maximum(0, -(-(lengths - o) // 8))
    k_j = np.maximum(0, -(-(lengths - o - delta) // 8))
    lo = max(0, -d)
    hi = np.minimum(k_i, k_j - d)
    count = np.maximum(0, hi - lo)
    owner = np.repeat(np.arange(len(lengths)), count)
    first = np.r_[0, np.cumsum(count)[:-1]]
    k = lo + np.arange(int(count.sum())) - np.repeat(first, count)
    base = starts[owner]
    return base + o + 8 * k, base + o + delta + 8 * (k + d)


def swap_chain(
    enc: EncodedSuccessions, x: np.ndarray, sweeps: int, rng: np.random.Generator
) -> None:
    """Run the no-repeat swap chain on a batch ``x`` (rows = orderings of ``enc``), in place.

    Each sweep is four *block* steps (many disjoint, non-adjacent pairs of beds
    at once, see :func:`_block_pairs`; each pair accepted on its own, which
    keeps the kernel symmetric because the pairs' neighbourhoods do not
    overlap) and up to 8 steps swapping one random pair of beds per succession
    (half the typical succession length, so short successions are
    swept too). Proposals never depend on the beds and a swap is kept only when no
    facies then lies on itself, so the kernel is symmetric and the uniform law
    on the allowed orderings is stationary.
    """
    if not x.flags.c_contiguous:
        raise ValueError("swap_chain works in place on a C-contiguous batch")
    lengths = enc.lengths
    starts = enc.starts[:-1]
    n_states = len(enc.states)
    movable = np.nonzero(lengths >= 2)[0]
    if len(movable) == 0:
        return
    owner = np.repeat(np.arange(len(lengths)), lengths)
    first_of = starts[owner]
    last_of = first_of + lengths[owner] - 1
    typical = float(np.median(lengths[movable]))
    max_blocks = max(1, int(np.ceil(typical / 8)))
    n_single = max(2, min(8, int(np.ceil(typical / 2))))

    def block_step() -> None:
        o = int(rng.integers(8))
        delta = int(rng.integers(2, 7))
        d = int(rng.integers(-max_blocks, max_blocks + 1))
        i, j = _block_pairs(starts, lengths, o, delta, d)
        if len(i) == 0:
            return
        xi, xj = x[:, i], x[:, j]
        ok = xi != xj
        for p, new in ((i, xj), (j, xi)):
            left, right = p - 1, p + 1
            has_left, has_right = left >= first_of[p], right <= last_of[p]
            ok &= ~has_left | (x[:, np.maximum(left, 0)] != new)
            ok &= ~has_right | (x[:, np.minimum(right, n_states - 1)] != new)
        x[:, i] = np.where(ok, xj, xi)
        x[:, j] = np.where(ok, xi, xj)

    base = starts[movable][None, :]
    length = lengths[movable][None, :]
    last = base + length - 1

    flat = x.reshape(-1)
    row_off = (np.arange(x.shape[0], dtype=np.int64) * n_states)[:, None]

    def single_step() -> None:
        shape = (x.shape[0], len(movable))
        i = base + (rng.random(shape) * length).astype(np.int64)
        j = base + (rng.random(shape) * length).astype(np.int64)
        fi, fj = row_off + i, row_off + j
        xi, xj = flat[fi], flat[fj]
        up_i, down_i = flat[np.maximum(fi - 1, 0)], flat[np.minimum(fi + 1, flat.size - 1)]
        up_j, down_j = flat[np.maximum(fj - 1, 0)], flat[np.minimum(fj + 1, flat.size - 1)]
        # i and j side by side: the shared neighbour is the other bed of the pair
        j_above, j_below = j == i + 1, j == i - 1
        ok = xi != xj
        ok &= j_below | (i - 1 < base) | (up_i != xj)
        ok &= j_above | (i + 1 > last) | (down_i != xj)
        ok &= j_above | (j - 1 < base) | (up_j != xi)
        ok &= j_below | (j + 1 > last) | (down_j != xi)
        flat[fi[ok]] = xj[ok]
        flat[fj[ok]] = xi[ok]

    for _ in range(sweeps):
        for _ in range(4):
            block_step()
        for _ in range(n_single):
            single_step()


def permutation_hub(
    enc: EncodedSuccessions, sweeps: int, random_state: int | np.random.Generator | None
) -> np.ndarray:
    """The hub of Besag & Clifford's (1989) parallel scheme: ``sweeps`` sweeps of
    :func:`swap_chain` from the data; shape ``(1, len(enc.states))``."""
    hub = enc.states[None, :].copy()
    swap_chain(enc, hub, sweeps, np.random.default_rng(random_state))
    return hub


def restricted_permutations(
    enc: EncodedSuccessions,
    n_surrogates: int,
    random_state: int | np.random.Generator | None,
    *,
    sweeps: int = PERMUTATION_SWEEPS,
    hub: np.ndarray | None = None,
) -> Iterator[np.ndarray]:
    """Random orderings of each succession's beds with no facies above itself.

    Besag & Clifford's (1989) parallel scheme on :func:`swap_chain`: ``sweeps``
    sweeps from the data to a hub, then as many from the hub to each
    surrogate, so that under the null the data and the surrogates are
    exchangeable and the Monte Carlo p-value is exact however slowly the chain
    mixes (slow mixing costs power, not validity). Blocks of surrogates drawn
    apart (:mod:`faciesseq.parallel`) must share one ``hub``
    (:func:`permutation_hub`); without one it is drawn here first.

    Yields batches ``(batch, len(enc.states))`` like :func:`transition_surrogates`.
    """
    rng = np.random.default_rng(random_state)
    n_states = len(enc.states)
    hub = permutation_hub(enc, sweeps, rng) if hub is None else hub
    for batch in _batches(n_surrogates, n_states * 2):
        x = np.broadcast_to(hub, (batch, n_states)).copy()
        swap_chain(enc, x, sweeps, rng)
        yield x


def surrogate_statistics(
    batches: Iterator[np.ndarray], statistic: Callable[[np.ndarray], np.ndarray]
) -> np.ndarray:
    """Apply a batched statistic to every batch of surrogates and join the results."""
    return np.concatenate([np.asarray(statistic(b), dtype=float) for b in batches])
