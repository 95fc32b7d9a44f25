"""An upper bound on a night's objective: the LP relaxation of "who uses each minute".

The objective (:mod:`planner.scheduling.night`) is the sum over the new visits
of ``value(visit) = priority × shutter hours × efficiency × phase gain``, the
efficiency and phase gain taken at the visit's middle, both at most 1.

The relaxation
--------------
Cut the usable window into coarse slots k (:data:`BOUND_SLOT_MIN` minutes) and
let ``y[r, k]`` be the minutes of slot k that request r occupies.  Maximise
``Σ c[r, k] y[r, k]`` subject to

* ``Σ_r y[r, k] ≤ free_k`` — the slot's minutes not taken by fixed visits,
  closed or before ``not_before``;
* ``Σ_k y[r, k] ≤ n_r b_r`` — n_r visits still wanted, ``b_r`` the shortest
  time a visit of r can take: its shortest body (acquisition and frames; sized
  requests take the least over the night) plus its shortest setup from any
  possible predecessor (another request, itself when it repeats, a fixed
  visit; slew and settle, no filter change);
* ``y[r, k] ≥ 0``, and ``y[r, k] = 0`` unless every constraint of r holds
  somewhere in slot k, on a stretch of the grid long enough for a visit of r
  (a request may take more of such a slot than the part where its constraints
  hold: dropping that cap only loosens the relaxation, by 10⁻⁵ of the bound on a
  60-target night, and leaves a plain transportation problem);

with ``c[r, k] = U[r, k] / b_r`` and ``U[r, k]`` the largest value a visit of r
can have with its middle within ``h_r`` of slot k, where ``h_r`` = half the
longest body of r + the longest setup (slew across the sky, settle, a filter
change) + one slot: every instant of a visit lies that close to the middle of
its science (the middle is at most half the body from its end, and at most half
the body plus the setup from its start), so U covers every visit touching slot k.

Why it is an upper bound
------------------------
Take any plan that obeys the constraints.  Give each of its new visits, of
length D ≥ b_r from slew start to last readout, the occupancy density
``b_r / D`` over its own interval.  (Only the night's first visit may start
with no slew, parked; give it density 1, i.e. D ≤ b_r minutes: what the LP then
counts of it falls short of its value by at most ``value × (1 − D/b_r) ≤
priority × shutter hours × (shortest setup / b_r)``, which the caller adds to
the LP's optimum, taking the largest over the requests.)  The visits do not overlap and lie in free
time, so the densities of all visits sum to at most 1 at every instant: the
slot totals satisfy the first row.  Each visit contributes exactly b_r minutes,
at most n_r visits of r: the second row.  A visit covers only slots where its
constraints hold, and no more of a slot than that part: the third (and
more).  (It also lies inside one run of grid points where they all hold, as the
planner checks them — every point from the one at or before its start to the
one at or after its end — so runs shorter than its shortest visit take no part:
the caller passes ``ok_point`` with such runs removed, :func:`in_long_runs`.)  So the plan maps to a feasible y.  Its objective
there is, per visit, ``∫ (b_r / D) · U/b_r dτ = mean of U over the visit ≥
value(visit)``, because every slot the visit touches has U at least the
visit's value (its middle lies within h_r of every instant of it; phase gain ≤ 1).
Hence LP optimum ≥ objective of every plan, including the optimal one.
Spacing between repeats, slews and the visits' discreteness are what the
relaxation drops; the gap to the plan measures what they, and the planner's
search, cost.  Slot times are those of the planner's 1-minute grid, so the
argument holds on it (to the grid's 10⁻³-slot rounding).

The LP is a transportation problem (slots supply minutes, requests demand
them), R × K variables, solved exactly by a network simplex
(:mod:`planner.scheduling.transport`) in about a millisecond.  Its slot duals —
what one more minute of slot k would add to the bound — are the time prices
the dispatch uses.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Coarse slot of the relaxation, minutes.  Coarser is faster; the only loss is
#: U's maximum over a wider stretch (exact capacity is kept by occupancy minutes).
BOUND_SLOT_MIN = 5
METHOD = (f"LP relaxation: minutes of each {BOUND_SLOT_MIN}-min slot shared among the visits "
          "(transportation problem, network simplex)")


@dataclass(frozen=True)
class Bound:
    value: float
    method: str
    price_per_min: np.ndarray  # (T-1,) on the planner's 1-minute intervals: dual of the slot's minutes
    occupancy: np.ndarray  # (R, T-1) minutes per minute each request holds in the relaxed optimum


def window_max(v: np.ndarray, half_width: int) -> np.ndarray:
    """Running maximum of a row over ±``half_width`` points (0 beyond its ends)."""
    from numpy.lib.stride_tricks import sliding_window_view

    padded = np.pad(v, (half_width, half_width), constant_values=0.0)
    return sliding_window_view(padded, 2 * half_width + 1).max(axis=-1)


def window_max_rows(v: np.ndarray, half_widths: np.ndarray) -> np.ndarray:
    """:func:`window_max` of every row of ``v`` at once, row r over ±``half_widths[r]`` points.

    A sparse table (the maximum over 2^j points from each point, j = 0, 1, …) answers any
    window with two overlapping lookups; log2 of the widest window array operations
    instead of a sliding window per row."""
    n_rows, n = v.shape
    h = np.asarray(half_widths, dtype=int)
    pad = int(h.max()) if n_rows else 0
    levels = [np.pad(v, ((0, 0), (pad, pad)), constant_values=0.0)]
    length = 2 * h + 1
    top = np.floor(np.log2(length)).astype(int)
    while len(levels) <= int(top.max()):
        a, span = levels[-1], 1 << (len(levels) - 1)
        levels.append(np.maximum(a[:, :-span], a[:, span:]))
    out = np.empty_like(v, dtype=float)
    i = np.arange(n)
    for j in sorted(set(top.tolist())):  # (np.unique would load numpy.ma on a process's first plan)
        rows = np.flatnonzero(top == j)
        lo = pad + i[None, :] - h[rows, None]
        hi = lo + length[rows, None] - (1 << int(j))
        tab = levels[int(j)][rows]
        out[rows] = np.maximum(np.take_along_axis(tab, lo, axis=1), np.take_along_axis(tab, hi, axis=1))
    return out


def in_long_runs(ok: np.ndarray, min_points: np.ndarray) -> np.ndarray:
    """Points of each row ``r`` inside a run of at least ``min_points[r]`` consecutive True."""
    n_rows, n = ok.shape
    idx = np.arange(n)[None, :]
    bad = np.where(ok, n, idx)
    next_bad = np.minimum.accumulate(bad[:, ::-1], axis=1)[:, ::-1]
    prev_bad = np.maximum.accumulate(np.where(ok, -1, idx), axis=1)
    return ok & (next_bad - prev_bad - 1 >= np.asarray(min_points)[:, None])


def night_bound(v_point, ok_point, free, count, body_min_min, reach_min, slot_min=1.0) -> Bound:
    """Solve the relaxation.

    ``v_point`` (R, T): value of a visit with its middle at grid point i (0 where
    unusable); ``ok_point`` (R, T): constraints hold at the point; ``free`` (T-1,):
    free fraction of each 1-minute interval; ``count`` (R,) visits wanted;
    ``body_min_min`` (R,) shortest time a visit takes, ``reach_min`` (R,) h_r, minutes.
    """
    from planner.scheduling.transport import max_transport

    n_req, n_pts = v_point.shape
    n_int = n_pts - 1
    if n_req == 0 or n_int <= 0 or not np.any(count > 0):
        return Bound(0.0, METHOD, np.zeros(max(n_int, 0)), np.zeros((n_req, max(n_int, 0))))
    u = window_max_rows(v_point, np.ceil(np.asarray(reach_min) / slot_min).astype(int) + 1)
    u_int = np.maximum(u[:, :-1], u[:, 1:])
    ok_int = ok_point[:, :-1] & ok_point[:, 1:]
    k_of = np.arange(n_int) // BOUND_SLOT_MIN
    n_k = int(k_of[-1]) + 1
    cap = np.bincount(k_of, weights=free * slot_min, minlength=n_k)
    ok_min = np.zeros((n_req, n_k))
    big_u = np.zeros((n_req, n_k))
    for r in range(n_req):
        ok_min[r] = np.bincount(k_of, weights=ok_int[r] * free * slot_min, minlength=n_k)
        np.maximum.at(big_u[r], k_of, np.where(ok_int[r], u_int[r], 0.0))
    c = np.where(body_min_min[:, None] > 0, big_u / np.maximum(body_min_min[:, None], 1e-9), 0.0)
    use = (ok_min > 1e-9) & (c > 0) & (count[:, None] > 0) & np.isfinite(c)
    if not use.any():
        return Bound(0.0, METHOD, np.zeros(n_int), np.zeros((n_req, n_int)))
    res = max_transport(np.where(use, c, 0.0), use, count * body_min_min, cap)
    if res is None:
        return Bound(float("nan"), METHOD + " — not solved", np.zeros(n_int), np.zeros((n_req, n_int)))
    value, y, _, price_k = res
    price_k = np.where(cap > 0, price_k, 0.0)  # time no visit can take (before "now", fixed visits): no price
    ok_w = np.maximum(ok_min, 1e-12)
    # spread each slot's minutes over its usable free intervals, in proportion to their free time
    occ = (y / ok_w)[:, k_of] * ok_int * free[None, :]
    return Bound(value, METHOD, price_k[k_of], occ)
