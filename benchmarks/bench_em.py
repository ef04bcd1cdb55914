"""One EM iteration of the HMM engine against hmmlearn, and batch-bounded memory.

Speed: on ``--n-obs`` observations (default 1,000,000) in sequences of about
``--mean-length`` rows (default 1,000), with ``--states`` hidden states
(default 16) and ``--symbols`` categorical symbols (default 10), time one EM
iteration of

* faciesseq: batched scaled :func:`faciesseq.hmm.engine.forward_backward`
  given the log of the emission matrix as a table and the symbols as
  ``codes`` (the posteriors come back summed per symbol), M-step of start,
  transition and emission probabilities with numpy;
* faciesseq, log-emission array: the same with the ``(T, K)`` log-emission
  array built from the emission matrix and the full posteriors returned
  (emission counts by ``np.bincount``), the form the tract model uses;
* hmmlearn ``CategoricalHMM(implementation="scaling", n_iter=1)`` from the
  same initial parameters (``init_params=""``),

in the same run, and check that both give the same log-likelihood and the
same updated parameters. Each candidate runs in blocks of ``--repeats``
consecutive calls, taking turns for ``--rounds`` rounds; the first call of a
block is reported apart ("cold": fresh memory pages after the other
candidate ran), the others are "warm", as the iterations of a fit are; the
"paired" ratio is the median over calls of a candidate's CPU time over the
baseline's call at the same place of the same round. The same for Viterbi
against hmmlearn's ``decode`` (``--viterbi-only``: Viterbi alone). With
``--graph tract`` the transition matrix is shaped like a tract graph (each
state stays, moves on or jumps four ahead: three predecessors per state)
instead of allowing all transitions but one per state.

Memory: in a fresh subprocess per batch size, run one forward-backward on
``--memory-obs`` observations (default 10,000,000) and record the peak of
numpy allocations during the call (``tracemalloc``) beyond the input and the
required outputs, and the process's maximum resident set size.

With ``--one faciesseq|hmmlearn|none`` the script only makes the data and
runs one EM iteration (with ``--viterbi-only``: one Viterbi) of that
candidate (or none) in this fresh process, for timing whole processes from
outside (``/usr/bin/time``): the coldest first call.

Run from the repository root::

    PYTHONPATH=. python benchmarks/bench_em.py
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import resource
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from faciesseq.hmm.engine import forward_backward, viterbi


def make_data(
    n_obs: int, mean_length: int, n_states: int, n_symbols: int, seed: int, graph: str = "dense"
):
    """Symbols, lengths and random parameters. ``graph="dense"``: every transition
    allowed but one per state; ``"tract"``: shaped like a tract graph, each
    state stays, moves to the next or jumps four ahead (three predecessors)."""
    rng = np.random.default_rng(seed)
    lengths = []
    total = 0
    while total < n_obs:
        n = int(rng.integers(mean_length // 2, 3 * mean_length // 2 + 1))
        n = min(n, n_obs - total)
        lengths.append(n)
        total += n
    lengths = np.array(lengths)
    startprob = rng.dirichlet(np.ones(n_states))
    transmat = rng.dirichlet(np.ones(n_states), size=n_states)
    if graph == "tract":
        allowed = np.zeros((n_states, n_states), dtype=bool)
        for i in range(n_states):
            allowed[i, [i, (i + 1) % n_states, (i + 4) % n_states]] = True
        transmat = np.where(allowed, transmat + 0.05, 0.0)
    else:
        # Structural zeros as in a tract graph: each state cannot jump two ahead.
        for i in range(n_states):
            transmat[i, (i + 2) % n_states] = 0.0
    transmat /= transmat.sum(axis=1, keepdims=True)
    emission = rng.dirichlet(np.ones(n_symbols), size=n_states)
    symbols = rng.integers(0, n_symbols, size=n_obs)
    return symbols, lengths, startprob, transmat, emission


def em_step_table(symbols, lengths, startprob, transmat, emission, batch_size=None):
    """One Baum-Welch iteration (Rabiner 1989, eqs. 40a-c) with the engine, the
    emissions given as a table indexed by the symbols."""
    post = forward_backward(
        np.log(emission).T,
        lengths,
        startprob,
        transmat,
        batch_size=batch_size,
        codes=symbols,
        return_gamma=False,
    )
    counts = post.code_gamma.T
    return (
        post.total_log_likelihood,
        post.start / post.start.sum(),
        post.xi_sum / post.xi_sum.sum(axis=1, keepdims=True),
        counts / counts.sum(axis=1, keepdims=True),
    )


def em_step_ours(symbols, lengths, startprob, transmat, emission, batch_size=None):
    """One Baum-Welch iteration (Rabiner 1989, eqs. 40a-c) with the engine, from
    the ``(T, K)`` log-emission array."""
    n_symbols = emission.shape[1]
    log_emission = np.take(np.log(emission).T, symbols, axis=0)
    post = forward_backward(log_emission, lengths, startprob, transmat, batch_size=batch_size)
    new_start = post.start / post.start.sum()
    new_trans = post.xi_sum / post.xi_sum.sum(axis=1, keepdims=True)
    # Expected emission counts: posteriors summed per symbol, one bincount per
    # state (no large temporary, unlike a product with a one-hot coding).
    counts = np.stack([np.bincount(symbols, weights=g, minlength=n_symbols) for g in post.gamma.T])
    new_emission = counts / counts.sum(axis=1, keepdims=True)
    return post.total_log_likelihood, new_start, new_trans, new_emission


def em_step_hmmlearn(symbols, lengths, startprob, transmat, emission):
    from hmmlearn.hmm import CategoricalHMM

    model = CategoricalHMM(
        n_components=len(startprob),
        n_iter=1,
        init_params="",
        params="ste",
        implementation="scaling",
    )
    model.startprob_ = startprob.copy()
    model.transmat_ = transmat.copy()
    model.emissionprob_ = emission.copy()
    model.n_features = emission.shape[1]
    model.fit(symbols[:, None], lengths)
    return model.monitor_.history[-1], model.startprob_, model.transmat_, model.emissionprob_


def timed_blocks(fns, repeats, rounds):
    """Time each candidate in blocks of ``repeats`` consecutive calls, the
    candidates taking turns for ``rounds`` rounds (so that load from other
    processes falls on all alike).

    The first call of a block is "cold": it follows the other candidate, whose
    allocations have returned memory to the system, so it pays for fresh pages;
    the later calls are "warm", as the iterations of a fit are. Returns, per
    candidate, ``{"cold": [(wall, cpu), ...], "warm": [...]}``, and the last
    results.
    """
    times = [{"cold": [], "warm": []} for _ in fns]
    results = [None] * len(fns)
    for _ in range(rounds):
        for i, fn in enumerate(fns):
            for r in range(repeats):
                t0, c0 = time.perf_counter(), time.process_time()
                results[i] = fn()
                times[i]["cold" if r == 0 else "warm"].append(
                    (time.perf_counter() - t0, time.process_time() - c0)
                )
    return times, results


def summarise(label, names, times):
    """Print warm best/median wall, warm best CPU and cold median wall and CPU,
    and the ratios of every candidate to the last (the baseline)."""
    stats = []
    for name, t in zip(names, times):
        warm = np.array(t["warm"] or t["cold"])
        cold = np.array(t["cold"])
        row = {
            "best": warm[:, 0].min(),
            "median": float(np.median(warm[:, 0])),
            "cpu": warm[:, 1].min(),
            "cold": float(np.median(cold[:, 0])),
            "cold_cpu": float(np.median(cold[:, 1])),
        }
        stats.append(row)
        print(
            f"{label} {name:10s} warm: best {row['best']:.3f} s, median {row['median']:.3f} s, "
            f"best CPU {row['cpu']:.3f} s; cold: median {row['cold']:.3f} s, "
            f"median CPU {row['cold_cpu']:.3f} s"
        )
    b = stats[-1]
    base = np.array(times[-1]["cold"] + times[-1]["warm"])
    for name, a, t in zip(names[:-1], stats[:-1], times[:-1]):
        # call i of one candidate against call i of the baseline (same place in
        # the same round), then the median of those ratios
        paired = np.array(t["cold"] + t["warm"])[:, 1] / base[:, 1]
        print(
            f"{label} ratio {name} / {names[-1]}: warm best {a['best'] / b['best']:.3f}, "
            f"warm median {a['median'] / b['median']:.3f}, "
            f"warm best CPU {a['cpu'] / b['cpu']:.3f}, cold median {a['cold'] / b['cold']:.3f}, "
            f"cold median CPU {a['cold_cpu'] / b['cold_cpu']:.3f}; paired CPU ratios: median "
            f"{np.median(paired):.3f} (min {paired.min():.3f}, max {paired.max():.3f}, "
            f"{paired.size} pairs)"
        )


def viterbi_ours(symbols, lengths, startprob, transmat, emission):
    path, log_prob = viterbi(np.log(emission).T, lengths, startprob, transmat, codes=symbols)
    return float(log_prob.sum()), path


def path_log_prob(path, symbols, lengths, startprob, transmat, emission):
    """Log-probability of each sequence jointly with the given state path."""
    with np.errstate(divide="ignore"):
        log_start, log_trans, log_emit = np.log(startprob), np.log(transmat), np.log(emission)
    first = np.concatenate(([0], np.cumsum(lengths)[:-1]))
    step = log_emit[path, symbols]
    inner = np.ones(len(path), dtype=bool)
    inner[first] = False
    step[inner] += log_trans[path[:-1], path[1:]][inner[1:]]
    step[first] += log_start[path[first]]
    return np.add.reduceat(step, first)


def viterbi_hmmlearn(symbols, lengths, startprob, transmat, emission):
    from hmmlearn.hmm import CategoricalHMM

    model = CategoricalHMM(n_components=len(startprob), init_params="", params="")
    model.startprob_, model.transmat_, model.emissionprob_ = startprob, transmat, emission
    model.n_features = emission.shape[1]
    return model.decode(symbols[:, None], lengths, algorithm="viterbi")


def memory_child(n_obs: int, n_states: int, batch_size: int) -> dict:
    import tracemalloc

    symbols, lengths, startprob, transmat, emission = make_data(n_obs, 1000, n_states, 10, seed=7)
    log_emission = np.log(emission).T[symbols]
    del symbols
    tracemalloc.start()
    tracemalloc.reset_peak()
    before, _ = tracemalloc.get_traced_memory()
    t0 = time.perf_counter()
    post = forward_backward(log_emission, lengths, startprob, transmat, batch_size=batch_size)
    seconds = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    outputs = post.gamma.nbytes + post.log_likelihood.nbytes
    return {
        "n_obs": n_obs,
        "states": n_states,
        "batch_size": batch_size,
        "seconds": seconds,
        "input_mb": log_emission.nbytes / 2**20,
        "output_mb": outputs / 2**20,
        "peak_during_call_mb": (peak - before) / 2**20,
        "work_beyond_outputs_mb": (peak - before - outputs) / 2**20,
        "maxrss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
    }


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n-obs", type=int, default=1_000_000)
    parser.add_argument("--mean-length", type=int, default=1000)
    parser.add_argument("--states", type=int, default=16)
    parser.add_argument("--symbols", type=int, default=10)
    parser.add_argument("--repeats", type=int, default=4, help="calls per block")
    parser.add_argument("--rounds", type=int, default=2, help="blocks per candidate")
    parser.add_argument("--batch-size", type=int, default=None)
    parser.add_argument("--memory-obs", type=int, default=10_000_000)
    parser.add_argument("--memory-states", type=int, default=16)
    parser.add_argument(
        "--memory-batches", type=int, nargs="*", default=[1 << 16, 1 << 17, 1 << 20]
    )
    parser.add_argument("--skip-memory", action="store_true")
    parser.add_argument("--skip-em", action="store_true", help="skip EM and Viterbi")
    parser.add_argument("--viterbi-only", action="store_true", help="time Viterbi, not EM")
    parser.add_argument("--graph", choices=("dense", "tract"), default="dense")
    parser.add_argument("--memory-child", type=int, default=None, help=argparse.SUPPRESS)
    parser.add_argument("--one", choices=("faciesseq", "hmmlearn", "none"))
    args = parser.parse_args(argv)

    if args.one is not None:
        import hmmlearn.hmm  # every choice imports both libraries

        data = make_data(
            args.n_obs, args.mean_length, args.states, args.symbols, seed=1, graph=args.graph
        )
        if args.viterbi_only:
            step = {"faciesseq": viterbi_ours, "hmmlearn": viterbi_hmmlearn}.get(args.one)
        else:
            step = {"faciesseq": em_step_table, "hmmlearn": em_step_hmmlearn}.get(args.one)
        if step is not None:
            step(*data)
        return

    if args.memory_child is not None:
        print(json.dumps(memory_child(args.memory_obs, args.memory_states, args.memory_child)))
        return

    import hmmlearn
    import hmmlearn.hmm  # imported before timing: the first call must not pay for it

    print(
        f"# {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())}, {platform.node()}, "
        f"{os.cpu_count()} CPUs, numpy {np.__version__}, hmmlearn {hmmlearn.__version__}"
    )

    if not args.skip_em:
        data = make_data(
            args.n_obs, args.mean_length, args.states, args.symbols, seed=1, graph=args.graph
        )
        symbols, lengths = data[0], data[1]
        print(
            f"# {len(symbols):,} observations, {len(lengths)} sequences, "
            f"{args.states} states ({args.graph} graph), {args.symbols} symbols"
        )
        names = ("faciesseq", "faciesseq-array", "hmmlearn")
    if not (args.skip_em or args.viterbi_only):
        em_times, (ours, dense, ref) = timed_blocks(
            [
                lambda: em_step_table(*data, batch_size=args.batch_size),
                lambda: em_step_ours(*data, batch_size=args.batch_size),
                lambda: em_step_hmmlearn(*data),
            ],
            args.repeats,
            args.rounds,
        )
        summarise("EM", names, em_times)
        print(f"EM log-likelihood {ours[0]:.6f} (faciesseq), {ref[0]:.6f} (hmmlearn)")
        for name, result in zip(names, (ours, dense)):
            ll_diff = abs(result[0] - ref[0])
            par_diff = max(float(np.abs(a - b).max()) for a, b in zip(result[1:], ref[1:]))
            print(
                f"EM {name} |loglik difference| {ll_diff:.3e}; "
                f"max |parameter difference| {par_diff:.3e}"
            )
            if not (ll_diff <= 1e-6 * abs(ref[0]) and par_diff < 1e-8):
                raise SystemExit(f"EM results of {name} differ from hmmlearn")

    if not args.skip_em:
        v_times, (vo, vr) = timed_blocks(
            [lambda: viterbi_ours(*data), lambda: viterbi_hmmlearn(*data)],
            args.repeats,
            args.rounds,
        )
        summarise("Viterbi", names[::2], v_times)
        # Paths may differ where two paths have exactly the same probability
        # (then both are most likely); check that hmmlearn's path scores the same.
        differ = int(np.count_nonzero(vo[1] != vr[1]))
        ref_score = path_log_prob(vr[1], *data)
        ours_score = path_log_prob(vo[1], *data)
        tie_diff = float(np.abs(ref_score - ours_score).max())
        print(
            f"Viterbi rows where the paths differ: {differ} (max |log-probability "
            f"difference| per sequence {tie_diff:.3e}); |total log_prob difference| "
            f"{abs(vo[0] - vr[0]):.3e}"
        )
        if tie_diff > 1e-8 or abs(vo[0] - vr[0]) > 1e-6:
            raise SystemExit("Viterbi results differ from hmmlearn")

    if args.skip_memory:
        return
    print(
        f"# memory: forward-backward on {args.memory_obs:,} observations, "
        f"{args.memory_states} states, one subprocess per batch size"
    )
    for batch in args.memory_batches:
        out = subprocess.run(
            [
                sys.executable,
                __file__,
                "--memory-obs",
                str(args.memory_obs),
                "--memory-states",
                str(args.memory_states),
                "--memory-child",
                str(batch),
            ],
            check=True,
            capture_output=True,
            text=True,
        )
        r = json.loads(out.stdout)
        print(
            f"batch_size {batch:>8}: {r['seconds']:6.1f} s, input {r['input_mb']:.0f} MB, "
            f"outputs {r['output_mb']:.0f} MB, work beyond outputs "
            f"{r['work_beyond_outputs_mb']:.0f} MB, max RSS {r['maxrss_mb']:.0f} MB"
        )


if __name__ == "__main__":
    main()
