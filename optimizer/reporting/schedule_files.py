"""What the timed schedule becomes on paper: tables, JSON, timeline bars, floor sheets.

Everything here is a function of a :class:`optimizer.planning.schedule.Schedule`
(and, for the floor sheet, the plan's rules table), so it can be tested with
hand-built schedules:

:func:`schedule_tables`
    ``schedule`` (the columns of :data:`optimizer.planning.schedule.SCHEDULE_COLUMNS`,
    one row per timed item: ``schedule.csv`` and a sheet of ``plan.xlsx``)
    and ``unplaced`` (planned kg the schedule could not place, and why).
:func:`schedule_json`
    The same rows for ``plan.json``, with the schedule's notes.
:func:`schedule_timelines`
    Bars per machine and shift for :func:`optimizer.reporting.html.timeline_figure`:
    the report's timeline is the schedule itself.
:func:`floor_sheet_html`
    A printable page per shift and machine, to be read at the oven and at the
    tunnel: batch by batch (start, trays of each product, setting, cook
    minutes, target core temperature and its rule) and, for a tunnel, start
    times, belt speeds, loading and product, with where to probe and the
    food-safety caution.

Rounding on the floor sheet always errs on the safe side: cook and chill
minutes are rounded up to the whole minute, belt speeds down to the
hundredth of a m/min (a slower belt keeps every piece in the cold longer),
and start times to the nearest whole minute. The exact values stay in
``schedule.csv``.

Units: minutes [min] from the start of the shift, kg [kg], belt speed [m/min].
"""

from __future__ import annotations

import html
import math
from collections.abc import Mapping
from typing import Any

import pandas as pd

from optimizer.planning import rounding
from optimizer.planning.schedule import Schedule, ShiftSchedule, TunnelTimeline, schedule_table
from optimizer.reporting.export import table_records
from optimizer.reporting.html import SAFETY_CAUTION, TimelineBar

__all__ = [
    "BELT_SPEED_STEP",
    "UNPLACED_COLUMNS",
    "belt_speed_down",
    "clock",
    "floor_sheet_html",
    "minutes_up",
    "schedule_json",
    "schedule_tables",
    "schedule_timelines",
    "start_minute",
]

BELT_SPEED_STEP = 10.0**-rounding.SPEED_DECIMALS
"""Resolution of belt speeds on the floor sheet [m/min] (rounded down to it)."""

UNPLACED_COLUMNS = ("shift", "machine", "load", "kg", "rule", "detail")
"""Columns of the ``unplaced`` table."""


def minutes_up(minutes: float) -> int:
    """Minutes rounded up to the whole minute, for cook and chill times [min].

    :func:`optimizer.planning.rounding.minutes_up` at whole minutes, the one
    rule the report, the terminal and this sheet share: strict, so the shown
    minute is never below the exact one (12.000000000001 min shows as 13).

    Parameters
    ----------
    minutes : float
        Exact minutes [min], finite and non-negative.

    Returns
    -------
    int
        The smallest whole number of minutes not below ``minutes``.
    """
    return int(rounding.minutes_up(minutes, 0))


def belt_speed_down(speed: float, step: float = BELT_SPEED_STEP) -> float:
    """Belt speed rounded down to ``step``, never faster than planned [m/min].

    :func:`optimizer.planning.rounding.speed_down`, strict: never above ``speed``.

    Parameters
    ----------
    speed : float
        Exact belt speed [m/min], positive.
    step : float
        Resolution [m/min], a power of ten (0.01, 0.1, 1).

    Returns
    -------
    float
        The largest multiple of ``step`` not above ``speed``.
    """
    decimals = round(-math.log10(step))
    if not math.isclose(10.0**-decimals, step):
        raise ValueError(f"step: must be a power of ten such as 0.01, got {step!r}")
    return rounding.speed_down(speed, decimals)


def start_minute(minutes: float) -> int:
    """A start time rounded to the nearest whole minute (halves up) [min]."""
    return math.floor(minutes + 0.5)


def clock(minutes: float) -> str:
    """Minutes from the start of the shift as ``h:mm`` (e.g. ``1:35`` for 95 min)."""
    whole = start_minute(minutes)
    return f"{whole // 60}:{whole % 60:02d}"


# ---------------------------------------------------------------------------
# Tables and JSON
# ---------------------------------------------------------------------------


def unplaced_table(schedule: Schedule) -> pd.DataFrame:
    """Planned kg the schedule could not place, one row per item.

    Parameters
    ----------
    schedule : Schedule
        The schedule.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`UNPLACED_COLUMNS`; ``kg`` [kg].
    """
    rows = [
        {
            "shift": u.shift,
            "machine": u.machine,
            "load": u.load,
            "kg": u.kg,
            "rule": u.rule,
            "detail": u.detail,
        }
        for u in schedule.unplaced
    ]
    return pd.DataFrame(rows, columns=list(UNPLACED_COLUMNS))


def schedule_tables(schedule: Schedule) -> dict[str, pd.DataFrame]:
    """The schedule's exported tables, by file stem.

    Parameters
    ----------
    schedule : Schedule
        The schedule.

    Returns
    -------
    dict of str to pandas.DataFrame
        ``schedule`` (:func:`optimizer.planning.schedule.schedule_table`) and,
        when anything was left out, ``unplaced`` (:func:`unplaced_table`).
    """
    tables = {"schedule": schedule_table(schedule)}
    if schedule.unplaced:
        tables["unplaced"] = unplaced_table(schedule)
    return tables


def schedule_json(schedule: Schedule) -> dict[str, Any]:
    """The schedule for ``plan.json``: the rows of ``schedule.csv`` and its notes.

    Parameters
    ----------
    schedule : Schedule
        The schedule.

    Returns
    -------
    dict
        ``columns`` (the table's columns), ``rows`` (one record per timed
        item, as in ``schedule.csv``), ``unplaced`` (records), ``total_kg``
        [kg], ``back_to_back`` and ``notes``.
    """
    table = schedule_table(schedule)
    return {
        "columns": list(table.columns),
        "rows": table_records(table),
        "unplaced": table_records(unplaced_table(schedule)),
        "total_kg": schedule.total_kg,
        "back_to_back": schedule.back_to_back,
        "notes": list(schedule.notes),
    }


# ---------------------------------------------------------------------------
# Timeline bars
# ---------------------------------------------------------------------------


def _batch_group(contents: tuple) -> str:
    return " + ".join(c.product for c in contents) if contents else "empty"


def _tunnel_bars(tl: TunnelTimeline) -> list[TimelineBar]:
    bars: list[TimelineBar] = []
    for f in tl.feeds:
        speeds = [p.speed_m_per_min for p in tl.belt if p.end > f.start and p.start < f.end]
        label = f"{min(speeds):.2f} m/min" if speeds else ""
        bars.append(TimelineBar(tl.tunnel, f.start, f.end, label, f.product))
    if tl.feeds:
        fed_until = max(f.end for f in tl.feeds)
        clears = max(f.last_exit for f in tl.feeds)
        if clears > fed_until:
            bars.append(TimelineBar(tl.tunnel, fed_until, clears, "", "", "drain"))
    return bars


def shift_bars(shift: ShiftSchedule) -> list[TimelineBar]:
    """Timeline bars of one shift of the schedule.

    Ovens: a hatched bar for loading (load start to cook start) and for
    unloading (cook end to unload end), a solid bar for the cook coloured by
    what the batch holds, hatched bars for changeovers and stops. Tunnels: a
    solid bar per feed segment coloured by product and labelled with the belt
    speed, and a light bar from the last feed until the last piece leaves.

    Parameters
    ----------
    shift : ShiftSchedule
        One shift of the schedule.

    Returns
    -------
    list of TimelineBar
        In machine and time order.
    """
    bars: list[TimelineBar] = []
    for b in sorted(shift.batches, key=lambda b: (b.oven, b.load_start)):
        if b.cook_start > b.load_start:
            bars.append(TimelineBar(b.oven, b.load_start, b.cook_start, kind="setup"))
        bars.append(
            TimelineBar(
                b.oven,
                b.cook_start,
                b.cook_end,
                b.batch.rsplit("/", 1)[-1],
                _batch_group(b.contents),
            )
        )
        if b.unload_end > b.cook_end:
            bars.append(TimelineBar(b.oven, b.cook_end, b.unload_end, kind="setup"))
    for c in shift.changeovers:
        bars.append(TimelineBar(c.machine, c.start, c.end, kind="setup"))
    for s in shift.stops:
        bars.append(TimelineBar(s.machine, s.start, s.end, s.reason, "", "stop"))
    for tl in shift.tunnels:
        bars.extend(_tunnel_bars(tl))
    return bars


def schedule_timelines(schedule: Schedule) -> dict[str, list[TimelineBar]]:
    """Timeline bars of every shift, by shift key (see :func:`shift_bars`)."""
    return {s.shift: shift_bars(s) for s in schedule.shifts}


# ---------------------------------------------------------------------------
# Floor sheet
# ---------------------------------------------------------------------------

PROBE_OVEN = (
    "Where to probe: at unload, a calibrated probe tip in the geometric centre of the "
    "thickest piece, on the tray at the slowest-heating spot of the load (usually the "
    "middle of the rack, away from the fans; common practice). Record the reading; "
    "a batch below its target is not released."
)
PROBE_TUNNEL = (
    "Where to probe: at the belt exit, a calibrated probe tip in the centre of the "
    "thickest piece, from the middle of the belt width and the most densely loaded "
    "part (common practice). Record the reading against the chill limit."
)

_FLOOR_CSS = """
* { box-sizing: border-box; }
body { margin: 0; color: #111; font: 13px/1.35 system-ui, Arial, sans-serif; }
main { max-width: 60rem; margin: 0 auto; padding: .8rem; }
section.sheet { break-after: page; page-break-after: always; margin-bottom: 2rem; }
section.sheet:last-of-type { break-after: auto; page-break-after: auto; }
h1 { font-size: 1.3rem; margin: 0 0 .2rem; }
h2 { font-size: 1.05rem; margin: .8rem 0 .3rem; }
p { margin: .3rem 0; }
.sub { color: #444; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; width: 100%; font-size: 12.5px; }
th, td { border: 1px solid #777; padding: .25rem .35rem; text-align: left;
         vertical-align: top; }
th { background: #eee; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.tick { min-width: 4.5rem; }
.probe { border-left: 4px solid #1d6a72; padding: .3rem .5rem; background: #f3f5f6; }
.caution { border: 2px solid #8a4b00; padding: .35rem .55rem; margin-top: .6rem;
           font-size: 11.5px; }
.caution ul { margin: .1rem 0; padding-left: 1.1rem; }
@media print {
  body { font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  .scroll { overflow: visible; }
  tr { break-inside: avoid; page-break-inside: avoid; }
}
"""


def _cell(text: Any, *, num: bool = False, css: str = "") -> str:
    cls = " ".join(x for x in ("num" if num else "", css) if x)
    attr = f' class="{cls}"' if cls else ""
    return f"<td{attr}>{html.escape(str(text))}</td>"


def _table(name: str, head: list[str], rows: list[str], empty: str) -> str:
    th = "".join(f"<th>{html.escape(h)}</th>" for h in head)
    body = "".join(rows) or f'<tr><td colspan="{len(head)}">{html.escape(empty)}</td></tr>'
    return (
        f'<div class="scroll"><table data-table="{html.escape(name, quote=True)}">'
        f"<thead><tr>{th}</tr></thead><tbody>{body}</tbody></table></div>"
    )


def _at(minutes: float) -> str:
    return f"{start_minute(minutes)} ({clock(minutes)})"


def _requirement(rules: Mapping[str, tuple[str, str]], product: str) -> str:
    rule, text = rules.get(product, ("", ""))
    if not rule and not text:
        return "see the food-safety plan"
    return f"{text} [{rule}]" if rule else text


def _rule_lookup(rules: pd.DataFrame | None, kind: str) -> dict[str, tuple[str, str]]:
    if rules is None or rules.empty:
        return {}
    return {
        str(r["product"]): (str(r.get(f"{kind}_rule", "")), str(r.get(f"{kind}_requirement", "")))
        for _, r in rules.iterrows()
    }


def _oven_sheet(shift: ShiftSchedule, oven: str, cook: Mapping[str, tuple[str, str]]) -> str:
    items: list[tuple[float, int, str]] = []
    for b in (b for b in shift.batches if b.oven == oven):
        trays = "; ".join(f"{c.trays} × {c.product}" for c in b.contents)
        targets = "; ".join(f"{c.product}: {_requirement(cook, c.product)}" for c in b.contents)
        row = (
            "<tr>"
            + _cell(b.batch.rsplit("/", 1)[-1])
            + _cell(_at(b.load_start), num=True)
            + _cell(trays)
            + _cell(b.setting)
            + _cell(minutes_up(b.cook_min), num=True)
            + _cell(f"{b.kg:,.0f}", num=True)
            + _cell(targets)
            + _cell("", css="tick")
            + "</tr>"
        )
        items.append((b.load_start, 1, row))
    for c in (c for c in shift.changeovers if c.machine == oven):
        text = f"change {c.before} → {c.after}: {minutes_up(c.end - c.start)} min"
        items.append((c.start, 0, _note_row(c.start, text)))
    for s in (s for s in shift.stops if s.machine == oven):
        text = f"stop: {s.reason}, {minutes_up(s.end - s.start)} min"
        items.append((s.start, 0, _note_row(s.start, text)))
    rows = [r for _, _, r in sorted(items, key=lambda x: (x[0], x[1]))]
    head = [
        "batch",
        "load at [min (h:mm)]",
        "trays",
        "setting",
        "cook [min, at least]",
        "kg",
        "target core temperature [rule]",
        "core °C read / initials",
    ]
    return (
        _table(f"floor-{shift.shift}-{oven}", head, rows, "no batches in this shift")
        + f'<p class="probe">{html.escape(PROBE_OVEN)}</p>'
    )


def _note_row(start: float, text: str) -> str:
    return (
        '<tr class="between">'
        + _cell("")
        + _cell(_at(start), num=True)
        + f'<td colspan="6">{html.escape(text)}</td></tr>'
    )


def _tunnel_sheet(tl: TunnelTimeline, chill: Mapping[str, tuple[str, str]]) -> str:
    setting_at = {
        p: next((s.setting for s in tl.settings if s.start <= p.start < s.end), "") for p in tl.belt
    }
    belt_rows = [
        "<tr>"
        + _cell(_at(p.start), num=True)
        + _cell(_at(p.end), num=True)
        + _cell(f"{belt_speed_down(p.speed_m_per_min):.2f}", num=True)
        + _cell(setting_at[p])
        + "</tr>"
        for p in tl.belt
    ]
    feed_rows = []
    for f in tl.feeds:
        speeds = [p.speed_m_per_min for p in tl.belt if p.end > f.start and p.start < f.end]
        speed = f"{belt_speed_down(min(speeds)):.2f}" if speeds else "–"
        feed_rows.append(
            "<tr>"
            + _cell(_at(f.start), num=True)
            + _cell(f.batch.rsplit("/", 1)[-1] + f" ({f.oven})")
            + _cell(f.product)
            + _cell(f"{f.trays} trays, {f.kg:,.0f} kg")
            + _cell(f.loading)
            + _cell(speed, num=True)
            + _cell(minutes_up(f.required_residence_min), num=True)
            + _cell(_requirement(chill, f.product))
            + _cell("", css="tick")
            + "</tr>"
        )
    carry = ""
    if tl.carried_in_kg > 0:
        carry += f"<p>On the belt from the previous shift: {tl.carried_in_kg:,.0f} kg.</p>"
    if tl.carried_out_kg > 0:
        carry += (
            f"<p>Still on the belt at the end of the shift, into the next one: "
            f"{tl.carried_out_kg:,.0f} kg (keep the belt speed until it has left).</p>"
        )
    return (
        "<h2>Belt speed and air setting</h2>"
        + _table(
            f"floor-{tl.shift}-{tl.tunnel}-belt",
            ["from [min (h:mm)]", "to [min (h:mm)]", "belt speed [m/min, at most]", "air setting"],
            belt_rows,
            "the belt does not run in this shift",
        )
        + "<h2>Feed onto the belt</h2>"
        + _table(
            f"floor-{tl.shift}-{tl.tunnel}-feed",
            [
                "start [min (h:mm)]",
                "batch (oven)",
                "product",
                "amount",
                "loading",
                "belt [m/min]",
                "chill on belt [min, at least]",
                "chill limit [rule]",
                "exit core °C / initials",
            ],
            feed_rows,
            "nothing is fed in this shift",
        )
        + carry
        + f'<p class="probe">{html.escape(PROBE_TUNNEL)}</p>'
    )


def floor_sheet_html(
    schedule: Schedule,
    rules: pd.DataFrame | None = None,
    *,
    plant: str = "",
    made: str = "",
) -> str:
    """Printable floor sheets: one page per shift and machine.

    Parameters
    ----------
    schedule : Schedule
        The timed schedule.
    rules : pandas.DataFrame or None
        The plan's rules table (columns ``product``, ``cook_rule``,
        ``cook_requirement``, ``chill_rule``, ``chill_requirement``), for the
        target core temperature and chill limit with the rule's name.
    plant : str
        Plant name for the page headings.
    made : str
        When the plan was made (shown on every page).

    Returns
    -------
    str
        A self-contained HTML page; each (shift, machine) section starts a
        new printed page. Cook and chill minutes are rounded up, belt speeds
        down, start times to the nearest minute.
    """
    cook = _rule_lookup(rules, "cook")
    chill = _rule_lookup(rules, "chill")
    caution = "".join(f"<li>{html.escape(c)}</li>" for c in SAFETY_CAUTION)
    caution_box = f'<div class="caution"><strong>Food safety</strong><ul>{caution}</ul></div>'
    rounding = (
        "Times are minutes from the start of the shift (h:mm in brackets), rounded to the "
        "minute; cook and chill minutes are rounded up and belt speeds down, so the "
        "sheet never asks for less than the plan."
    )
    margins = (
        sorted(set(rules["margin"].astype(str)))
        if rules is not None and "margin" in rules.columns
        else []
    )
    if margins:
        rounding += (
            f" Targets are shown as the rules state them; the minutes were {'; '.join(margins)}."
        )
    pages = []
    for sh in schedule.shifts:
        ovens = list(dict.fromkeys(b.oven for b in sh.batches))
        ovens += [
            m
            for m in dict.fromkeys(x.machine for x in (*sh.changeovers, *sh.stops))
            if m not in ovens and m not in {t.tunnel for t in sh.tunnels}
        ]
        parts = [(oven, _oven_sheet(sh, oven, cook)) for oven in ovens]
        parts += [(tl.tunnel, _tunnel_sheet(tl, chill)) for tl in sh.tunnels]
        for machine, body in parts:
            title = f"{sh.shift} · {machine}"
            sub = " · ".join(x for x in (plant, f"shift of {sh.length_min:.0f} min", made) if x)
            pages.append(
                f'<section class="sheet" data-sheet="{html.escape(title, quote=True)}">'
                f'<h1>{html.escape(title)}</h1><p class="sub">{html.escape(sub)}</p>'
                f"<p>{html.escape(rounding)}</p>{body}{caution_box}</section>"
            )
    if not pages:
        pages.append('<section class="sheet"><h1>Nothing is scheduled.</h1></section>')
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>Floor sheets — {html.escape(plant)}</title><style>{_FLOOR_CSS}</style>"
        "</head><body><main>" + "\n".join(pages) + "</main></body></html>\n"
    )
