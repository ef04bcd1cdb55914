#!/usr/bin/env python3
"""Synthetic drill cores from one site on a carbonate ramp (carbonate-evaporite-siliciclastic).

Test instrument: it invents described cores whose systems tracts are known, so a
reader can try to recover the tracts from the facies alone.  Standard library
only.  Written blind (from the trade's principles, not from the model it tests).

Geology encoded (principles cited from memory, not from the texts at hand):

* Ramp profile (Read 1985, AAPG Bull. 69, carbonate platform facies models;
  Burchette & Wright 1992, Sed. Geol. 79, carbonate ramp depositional systems;
  Tucker & Wright 1990, Carbonate Sedimentology): from land to basin, exposure
  surface (paleosol, calcrete, karst) and supratidal sabkha (tied, rank 0),
  tidal-flat microbial laminite (1), restricted lagoon wackestone (2), the
  ooid-skeletal shoal grainstone belt at fair-weather wave base (3; a lowstand
  quartz-sand wedge of a mixed system shares its rank), inner-ramp skeletal
  packstone of the shoal foreslope (4), mid-ramp wacke-packstone with storm
  beds (tempestites) between fair-weather and storm wave base (5), outer-ramp
  marl and lime mudstone below storm wave base (6).  A bed is the facies of the
  water depth at the site when it was laid down (Walther's law), except across
  flooding surfaces, sharp forced-regressive bases and the sequence boundary.
* Metre-scale shallowing-upward cycles (parasequences), peritidal landward
  (lagoon -> tidal flat -> sabkha, sometimes an exposure cap) and subtidal
  basinward (marl -> wacke-packstone -> packstone -> grainstone cap), bounded by
  flooding surfaces (Read 1985; Tucker & Wright 1990).  Caps are sometimes
  missing (eroded at the next flooding, or not recognised).
* Their stacking follows the tract (Handford & Loucks 1993, AAPG Memoir 57,
  carbonate depositional sequences and systems tracts; Schlager 2005, SEPM
  Concepts in Sedimentology and Paleontology 8; Catuneanu et al. 2009,
  Earth-Science Reviews 92):
  - TST: retrogradational; each cycle's base and top deeper than the last, caps
    thin or subtidal only ("keep-up" giving way to "catch-up"/"give-up"); it ends
    at the maximum flooding surface with the deepest facies (outer-ramp marl at
    distal sites, a condensed section).
  - HST: aggradational then progradational; cycle tops shallow upward slowly,
    then fast, capped by tidal flats / sabkha landward (occasionally a
    high-frequency exposure cap) and by shoal grainstone basinward.  Carbonate
    factories are most productive when the ramp top is flooded: "highstand
    shedding" (Schlager 2005), so the HST holds more and thicker cycles.
  - FSST: forced regression.  Basinward of the highstand shoal, detached,
    downstepping shoal or packstone wedges, sharp-based on deeper marls with the
    intermediate facies cut out (regressive surface of marine erosion), tops
    stepping down (at the site: shallower each cycle), never capped by lagoon or
    tidal flat (no accommodation behind a falling shoreline).  Landward of the
    shoal the site is bypassed or exposed: no FSST, the subaerial unconformity
    (karst, paleosol) may cut into the HST or the FSST.
  - LST: the early rise at the lowstand shoreline: a few aggrading shallow
    cycles (lagoon, shoal, evaporitic sabkha caps in a restricted lowstand), or
    a siliciclastic lowstand sand wedge in a mixed system (reciprocal
    sedimentation: sand bypasses the exposed ramp at lowstand); at sites exposed
    at lowstand the exposure bed (paleosol/karst) is all there is.
  - When subsidence outpaces the fall (--no-fsst-prob) there is no relative
    fall: no FSST, no erosion, no exposure surface, aggrading LST cycles.
* The sequence boundary at landward sites carries exposure (paleosol/karst);
  the maximum flooding surface carries the deepest marls.

Knobs: site proximality P (--site proximal 0-0.3, distal 0.7-1, mixed uniform
per core) sets the rank of the late-HST cycle tops at the site (0.2 + 4.6 P);
the MFS is 1.6-3 ranks deeper (at most 6); a fall of 1.6-2.8 ranks sets the
lowstand depth.  Proximal sites are thus exposed at lowstand (no FSST, eroded
HST, paleosol/karst in the LST); distal sites keep marine FSST wedges and an
LST.  Thickness is lognormal per facies, scaled per tract (or 0.5 m with
--equal-beds); --noise swaps a bed's facies for one of a neighbouring rank.
"""

import argparse
import csv
import math
import random
import sys

# code, name, rank (0 landward .. 6 basinward), group, setting, grain size (0-6),
# colour, median bed thickness (m)
FACIES = [
    (
        "PAL",
        "exposure cap: paleosol, calcrete or karst breccia",
        0,
        "exposure",
        "nonmarine",
        1,
        "#a0522d",
        0.25,
    ),
    (
        "SAB",
        "supratidal sabkha: nodular anhydrite in fenestral dolomudstone",
        0,
        "supratidal",
        "nonmarine",
        1,
        "#f0e0c0",
        0.30,
    ),
    ("TFL", "tidal-flat microbial laminite", 1, "peritidal", "marine", 1, "#e6d38a", 0.25),
    ("LAG", "lagoonal peloidal wackestone", 2, "lagoon", "marine", 2, "#b9c98a", 0.35),
    ("SHL", "ooid-skeletal shoal grainstone", 3, "shoal", "marine", 5, "#f4efb0", 0.50),
    (
        "LSS",
        "lowstand quartz sandstone (siliciclastic wedge)",
        3,
        "siliciclastic",
        "marine",
        4,
        "#e3a857",
        0.60,
    ),
    ("IRP", "inner-ramp skeletal packstone", 4, "inner ramp", "marine", 4, "#a8c69f", 0.35),
    (
        "MRT",
        "mid-ramp wacke-packstone with tempestites",
        5,
        "mid ramp",
        "marine",
        3,
        "#6fa08a",
        0.30,
    ),
    ("ORM", "outer-ramp marl and lime mudstone", 6, "outer ramp", "marine", 0, "#3d4f6b", 0.25),
]
RANK = {f[0]: f[2] for f in FACIES}
MEDIAN = {f[0]: f[7] for f in FACIES}
MAX_RANK = 6
# the ordinary facies of each rank (PAL and LSS only where the geology puts them)
BY_RANK = {0: "SAB", 1: "TFL", 2: "LAG", 3: "SHL", 4: "IRP", 5: "MRT", 6: "ORM"}
TRACT_SCALE = {"HST": 1.25, "TST": 0.85, "FSST": 0.8, "LST": 0.9}
EQUAL_BED_M = 0.5
MIN_BED_M, MAX_BED_M = 0.1, 3.0
FT = 0.3048


def clamp(x, lo, hi):
    return max(lo, min(hi, x))


def rnk(x):
    """A continuous depth index as a facies rank."""
    return int(clamp(round(x), 0, MAX_RANK))


def cycle(rng, tract, base, top, cid, beds, cap=None, sharp=False, sand=False):
    """One shallowing-upward cycle from depth index `base` up to `top`.

    Appends (facies, tract, cycle id) oldest first.  `cap` adds a facies on
    top (an exposure cap); `sharp` cuts out the ranks between the basal bed and
    the top facies (a forced-regressive shoal on marl); `sand` makes the rank-3
    beds siliciclastic.
    """
    rb, rt = rnk(base), rnk(top)
    if rb < rt:
        rb = rt
    ranks = [rb, rt] if sharp and rb > rt else list(range(rb, rt - 1, -1))
    if sharp and rb == rt:
        ranks = [rt]
    out = []
    for i, r in enumerate(ranks):
        code = BY_RANK[r]
        if sand and r == 3:
            code = "LSS"
        if sharp and i == 0 and len(ranks) > 1:
            n = 1  # a thin marl drape under the shoal
        elif i == len(ranks) - 1 and len(ranks) > 1:
            n = rng.choice((1, 2, 2))
        else:
            n = rng.choice((1, 2, 2, 3))
        out += [code] * n
    if cap:
        out.append(cap)
    beds += [(c, tract, cid) for c in out]


def drop_cap(rng, beds, start, prob):
    """A missed cycle cap: the top bed of the cycle that began at `start`."""
    if len(beds) - start > 1 and rng.random() < prob:
        beds.pop()


def sequence(rng, site, prev_low, no_fsst_prob, cid0):
    """One TST-HST-FSST-LST unit, oldest first; returns beds, lowstand depth, cycle id."""
    beds = []
    cid = cid0
    s = clamp(site + rng.uniform(-0.4, 0.4), 0.0, 5.0)  # late-HST cycle tops
    mfs = min(6.3, s + rng.uniform(1.6, 3.0))
    miss = 0.1

    # --- TST: retrogradational, caps thin and deepening, ends at the MFS
    start = max(prev_low, 0.3)
    n = rng.randint(4, 8)
    last_top = start - 0.5
    for i in range(1, n + 1):
        b = start + (mfs - start) * i / n + (rng.uniform(-0.2, 0.2) if i < n else 0.0)
        amp = rng.uniform(0.7, 1.5) * (1.0 - 0.65 * (i - 1) / max(1, n - 1))
        t = max(b - amp, last_top + 0.15)
        last_top = t
        k = len(beds)
        cid += 1
        cycle(rng, "TST", b, t, cid, beds)
        drop_cap(rng, beds, k, miss)

    # --- HST: aggradational then progradational (highstand shedding: more cycles)
    n = rng.randint(7, 12)
    last_top = mfs
    for j in range(1, n + 1):
        x = j / n
        t = mfs - (mfs - s) * x**1.7 + rng.uniform(-0.15, 0.15)
        t = min(t, last_top)
        b = max(t + rng.uniform(1.0, 2.0), last_top + 0.5) if j > 1 else mfs
        last_top = t
        cap = None
        if rnk(t) == 0 and x > 0.6 and rng.random() < 0.15:
            cap = "PAL"  # a high-frequency exposure on a late-HST peritidal cap
        k = len(beds)
        cid += 1
        cycle(rng, "HST", b, t, cid, beds, cap=cap)
        drop_cap(rng, beds, k, miss)

    # --- relative fall
    if rng.random() < no_fsst_prob:
        # subsidence outpaces the fall: no FSST, no exposure, aggrading LST
        low = max(0.2, s - rng.uniform(0.3, 0.9))
        fell = False
    else:
        low = s - rng.uniform(1.6, 2.8)
        fell = True

    # --- FSST: detached, sharp-based, downstepping shoal/packstone wedges
    if fell:
        stop = max(low, 2.6)  # shallower than the shoal belt: bypass
        if s - stop >= 0.35:
            nf = int(clamp(round((s - stop) / 0.5), 1, 4))
            for k_ in range(1, nf + 1):
                t = s - (s - stop) * k_ / nf
                t = max(t, 2.6)
                drape = rng.random() < 0.75
                b = min(6.0, t + rng.uniform(1.5, 2.6)) if drape else t
                cid += 1
                cycle(rng, "FSST", b, t, cid, beds, sharp=True)
        # --- subaerial unconformity at sites exposed at lowstand
        if low < 0.3:
            if rng.random() < 0.6:
                # the unconformity cuts into the FSST or the HST below
                keep = sum(1 for bed in beds if bed[1] == "HST")
                cut = rng.randint(1, 5)
                while cut > 0 and beds and (beds[-1][1] != "HST" or keep > 4):
                    if beds[-1][1] == "HST":
                        keep -= 1
                    beds.pop()
                    cut -= 1
            cid += 1
            beds.append(("PAL", "LST", cid))
            if rng.random() < 0.3:
                beds.append(("PAL", "LST", cid))  # karst breccia under the soil
            return beds, low, cid

    # --- LST: aggrading shallow cycles, or a siliciclastic / evaporitic wedge
    sand = fell and low >= 1.5 and rng.random() < 0.5
    nl = rng.randint(1, 3)
    for _ in range(nl):
        t = clamp(low + rng.uniform(-0.3, 0.3), 0.0, 4.4)
        b = t + rng.uniform(0.8, 1.6)
        cap = None
        if rnk(t) == 0 and rng.random() < 0.25:
            cap = "PAL"
        k = len(beds)
        cid += 1
        cycle(rng, "LST", b, t, cid, beds, cap=cap, sand=sand)
        drop_cap(rng, beds, k, miss)
    return beds, low, cid


def build_core(rng, args):
    """Beds (facies, tract, cycle) oldest first, and the site's proximality."""
    p = {"proximal": (0.0, 0.3), "distal": (0.7, 1.0), "mixed": (0.0, 1.0)}[args.site]
    prox = rng.uniform(*p)
    site = 0.2 + 4.6 * prox
    nseq = max(1, args.sequences_per_core)
    units = []
    low = site - rng.uniform(1.6, 2.8)
    cid = 0
    for _ in range(nseq + 1):
        beds, low, cid = sequence(rng, site, low, args.no_fsst_prob, cid)
        units.append(beds)
    # start and end at random points: drop a fraction f of the oldest unit's
    # beds and 1 - f of the youngest's, keeping nseq units' worth
    f = rng.random()
    first, last = units[0], units[-1]
    first = first[int(f * len(first)) :]
    last = last[: max(1, int(f * len(last)))]
    beds = first + [b for u in units[1:-1] for b in u] + last
    return beds, {"proximality": prox}


def add_noise(rng, beds, prob):
    """Swap a bed's facies for one of a neighbouring rank."""
    for i, (code, tract, cid) in enumerate(beds):
        if rng.random() < prob:
            r = RANK[code]
            r = r + rng.choice((-1, 1)) if 0 < r < MAX_RANK else (1 if r == 0 else r - 1)
            beds[i] = (BY_RANK[r], tract, cid)


def add_thickness(rng, beds, equal):
    """Thickness in metres per bed: lognormal per facies, scaled per tract."""
    out = []
    for code, tract, cid in beds:
        if equal:
            th = EQUAL_BED_M
        else:
            th = MEDIAN[code] * TRACT_SCALE[tract] * math.exp(rng.gauss(0.0, 0.5))
            th = clamp(th, MIN_BED_M, MAX_BED_M)
        out.append((code, tract, cid, th))
    beds[:] = out


def core_rows(name, beds, top_m, units):
    """CSV rows from the top of the core down (youngest first)."""
    conv = 1.0 if units == "m" else 1.0 / FT
    depth = round(top_m * conv * 1000)  # thousandths of the output unit
    rows = []
    for code, tract, _cid, th in reversed(beds):
        step = max(1, round(th * conv * 1000))
        rows.append([name, f"{depth / 1000:.3f}", f"{(depth + step) / 1000:.3f}", code, tract])
        depth += step
    return rows


def write_scheme(path):
    """The facies scheme as YAML, in the format of configs/scheme-*.yaml."""
    lines = [
        "# Carbonate ramp (mixed carbonate-evaporite-siliciclastic), benchmarks/ramp_generator.py.",
        "# rank: proximality / relative water depth, 0 = most landward or shallow.",
        "# grain_size: class, larger is coarser (0 marl ... 5 grainstone); carbonates by",
        "# depositional texture.",
        "name: carbonate ramp (synthetic)",
        "facies:",
    ]
    for code, name, rank, group, setting, gs, colour, _m in FACIES:
        lines += [
            f'  - code: "{code}"',
            f'    name: "{name}"',
            f"    rank: {rank}",
            f"    group: {group}",
            f"    setting: {setting}",
            f'    colour: "{colour}"',
            f"    grain_size: {gs}",
        ]
        if group == "exposure":
            lines.append("    exposure: true")
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("\n".join(lines) + "\n")


def write_rows(out, rows):
    """Write the header and the bed rows as CSV."""
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["core", "top", "base", "facies", "tract"])
    writer.writerows(rows)


def parse_args(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--seed", type=int, default=1)
    p.add_argument("--cores", type=int, default=8)
    p.add_argument("-o", "--output", required=True, help="CSV path or - for stdout")
    p.add_argument("--scheme", help="write the YAML facies scheme here")
    p.add_argument("--sequences-per-core", type=int, default=3)
    p.add_argument("--equal-beds", action="store_true", help=f"every bed {EQUAL_BED_M} m thick")
    p.add_argument("--no-fsst-prob", type=float, default=0.0)
    p.add_argument("--noise", type=float, default=0.05)
    p.add_argument("--site", choices=("mixed", "proximal", "distal"), default="mixed")
    p.add_argument("--units", choices=("m", "ft"), default="m")
    p.add_argument("--prefix", default="R")
    return p.parse_args(argv)


def main(argv=None):
    args = parse_args(argv)
    rng = random.Random(args.seed)
    rows = []
    for i in range(1, args.cores + 1):
        beds, _info = build_core(rng, args)
        add_noise(rng, beds, args.noise)
        add_thickness(rng, beds, args.equal_beds)
        top_m = round(rng.uniform(300.0, 3000.0), 3)
        rows += core_rows(f"{args.prefix}{args.seed}-{i:02d}", beds, top_m, args.units)
    if args.output == "-":
        write_rows(sys.stdout, rows)
    else:
        with open(args.output, "w", newline="") as out:
            write_rows(out, rows)
    if args.scheme:
        write_scheme(args.scheme)


if __name__ == "__main__":
    main()
