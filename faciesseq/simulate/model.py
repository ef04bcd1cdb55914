"""The forward model of one dip section: shoreline trajectory from a sediment budget.

The section is a line of cells along dip (``x`` in km, 0 = landward end), each
holding a thickness of sediment ``h`` above a subsiding basement. Time runs in
steps of ``dt`` kyr. At each step ``k``:

1. The basement sinks by ``sigma(x) * dt`` (subsidence, m/kyr) and base level
   moves to ``E_k`` (the scenario's eustatic curve).
2. The relative base-level rate at the shoreline is
   ``R_k = (E_k - E_{k-1}) / dt + sigma(s_{k-1})``.
3. Sand (a fraction ``1 - f_mud`` of the supply ``Q_k``, m^2/kyr) fills up to
   an equilibrium profile translated with the shoreline ``s``::

       T(x; s) = E_k + g_cp * (s - x)                                  x <= s
       T(x; s) = E_k - h_sf * (1 - exp(-(x - s) / w_sf)) - g_toe * (x - s)   x > s

   (coastal plain above base level; shoreface depth approaching ``h_sf`` with
   an e-folding distance ``w_sf``, then a clinoform toe at ``g_toe``).
   Deposition is ``max(T - z, 0)``. While relative base level falls, exposed
   cells above the profile are eroded towards it (at most ``e_max * dt`` and
   never below the basement) and the eroded sediment joins the supply. ``T``
   rises with ``s`` everywhere, so the volume balance ``deposited(s) -
   eroded(s) = Q_k dt (1 - f_mud)`` has one root (found with Brent's method): the
   shoreline moves basinward when supply exceeds the accommodation made near
   the shore and landward otherwise (the shoreline-trajectory view of
   Helland-Hansen & Martinsen 1996, J. Sed. Research 66). If even the most
   landward shoreline takes more than the supply, the profile is filled
   part-way; supply left over with the shoreline at the basinward end bypasses
   the section.
4. Mud (``f_mud Q_k dt``) settles basinward of the shoreline with an
   exponential decay length ``lambda_mud``, only where water is deeper than
   ``d_mud``; what does not fit, or falls beyond the section, bypasses it.
5. The systems tract of the step follows from the rates (Catuneanu et al.
   2009, Earth-Science Reviews 92:1-33; Hunt & Tucker 1992, Sed. Geology
   81:1-9): ``R_k < 0`` forced regression, FSST; ``R_k`` above the
   sedimentation rate at the shoreline ``A_k`` (net aggradation at
   ``s_{k-1}`` per kyr) transgression, TST; otherwise normal regression: LST
   after a fall, HST before one; between two transgressions (no fall) HST up
   to the lowest relative rise rate and LST after it; between two falls (no
   transgression) LST up to the highest rise rate and HST after it. A
   transgressive or
   regressive excursion shorter than ``min_tract_kyr`` between two runs of one
   tract is folded back into it (shoreline jitter near a turnaround).

Mass is conserved exactly by construction and reported per section:
``supplied + eroded = deposited + bypassed`` and ``preserved = deposited -
eroded``, all in m^2 of dip section.

Assumptions: one grain-size budget split into sand and mud; no compaction,
no isostasy, no marine (ravinement) erosion; the equilibrium profile is the
same in every step. This is a geometric model in the spirit of shoreline-
trajectory analysis, not a hydrodynamic one; it is written here because no
maintained Python library provides such a model.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from faciesseq.simulate.scenario import Scenario, Section

__all__ = ["SectionHistory", "run_section"]

#: m km per m^2 (internal volumes are thickness in m times length in km).
_M2_PER_MKM = 1000.0
#: Precision of the shoreline position (km).
_SHORELINE_TOL_KM = 1e-8


@dataclass(frozen=True)
class SectionHistory:
    """Everything the forward model produced on one dip section.

    Attributes
    ----------
    name
        Section name.
    x_km
        Cell centres along dip (km), shape ``(M,)``.
    time_kyr, base_level_m
        Time and eustatic base level at the end of each step, shape ``(N + 1,)``
        (index 0 = start).
    initial_surface_m
        Elevation of the initial surface at time 0 (m), shape ``(M,)``.
    subsidence_m_per_kyr
        Subsidence rate per cell, shape ``(M,)``.
    sediment_m
        Sediment thickness above the basement after each step, ``(N + 1, M)``.
    eroded_m
        Erosion per step and cell, ``(N, M)``.
    shoreline_km
        Shoreline of the equilibrium profile after each step, ``(N + 1,)``.
    relative_rate_m_per_kyr, sedimentation_rate_m_per_kyr
        ``R_k`` and ``A_k`` of each step (see the module docstring), ``(N,)``;
        ``A_k`` is infinite while the shoreline is held at the basinward end of the
        section and sand bypasses it.
    tract
        Systems tract of each step (truth), ``(N,)``.
    budget
        Volumes in m^2 of section: ``supplied``, ``eroded``, ``deposited``,
        ``bypassed``, ``preserved``.
    """

    name: str
    x_km: np.ndarray
    time_kyr: np.ndarray
    base_level_m: np.ndarray
    initial_surface_m: np.ndarray
    subsidence_m_per_kyr: np.ndarray
    sediment_m: np.ndarray
    eroded_m: np.ndarray
    shoreline_km: np.ndarray
    relative_rate_m_per_kyr: np.ndarray
    sedimentation_rate_m_per_kyr: np.ndarray
    supply_m2_per_kyr: np.ndarray
    tract: np.ndarray
    budget: dict[str, float]

    @property
    def n_steps(self) -> int:
        return len(self.time_kyr) - 1

    def elevation(self, step: int) -> np.ndarray:
        """Elevation (m) of the surface after ``step``, at that time."""
        t = self.time_kyr[step]
        return self.initial_surface_m - self.subsidence_m_per_kyr * t + self.sediment_m[step]

    def water_depth(self, step: int) -> np.ndarray:
        """Water depth (m, negative = exposed) after ``step``."""
        return self.base_level_m[step] - self.elevation(step)

    def preserved_m(self) -> np.ndarray:
        """Preserved height of each time line above the basement, ``(N + 1, M)``.

        A time line survives only where no later erosion cut below it, so its
        preserved height is the least sediment thickness from then on.
        """
        return np.minimum.accumulate(self.sediment_m[::-1], axis=0)[::-1]

    def final_elevation(self) -> np.ndarray:
        """Elevation (m) of every preserved time line in the final section, ``(N + 1, M)``."""
        basement = self.initial_surface_m - self.subsidence_m_per_kyr * self.time_kyr[-1]
        return basement[None, :] + self.preserved_m()


def initial_surface(scenario: Scenario, x_km: np.ndarray) -> np.ndarray:
    """Initial surface elevation (m): the shelf profile with a graded shoreface.

    Relative to base level 0 (the curve's value at time 0 is added). Landward of
    the shoreline the coastal plain, basinward the higher of the shelf line and
    the equilibrium shoreface.
    """
    p = scenario.profile
    e0 = float(scenario.base_level(np.array([0.0]))[0])
    shelf = -p.shelf_gradient * (np.minimum(x_km, p.shelf_break_km) - p.shoreline_km)
    slope = -p.slope_gradient * np.maximum(x_km - p.shelf_break_km, 0.0)
    land = p.coastal_plain_gradient * (p.shoreline_km - x_km)
    plain = e0 + np.where(x_km <= p.shoreline_km, land, shelf + slope)
    # the shoreface is already graded at time 0, so the first steps do not fill it
    return np.maximum(plain, _template(x_km, p.shoreline_km, e0, scenario))


def _template(x: np.ndarray, s: float, level: float, scenario: Scenario) -> np.ndarray:
    p = scenario.profile
    d = x - s
    seaward = np.maximum(d, 0.0)
    marine = level - p.shoreface_depth_m * (1.0 - np.exp(-seaward / p.shoreface_width_km))
    marine = marine - p.toe_gradient * seaward
    return np.where(d <= 0.0, level - p.coastal_plain_gradient * d, marine)


def _change(
    x: np.ndarray,
    s: float,
    z: np.ndarray,
    h: np.ndarray,
    level: float,
    falling: bool,
    e_max: float,
    scenario: Scenario,
) -> tuple[np.ndarray, np.ndarray]:
    """Deposition and erosion (m per cell) with the profile's shoreline at ``s``."""
    t = _template(x, s, level, scenario)
    dep = np.maximum(t - z, 0.0)
    if falling:
        exposed = (z > level) & (x < s)
        ero = np.where(exposed, np.minimum(np.maximum(z - t, 0.0), e_max), 0.0)
        ero = np.minimum(ero, h)
    else:
        ero = np.zeros_like(z)
    return dep, ero


def _place_shoreline(
    x: np.ndarray,
    z: np.ndarray,
    h: np.ndarray,
    level: float,
    budget: float,
    falling: bool,
    e_max: float,
    scenario: Scenario,
) -> tuple[np.ndarray, np.ndarray, float, float]:
    """Solve ``deposited(s) - eroded(s) = budget`` for the shoreline ``s``.

    The balance rises monotonically with ``s``; its root is bracketed by the two
    ends of the section and found with Brent's method (``scipy.optimize.brentq``;
    Brent 1973, Algorithms for Minimization without Derivatives).

    Returns deposition, erosion (m per cell), the shoreline (km) and the sand
    that bypassed the section (m km).
    """
    dx = x[1] - x[0]

    def balance(s: float) -> float:
        dep, ero = _change(x, s, z, h, level, falling, e_max, scenario)
        return float((dep.sum() - ero.sum()) * dx) - budget

    lo, hi = 0.0, float(x[-1])
    if balance(lo) >= 0.0:
        dep, ero = _change(x, lo, z, h, level, falling, e_max, scenario)
        volume = dep.sum() * dx
        if volume > 0:
            dep = dep * min(1.0, (budget + ero.sum() * dx) / volume)
        return dep, ero, lo, budget - float((dep.sum() - ero.sum()) * dx)
    if balance(hi) <= 0.0:
        dep, ero = _change(x, hi, z, h, level, falling, e_max, scenario)
        return dep, ero, hi, budget - float((dep.sum() - ero.sum()) * dx)
    s = float(brentq(balance, lo, hi, xtol=_SHORELINE_TOL_KM, rtol=4 * np.finfo(float).eps))
    dep, ero = _change(x, s, z, h, level, falling, e_max, scenario)
    # close the budget exactly: the small residual of the root is spread over the cells
    # that receive sand
    residual = budget - float((dep.sum() - ero.sum()) * dx)
    touched = dep > 0
    if touched.any():
        dep = np.maximum(dep + np.where(touched, residual / (touched.sum() * dx), 0.0), 0.0)
    return dep, ero, s, budget - float((dep.sum() - ero.sum()) * dx)


def run_section(scenario: Scenario, section: Section) -> SectionHistory:
    """Run the forward model on one dip section (see the module docstring).

    Parameters
    ----------
    scenario
        The scenario (time, base level, supply, profiles, mud, erosion).
    section
        The dip section (its supply factor and subsidence).

    Returns
    -------
    SectionHistory
        Sediment thickness per step and cell, erosion, shoreline, rates,
        the systems tract of each step and the sediment budget.
    """
    p = scenario.profile
    dt = scenario.step_kyr
    n_steps = round(scenario.duration_kyr / dt)
    n_cells = round(p.length_km / p.cell_km) + 1
    x = np.linspace(0.0, p.length_km, n_cells)
    dx = x[1] - x[0]
    time = np.arange(n_steps + 1) * dt
    level = scenario.base_level(time)
    sigma = section.subsidence(x)
    supply = scenario.supply(time[1:] - dt / 2) * section.supply_factor
    z0 = initial_surface(scenario, x)

    f_mud = scenario.mud_fraction
    e_max = scenario.erosion_m_per_kyr * dt

    sediment = np.zeros((n_steps + 1, n_cells))
    eroded = np.zeros((n_steps, n_cells))
    shoreline = np.zeros(n_steps + 1)
    shoreline[0] = p.shoreline_km
    rel_rate = np.zeros(n_steps)
    sed_rate = np.zeros(n_steps)
    totals = dict.fromkeys(("supplied", "eroded", "deposited", "bypassed"), 0.0)

    h = np.zeros(n_cells)
    for k in range(1, n_steps + 1):
        s_prev = shoreline[k - 1]
        z = z0 - sigma * time[k] + h
        e_k = level[k]
        rate = (e_k - level[k - 1]) / dt + float(np.interp(s_prev, x, sigma))
        falling = rate < 0.0
        sand_budget = (1.0 - f_mud) * supply[k - 1] * dt / _M2_PER_MKM  # m km
        mud_budget = f_mud * supply[k - 1] * dt / _M2_PER_MKM

        dep, ero, s_new, bypass = _place_shoreline(
            x, z, h, e_k, sand_budget, falling, e_max, scenario
        )
        mud = _mud_fallout(x, s_new, mud_budget, e_k, z + dep - ero, scenario)
        bypass += mud_budget - float(mud.sum() * dx)

        net = dep - ero + mud
        h = h + net
        sediment[k] = h
        eroded[k - 1] = ero
        shoreline[k] = s_new
        rel_rate[k - 1] = rate
        if s_new >= x[-1]:
            # the shoreline is held at the basinward end and sand bypasses the section:
            # sedimentation outpaces any rise
            sed_rate[k - 1] = np.inf
        else:
            sed_rate[k - 1] = float(np.interp(s_prev, x, net)) / dt
        totals["supplied"] += (sand_budget + mud_budget) * _M2_PER_MKM
        totals["eroded"] += float(ero.sum() * dx) * _M2_PER_MKM
        totals["deposited"] += float((dep.sum() + mud.sum()) * dx) * _M2_PER_MKM
        totals["bypassed"] += bypass * _M2_PER_MKM

    totals["preserved"] = float(h.sum() * dx) * _M2_PER_MKM
    tract = _tracts(
        rel_rate, sed_rate, scenario.initial_tract, max(1, round(scenario.min_tract_kyr / dt))
    )
    return SectionHistory(
        name=section.name,
        x_km=x,
        time_kyr=time,
        base_level_m=level,
        initial_surface_m=z0,
        subsidence_m_per_kyr=sigma,
        sediment_m=sediment,
        eroded_m=eroded,
        shoreline_km=shoreline,
        relative_rate_m_per_kyr=rel_rate,
        sedimentation_rate_m_per_kyr=sed_rate,
        supply_m2_per_kyr=supply,
        tract=tract,
        budget=totals,
    )


def _mud_fallout(
    x: np.ndarray,
    shoreline: float,
    budget: float,
    level: float,
    z_sand: np.ndarray,
    scenario: Scenario,
) -> np.ndarray:
    """Mud thickness per cell (m) of one step: ``budget`` (m km) falls out
    exponentially basinward of the ``shoreline`` (e-folding length
    ``scenario.mud_decay_km``), each cell's share the integral of the exponential over
    the cell, and settles only below the mud depth limit under base ``level`` (over the
    surface ``z_sand`` after the step's sand); what does not settle bypasses the
    section."""
    dx = x[1] - x[0]
    a = np.maximum(x - dx / 2, shoreline)
    b = np.maximum(x + dx / 2, shoreline)
    share = np.exp(-(a - shoreline) / scenario.mud_decay_km) - np.exp(
        -(b - shoreline) / scenario.mud_decay_km
    )
    room = np.maximum(level - scenario.mud_min_depth_m - z_sand, 0.0)
    return np.minimum(budget * share / dx, room)


def _tracts(
    rel_rate: np.ndarray, sed_rate: np.ndarray, initial: str, min_steps: int = 1
) -> np.ndarray:
    """Systems tract of each step from the rates (see the module docstring).

    Each step is first a forced regression (``R < 0``), a transgression
    (``R > A``) or a normal regression. A run of normal regression is then
    named by what lies around it: after a fall it is an LST, before a fall an
    HST; between two transgressions (no fall), or at the start before a
    transgression, it is an HST up to the lowest relative rise rate and an LST
    after it; between two falls (no transgression) an LST up to the highest
    rise rate and an HST after it; a run with no neighbours takes ``initial``.
    """
    phase = np.where(rel_rate < 0.0, "FSST", np.where(rel_rate > sed_rate, "TST", "NR"))
    phase = _remove_flicker(phase.astype(object), min_steps)
    runs = _run_list(phase)
    out = phase.copy()
    rounded = np.round(rel_rate, 9)  # rates equal to the last bits are equal
    for i, (code, a, b) in enumerate(runs):
        if code != "NR":
            continue
        before = runs[i - 1][0] if i > 0 else None
        after = runs[i + 1][0] if i + 1 < len(runs) else None
        if before == "FSST" and after in ("TST", None):
            out[a:b] = "LST"
        elif before in ("TST", None) and after == "FSST":
            out[a:b] = "HST"
        elif before == "FSST" and after == "FSST":
            turn = a + int(np.argmax(rounded[a:b])) + 1
            out[a:turn], out[turn:b] = "LST", "HST"
        elif before is None and after is None:
            out[a:b] = initial
        elif before is None:  # the run at the start, before a transgression:
            # HST up to the lowest rise rate (none if the rise speeds up from the start)
            turn = a + int(np.argmin(rounded[a:b]))
            out[a:turn], out[turn:b] = "HST", "LST"
        elif after is None:  # the run at the end, after a transgression
            out[a:b] = "HST"
        else:  # between two transgressions: at least one step of each
            turn = a + int(np.argmin(rounded[a:b]))
            turn = min(max(turn, a + 1), max(b - 1, a + 1))
            out[a:turn], out[turn:b] = "HST", "LST"
    return out


def _run_list(values: np.ndarray) -> list[tuple[str, int, int]]:
    """``(value, start, stop)`` of each run of equal values."""
    runs = []
    start = 0
    for k in range(1, len(values) + 1):
        if k == len(values) or values[k] != values[start]:
            runs.append((values[start], start, k))
            start = k
    return runs


def _remove_flicker(phase: np.ndarray, steps: int) -> np.ndarray:
    """Fold short excursions ``A B A`` (``B`` shorter than ``steps``) back into ``A``.

    Near a turnaround the rise and sedimentation rates are almost equal and the
    shoreline may step landward and basinward for a step or two; such runs are
    not tracts. Runs of forced regression are kept: a relative fall is never
    relabelled, and nothing is folded into one. Folded one run at a time from the
    base, each on the runs the last fold left: folding every short run of the first
    list at once turned ``A B A B A`` (each run one step) into ``A A B A B``, which
    left a highstand of one step between two transgressions (found by the property
    test of any scenario).
    """
    out = phase.copy()
    while True:  # one fold at a time, upward: a fold can merge runs (A B A B A -> A)
        runs = _run_list(out)
        for i in range(1, len(runs) - 1):
            code, a, b = runs[i]
            before, after = runs[i - 1][0], runs[i + 1][0]
            if b - a < steps and code != "FSST" and before == after and before != "FSST":
                out[a:b] = before
                break
        else:
            return out
