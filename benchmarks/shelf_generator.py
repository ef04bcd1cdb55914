#!/usr/bin/env python3
"""Synthetic drill cores from one site on a wave-dominated siliciclastic shelf.

Test instrument: it invents described cores whose systems tracts are known, so a
reader can try to recover the tracts from the facies alone.  Standard library only.

Model (principles cited from memory, not from the texts at hand):

* Walther's law: at a fixed site, vertically stacked facies are those that were
  laterally adjacent, except across surfaces of erosion or non-deposition.  The
  site's water depth is a rank 0 (nonmarine) .. 5 (offshore mud); every bed is the
  facies of the rank at the site when it was laid down.
* Parasequences are shallowing-upward cycles bounded by flooding surfaces and
  stack progradationally (HST), aggradationally (LST) or retrogradationally (TST)
  (Van Wagoner et al. 1990, AAPG Methods in Exploration 7).
* HST: late rise, normal regression; the maximum flooding surface at its base
  carries the deepest facies; tops shallow upward, steps shrink near the top
  (aggradational-progradational).
* FSST: falling base level, forced regression; the shoreline moves basinward and
  downward, so the site only shallows.  Shorefaces are sharp-based: sand on
  offshore(-transition) mud with the intermediate facies cut out by the
  regressive surface of marine erosion (Plint 1988, SEPM SP 42; Posamentier &
  Allen 1999, SEPM Concepts in Sedimentology and Paleontology 7).  Tops step down.
  Proximal sites (landward of the lowstand shoreline) get bypass: no FSST, and
  the subaerial unconformity cuts into the HST.
* LST: early rise, normal regression above the sequence boundary; aggradational
  to slightly progradational shallow facies, or incised-valley fluvial fill and
  paleosol-bearing coastal-plain mud at proximal sites.
* TST: from the maximum regressive / transgressive surface (optional shell lag)
  to the MFS; thin retrogradational parasequences (Catuneanu 2006, Principles of
  Sequence Stratigraphy; Catuneanu et al. 2009, Earth-Science Reviews 92:1-33).

Knobs: site proximality P (--site proximal 0-0.3, distal 0.75-1, mixed uniform)
sets the depth index at the site at the end of each HST (0.3 + 3.8 P) and at the
MFS (1.8-2.6 deeper); a fall of 1.8-2.3 sets the lowstand depth.  Proximal sites
thus emerge at lowstand (no FSST, eroded HST top, valley fill and paleosols in the
LST); distal sites keep a marine FSST and LST.  --no-fsst-prob draws sequences
in which subsidence outpaces the fall (small fall, no FSST, no erosion).
Thickness is lognormal per facies and tract (or 0.5 m with --equal-beds);
--noise swaps a bed's facies for one of a neighbouring rank.
"""

import argparse
import csv
import math
import random
import sys

# code, name, rank (0 landward .. 5 basinward), group, setting, grain size (0-6)
FACIES = [
    ("FLU", "fluvial channel sandstone", 0, "alluvial", "nonmarine", 4),
    ("CPM", "coastal-plain mudstone with paleosols", 0, "coastal", "nonmarine", 1),
    ("FSH", "foreshore sandstone", 1, "shoreface", "marine", 3),
    ("USF", "upper shoreface sandstone", 2, "shoreface", "marine", 3),
    ("LSF", "lower shoreface sandstone", 3, "shoreface", "marine", 2),
    ("OTR", "offshore-transition heterolithics", 4, "shelf", "marine", 1),
    ("OFF", "offshore mudstone", 5, "shelf", "marine", 0),
    ("TLG", "transgressive shell lag", 2, "lag", "marine", 5),
]
RANK = {f[0]: f[2] for f in FACIES}
MARINE_CODE = {1: "FSH", 2: "USF", 3: "LSF", 4: "OTR", 5: "OFF"}
MAX_RANK = 5
MEDIAN_M = {
    "FLU": 2.0,
    "CPM": 1.2,
    "FSH": 0.8,
    "USF": 1.4,
    "LSF": 1.5,
    "OTR": 1.2,
    "OFF": 1.6,
    "TLG": 0.25,
}
TRACT_SCALE = {"HST": 1.0, "FSST": 0.7, "LST": 0.9, "TST": 0.5}
SIGMA = 0.4
EQUAL_BED_M = 0.5
FT = 0.3048


def rank_of(z):
    """Water-depth rank for a continuous depth index z."""
    return max(0, min(MAX_RANK, math.floor(z + 0.5)))


def code_for(rank, rng, fluvial=0.15):
    """Facies code for a rank; rank 0 is channel sand or coastal-plain mud."""
    if rank <= 0:
        return "FLU" if rng.random() < fluvial else "CPM"
    return MARINE_CODE[min(rank, MAX_RANK)]


class Core:
    """Beds of one core under construction, oldest first: [code, tract, ps]."""

    def __init__(self, rng):
        self.rng = rng
        self.beds = []
        self.n_ps = 0

    def add_ps(self, codes, tract):
        """Append one parasequence (or fluvial cycle) of beds."""
        self.n_ps += 1
        self.beds.extend([c, tract, self.n_ps] for c in codes)

    def top_rank(self):
        return RANK[self.beds[-1][0]]


def gradational(rng, base, top):
    """Facies codes shallowing upward from rank base to rank top, 1-2 beds each."""
    if base <= top:
        return [code_for(top, rng)] * rng.randint(2, 3)
    codes = []
    for r in range(base, top - 1, -1):
        codes += [code_for(r, rng)] * (2 if rng.random() < 0.35 else 1)
    return codes


def make_hst(core, rm, rh):
    """Progradational parasequences from the MFS (rank rm) up to rank rh."""
    rng, n = core.rng, core.rng.randint(2, 4)
    room = rm - rh
    tops = [rm - int(room * (1 - (1 - i / n) ** 2) + 0.5) for i in range(1, n + 1)]
    base = rm
    for i, top in enumerate(tops):
        if i:
            base = min(base, max(top, tops[i - 1] + rng.randint(0, 1)))
        core.add_ps(gradational(rng, base, top), "HST")


def make_fsst(core, n_target, truncate):
    """Downstepping sharp-based shorefaces; returns how many the site records."""
    rng, top, made, tail = core.rng, core.top_rank(), 0, False
    while made < n_target:
        mud = min(MAX_RANK, top + rng.randint(0, 1))  # at most a minor flooding
        if top >= 3:  # shelf mud under the sand
            mud = max(mud, 4)
        sand = mud - rng.randint(2, 3)  # RSME: >= 2 ranks cut out
        if sand < 1:
            sand = mud - 2
        if sand < 1:  # site bypassed
            break
        new_top = max(1, sand - rng.randint(0, 1))
        codes = [code_for(mud, rng)] * rng.randint(1, 2)
        codes += [code_for(sand, rng)] * rng.randint(1, 2)
        tail = new_top < sand
        if tail:
            codes.append(code_for(new_top, rng))
        core.add_ps(codes, "FSST")
        top, made = new_top, made + 1
    if truncate and tail:  # subaerial unconformity removes the youngest top
        core.beds.pop()
    return made


def erode_hst(core, zlow):
    """Subaerial unconformity cutting into the top of the latest HST."""
    n_hst = 0
    while n_hst < len(core.beds) and core.beds[-1 - n_hst][1] == "HST":
        n_hst += 1
    cut = core.rng.randint(0, 2) + (1 if zlow < -1.5 else 0)
    del core.beds[len(core.beds) - min(cut, n_hst // 2) :]


def make_lst(core, zlow, incised):
    """Lowstand normal regression: aggradational shallow marine or nonmarine."""
    rng, n = core.rng, core.rng.randint(1, 3)
    if zlow < 0.5:  # site subaerial at lowstand: valley fill / interfluve
        for i in range(n):
            channel = (incised and i == 0) or rng.random() < 0.4
            codes = ["FLU"] * (rng.randint(1, 2) if channel else 0)
            core.add_ps(codes + ["CPM"] * rng.randint(1, 2), "LST")
        return
    top = max(1, min(rank_of(zlow), core.top_rank(), 2))
    for _ in range(n):
        new_top = max(0, top - (1 if rng.random() < 0.3 else 0))
        core.add_ps(gradational(rng, top + 1, new_top), "LST")
        top = new_top


def make_tst(core, rm_target):
    """Retrogradational parasequences up to the MFS; returns the MFS rank."""
    rng, low = core.rng, core.top_rank()
    rm = min(MAX_RANK, max(rm_target, low + 2))
    room = rm - low
    n = max(1, min(rng.randint(2, 3), room - 1))
    lag = rng.random() < (0.7 if low == 0 else 0.35)
    for i in range(1, n + 1):
        top = low + i * room // (n + 1)
        codes = gradational(rng, min(rm, top + rng.randint(0, 1)), top)
        core.add_ps((["TLG"] if lag and i == 1 else []) + codes, "TST")
    return rm


def draw_site(rng, site):
    """Site proximality 0 (landward) .. 1 (basinward)."""
    if site == "proximal":
        return rng.uniform(0.0, 0.3)
    if site == "distal":
        return rng.uniform(0.75, 1.0)
    return rng.random()


def sequence_levels(rng, site):
    """Depth index at the site at the end of the HST and at the MFS."""
    zh = 0.3 + 3.8 * site + rng.uniform(-0.3, 0.3)
    return zh, zh + rng.uniform(1.8, 2.6)


def build_core(rng, args):
    """Beds (oldest first, [code, tract, ps]) and info for one core."""
    site = draw_site(rng, args.site)
    core, info = Core(rng), {"site": site, "fsst": []}
    zh, zm = sequence_levels(rng, site)
    make_hst(core, rank_of(zm), rank_of(zh))
    for _ in range(args.sequences_per_core):
        skip = rng.random() < args.no_fsst_prob  # subsidence outpaces the fall
        zlow = zh - (rng.uniform(0.5, 1.5) if skip else rng.uniform(1.8, 2.3))
        made = 0 if skip else make_fsst(core, rng.randint(1, 3), zlow < 0.5)
        if not skip and made == 0 and zlow < 0:
            erode_hst(core, zlow)
        info["fsst"].append("knob" if skip else "present" if made else "site")
        make_lst(core, zlow, incised=not skip)
        zh, zm = sequence_levels(rng, site)
        rm = make_tst(core, rank_of(zm))
        make_hst(core, rm, min(rank_of(zh), rm - 1))
    return core.beds, info


def add_noise(rng, beds, prob):
    """Replace a bed's facies by one of a neighbouring rank with probability prob."""
    for bed in beds:
        if rng.random() < prob:
            r = RANK[bed[0]]
            r = 1 if r == 0 else MAX_RANK - 1 if r == MAX_RANK else r + rng.choice((-1, 1))
            bed[0] = code_for(r, rng, fluvial=0.5)


def add_thickness(rng, beds, equal):
    """Append a thickness in whole millimetres to every bed."""
    for bed in beds:
        if equal:
            mm = int(EQUAL_BED_M * 1000)
        else:
            m = MEDIAN_M[bed[0]] * TRACT_SCALE[bed[1]] * math.exp(rng.gauss(0, SIGMA))
            mm = max(50, round(m * 1000))
        bed.append(mm)


def core_rows(name, beds, top_mm, units):
    """CSV rows top-down for one core (youngest bed first)."""
    scale = 1000.0 * (FT if units == "ft" else 1.0)
    rows, depth = [], top_mm
    for code, tract, _ps, mm in reversed(beds):
        rows.append([name, f"{depth / scale:.3f}", f"{(depth + mm) / scale:.3f}", code, tract])
        depth += mm
    return rows


def write_scheme(path):
    """Write the facies scheme as plain-text YAML."""
    lines = ["name: wave-dominated siliciclastic shelf and shoreface (shelf_generator)", "facies:"]
    for code, name, rank, group, setting, grain in FACIES:
        lines += [
            f'  - code: "{code}"',
            f"    name: {name}",
            f"    rank: {rank}",
            f"    group: {group}",
            f"    setting: {setting}",
            f"    grain_size: {grain}",
        ]
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
    p.add_argument("--prefix", default="S")
    return p.parse_args(argv)


def main(argv=None):
    args = parse_args(argv)
    rng = random.Random(args.seed)
    rows = []
    for i in range(1, args.cores + 1):
        beds, _info = build_core(rng, args)
        add_noise(rng, beds, args.noise)
        add_thickness(rng, beds, args.equal_beds)
        top_mm = round(rng.uniform(300.0, 3000.0) * 1000)
        rows += core_rows(f"{args.prefix}{args.seed}-{i:02d}", beds, top_mm, args.units)
    if args.output == "-":
        write_rows(sys.stdout, rows)
    else:
        with open(args.output, "w", newline="") as out:
            write_rows(out, rows)
    if args.scheme:
        write_scheme(args.scheme)


if __name__ == "__main__":
    main()
