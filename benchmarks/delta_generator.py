"""Synthetic drill cores from one site on a river-dominated delta.

A test instrument for faciesseq, written without reference to the package's
model: it encodes textbook deltaic sequence stratigraphy and writes described
cores (depth intervals with facies codes) together with the true systems
tract of every bed, so that an interpretation can be scored against it.

The rules below are taken, from memory and in simplified form, from:

* Van Wagoner, J.C., Mitchum, R.M., Campion, K.M. & Rahmanian, V.D. (1990)
  Siliciclastic sequence stratigraphy in well logs, cores, and outcrops.
  AAPG Methods in Exploration 7 -- parasequences as shallowing-upward
  successions bounded by marine flooding surfaces; parasequence-set stacking
  (retrogradational, aggradational, progradational); sequence boundaries
  and incised valleys.
* Posamentier, H.W. & Allen, G.P. (1999) Siliciclastic sequence
  stratigraphy: concepts and applications. SEPM Concepts in Sedimentology and
  Paleontology 7 -- forced regression, sharp-based shorefaces and mouth bars,
  lowstand deltas, incised-valley fills, ravinement.
* Catuneanu, O. et al. (2009) Towards the standardization of sequence
  stratigraphy. Earth-Science Reviews 92 -- the four systems tracts
  (HST, FSST, LST, TST) and their order within a depositional sequence.
* Bhattacharya, J.P. (2006) Deltas. In: Posamentier & Walker (eds) Facies
  Models Revisited, SEPM Special Publication 84 -- delta-lobe cycles,
  autogenic lobe switching and abandonment, river-dominated delta facies.

The citations are from memory; the numbers are invented for a benchmark,
not calibrated to any basin.

Geology encoded
---------------
One core is one site at a dip position ``p`` between 0 (landward, delta
plain) and 1 (basinward, prodelta/shelf). Facies are ranked landward to
basinward (0 delta plain: distributary channel, incised-valley fluvial
channel, delta-plain mudstone, coal, paleosol; 1 interdistributary bay and
estuarine heterolithics; 2 proximal mouth bar and transgressive lag;
3 distal mouth bar; 4 delta-front heterolithics; 5 prodelta mudstone;
6 shelf mudstone).

* Parasequences are delta-lobe cycles: coarsening- and shallowing-upward
  from a deeper facies (prodelta) through delta front and mouth bar to, at
  landward sites, distributary channel, delta-plain mudstone and coal,
  capped by a flooding (or abandonment) surface.
* Autogenic lobe switching: inside any tract a lobe may be abandoned by
  avulsion. The site then floods more deeply than base level alone would
  make it (sometimes with a thin shell bed on the abandonment surface) and
  the next lobe reaches a shallower or deeper facies than the trend says.
  Cycle stacking is therefore noisier than on a wave-dominated shelf.
* HST: a few aggradational lobes, then progradational lobes whose tops
  shallow upward; thick beds. At basinward sites the HST only reaches
  delta front or prodelta.
* FSST (only where the HST ended in delta-front or deeper facies, i.e.
  basinward sites; absent for a share of sequences): thin, sharp-based
  forced-regressive mouth bars sitting on prodelta mud, each one shallower
  than the last (downstepping). At landward sites there is no FSST: the
  sequence boundary cuts into the HST.
* Sequence boundary and LST: at landward sites either an incised valley
  (the boundary erodes metres of HST, then amalgamated fluvial channel
  sandstone sits on marine or delta-plain facies, with late-lowstand
  floodplain mud) or an interfluve (a paleosol recording subaerial
  exposure). At basinward sites a lowstand delta: normal-regressive lobes,
  gradational, starting with a toe a little deeper than the FSST or HST top
  and prograding further than the FSST bars.
* TST: in a valley, estuarine heterolithics and bay mud; on interfluves a
  transgressive coal and bay mud; then a ravinement lag/shell bed and thin,
  backstepping (retrogradational) lobes whose tops deepen upward, ending in
  shelf mudstone at the maximum flooding surface.
* Tract order upward is HST -> FSST -> LST -> TST -> HST; the FSST may be
  absent (HST -> LST). Every core begins (at its base) in the TST or HST of
  an older sequence and holds whole sequences above it; the top of the last
  HST may be cut off by the core top.

Knobs
-----
--seed, --cores, -o/--output (path or -), --scheme (write the YAML facies
scheme), --sequences-per-core (default 3 to 5 per core), --equal-beds (every
bed 0.5 m), --no-fsst-prob (share of sequences with no FSST even where one
could form), --noise (probability that a bed is misdescribed as a facies one
rank away), --site {mixed,proximal,distal}, --units {m,ft}, --prefix (core
names are PREFIX<seed>-NN).

Standard library only; output is deterministic for a given seed and
arguments. Depths increase downward; rows run top to bottom.
"""

from __future__ import annotations

import argparse
import csv
import io
import itertools
import random
import sys

M_TO_FT = 3.280839895

# code, name, rank, group, setting, grain_size, exposure
FACIES = [
    ("DCH", "distributary channel sandstone", 0, "delta_plain", "nonmarine", 4, False),
    ("FCH", "fluvial channel sandstone of incised valleys", 0, "alluvial", "nonmarine", 4, False),
    ("DPM", "delta-plain mudstone with rootlets", 0, "delta_plain", "nonmarine", 1, False),
    ("COL", "coal", 0, "delta_plain", "nonmarine", 0, False),
    ("PAL", "paleosol (mottled rooted mudstone)", 0, "delta_plain", "nonmarine", 1, True),
    ("EST", "estuarine tidal heterolithics", 1, "estuarine", "marine", 2, False),
    ("IDB", "interdistributary bay mudstone", 1, "bay", "marine", 1, False),
    ("PMB", "proximal mouth-bar sandstone", 2, "delta_front", "marine", 3, False),
    ("TLG", "transgressive lag and shell bed", 2, "lag", "marine", 4, False),
    ("DMB", "distal mouth-bar sandstone and siltstone", 3, "delta_front", "marine", 2, False),
    ("DFH", "delta-front heterolithics", 4, "delta_front", "marine", 2, False),
    ("PRO", "prodelta mudstone", 5, "prodelta", "marine", 1, False),
    ("SHM", "shelf mudstone", 6, "shelf", "marine", 1, False),
]
RANK = {f[0]: f[2] for f in FACIES}
MAX_RANK = 6
# facies standing for each rank in lobe cycles (rank 0 is built separately)
LADDER = {1: "IDB", 2: "PMB", 3: "DMB", 4: "DFH", 5: "PRO", 6: "SHM"}
# facies a describer may confuse a bed with, one rank away
COMMON = {0: ["DPM", "DCH"], 1: ["IDB"], 2: ["PMB"], 3: ["DMB"], 4: ["DFH"], 5: ["PRO"], 6: ["SHM"]}
# relative bed thickness per facies
FACIES_SCALE = {"COL": 0.45, "TLG": 0.3, "PAL": 0.6, "SHM": 0.8, "DCH": 1.4, "FCH": 1.0, "EST": 0.9}
# mean bed thickness (m) per tract / setting
BED_MEAN = {"HST": 1.1, "FSST": 0.45, "LST": 0.9, "VALLEY": 1.8, "TST": 0.45}
LEGAL_NEXT = {
    "HST": {"HST", "FSST", "LST"},
    "FSST": {"FSST", "LST"},
    "LST": {"LST", "TST"},
    "TST": {"TST", "HST"},
}


def clip(x: float, lo: float, hi: float) -> float:
    return lo if x < lo else hi if x > hi else x


def irank(x: float) -> int:
    return int(clip(round(x), 0, MAX_RANK))


class Core:
    """Beds of one core, oldest first: [facies, thickness_m, tract]."""

    def __init__(self, rng: random.Random) -> None:
        self.rng = rng
        self.beds: list[list] = []

    def thickness(self, facies: str, mean: float) -> float:
        t = mean * FACIES_SCALE.get(facies, 1.0) * self.rng.lognormvariate(-0.1, 0.45)
        return clip(t, 0.1, 6.0)

    def add(self, facies: str, tract: str, mean: float, n: int = 1) -> None:
        for _ in range(n):
            self.beds.append([facies, self.thickness(facies, mean), tract])

    def top_rank(self) -> int:
        return RANK[self.beds[-1][0]] if self.beds else MAX_RANK

    def nbeds(self, tract: str) -> int:
        r = self.rng.random()
        if tract == "HST":
            return 1 if r < 0.4 else 2 if r < 0.8 else 3
        if tract == "LST":
            return 1 if r < 0.55 else 2
        if tract == "TST":
            return 1 if r < 0.8 else 2
        return 1 if r < 0.6 else 2

    def delta_plain(self, tract: str, mean: float, from_rank: int) -> None:
        """Rank-0 cap of a lobe: channel, plain mud, coal (at least one)."""
        rng = self.rng
        seq = []
        if rng.random() < (0.6 if from_rank >= 2 else 0.25):
            seq.append("DCH")
        if rng.random() < 0.7:
            seq.append("DPM")
        if rng.random() < 0.5:
            seq.append("COL")
        if not seq:
            seq = ["DPM"]
        for code in seq:
            self.add(code, tract, mean, 1 if code == "COL" else self.nbeds(tract))

    def lobe(
        self,
        base: int,
        top: int,
        tract: str,
        mean: float,
        sharp: bool = False,
        base_bed: bool = True,
    ) -> None:
        """One coarsening-upward lobe cycle from rank ``base`` up to ``top``."""
        rng = self.rng
        top = min(top, base)
        ranks = list(range(base, top - 1, -1))
        if sharp:
            keep = [ranks[0]] if base_bed and len(ranks) > 1 else []
            if top + 1 < base and top + 1 <= 3 and rng.random() < 0.4:
                keep.append(top + 1)
            keep.append(top)
            ranks = keep
        else:
            if not base_bed and len(ranks) > 1:
                ranks = ranks[1:]
            inner = ranks[1:-1]
            for r in inner:
                drop = 0.5 if (r == 1 and base >= 3) else 0.15
                if rng.random() < drop:
                    ranks.remove(r)
        prev = base
        for r in ranks:
            if r == 0:
                self.delta_plain(tract, mean, prev)
            else:
                n = self.nbeds(tract)
                self.add(LADDER[r], tract, mean, n)
            prev = r

    def lobe_set(
        self,
        tops: list[float],
        first_base: float,
        tract: str,
        mean: float,
        p_avulse: float,
        span: tuple[float, float],
    ) -> None:
        """A parasequence set: lobes with given target tops, plus avulsions."""
        rng = self.rng
        for i, top in enumerate(tops):
            top += rng.gauss(0.0, 0.4)
            if i == 0:
                base = first_base
            else:
                prev_top = self.top_rank()
                base = max(prev_top + rng.uniform(0.8, 2.0), top + rng.uniform(*span))
                if rng.random() < p_avulse:  # autogenic lobe switch
                    if rng.random() < 0.65:  # active lobe moved away: deeper flooding
                        base += rng.uniform(1.0, 2.5)
                        top += rng.uniform(0.8, 2.0)
                        if rng.random() < 0.35:
                            self.add("TLG", tract, 0.6)  # abandonment shell bed
                    else:  # lobe built toward the site: shallower top
                        top -= rng.uniform(0.7, 1.8)
            rb, rt = irank(base), irank(top)
            if i > 0:
                rb = max(rb, min(MAX_RANK, self.top_rank() + 1))
            rt = min(rt, rb)
            if rb == rt and rb > 0 and rng.random() < 0.7:
                rb = min(MAX_RANK, rb + 1)
            self.lobe(rb, rt, tract, mean)

    # --- systems tracts -----------------------------------------------------

    def hst(self, p: float, start: int) -> None:
        rng = self.rng
        n = rng.randint(3, 5)
        t_end = clip(4.3 * p - 0.5, 0.0, 4.0)  # delta plain landward, delta front basinward
        t_agg = min(5.2, t_end + 1.5)
        n_agg = rng.randint(1, max(1, n // 2))
        tops = []
        for i in range(n):
            if i < n_agg:
                tops.append(t_agg)
            else:
                f = (i - n_agg + 1) / (n - n_agg)
                tops.append(t_agg + (t_end - t_agg) * f)
        self.lobe_set(tops, start, "HST", BED_MEAN["HST"], 0.3, (1.0, 2.5))

    def fsst(self) -> None:
        rng = self.rng
        hst_top = self.top_rank()
        n = rng.choices([1, 2, 3], [0.5, 0.35, 0.15])[0]
        prev = hst_top
        for i in range(n):
            top = hst_top - rng.uniform(1.0, 1.8) - 0.5 * i + rng.gauss(0, 0.2)
            # mouth bars only (PMB/DMB), each no deeper than the one before
            rt = irank(clip(top, 1.5, min(3.0, hst_top - 1)))
            rt = min(rt, prev if i else hst_top - 1)
            # sharp base: the bar rests on prodelta mud (the HST top, or a
            # thin prodelta bed left when an earlier forced-regressive lobe
            # was abandoned); no gradational delta-front transition
            self.lobe(5, rt, "FSST", BED_MEAN["FSST"], sharp=True, base_bed=(i > 0 or hst_top >= 5))
            prev = rt

    def lowstand_delta(self) -> int:
        rng = self.rng
        last = self.top_rank()
        n = rng.choices([1, 2, 3], [0.35, 0.4, 0.25])[0]
        t0 = clip(last - rng.uniform(0.5, 1.5), 0.0, 4.5)
        t1 = clip(t0 - rng.uniform(0.5, 2.0), 0.0, 4.5)
        tops = [t0 + (t1 - t0) * (i / (n - 1) if n > 1 else 1.0) for i in range(n)]
        if n > 1 and rng.random() < 0.5:  # late-lowstand aggradation
            tops[-1] = tops[-2]
        first_base = min(5.0, last + rng.uniform(0.5, 1.5))
        self.lobe_set(tops, first_base, "LST", BED_MEAN["LST"], 0.25, (1.0, 2.5))
        return self.top_rank()

    def incise(self, depth: float) -> None:
        """Erode ``depth`` m off the top, keeping at least three HST beds."""
        hst_idx = [i for i, b in enumerate(self.beds) if b[2] == "HST"]
        # the HST of the current sequence: last contiguous HST run
        start = hst_idx[-1]
        while start - 1 >= 0 and self.beds[start - 1][2] == "HST":
            start -= 1
        floor = start + 3
        while depth > 0 and len(self.beds) > floor:
            bed = self.beds[-1]
            if bed[1] > depth + 0.1:
                bed[1] -= depth
                depth = 0
            else:
                depth -= bed[1]
                self.beds.pop()

    def valley_fill(self) -> None:
        rng = self.rng
        self.incise(rng.uniform(3.0, 12.0))
        self.add("FCH", "LST", BED_MEAN["VALLEY"], rng.randint(2, 5))
        if rng.random() < 0.5:  # late-lowstand aggradation on the valley floor
            for _ in range(rng.randint(1, 3)):
                self.add("DPM", "LST", 0.6)
                self.add("FCH", "LST", BED_MEAN["VALLEY"] * 0.7)

    def interfluve(self) -> None:
        rng = self.rng
        self.incise(rng.uniform(0.0, 1.0))
        self.add("PAL", "LST", 0.8, rng.randint(1, 2))

    def tst(self, p: float, style: str) -> int:
        rng = self.rng
        mean = BED_MEAN["TST"]
        if style == "valley":
            self.add("EST", "TST", 0.7, rng.randint(1, 3))
            self.add("IDB", "TST", mean, rng.randint(0, 2))
            if rng.random() < 0.8:
                self.add("TLG", "TST", mean)
        elif style == "interfluve":
            if rng.random() < 0.7:
                self.add("COL", "TST", 1.0)
            self.add("IDB", "TST", mean, rng.randint(1, 2))
            if rng.random() < 0.7:
                self.add("TLG", "TST", mean)
        elif style == "basinward" and rng.random() < 0.7:
            self.add("TLG", "TST", mean)
        n = rng.randint(2, 4)
        a = clip(max(1.5, self.top_rank() + 0.5), 1.5, 4.0)
        tops = [a + (5.0 - a) * (i + 1) / (n + 1) for i in range(n)]
        first_base = clip(self.top_rank() + rng.uniform(1.0, 2.0), 0, MAX_RANK)
        self.lobe_set(tops, first_base, "TST", mean, 0.15, (1.0, 2.0))
        mfs = MAX_RANK if p > 0.5 or rng.random() < 0.5 else 5
        self.add(LADDER[mfs], "TST", 0.6, rng.randint(1, 2))
        return mfs

    def sequence(self, p: float, no_fsst_prob: float) -> None:
        """FSST? + LST + TST + HST above the current top (an HST)."""
        rng = self.rng
        if self.top_rank() >= 3 and rng.random() >= no_fsst_prob:
            self.fsst()
        landward = clip((0.55 - p) / 0.2, 0.0, 1.0)
        if rng.random() < landward:
            style = "valley" if rng.random() < 0.7 else "interfluve"
            if style == "valley":
                self.valley_fill()
            else:
                self.interfluve()
        else:
            style = "basinward"
            self.lowstand_delta()
        mfs = self.tst(p, style)
        self.hst(p, mfs)


def make_core(rng: random.Random, p: float, n_seq: int, no_fsst_prob: float) -> list[list]:
    core = Core(rng)

    def jitter() -> float:
        return clip(p + rng.gauss(0.0, 0.07), 0.0, 1.0)

    # older sequence below: its TST and HST, then cut by the core base
    mfs = core.tst(jitter(), "none")
    core.hst(jitter(), mfs)
    n_tst = sum(1 for b in core.beds if b[2] == "TST")
    n_hst = len(core.beds) - n_tst
    cut = rng.randint(0, n_tst + max(0, n_hst // 2 - 2))
    core.beds = core.beds[cut:]
    for _ in range(n_seq):
        core.sequence(jitter(), no_fsst_prob)
    # core top: cut into the last HST, keeping at least two of its beds
    last = len(core.beds)
    start = last
    while start - 1 >= 0 and core.beds[start - 1][2] == "HST":
        start -= 1
    removable = max(0, (last - start) - 2)
    cut_top = rng.randint(0, int(removable * 0.4))
    if cut_top:
        core.beds = core.beds[:-cut_top]
    return core.beds


def misdescribe(rng: random.Random, beds: list[list], noise: float) -> None:
    for bed in beds:
        if noise > 0 and rng.random() < noise:
            r = RANK[bed[0]]
            step = rng.choice([-1, 1])
            if r + step < 0 or r + step > MAX_RANK:
                step = -step
            bed[0] = rng.choice(COMMON[r + step])


def check_order(beds: list[list]) -> None:
    for lower, upper in itertools.pairwise(beds):
        if upper[2] not in LEGAL_NEXT[lower[2]]:
            raise AssertionError(f"illegal tract order {lower[2]} -> {upper[2]}")


def site_position(rng: random.Random, site: str) -> float:
    if site == "proximal":
        return rng.uniform(0.0, 0.3)
    if site == "distal":
        return rng.uniform(0.7, 1.0)
    return rng.uniform(0.0, 1.0)


def generate(args: argparse.Namespace) -> list[tuple[str, float, float, str, str]]:
    rows = []
    factor = M_TO_FT if args.units == "ft" else 1.0
    for k in range(1, args.cores + 1):
        rng = random.Random(args.seed * 1_000_003 + k)
        p = site_position(rng, args.site)
        n_seq = args.sequences_per_core or rng.randint(3, 5)
        beds = make_core(rng, p, n_seq, args.no_fsst_prob)
        check_order(beds)
        misdescribe(rng, beds, args.noise)
        if args.equal_beds:
            for bed in beds:
                bed[1] = 0.5
        name = f"{args.prefix}{args.seed}-{k:02d}"
        # depths: youngest bed at the core top, depth increasing downward
        top_m = rng.uniform(500.0, 3000.0)
        bounds = [top_m]
        for bed in reversed(beds):
            bounds.append(bounds[-1] + bed[1])
        bounds = [round(b * factor, 3) for b in bounds]
        for i, bed in enumerate(reversed(beds)):
            rows.append((name, bounds[i], bounds[i + 1], bed[0], bed[2]))
    return rows


def scheme_yaml() -> str:
    out = ["name: river-dominated delta with lobe switching (delta_generator)", "facies:"]
    for code, name, rank, group, setting, grain, exposure in FACIES:
        out += [
            f'  - code: "{code}"',
            f"    name: {name}",
            f"    rank: {rank}",
            f"    group: {group}",
            f"    setting: {setting}",
            f"    grain_size: {grain}",
        ]
        if exposure:
            out.append("    exposure: true")
    return "\n".join(out) + "\n"


def write_csv(rows, out) -> None:
    w = csv.writer(out, lineterminator="\n")
    w.writerow(["core", "top", "base", "facies", "tract"])
    for core, top, base, facies, tract in rows:
        w.writerow([core, f"{top:.3f}", f"{base:.3f}", facies, tract])


def parse_args(argv=None) -> argparse.Namespace:
    ap = argparse.ArgumentParser(
        description="Synthetic drill cores from one site on a river-dominated delta."
    )
    ap.add_argument("--seed", type=int, default=0)
    ap.add_argument("--cores", type=int, default=4)
    ap.add_argument("-o", "--output", required=True, help="CSV path or - for stdout")
    ap.add_argument("--scheme", help="write the YAML facies scheme here")
    ap.add_argument("--sequences-per-core", type=int, default=None)
    ap.add_argument("--equal-beds", action="store_true", help="every bed 0.5 m thick")
    ap.add_argument("--no-fsst-prob", type=float, default=0.2)
    ap.add_argument("--noise", type=float, default=0.0)
    ap.add_argument("--site", choices=["mixed", "proximal", "distal"], default="mixed")
    ap.add_argument("--units", choices=["m", "ft"], default="m")
    ap.add_argument("--prefix", default="D")
    args = ap.parse_args(argv)
    if args.cores < 1:
        ap.error("--cores must be at least 1")
    if args.sequences_per_core is not None and args.sequences_per_core < 1:
        ap.error("--sequences-per-core must be at least 1")
    for opt in ("no_fsst_prob", "noise"):
        if not 0.0 <= getattr(args, opt) <= 1.0:
            ap.error(f"--{opt.replace('_', '-')} must be between 0 and 1")
    return args


def main(argv=None) -> int:
    args = parse_args(argv)
    rows = generate(args)
    if args.output == "-":
        try:
            write_csv(rows, sys.stdout)
            sys.stdout.flush()
        except BrokenPipeError:  # e.g. piped into head
            sys.stdout = None
    else:
        buf = io.StringIO()
        write_csv(rows, buf)
        with open(args.output, "w", encoding="utf-8", newline="") as fh:
            fh.write(buf.getvalue())
    if args.scheme:
        with open(args.scheme, "w", encoding="utf-8") as fh:
            fh.write(scheme_yaml())
    return 0


if __name__ == "__main__":
    sys.exit(main())
