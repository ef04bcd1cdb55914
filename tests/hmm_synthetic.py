"""Small synthetic successions with a known tract column, for the tract-model tests.

Each core is a walk through the default tract graph (upward: HST -> FSST ->
LST -> TST -> HST, FSST and TST sometimes skipped); inside a tract the facies
rank drifts deeper (TST) or shallower (the others) with noise, successive beds
never share a facies (beds are amalgamated), thickness and the lower contact
depend on the tract. Invented data; the generator is this project's own.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from faciesseq.core import Succession
from faciesseq.scheme import FaciesScheme

CODES = ("CP", "FS", "USF", "LSF", "OTZ", "OFF", "SHM")
ORDER = ("HST", "FSST", "LST", "TST")
#: mean number of beds, drift of rank per bed, log-thickness mean, contact weights
#: (sharp, erosional, gradational) of the first bed / of the other beds
TRACTS = {
    "HST": (9, -0.6, 0.2, (0.6, 0.1, 0.3), (0.2, 0.05, 0.75)),
    "FSST": (5, -0.8, -0.3, (0.3, 0.7, 0.0), (0.5, 0.3, 0.2)),
    "LST": (5, -0.2, 0.6, (0.1, 0.9, 0.0), (0.3, 0.3, 0.4)),
    "TST": (6, 0.7, -0.5, (0.7, 0.3, 0.0), (0.4, 0.05, 0.55)),
}
CONTACTS = ("sharp", "erosional", "gradational")


def scheme() -> FaciesScheme:
    return FaciesScheme.from_dict(
        {"facies": [{"code": c, "name": c, "rank": i} for i, c in enumerate(CODES)]}
    )


def _next_tract(t: str, rng: np.random.Generator) -> str:
    if t == "HST":
        return "FSST" if rng.random() < 0.7 else "LST"
    if t == "FSST":
        return "LST"
    if t == "LST":
        return "TST" if rng.random() < 0.85 else "HST"
    return "HST"


def core(name: str, n_beds: int, rng: np.random.Generator) -> Succession:
    """One succession of about ``n_beds`` beds, base to top, with ``true_tract``."""
    V = len(CODES)
    tract = ORDER[rng.integers(4)]
    rank = float(rng.integers(V))
    rows = []
    prev = -1
    while len(rows) < n_beds:
        mean, drift, lthick, first_contact, contact = TRACTS[tract]
        n = max(2, int(rng.poisson(mean)))
        if tract == "TST":
            rank = min(rank, 2.0)
        elif tract == "HST":
            rank = max(rank, V - 2.0)
        elif tract == "FSST":
            rank = min(rank, V - 2.5)
        for i in range(n):
            rank = float(np.clip(rank + drift + rng.normal(0, 0.6), 0, V - 1))
            f = round(rank)
            if f == prev:
                f = int(np.clip(f + (1 if drift > 0 else -1), 0, V - 1))
                if f == prev:
                    f = prev - 1 if prev > 0 else prev + 1
            w = first_contact if i == 0 else contact
            rows.append(
                {
                    "facies": CODES[f],
                    "thickness": float(np.exp(lthick + rng.normal(0, 0.4))),
                    "contact": CONTACTS[rng.choice(3, p=w)],
                    "true_tract": tract,
                }
            )
            prev = f
            if len(rows) >= n_beds:
                break
        tract = _next_tract(tract, rng)
    beds = pd.DataFrame(rows)
    # base to top; depths from the top of the core downward
    thick = beds["thickness"].to_numpy()
    base = np.cumsum(thick[::-1])[::-1]
    beds["base"] = base
    beds["top"] = base - thick
    beds = beds[["top", "base", "thickness", "facies", "contact", "true_tract"]]
    return Succession(name, 0, beds, "m")


def cores(n_cores: int, n_beds: int, seed: int) -> list[Succession]:
    rng = np.random.default_rng(seed)
    return [core(f"S-{seed}-{k + 1}", n_beds, rng) for k in range(n_cores)]


def write_database(folder, n_cores: int, n_beds: int, seed: int) -> None:
    """``folder/cores.csv`` (depth order; the even cores' tract column filled in, the odd
    cores' left blank) and ``folder/scheme.yaml`` (CODES ranked in order)."""
    rows = []
    for k, succ in enumerate(cores(n_cores, n_beds, seed=seed)):
        beds = succ.beds.iloc[::-1].copy()  # depth order, as a database holds it
        beds.insert(0, "core", succ.core)
        beds["tract"] = beds["true_tract"] if k % 2 == 0 else None
        rows.append(beds.drop(columns=["thickness", "true_tract"]))
    pd.concat(rows).to_csv(folder / "cores.csv", index=False)
    scheme = "facies:\n" + "".join(
        f'  - {{code: "{c}", name: "{c}", rank: {i}}}\n' for i, c in enumerate(CODES)
    )
    (folder / "scheme.yaml").write_text(scheme)


def simulated_beds(scenario, seeds) -> list[Succession]:
    """Bed successions of the project's forward model (a loaded scenario) for the given
    noise seeds, core names suffixed ``/s<seed>`` so seeds never share a core."""
    from faciesseq.core import CoreSet
    from faciesseq.simulate import simulate

    frames = []
    for seed in seeds:
        t = simulate(scenario, seed=seed).cores.to_frame()
        t["core"] = t["core"] + f"/s{seed}"
        frames.append(t)
    return CoreSet.from_frame(pd.concat(frames), units="m").successions("beds")
