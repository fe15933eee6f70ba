"""The timed shift schedule: what happens when, minute by minute, on every machine.

A plan (:class:`optimizer.results.PlanResult`) says how many batches of each
load an oven runs in a shift and how many kg each tunnel route takes; the
schedule places all of it in time. These are its records, all frozen, with
times in minutes from the start of their shift [min]:

* :class:`TimedBatch` - one oven batch: load start, cook start, cook end,
  unload end, the air setting and whole trays of each product (the kg follow
  from the trays);
* :class:`Changeover` - an oven's change of air setting, or a tunnel's change
  of run (product or air setting);
* :class:`Stop` - a planned stop (cleaning, maintenance) placed in time;
* :class:`TunnelTimeline` - per tunnel: the belt-speed profile (piecewise
  constant, :class:`BeltPiece`), the air setting over time
  (:class:`SettingSpan`) and the feed segments (:class:`Feed`: one batch's
  product going onto the belt at one loading, with its kg);
* :class:`Unplaced` - planned kg the schedule could not place, with the rule
  that stopped it (``hot_hold``, ``shift_end``, ``oven_minutes``,
  ``residence``, ``belt_speed``).

:func:`schedule_table` turns a :class:`Schedule` into one table, one row per
timed item, the columns of :data:`SCHEDULE_COLUMNS`.

Units: minutes [min], kilograms [kg], belt speed [m/min], belt length [m].
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import pandas as pd

SCHEDULE_COLUMNS: tuple[str, ...] = (
    "shift",
    "machine",
    "kind",
    "start_min",
    "end_min",
    "batch",
    "product",
    "trays",
    "kg",
    "oven_setting",
    "tunnel_setting",
    "loading",
    "belt_speed_m_per_min",
)
"""Columns of :func:`schedule_table`; ``kind`` is one of :data:`ROW_KINDS`."""

ROW_KINDS: tuple[str, ...] = ("batch", "changeover", "stop", "feed", "belt")
"""Kinds of timed item in the schedule table."""

RULES: tuple[str, ...] = (
    "hot_hold",
    "belt_speed",
    "residence",
    "shift_end",
    "oven_minutes",
    "order",
)
"""Rules the schedule keeps and a diagnosis may name."""


@dataclass(frozen=True)
class TraysOf:
    """Whole trays of one product in a batch.

    Parameters
    ----------
    product : str
        Product key.
    trays : int
        Trays of the product in the batch [-].
    kg : float
        ``trays`` times the product's kg per tray [kg].
    """

    product: str
    trays: int
    kg: float


@dataclass(frozen=True)
class TimedBatch:
    """One oven batch placed in time.

    Parameters
    ----------
    shift, oven : str
        Keys.
    batch : str
        Batch id, unique in the schedule, e.g. ``mon-early/rack-oven-1/03``.
    load : str
        Batch-load key of the plan.
    setting : str
        Oven air setting.
    load_start, cook_start, cook_end, unload_end : float
        Times from the start of the shift [min]; the oven is busy from
        ``load_start`` to ``unload_end``.
    contents : tuple of TraysOf
        Products in the batch, sorted by product key.
    """

    shift: str
    oven: str
    batch: str
    load: str
    setting: str
    load_start: float
    cook_start: float
    cook_end: float
    unload_end: float
    contents: tuple[TraysOf, ...]

    @property
    def kg(self) -> float:
        """kg in the batch [kg]."""
        return sum(c.kg for c in self.contents)

    @property
    def cook_min(self) -> float:
        """Cook minutes [min]."""
        return self.cook_end - self.cook_start


@dataclass(frozen=True)
class Changeover:
    """A change of air setting on an oven, or of run on a tunnel.

    Parameters
    ----------
    shift, machine : str
        Keys.
    start, end : float
        Times from the start of the shift [min].
    before, after : str
        What ran before and what runs after (oven setting, or a tunnel's
        ``product @ setting``).
    """

    shift: str
    machine: str
    start: float
    end: float
    before: str
    after: str


@dataclass(frozen=True)
class Stop:
    """A planned stop placed in time.

    Parameters
    ----------
    shift, machine : str
        Keys (``machine`` is the machine the stop is placed on; a stop of
        every machine appears once per machine).
    start, end : float
        Times from the start of the shift [min].
    reason : str
        Text from the scenario.
    """

    shift: str
    machine: str
    start: float
    end: float
    reason: str


@dataclass(frozen=True)
class BeltPiece:
    """One constant-speed piece of a tunnel's belt-speed profile.

    Parameters
    ----------
    start, end : float
        Times from the start of the shift [min].
    speed_m_per_min : float
        Belt speed [m/min].
    """

    start: float
    end: float
    speed_m_per_min: float


@dataclass(frozen=True)
class SettingSpan:
    """The tunnel's air setting over an interval.

    Parameters
    ----------
    start, end : float
        Times from the start of the shift [min].
    setting : str
        Tunnel air-setting key.
    """

    start: float
    end: float
    setting: str


@dataclass(frozen=True)
class Feed:
    """One batch's product going onto a tunnel belt at one loading.

    Parameters
    ----------
    shift, tunnel, batch : str
        Keys; ``batch`` is the :attr:`TimedBatch.batch` id it comes from.
    product, oven, oven_setting, tunnel_setting, loading : str
        Keys of the route.
    start, end : float
        First and last piece onto the belt, from the start of the shift [min].
    kg : float
        kg fed [kg] (whole trays of the batch).
    trays : int
        Trays of the batch fed here [-].
    required_residence_min : float
        Residence the chill (or freeze) rule needs for this product,
        tunnel setting and loading [min].
    last_exit : float
        Time the last piece leaves the belt, from the start of this shift
        [min]; later than the shift's length when it carries into the next.
    """

    shift: str
    tunnel: str
    batch: str
    product: str
    oven: str
    oven_setting: str
    tunnel_setting: str
    loading: str
    start: float
    end: float
    kg: float
    trays: int
    required_residence_min: float
    last_exit: float


@dataclass(frozen=True)
class TunnelTimeline:
    """What one tunnel does in one shift.

    Parameters
    ----------
    shift, tunnel : str
        Keys.
    length_m : float
        Belt length in the cold zone [m].
    belt : tuple of BeltPiece
        The speed profile, contiguous pieces in time order; before the first
        feed and after the belt empties the belt runs at the speed it needs
        next (or last had).
    settings : tuple of SettingSpan
        Air setting over the shift, in time order.
    feeds : tuple of Feed
        Feed segments in time order (they never overlap).
    carried_in_kg, carried_out_kg : float
        kg on the belt at the start of the shift (from the previous one) and
        at its end (into the next one; shifts back to back only) [kg].
    """

    shift: str
    tunnel: str
    length_m: float
    belt: tuple[BeltPiece, ...]
    settings: tuple[SettingSpan, ...]
    feeds: tuple[Feed, ...]
    carried_in_kg: float = 0.0
    carried_out_kg: float = 0.0

    def speed_at(self, t: float) -> float:
        """Belt speed at time ``t`` from the start of the shift [m/min] (nan outside)."""
        for p in self.belt:
            if p.start <= t < p.end:
                return p.speed_m_per_min
        return math.nan


@dataclass(frozen=True)
class Unplaced:
    """Planned kg the schedule could not place.

    Parameters
    ----------
    shift, machine : str
        Keys (the oven of the batch).
    load : str
        Batch-load key.
    kg : float
        kg not placed [kg].
    rule : str
        Rule that stopped it, one of :data:`RULES`.
    detail : str
        One line: by how much and what would make it fit.
    """

    shift: str
    machine: str
    load: str
    kg: float
    rule: str
    detail: str


@dataclass(frozen=True)
class ShiftSchedule:
    """The schedule of one shift.

    Parameters
    ----------
    shift : str
        Shift key.
    length_min : float
        Length of the shift [min].
    batches, changeovers, stops : tuple
        Oven batches (by oven, in time order), changeovers and stops.
    tunnels : tuple of TunnelTimeline
        One per tunnel, in plant order.
    unplaced : tuple of Unplaced
        Planned kg not placed.
    """

    shift: str
    length_min: float
    batches: tuple[TimedBatch, ...]
    changeovers: tuple[Changeover, ...]
    stops: tuple[Stop, ...]
    tunnels: tuple[TunnelTimeline, ...]
    unplaced: tuple[Unplaced, ...] = ()

    @property
    def kg(self) -> float:
        """kg fed onto the belts in this shift [kg]."""
        return sum(f.kg for t in self.tunnels for f in t.feeds)


@dataclass(frozen=True)
class Schedule:
    """A timed schedule of every shift of a plan.

    Parameters
    ----------
    shifts : tuple of ShiftSchedule
        In horizon order.
    back_to_back : bool
        Shifts run back to back: belts may carry pieces into the next shift
        (never past the last one).
    notes : tuple of str
        How the rules were kept (for example which wait the chill covers).
    """

    shifts: tuple[ShiftSchedule, ...]
    back_to_back: bool = False
    notes: tuple[str, ...] = ()

    @property
    def total_kg(self) -> float:
        """kg fed onto the belts over the horizon [kg]."""
        return sum(s.kg for s in self.shifts)

    @property
    def feeds(self) -> tuple[Feed, ...]:
        """Every feed segment, shift by shift."""
        return tuple(f for s in self.shifts for t in s.tunnels for f in t.feeds)

    @property
    def batches(self) -> tuple[TimedBatch, ...]:
        """Every batch, shift by shift."""
        return tuple(b for s in self.shifts for b in s.batches)

    @property
    def unplaced(self) -> tuple[Unplaced, ...]:
        """Every planned item not placed."""
        return tuple(u for s in self.shifts for u in s.unplaced)

    def kg_by_product(self) -> dict[str, float]:
        """kg fed per product over the horizon [kg]."""
        out: dict[str, float] = {}
        for f in self.feeds:
            out[f.product] = out.get(f.product, 0.0) + f.kg
        return dict(sorted(out.items()))


def _row(shift: str, machine: str, kind: str, start: float, end: float, **kw) -> dict:
    row = dict.fromkeys(SCHEDULE_COLUMNS)
    row.update(shift=shift, machine=machine, kind=kind, start_min=start, end_min=end)
    row.update(kw)
    return row


def schedule_table(schedule: Schedule) -> pd.DataFrame:
    """The schedule as one table, one row per timed item.

    Rows per shift: ``batch`` (one per oven batch, ending at its unload end;
    ``product``, ``trays`` and ``kg`` list every product, ``+``-joined, with
    ``kg`` the batch total), ``changeover``, ``stop``, ``feed`` (one per
    feed segment, with the ``batch`` id it comes from and the lowest belt
    speed while it went on) and ``belt`` (one per constant-speed piece of a
    tunnel's profile). Sorted by shift (horizon order), machine, start, kind.

    Parameters
    ----------
    schedule : Schedule
        The schedule.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`SCHEDULE_COLUMNS`; times [min] from the start of the
        shift, kg [kg], belt speed [m/min].
    """
    rows: list[dict] = []
    order = {s.shift: i for i, s in enumerate(schedule.shifts)}
    for sh in schedule.shifts:
        s = sh.shift
        for b in sh.batches:
            rows.append(
                _row(
                    s,
                    b.oven,
                    "batch",
                    b.load_start,
                    b.unload_end,
                    batch=b.batch,
                    product="+".join(c.product for c in b.contents),
                    trays="+".join(str(c.trays) for c in b.contents),
                    kg=b.kg,
                    oven_setting=b.setting,
                )
            )
        for c in sh.changeovers:
            rows.append(_row(s, c.machine, "changeover", c.start, c.end, product=c.after))
        for st in sh.stops:
            rows.append(_row(s, st.machine, "stop", st.start, st.end, product=st.reason))
        for tl in sh.tunnels:
            for f in tl.feeds:
                speeds = [p.speed_m_per_min for p in tl.belt if p.end > f.start and p.start < f.end]
                rows.append(
                    _row(
                        s,
                        tl.tunnel,
                        "feed",
                        f.start,
                        f.end,
                        batch=f.batch,
                        product=f.product,
                        trays=str(f.trays),
                        kg=f.kg,
                        oven_setting=f.oven_setting,
                        tunnel_setting=f.tunnel_setting,
                        loading=f.loading,
                        belt_speed_m_per_min=min(speeds) if speeds else math.nan,
                    )
                )
            for p in tl.belt:
                setting = next(
                    (x.setting for x in tl.settings if x.start <= p.start < x.end),
                    tl.settings[-1].setting if tl.settings else None,
                )
                rows.append(
                    _row(
                        s,
                        tl.tunnel,
                        "belt",
                        p.start,
                        p.end,
                        tunnel_setting=setting,
                        belt_speed_m_per_min=p.speed_m_per_min,
                    )
                )
    df = pd.DataFrame(rows, columns=list(SCHEDULE_COLUMNS))
    if df.empty:
        return df
    df["_o"] = df["shift"].map(order)
    df["_k"] = df["kind"].map({k: i for i, k in enumerate(ROW_KINDS)})
    df = df.sort_values(["_o", "machine", "start_min", "_k"], kind="stable")
    return df.drop(columns=["_o", "_k"]).reset_index(drop=True)
