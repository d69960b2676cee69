"""How unevenly paralleled devices share over random V_BE offsets, and whether each draw holds.

Each draw of offsets, uniform in the stage's spread band, is one operating point of
:func:`~soacheck.steady_state.steady_state`: the settled sharing, and where the shared state
cannot hold (the whole set's electro-thermal Jacobian has an eigenvalue at or above 1) the
stable state in which one device takes the current (hogging), else runaway: the same states,
found the same way, as every other stage job reports.

Whether the shared state can hold is a property of the set at the operating point, decided
on the matched set (no offsets), whose shared state is the equal split: with offsets the
relaxation may settle straight into the state where the device of the lowest V_BE takes the
current, without passing the shared state it replaces.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from soacheck.derating import BreakdownDerating
from soacheck.errors import SoacheckError
from soacheck.glossary import STATE_LIMITS
from soacheck.parts import Part
from soacheck.policy import policy_of
from soacheck.quantities import DRAWS, MAX_DEVICE_DRAWS, check_memory, memory_budget_bytes
from soacheck.stage import Stage
from soacheck.stage_run import first_outside, inside_limits, judge_steady_state
from soacheck.steady_state import (
    SteadyState,
    equal_split_unstable,
    hogging_on_matched_set,
    stage_gain_peak,
    steady_state,
)


@dataclass(frozen=True)
class SharingSpread:
    """The worst device's share of the total current over random V_BE offsets, and the draws' stability.

    Attributes
    ----------
    percentile
        Percentile of the worst share reported, in (0, 100]. [%]
    worst_share, mean_share, equal_share
        The worst device's share at that percentile and averaged over the draws that settle (a draw
        that runs away has no settled share; NaN where no draw settles); each device's share if all
        shared evenly. [1]
    draws
        Draws of the offsets.
    runaway_fraction
        Draws with no stable state, neither shared nor with one device taking the current. [1]
    hogging_fraction
        Draws settled in a state where one device takes the current: all that settle where the
        matched set's shared state cannot hold, and any whose own shared state could not. [1]
    stage_gain_peak
        The highest stability gain over the draws (of the state reported: where a draw hogs,
        that state's). [1]
    device_margin, device_margin_to_rating
        The least margin of any device in any draw that settles, 1 − I/I_allowed against its DC
        SOA derated at its own case temperature and against the current rating (the policy's
        fraction of i_max; the least of the two), under the part's policy and at the ratings;
        −inf where a device could not be evaluated, inf without a draw that settles. The
        current's margin: a junction past its limit or a driver that falls short does not change it
        (``hot_junction``, ``failure``). [1]
    device, device_limit
        The device (numbered from 1) where ``device_margin`` is least, and its limit or, where
        that margin is 0 or more and a device fails on another limit, that limit (``failure``: the
        junction's ``tj_max``, under a policy with a ceiling ``tj_ceiling``, or ``drive``), as a
        stage run names them; 0 and empty without a draw that settles.
    hot_junction
        Whether a junction of a draw that settles is past tj_max (under a policy, its ceiling).
    tj_peak_c, case_peak_c
        The hottest junction and the hottest case of any draw that settles; −inf without one. [°C]
    failure, failure_device
        The limit and device (from 1) of the first device, in the first draw that settles with one, that is
        not inside (:func:`~soacheck.stage_run.inside_limits`: its current outside, its junction past its
        limit, short of drive); empty and 0 where every device of every draw that settles is inside.
    """

    percentile: float
    worst_share: float
    mean_share: float
    equal_share: float
    draws: int
    runaway_fraction: float
    hogging_fraction: float = 0.0
    stage_gain_peak: float = 0.0
    device_margin: float = math.inf
    device_margin_to_rating: float = math.inf
    device: int = 0
    device_limit: str = ""
    hot_junction: bool = False
    tj_peak_c: float = -math.inf
    case_peak_c: float = -math.inf
    failure: str = ""
    failure_device: int = 0

    @property
    def outside(self) -> bool:
        """Whether a device of a draw that settles is outside its SOA or its current rating, is not evaluated,
        has its junction past tj_max (under a policy, its ceiling), or is short of drive."""
        return not self.device_margin >= 0 or self.hot_junction or bool(self.failure)

    @property
    def failed_device(self) -> int:
        """The device (from 1) of the limit the answer names: where ``device_margin`` is least, or, where it is
        0 or more, the first that fails on another limit (``failure_device``); 0 where none is outside."""
        if not self.outside:
            return 0
        return self.failure_device if self.device_margin >= 0 else self.device


def sharing_margins(part: Part, device_a: float) -> dict[str, object]:
    """The worst device's current against the continuous current rating, under the part's policy and at rating.

    ``margin`` = 1 − I/(f·i_max) with f the policy's current fraction (1 without one),
    ``margin_to_rating`` = 1 − I/i_max, and the policy as its JSON object.
    """
    policy = policy_of(part.policy)
    rated = part.ratings.i_max_a
    return {
        "margin": 1.0 - device_a / (policy.current_factor * rated),
        "margin_to_rating": 1.0 - device_a / rated,
        "policy": policy.to_dict(),
    }


def judge_draws(
    stage: Stage, state: SteadyState, breakdown: BreakdownDerating = "auto"
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Margin [1], limit and whether inside, of every device in every draw that settles, each ``(n, m)``.

    Each device is judged as the other stage jobs judge a steady state
    (:func:`~soacheck.stage_run.judge_steady_state`, DC, second breakdown derated as
    ``breakdown`` says, and :func:`~soacheck.stage_run.inside_limits`), and against the current rating too,
    1 − I/(f·i_max) with f the policy's current fraction (limit ``current``), the lesser margin
    kept. The margin is the current's: a junction past tj_max (under a policy, its ceiling) or a
    device short of drive keeps it, and its limit names the junction limit where that margin is
    0 or more, or ``drive``, as in a stage run. In a draw that runs away every device is labelled
    ``runaway`` and none is inside (the set has no stable state); its margin is inf, so that the
    least margin is over the draws that settle. NaN stays NaN, never inside.
    """
    _, margin, limit = judge_steady_state(stage, state, breakdown=breakdown)
    policy = policy_of(stage.part.policy)
    rating = 1.0 - state.device_a / (policy.current_factor * stage.part.ratings.i_max_a)
    rated = rating < margin
    margin = np.where(rated, rating, margin)
    hot = (state.junction_c > stage.part.tj_limit_c) & (margin >= 0) & ~state.runaway_at[None, :]
    named = np.where(hot, stage.part.tj_limit, np.where(rated, "current", limit))
    limit = np.where(np.isin(limit, STATE_LIMITS), limit, named)  # runaway, drive, dropout fail whatever the current
    inside = inside_limits(stage, margin, limit, state.junction_c)
    return np.where(state.runaway_at[None, :], np.inf, margin), limit, inside


def _hottest_c(state: SteadyState, temperature_c: np.ndarray) -> float:
    """The highest of ``temperature_c`` ``(n, m)`` (a state's junctions or cases) over the draws that settle
    (NaN never the highest); −inf without one. [°C]"""
    settled = ~state.runaway_at[None, :] & ~np.isnan(temperature_c)
    return float(np.max(np.where(settled, temperature_c, -np.inf)))


def _least(margin: np.ndarray, limit: np.ndarray) -> tuple[float, int, str]:
    """The least margin (NaN as −inf: never safe), its device (from 1) and limit, over ``(n, m)``."""
    filled = np.where(np.isnan(margin), -np.inf, margin)
    d, k = np.unravel_index(int(np.argmin(filled)), filled.shape)
    return float(filled[d, k]), int(d) + 1, str(limit[d, k])


BATCH_DRAWS = 2000
"""Draws solved together at most (fewer where the devices' arrays would pass the memory budget)."""


def _bytes_per_draw(count: int) -> int:
    """Memory one draw of ``count`` devices takes in :func:`steady_state`: about 32 arrays of (devices,)
    (the fixed point's history and state) and 3 of (devices, devices) (the Jacobian and its
    eigenvalue solver), float64. [bytes]"""
    return 8 * (32 * count + 3 * count * count)


def sharing_monte_carlo(
    stage: Stage,
    total_a: float,
    source_v: float,
    *,
    draws: int = 10000,
    percentile: float = 99.0,
    seed: int = 0,
    breakdown: BreakdownDerating = "auto",
    progress: Callable[[int, int], None] | None = None,
) -> SharingSpread:
    """Steady-state sharing over random V_BE offsets, uniform in the spread band.

    Parameters
    ----------
    stage
        The stage: its part, count, resistors, cooling and spread band.
    total_a
        Total current. [A]
    source_v
        Source voltage at the load's input. [V]
    draws
        Draws of the offsets, at most :data:`~soacheck.quantities.MAX_DEVICE_DRAWS` device solutions.
    percentile
        Percentile of the worst device's share to report, in (0, 100]. [%]
    seed
        Random seed: the same seed gives the same draws.
    breakdown
        Second-breakdown derating of the devices' DC SOA: ``auto``, ``thermal`` or ``none``
        (:data:`~soacheck.derating.BreakdownDerating`).
    progress
        Called as ``progress(draws done, draws)`` after each batch.

    Returns
    -------
    SharingSpread
        The shares of the draws that settle, the fractions of draws that hog or run away, the least margin of any
        device in any draw that settles (:func:`judge_draws`) with its device and limit (where
        every current is inside and a device fails on another limit: that limit), the first
        device that fails and its limit, and the hottest junction and case.

    Notes
    -----
    Each draw is a DC operating point of :func:`~soacheck.steady_state.steady_state` with its
    own offsets: junctions at case + P·rth_jc, cases P·R_cs above the heatsink, the heatsink at
    its steady state under the devices' total power (or the cases held). Vectorized over draws,
    in batches of at most :data:`BATCH_DRAWS`. Hogging is decided on the matched set, settled at
    the same point (:func:`~soacheck.steady_state.hogging_on_matched_set`): where its equal split
    is unstable, every draw that settles is hogging.
    """
    n = stage.count
    DRAWS.check(draws, "draws")
    if n * draws > MAX_DEVICE_DRAWS:
        raise SoacheckError(
            f"{draws} draws of {n} devices is {n * draws:.3g} device solutions, more than the "
            f"{MAX_DEVICE_DRAWS:.0e} soacheck does in one run (minutes of work); use fewer draws"
        )
    batch = max(1, min(BATCH_DRAWS, draws, memory_budget_bytes() // _bytes_per_draw(n)))
    check_memory(batch * _bytes_per_draw(n), f"Monte Carlo draws of {n} devices", "use fewer devices")
    point_v, point_a = np.array([float(source_v)]), np.array([float(total_a)])
    rated = stage.with_part(stage.part.rated) if stage.part.policy is not None else None
    least, least_to_rating, device, device_limit = math.inf, math.inf, 0, ""
    failure, failure_device = "", 0
    tj_peak_c, case_peak_c = -math.inf, -math.inf
    rng = np.random.default_rng(seed)
    shares, gains, runaway, own = [], [], [], []
    done = 0
    while done < draws:
        size = min(batch, draws - done)
        offsets = rng.uniform(0.0, stage.vbe_spread_v, (n, size))
        state = steady_state(stage, np.full(size, float(source_v)), np.full(size, float(total_a)), offsets_v=offsets)
        runaway.append(state.runaway_at)
        own.append(state.hogging if state.hogging is not None else np.zeros(size, dtype=bool))
        gains.append(state.stage_gain if state.stage_gain is not None else np.zeros(size))
        shares.append(state.device_a.max(axis=0) / total_a)
        margin, limit, inside = judge_draws(stage, state, breakdown)
        found = _least(margin, limit)
        if found[0] < least:
            least, device, device_limit = found
        settled = ~state.runaway_at  # a draw that runs away fails on its own (runaway_fraction)
        first = first_outside(inside[:, settled])
        if first is not None and not failure:
            failure, failure_device = str(limit[:, settled][first]), first[0] + 1
        to_rating = found[0] if rated is None else _least(*judge_draws(rated, state, breakdown)[:2])[0]
        least_to_rating = min(least_to_rating, to_rating)
        tj_peak_c = max(tj_peak_c, _hottest_c(state, state.junction_c))
        case_peak_c = max(case_peak_c, _hottest_c(state, state.case_c))
        done += size
        if progress is not None:
            progress(done, draws)
    runaway_at = np.concatenate(runaway)
    share = np.concatenate(shares)[~runaway_at]  # a draw that runs away has no settled share
    hogging = hogging_on_matched_set(
        stage, np.concatenate(own), runaway_at, lambda matched: equal_split_unstable(matched, point_v, point_a)
    )
    hot_junction = tj_peak_c > stage.part.tj_limit_c
    if failure and least >= 0:  # every current inside: another limit fails the answer (a junction's, drive)
        device_limit = failure
    return SharingSpread(
        percentile,
        float(np.percentile(share, percentile)) if share.size else math.nan,
        float(share.mean()) if share.size else math.nan,
        1.0 / n,
        draws,
        int(runaway_at.sum()) / draws,
        int(hogging.sum()) / draws,
        stage_gain_peak(np.concatenate(gains), hogging),
        least,
        least_to_rating,
        device,
        device_limit,
        hot_junction,
        tj_peak_c,
        case_peak_c,
        failure,
        failure_device,
    )
