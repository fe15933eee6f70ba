"""A tunnel belt under a piecewise-constant speed profile, simulated exactly.

The belt is a rigid conveyor of length ``L`` [m] (the cold zone). A piece that
enters at time ``t`` travels with the belt and leaves at the first time ``T``
with ``integral_t^T v(s) ds = L``; its residence is ``T - t`` [min]. Pieces
leave in the order they entered.

A feed segment is one batch's product going onto the belt from ``start`` to
``end`` at a loading of ``kg_per_m`` kg per metre of belt; its pieces need a
residence of at least ``L / limit``, so the belt may go no faster than
``limit`` [m/min] while any of them is on it. The belt runs at the slowest
limit of the segments on it (clamped to the tunnel's top speed); a speed-up
therefore waits until every piece needing the slower speed has left, and a
slow-down (which only lengthens residence) happens at once. Because each
piece sees a speed of at most its own limit for its whole stay, its
residence is at least ``L / limit`` whatever the rest of the profile does.

The simulation is event-driven and exact for piecewise-constant speeds
(no time step): events are segment starts, segment ends and last-piece
exits. Feeds are added in time order (a feed never starts before the
previous one ended: one loading point), so the profile before a new feed's
start never changes and the belt keeps, at its newest feed's start, only
what is still on it.

Units: minutes [min], metres [m], belt speed [m/min], kg per metre of belt
[kg/m].
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Sequence
from dataclasses import dataclass

EPS = 1e-9
"""Tolerance on times [min] and lengths [m] for events that coincide."""


@dataclass(frozen=True)
class SpeedProfile:
    """A piecewise-constant belt speed over time.

    Parameters
    ----------
    times : tuple of float
        Start of each constant piece, increasing [min]; the last piece runs
        on without end.
    speeds : tuple of float
        Belt speed of each piece [m/min], all > 0.
    """

    times: tuple[float, ...]
    speeds: tuple[float, ...]

    def __post_init__(self) -> None:
        if len(self.times) != len(self.speeds) or not self.times:
            raise ValueError("SpeedProfile: times and speeds must be non-empty and of equal length")
        if any(b <= a for a, b in zip(self.times, self.times[1:], strict=False)):
            raise ValueError("SpeedProfile.times: must be increasing")
        if any(not v > 0 for v in self.speeds):
            raise ValueError("SpeedProfile.speeds: must be > 0")

    def _index(self, t: float) -> int:
        return max(bisect.bisect_right(self.times, t) - 1, 0)

    def speed_at(self, t: float) -> float:
        """Speed at time ``t`` [m/min] (the first piece's before the profile starts)."""
        return self.speeds[self._index(t)]

    def travel(self, t0: float, t1: float) -> float:
        """Belt travel from ``t0`` to ``t1 >= t0`` [m]."""
        if t1 <= t0:
            return 0.0
        k = self._index(t0)
        out, t = 0.0, t0
        while True:
            nxt = self.times[k + 1] if k + 1 < len(self.times) else math.inf
            if t1 <= nxt:
                return out + self.speeds[k] * (t1 - t)
            out += self.speeds[k] * (nxt - t)
            t, k = nxt, k + 1

    def advance(self, t0: float, distance: float) -> float:
        """First time at which the belt has moved ``distance`` [m] since ``t0`` [min]."""
        if distance <= 0:
            return t0
        k = self._index(t0)
        left, t = distance, t0
        while True:
            nxt = self.times[k + 1] if k + 1 < len(self.times) else math.inf
            step = self.speeds[k] * (nxt - t)
            if step >= left:
                return t + left / self.speeds[k]
            left -= step
            t, k = nxt, k + 1

    def pieces(self, t0: float, t1: float) -> list[tuple[float, float, float]]:
        """The constant pieces ``(start, end, speed)`` covering ``[t0, t1]``."""
        out = []
        k = self._index(t0)
        t = t0
        while t < t1 - EPS:
            nxt = self.times[k + 1] if k + 1 < len(self.times) else math.inf
            end = min(nxt, t1)
            if out and out[-1][2] == self.speeds[k]:
                out[-1] = (out[-1][0], end, self.speeds[k])
            else:
                out.append((t, end, self.speeds[k]))
            t, k = end, k + 1
        return out


def residence(profile: SpeedProfile, entry: float, length: float) -> float:
    """Residence of a piece entering at ``entry`` on a belt of ``length`` [m] [min]."""
    return profile.advance(entry, length) - entry


@dataclass(frozen=True)
class _OnBelt:
    """A segment still on the belt at the belt's clock: its limit and what is left."""

    key: int
    limit: float
    # distance the belt must still move until the segment's last piece leaves;
    # inf while the segment is still feeding
    left: float


@dataclass(frozen=True)
class Belt:
    """A tunnel belt with the feeds placed so far.

    Use :meth:`empty`, then :meth:`with_feed` once per feed, in time order.

    Parameters
    ----------
    length : float
        Belt length in the cold zone [m].
    top : float
        Fastest belt speed [m/min].
    profile : SpeedProfile or None
        Speed profile from the first feed on (None before any feed).
    clock : float
        Start of the newest feed [min]; the profile before it is final.
    on_belt : tuple
        Segments on the belt at ``clock``.
    exits : tuple of float
        Time the last piece of each feed leaves, in feed order [min].
    feed_end : float
        End of the newest feed [min] (``-inf`` before any feed).
    """

    length: float
    top: float
    profile: SpeedProfile | None = None
    clock: float = -math.inf
    on_belt: tuple[_OnBelt, ...] = ()
    exits: tuple[float, ...] = ()
    feed_end: float = -math.inf

    @classmethod
    def empty(cls, length: float, top: float) -> Belt:
        """A belt with nothing on it."""
        if not length > 0 or not top > 0:
            raise ValueError("Belt: length and top speed must be > 0")
        return cls(length=length, top=top)

    @property
    def empty_at(self) -> float:
        """Time the belt is (last) empty: the last piece of the newest feed leaves [min]."""
        return self.exits[-1] if self.exits else -math.inf

    def with_feed(
        self, start: float, kg: float, kg_per_m: float, limit: float
    ) -> tuple[Belt, float]:
        """The belt with one more feed of ``kg`` [kg] from ``start`` [min] on.

        Parameters
        ----------
        start : float
            First piece onto the belt [min]; not before the previous feed's end.
        kg : float
            kg fed [kg] (> 0).
        kg_per_m : float
            Loading: kg per metre of belt [kg/m] (density x coverage x width).
        limit : float
            Fastest belt speed the feed's pieces allow [m/min]
            (``length / required residence``, at most the top speed).

        Returns
        -------
        belt : Belt
            The new belt.
        end : float
            Time the last piece goes on [min].
        """
        if start < self.feed_end - EPS:
            raise ValueError(f"Belt.with_feed: start {start:g} is before the last feed's end")
        if not kg > 0 or not kg_per_m > 0 or not limit > 0:
            raise ValueError("Belt.with_feed: kg, kg_per_m and limit must be > 0")
        limit = min(limit, self.top)
        state = self._state_at(start)
        key = len(self.exits)
        opened = (*state, _OnBelt(key, limit, math.inf))
        times, speeds, _ = _forward(start, opened, None, self.top, self.length)
        ahead = SpeedProfile(tuple(times), tuple(speeds))
        end = ahead.advance(start, kg / kg_per_m)
        fed = ahead.travel(start, end)
        closed = (*state, _OnBelt(key, limit, math.inf))
        times, speeds, exits = _forward(start, closed, (key, end, fed), self.top, self.length)
        profile = self._joined(start, times, speeds)
        exits_all = [*list(self.exits), math.nan]
        for k, t in exits.items():
            exits_all[k] = t
        belt = Belt(
            length=self.length,
            top=self.top,
            profile=profile,
            clock=start,
            on_belt=(*tuple(closed[:-1]), _OnBelt(key, limit, fed + self.length)),
            exits=tuple(exits_all),
            feed_end=end,
        )
        return belt, end

    def _state_at(self, t: float) -> tuple[_OnBelt, ...]:
        """Segments on the belt at ``t >= clock``, with the distance each has left."""
        if self.profile is None:
            return ()
        moved = self.profile.travel(self.clock, t)
        return tuple(
            _OnBelt(s.key, s.limit, s.left - moved)
            for s in self.on_belt
            if s.left - moved > EPS and self.exits[s.key] > t + EPS
        )

    def _joined(self, start: float, times: list[float], speeds: list[float]) -> SpeedProfile:
        if self.profile is None:
            return SpeedProfile(tuple(times), tuple(speeds))
        k = bisect.bisect_left(self.profile.times, start)
        t_old = list(self.profile.times[:k])
        v_old = list(self.profile.speeds[:k])
        if not t_old:
            return SpeedProfile(tuple(times), tuple(speeds))
        for t, v in zip(times, speeds, strict=True):
            if v != v_old[-1]:
                t_old.append(t)
                v_old.append(v)
        return SpeedProfile(tuple(t_old), tuple(v_old))


def _forward(
    start: float,
    on: Sequence[_OnBelt],
    closing: tuple[int, float, float] | None,
    top: float,
    length: float,
) -> tuple[list[float], list[float], dict[int, float]]:
    """Simulate the belt from ``start`` with the segments ``on`` and no new feeds.

    Each segment's ``left`` is the belt travel from ``start`` until its last
    piece leaves [m], ``inf`` for the one still feeding. ``closing`` =
    ``(key, end, fed)``: that open segment stops feeding at ``end``, after
    the belt moved ``fed`` [m] from ``start``, so its last piece leaves once
    the belt moved ``fed + length``. Returns the profile from ``start``
    (times, speeds) and the last-exit time of every segment that leaves.
    """
    items = [[s.key, s.limit, s.left] for s in on]
    times: list[float] = []
    speeds: list[float] = []
    exits: dict[int, float] = {}
    t, moved = start, 0.0
    while items:
        v = min(top, min(it[1] for it in items))
        if not times or v != speeds[-1]:
            times.append(t)
            speeds.append(v)
        nxt = math.inf
        for it in items:
            if math.isfinite(it[2]):
                nxt = min(nxt, t + max(it[2] - moved, 0.0) / v)
            elif closing is not None and it[0] == closing[0]:
                nxt = min(nxt, max(closing[1], t))
        if math.isinf(nxt):
            break  # only a segment still feeding with no end: the speed holds
        moved += v * (nxt - t)
        t = nxt
        keep = []
        for it in items:
            if math.isinf(it[2]) and closing is not None and it[0] == closing[0]:
                if closing[1] <= t + EPS:
                    it[2] = closing[2] + length
            if math.isfinite(it[2]) and it[2] - moved <= EPS:
                exits[it[0]] = t
            else:
                keep.append(it)
        items = keep
    if not times:
        times, speeds = [start], [top]
    return times, speeds, exits
