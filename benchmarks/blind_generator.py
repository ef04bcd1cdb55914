#!/usr/bin/env python3
"""A third generator of described cores with known systems tracts, written blind.

Written on 2026-12-04 from sequence-stratigraphic principles only (Van Wagoner et
al. 1990; Catuneanu et al. 2009) by a contributor who read neither the tract model
nor the project's two other generators (``faciesseq.simulate``: the forward model
and the stacking generator), to measure the tract model on cores whose make-up it
was never tuned to (``benchmarks/eval_blind_generator.py``, results in
``benchmarks/tract_model.md``). It is a benchmark instrument, not part of the
package: keep it as written, so that it stays a check from outside the model.

Facies (water-depth index w: 0 = shallowest/landward ... 5 = deepest/basinward):
  CPL 0 coastal plain, FSH 1 foreshore, USF 2 upper shoreface,
  LSF 3 lower shoreface, OTR 4 offshore transition, OFF 5 offshore mudstone.

A parasequence is a shallowing-upward stack of 2-6 beds from a base index B to a
top index T < B; its base is a flooding surface (abrupt deepening).  Tracts differ
in how successive parasequences' (B, T) move and in thickness:
  HST  : B deep first (MFS), T decreasing upward (progradation), then T ~ 0-1
         (aggradational-progradational)
  FSST : sharp-based: 1 bed of OTR/OFF then an abrupt jump >= 2 indices shallower;
         tops shallower upward, thin
  LST  : B ~ 3-4, T ~ 1-2, about constant (aggradational to slightly progradational)
  TST  : T increasing upward (retrogradation), thin beds, few beds
Output: CSV core,top,base,facies,tract (top-down listing, depths positive down).
"""

import argparse
import csv
import math
import random
import sys

FACIES = ["CPL", "FSH", "USF", "LSF", "OTR", "OFF"]  # index = water-depth index
NAMES = {
    "CPL": ("coastal plain mudstone and coal", "coastal plain", "nonmarine", 2),
    "FSH": ("foreshore planar-laminated sandstone", "shoreface", "marine", 5),
    "USF": ("upper shoreface cross-bedded sandstone", "shoreface", "marine", 5),
    "LSF": ("lower shoreface hummocky sandstone", "shoreface", "marine", 4),
    "OTR": ("offshore transition heterolithics", "shelf", "marine", 3),
    "OFF": ("offshore mudstone", "shelf", "marine", 1),
}
# median bed thickness (m) by tract
THICK = {"HST": 0.9, "FSST": 0.55, "LST": 0.8, "TST": 0.4}
SIGMA = 0.5


def clamp(w):
    return max(0, min(5, w))


def ps_beds(rng, B, T, k, sharp=False):
    """Water-depth indices of k beds shallowing from B (bottom) to T (top)."""
    B, T = clamp(B), clamp(T)
    if B <= T:
        B = clamp(T + 1)
        if B <= T:
            T = B - 1
    if sharp:
        # one bed of the deep facies, then an abrupt jump of >= 2 indices shallower
        hi = max(T, B - 2)
        lo = max(T, B - 3)
        jump_to = rng.randint(lo, hi)
        rest = k - 1
        if rest == 1:
            return [B, jump_to]
        mids = sorted((rng.randint(T, jump_to) for _ in range(rest - 2)), reverse=True)
        return [B, jump_to, *mids, T]
    mids = sorted((rng.randint(T, B) for _ in range(k - 2)), reverse=True)
    return [B, *mids, T]


def gen_tract(rng, tract, prev_top):
    """List of (w, tract, thick_factor) bottom-up for one tract."""
    out = []
    if tract == "HST":
        n = rng.randint(3, 5)
        n_prog = max(1, n - rng.randint(1, 2))
        T = rng.choice([3, 3, 2])
        for i in range(n):
            if i == 0:
                B = 5  # downlaps the MFS
            elif i < n_prog:
                T = max(1, T - 1)
                B = clamp(T + rng.randint(2, 3))
            else:  # aggradational-progradational: tops at foreshore/coastal plain
                T = rng.choice([0, 1, 1])
                B = clamp(T + rng.randint(2, 3))
            for w in ps_beds(rng, B, T, rng.randint(2, 6)):
                out.append(w)
    elif tract == "FSST":
        n = rng.randint(1, 3)
        T = rng.choice([2, 2, 3])
        for i in range(n):
            B = rng.choice([4, 5]) if i == 0 else rng.choice([3, 4])
            T = max(1, T - (1 if i > 0 and rng.random() < 0.6 else 0))
            for w in ps_beds(rng, B, T, rng.randint(2, 5), sharp=True):
                out.append(w)
    elif tract == "LST":
        n = rng.randint(2, 3)
        T = rng.choice([1, 2])
        for i in range(n):
            B = rng.choice([3, 3, 4])
            if i > 0 and rng.random() < 0.3:
                T = max(0, T - 1)  # slight progradation
            for w in ps_beds(rng, B, T, rng.randint(2, 6)):
                out.append(w)
    elif tract == "TST":
        n = rng.randint(2, 3)
        T = max(prev_top + 1, rng.choice([1, 2]))
        for i in range(n):
            if i > 0:
                T = T + 1
            T = min(T, 4)
            B = clamp(T + rng.randint(1, 2))
            if B <= T:
                T = B - 1
            for w in ps_beds(rng, B, T, rng.randint(2, 4)):
                out.append(w)
    else:
        raise ValueError(tract)
    return out


def gen_core(rng, name, n_seq, no_fsst_prob, equal_beds, noise, start_depth):
    tracts = ["HST"]
    for _ in range(n_seq):
        if rng.random() >= no_fsst_prob:
            tracts.append("FSST")
        tracts += ["LST", "TST", "HST"]
    beds = []  # bottom-up: (facies, tract, thickness)
    prev_top = 1
    for tr in tracts:
        ws = gen_tract(rng, tr, prev_top)
        prev_top = ws[-1]
        for w in ws:
            if rng.random() < noise:
                w = clamp(w + rng.choice([-1, 1])) if 0 < w < 5 else (1 if w == 0 else 4)
            if equal_beds:
                th = 0.6
            else:
                th = rng.lognormvariate(math.log(THICK[tr]), SIGMA)
                th = max(0.05, round(th, 2))
            beds.append((FACIES[w], tr, th))
    rows = []
    d = start_depth
    for fac, tr, th in reversed(beds):  # top-down listing
        rows.append((name, d, d + th, fac, tr))
        d += th
    return rows


def write_scheme(path):
    lines = ["name: gen3 wave-dominated shoreface-shelf (independent generator)", "facies:"]
    for rank, code in enumerate(FACIES):
        nm, grp, setting, gs = NAMES[code]
        lines += [
            f'  - code: "{code}"',
            f"    name: {nm}",
            f"    rank: {rank}",
            f"    group: {grp}",
            f"    setting: {setting}",
            f"    grain_size: {gs}",
        ]
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n")


def main(argv=None):
    ap = argparse.ArgumentParser(
        description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter
    )
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--cores", type=int, default=8)
    ap.add_argument("--sequences-per-core", type=int, default=3)
    ap.add_argument("--equal-beds", action="store_true")
    ap.add_argument("--no-fsst-prob", type=float, default=0.0)
    ap.add_argument("--noise", type=float, default=0.05)
    ap.add_argument("--units", choices=["m", "ft"], default="m")
    ap.add_argument("--prefix", default="G")
    ap.add_argument("-o", "--output", required=True, help="CSV to write")
    ap.add_argument("--scheme", help="scheme YAML to write")
    a = ap.parse_args(argv)
    rng = random.Random(a.seed)
    conv = 1.0 if a.units == "m" else 1 / 0.3048
    with open(a.output, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["core", "top", "base", "facies", "tract"])
        for c in range(a.cores):
            name = f"{a.prefix}{a.seed}-{c + 1:02d}"
            start = round(rng.uniform(500, 2500), 2)
            for core, top, base, fac, tr in gen_core(
                rng, name, a.sequences_per_core, a.no_fsst_prob, a.equal_beds, a.noise, start
            ):
                w.writerow([core, f"{top * conv:.3f}", f"{base * conv:.3f}", fac, tr])
    if a.scheme:
        write_scheme(a.scheme)


if __name__ == "__main__":
    sys.exit(main())
