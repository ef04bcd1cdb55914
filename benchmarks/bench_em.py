"""One EM iteration of the HMM engine against hmmlearn, and batch-bounded memory.

Speed: on ``--n-obs`` observations (default 1,000,000) in sequences of about
``--mean-length`` rows (default 1,000), with ``--states`` hidden states
(default 16) and ``--symbols`` categorical symbols (default 10), time one EM
iteration of

* faciesseq: log-emission array from the emission matrix, batched scaled
  :func:`faciesseq.hmm.engine.forward_backward`, M-step of start, transition
  and emission probabilities with numpy (``np.bincount`` on the posteriors);
* hmmlearn ``CategoricalHMM(implementation="scaling", n_iter=1)`` from the
  same initial parameters (``init_params=""``),

in the same run (best of ``--repeats``), and check that both give the same
log-likelihood and the same updated parameters.

Memory: in a fresh subprocess per batch size, run one forward-backward on
``--memory-obs`` observations (default 10,000,000) and record the peak of
numpy allocations during the call (``tracemalloc``) beyond the input and the
required outputs, and the process's maximum resident set size.

Run from the repository root::

    /work/venv/bin/python benchmarks/bench_em.py
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


def make_data(n_obs: int, mean_length: int, n_states: int, n_symbols: int, seed: int):
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
    # Structural zeros as in a tract graph: each state cannot jump two ahead.
    for i in range(n_states):
        transmat[i, (i + 2) % n_states] = 0.0
    transmat /= transmat.sum(axis=1, keepdims=True)
    emission = rng.dirichlet(np.ones(n_symbols), size=n_states)
    symbols = rng.integers(0, n_symbols, size=n_obs)
    return symbols, lengths, startprob, transmat, emission


def em_step_ours(symbols, lengths, startprob, transmat, emission, batch_size=None):
    """One Baum-Welch iteration (Rabiner 1989, eqs. 40a-c) with the engine."""
    n_symbols = emission.shape[1]
    log_emission = np.take(np.log(emission).T, symbols, axis=0)
    post = forward_backward(log_emission, lengths, startprob, transmat, batch_size=batch_size)
    new_start = post.start / post.start.sum()
    new_trans = post.xi_sum / post.xi_sum.sum(axis=1, keepdims=True)
    # Expected emission counts: posteriors summed per symbol, as one product
    # with the one-hot coding of the symbols (faster than a bincount per state).
    one_hot = np.zeros((symbols.size, n_symbols))
    one_hot[np.arange(symbols.size), symbols] = 1.0
    counts = post.gamma.T @ one_hot
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


def interleaved_times(fns, repeats):
    """Run the candidates in turn, ``repeats`` rounds, so that load from other
    processes falls on all of them alike; return per-candidate times and the
    last results."""
    times = [[] for _ in fns]
    cpu = [[] for _ in fns]
    results = [None] * len(fns)
    for _ in range(repeats):
        for i, fn in enumerate(fns):
            t0, c0 = time.perf_counter(), time.process_time()
            results[i] = fn()
            times[i].append(time.perf_counter() - t0)
            cpu[i].append(time.process_time() - c0)
    CPU_TIMES[:] = cpu
    return times, results


# CPU seconds of the last interleaved_times call (less sensitive than wall time
# to other processes taking turns on the cores).
CPU_TIMES: list[list[float]] = []


def viterbi_ours(symbols, lengths, startprob, transmat, emission):
    log_emission = np.take(np.log(emission).T, symbols, axis=0)
    path, log_prob = viterbi(log_emission, lengths, startprob, transmat)
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
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--batch-size", type=int, default=None)
    parser.add_argument("--memory-obs", type=int, default=10_000_000)
    parser.add_argument("--memory-states", type=int, default=16)
    parser.add_argument(
        "--memory-batches", type=int, nargs="*", default=[1 << 16, 1 << 18, 1 << 20]
    )
    parser.add_argument("--skip-memory", action="store_true")
    parser.add_argument("--skip-em", action="store_true")
    parser.add_argument("--memory-child", type=int, default=None, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)

    if args.memory_child is not None:
        print(json.dumps(memory_child(args.memory_obs, args.memory_states, args.memory_child)))
        return

    import hmmlearn

    print(
        f"# {time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())}, {platform.node()}, "
        f"{os.cpu_count()} CPUs, numpy {np.__version__}, hmmlearn {hmmlearn.__version__}"
    )

    if not args.skip_em:
        data = make_data(args.n_obs, args.mean_length, args.states, args.symbols, seed=1)
        symbols, lengths = data[0], data[1]
        print(
            f"# EM iteration: {len(symbols):,} observations, {len(lengths)} sequences, "
            f"{args.states} states, {args.symbols} symbols"
        )
        (t_ours, t_ref), (ours, ref) = interleaved_times(
            [
                lambda: em_step_ours(*data, batch_size=args.batch_size),
                lambda: em_step_hmmlearn(*data),
            ],
            args.repeats,
        )
        ll_diff = abs(ours[0] - ref[0])
        par_diff = max(float(np.abs(a - b).max()) for a, b in zip(ours[1:], ref[1:]))
        for name, t, r in (("faciesseq", t_ours, ours), ("hmmlearn", t_ref, ref)):
            print(
                f"EM {name:10s} best {min(t):7.3f} s  median {np.median(t):7.3f} s  "
                f"loglik {r[0]:.6f}"
            )
        print(
            f"EM ratio faciesseq / hmmlearn: best {min(t_ours) / min(t_ref):.3f}, "
            f"median {np.median(t_ours) / np.median(t_ref):.3f}"
        )
        c_ours, c_ref = CPU_TIMES
        print(
            f"EM CPU seconds: faciesseq best {min(c_ours):.3f}, hmmlearn best {min(c_ref):.3f}, "
            f"ratio {min(c_ours) / min(c_ref):.3f}"
        )
        print(f"EM |loglik difference| {ll_diff:.3e}; max |parameter difference| {par_diff:.3e}")
        if not (ll_diff <= 1e-6 * abs(ref[0]) and par_diff < 1e-8):
            raise SystemExit("EM results differ from hmmlearn")

        (v_ours, v_ref), (vo, vr) = interleaved_times(
            [lambda: viterbi_ours(*data), lambda: viterbi_hmmlearn(*data)], args.repeats
        )
        # Paths may differ where two paths have exactly the same probability
        # (then both are most likely); check that hmmlearn's path scores the same.
        differ = int(np.count_nonzero(vo[1] != vr[1]))
        ref_score = path_log_prob(vr[1], *data)
        ours_score = path_log_prob(vo[1], *data)
        tie_diff = float(np.abs(ref_score - ours_score).max())
        print(
            f"Viterbi faciesseq best {min(v_ours):.3f} s, hmmlearn best {min(v_ref):.3f} s, "
            f"ratio {min(v_ours) / min(v_ref):.3f}; rows where the paths differ: {differ} "
            f"(max |log-probability difference| per sequence {tie_diff:.3e}); "
            f"|total log_prob difference| {abs(vo[0] - vr[0]):.3e}"
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
