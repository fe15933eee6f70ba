"""Self-contained HTML reports with embedded plots.

A report is one HTML file with no external assets: the style sheet is inline
and every plot is a PNG embedded as a ``data:`` URI, so the file can be
mailed, opened on a phone or printed as it is. The page uses a single
responsive column (tables scroll sideways on narrow screens) and a print
style sheet that keeps tables and plots whole on a page.

Tables carry their exact values: each cell shows a rounded, readable number
and keeps the full-precision value in a ``data-value`` attribute, and each
table has a ``data-table`` name equal to the name of the CSV file exported
beside the report. A reader (or a test) can therefore check every figure in
the report against the exported tables.

Building blocks
---------------
:class:`HtmlReport`
    Ordered sections of headings, paragraphs, key-value lists, tables,
    figures and notes, rendered to one HTML string.
:func:`temperature_figure`
    Core and surface temperature against time through oven and tunnel, with
    stage boundaries, rule targets and time windows drawn.
:func:`timeline_figure`
    Bars per machine over a shift (batches on ovens, runs on tunnels).
"""

from __future__ import annotations

import base64
import html
import io
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from optimizer.dwell.histories import CurveSet
from optimizer.planning.rounding import safe_rounding
from optimizer.reporting.cells import (
    COLUMN_LABELS,
    display_decimals,
    exact_text,
    format_cell,
    is_missing,
    is_number,
)

__all__ = [
    "ASSUMPTION_LABELS",
    "HtmlReport",
    "RunInfo",
    "TimelineBar",
    "assumption_cautions",
    "figure_png",
    "plan_report",
    "shift_timelines",
    "temperature_figure",
    "timeline_figure",
    "utilisation_figure",
]

# Our own plain palette: dark ink, one blue-green accent, warm for hot, cool for cold.
INK = "#22262a"
MUTED = "#5f6870"
ACCENT = "#1d6a72"
CORE_COLOUR = "#9c2f1c"
SURFACE_COLOUR = "#d08a25"
AIR_COLOUR = "#8a96a0"
RULE_COLOUR = "#2d5f9a"
BAR_COLOURS = (
    "#1d6a72",
    "#b5651d",
    "#5b7f2a",
    "#7a4f8f",
    "#a33b4f",
    "#3f6fb0",
    "#8c7a2b",
    "#4b8c7c",
    "#6e5a48",
    "#9a6fb5",
)

_CSS = """
:root { --ink: #22262a; --muted: #5f6870; --accent: #1d6a72; --line: #d5d9dc;
        --soft: #f3f5f6; --warn: #8a4b00; --warnbg: #fff6e5; }
* { box-sizing: border-box; }
html { -webkit-text-size-adjust: 100%; }
body { margin: 0; color: var(--ink); background: #fff;
       font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, Arial, sans-serif; }
main { max-width: 62rem; margin: 0 auto; padding: 1rem 1rem 3rem; }
header.top { border-bottom: 3px solid var(--accent); margin-bottom: 1rem; }
h1 { font-size: 1.55rem; margin: .4rem 0 .2rem; }
h2 { font-size: 1.25rem; margin: 2rem 0 .5rem; padding-bottom: .2rem;
     border-bottom: 1px solid var(--line); }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; }
p { margin: .4rem 0 .7rem; }
.sub { color: var(--muted); margin: 0 0 .6rem; }
nav.toc ol { margin: .2rem 0 1rem; padding-left: 1.3rem; columns: 2 14rem; }
.scroll { overflow-x: auto; margin: .4rem 0 1rem; }
table { border-collapse: collapse; font-size: .9rem; min-width: 50%; }
caption { text-align: left; font-weight: 600; padding: .2rem 0 .35rem; }
th, td { padding: .28rem .55rem; border-bottom: 1px solid var(--line);
         text-align: left; vertical-align: top; }
th { background: var(--soft); font-weight: 600; white-space: nowrap; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.empty td { color: var(--muted); font-style: italic; }
dl.kv { display: grid; grid-template-columns: max-content 1fr; gap: .2rem 1rem;
        margin: .4rem 0 1rem; }
dl.kv dt { color: var(--muted); }
dl.kv dd { margin: 0; font-weight: 600; }
figure { margin: .6rem 0 1.4rem; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--line); }
figcaption { color: var(--muted); font-size: .88rem; margin-top: .25rem; }
.note { border-left: 4px solid var(--accent); background: var(--soft); padding: .6rem .8rem;
        margin: .6rem 0 1rem; }
.caution { border: 2px solid var(--warn); background: var(--warnbg); padding: .7rem .9rem;
           margin: .8rem 0 1.2rem; }
.caution h2 { border: 0; margin-top: 0; color: var(--warn); }
.caution ul { margin: .2rem 0; padding-left: 1.2rem; }
footer { color: var(--muted); font-size: .85rem; border-top: 1px solid var(--line);
         margin-top: 2rem; padding-top: .6rem; word-break: break-all; }
code { font-size: .88em; }
@media (max-width: 40rem) {
  body { font-size: 14px; }
  main { padding: .6rem .6rem 2rem; }
  dl.kv { grid-template-columns: 1fr; }
  dl.kv dd { margin-bottom: .3rem; }
}
figure.plot { overflow-x: auto; }
@media (max-width: 48rem) {
  /* a plot is never shrunk below the width its smallest text needs: it scrolls */
  figure.plot img { min-width: var(--plot-min-width, 0); max-width: none; width: 100%; }
}
@page { size: A4; margin: 12mm; }
@media print {
  body { font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  nav.toc { display: none; }
  .scroll, figure.plot { overflow: visible; }
  figure.plot img { min-width: 0; max-width: 100%; }
  table { font-size: 7.5pt; width: 100%; }
  th, td { padding: .15rem .25rem; }
  th { white-space: normal; overflow-wrap: anywhere; }
  td { overflow-wrap: anywhere; }
  table, figure, .caution, .note { break-inside: avoid; page-break-inside: avoid; }
  h2, h3 { break-after: avoid; page-break-after: avoid; }
  h2.newpage { break-before: page; page-break-before: always; }
  figure img { border: 0; }
  a { color: inherit; text-decoration: none; }
}
"""


# ---------------------------------------------------------------------------
# Cell formatting
# ---------------------------------------------------------------------------


# ---------------------------------------------------------------------------
# Figures
# ---------------------------------------------------------------------------


FIGURE_DPI = 130
"""Resolution of the plots embedded in reports [dots per inch]."""

MIN_TEXT_PX = 9.0
"""Smallest text a report shows, in CSS pixels; plots keep their text at least this size."""


def smallest_text_px(fig: Figure, dpi: float = FIGURE_DPI) -> float | None:
    """Size of the smallest visible text in a figure, in pixels of its PNG.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure.
    dpi : float
        Resolution it is rendered at [dots per inch].

    Returns
    -------
    float or None
        Font size [px] (points times ``dpi / 72``); None when the figure has
        no text.
    """
    from matplotlib.text import Text

    sizes = [
        t.get_fontsize() for t in fig.findobj(Text) if t.get_visible() and t.get_text().strip()
    ]
    return min(sizes) * dpi / 72.0 if sizes else None


def png_width(png: bytes) -> int:
    """Width of a PNG image [px], read from its header."""
    if png[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("png: not a PNG file")
    return int.from_bytes(png[16:20], "big")


def figure_png(fig: Figure, dpi: int = FIGURE_DPI) -> bytes:
    """Render a matplotlib figure to PNG bytes.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        Figure built without pyplot (no global state, no display needed).
    dpi : int
        Resolution [dots per inch].

    Returns
    -------
    bytes
        The PNG file.
    """
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=dpi, bbox_inches="tight", facecolor="white")
    return buffer.getvalue()


def _style_axes(ax: Any) -> None:
    ax.spines["top"].set_visible(False)
    ax.spines["right"].set_visible(False)
    for side in ("left", "bottom"):
        ax.spines[side].set_color(MUTED)
    ax.tick_params(colors=INK, labelsize=8.5)
    ax.grid(True, color="#e3e6e8", linewidth=0.7)
    ax.set_axisbelow(True)


def temperature_figure(curves: CurveSet) -> Figure:
    """Core and surface temperature against time, with stages and rules drawn.

    Stages are separated by thin vertical lines and named at the top (names
    of short stages are turned upright); each stage's air temperature is a
    dotted line. Each rule is a dashed line at its target over its window,
    with a dot where the core reaches the target; a window that ends within
    the plotted time gets a vertical dotted line, and one that ends far
    beyond it is named in its label instead of stretching the time axis.

    Parameters
    ----------
    curves : CurveSet
        Histories, stage boundaries and rule marks.

    Returns
    -------
    matplotlib.figure.Figure
        The plot (not yet rendered).
    """
    fig = Figure(figsize=(7.4, 3.8))
    ax = fig.add_subplot(1, 1, 1)
    _style_axes(ax)
    t = np.asarray(curves.time_min, dtype=float)
    core = np.asarray(curves.core, dtype=float)
    surface = np.asarray(curves.surface, dtype=float)
    t0 = float(t[0]) if t.size else 0.0
    t_hist = float(t[-1]) if t.size else 1.0
    # show windows that end soon after the history; name the others in their label
    t_end = t_hist
    for rule in curves.rules:
        if rule.deadline is not None and rule.deadline <= 1.5 * t_hist:
            t_end = max(t_end, rule.deadline)
    t_end *= 1.03
    air_labelled = False
    for i, stage in enumerate(curves.stages):
        if stage.air_temperature is not None:
            ax.plot(
                [stage.start, stage.end],
                [stage.air_temperature] * 2,
                color=AIR_COLOUR,
                linewidth=1.0,
                linestyle=(0, (1, 1.5)),
                zorder=1,
                label=None if air_labelled else "air",
            )
            air_labelled = True
        if i > 0:
            ax.axvline(stage.start, color="#b9c0c5", linewidth=0.8, zorder=1)
    ax.plot(t, surface, color=SURFACE_COLOUR, linewidth=1.6, label="surface", zorder=3)
    if curves.mean is not None:
        ax.plot(
            t,
            np.asarray(curves.mean, dtype=float),
            color=MUTED,
            linewidth=1.0,
            label="mass mean",
            zorder=3,
        )
    ax.plot(t, core, color=CORE_COLOUR, linewidth=2.2, label="core", zorder=4)
    for rule in curves.rules:
        x0 = rule.start if rule.start is not None else t0
        inside = rule.deadline is not None and rule.deadline <= t_end
        x1 = rule.deadline if inside else t_end
        ax.plot(
            [x0, x1],
            [rule.temperature] * 2,
            color=RULE_COLOUR,
            linewidth=1.2,
            linestyle="--",
            zorder=2,
        )
        label = rule.label
        if rule.deadline is not None and inside:
            ax.axvline(rule.deadline, color=RULE_COLOUR, linewidth=1.0, linestyle=":", zorder=2)
        elif rule.deadline is not None:
            label = f"{label} (window ends at {rule.deadline:.0f} min)"
        if rule.met_at is not None and math.isfinite(rule.met_at):
            ax.plot(
                [rule.met_at], [rule.temperature], marker="o", color=RULE_COLOUR, ms=4, zorder=5
            )
        ax.annotate(
            label,
            xy=(x0, rule.temperature),
            xytext=(3, 3),
            textcoords="offset points",
            ha="left",
            va="bottom",
            fontsize=7.5,
            color=RULE_COLOUR,
            zorder=6,
        )
    ax.set_xlim(t0, t_end)
    low, high = ax.get_ylim()
    span = max(t_end - t0, 1e-9)
    for stage in curves.stages:
        width = min(stage.end, t_end) - max(stage.start, t0)
        if width <= 0:
            continue
        if width > 0.09 * span:
            ax.text(
                (stage.start + min(stage.end, t_end)) / 2,
                high,
                stage.name,
                ha="center",
                va="bottom",
                fontsize=7.5,
                color=MUTED,
                clip_on=False,
            )
        else:
            ax.text(
                (stage.start + stage.end) / 2,
                high - 0.02 * (high - low),
                stage.name,
                ha="center",
                va="top",
                rotation=90,
                fontsize=7.5,
                color=MUTED,
            )
    ax.set_ylim(low, high)
    ax.set_xlabel("time from oven loading [min]", fontsize=9, color=INK)
    ax.set_ylabel("temperature [°C]", fontsize=9, color=INK)
    ax.set_title(curves.title, fontsize=10, color=INK, loc="left", pad=16)
    ax.legend(fontsize=8, frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    fig.tight_layout()
    return fig


@dataclass(frozen=True)
class TimelineBar:
    """One bar on a machine timeline.

    Parameters
    ----------
    machine : str
        Row the bar sits on (an oven or tunnel name).
    start : float
        Start [min from shift start].
    end : float
        End [min from shift start].
    label : str
        Short text drawn in the bar when it fits.
    group : str
        Colour group (e.g. the product or the air setting); bars of one group
        share a colour.
    kind : str
        ``"work"`` (solid), ``"setup"`` (hatched: load, unload, changeover),
        ``"stop"`` (grey, a planned stop) or ``"drain"`` (light: the belt runs
        on until the last piece has left).
    """

    machine: str
    start: float
    end: float
    label: str = ""
    group: str = ""
    kind: str = "work"


def timeline_figure(
    bars: Sequence[TimelineBar],
    *,
    title: str,
    shift_minutes: float | None = None,
    machines: Sequence[str] | None = None,
) -> Figure:
    """Gantt-like bars per machine over one shift.

    Parameters
    ----------
    bars : sequence of TimelineBar
        Bars to draw.
    title : str
        Figure title (the shift).
    shift_minutes : float or None
        Length of the shift [min], drawn as the right edge.
    machines : sequence of str or None
        Row order (top to bottom); default: order of first appearance.

    Returns
    -------
    matplotlib.figure.Figure
        The plot (not yet rendered).
    """
    rows = list(machines) if machines is not None else list(dict.fromkeys(b.machine for b in bars))
    groups = list(dict.fromkeys(b.group for b in bars if b.group))
    colour = {g: BAR_COLOURS[i % len(BAR_COLOURS)] for i, g in enumerate(groups)}
    height = 0.9 + 0.55 * max(len(rows), 1)
    fig = Figure(figsize=(7.4, height))
    ax = fig.add_subplot(1, 1, 1)
    _style_axes(ax)
    ax.grid(True, axis="x", color="#e3e6e8", linewidth=0.7)
    ax.grid(False, axis="y")
    position = {m: len(rows) - 1 - i for i, m in enumerate(rows)}
    span = max([b.end for b in bars] + [shift_minutes or 0.0, 1.0])
    for bar in bars:
        y = position.get(bar.machine)
        if y is None:
            continue
        width = max(bar.end - bar.start, 0.0)
        face = colour.get(bar.group, ACCENT)
        if bar.kind in ("stop", "drain"):
            ax.barh(
                y,
                width,
                left=bar.start,
                height=0.6 if bar.kind == "stop" else 0.3,
                color="#b9c0c6" if bar.kind == "stop" else "#dde3e6",
                edgecolor=MUTED,
                linewidth=0.5,
            )
        elif bar.kind == "setup":
            ax.barh(
                y,
                width,
                left=bar.start,
                height=0.6,
                color="white",
                edgecolor=MUTED,
                hatch="////",
                linewidth=0.6,
            )
        else:
            ax.barh(
                y, width, left=bar.start, height=0.6, color=face, edgecolor="white", linewidth=0.8
            )
            # label only bars wide enough for the text (about 1.3 % of the span a character)
            if bar.label and width > span * 0.013 * (len(bar.label) + 2):
                ax.text(
                    bar.start + width / 2,
                    y,
                    bar.label,
                    ha="center",
                    va="center",
                    fontsize=7.5,
                    color="white",
                    clip_on=True,
                )
    if shift_minutes:
        ax.axvline(shift_minutes, color=INK, linewidth=1.0)
    ax.set_yticks(range(len(rows)))
    ax.set_yticklabels(list(reversed(rows)), fontsize=8.5)
    ax.set_ylim(-0.6, len(rows) - 0.4)
    ax.set_xlim(0, span * 1.01)
    ax.set_xlabel("minutes from shift start", fontsize=9, color=INK)
    ax.set_title(title, fontsize=10, color=INK, loc="left")
    if groups:
        from matplotlib.patches import Patch

        handles = [Patch(color=colour[g], label=g) for g in groups]
        if any(b.kind == "setup" for b in bars):
            handles.append(
                Patch(facecolor="white", edgecolor=MUTED, hatch="////", label="load/unload/change")
            )
        if any(b.kind == "stop" for b in bars):
            handles.append(Patch(facecolor="#b9c0c6", edgecolor=MUTED, label="planned stop"))
        if any(b.kind == "drain" for b in bars):
            handles.append(Patch(facecolor="#dde3e6", edgecolor=MUTED, label="belt emptying"))
        ax.legend(
            handles=handles,
            fontsize=7.5,
            frameon=False,
            loc="upper left",
            bbox_to_anchor=(1.01, 1.0),
        )
    fig.tight_layout()
    return fig


# ---------------------------------------------------------------------------
# The document
# ---------------------------------------------------------------------------


@dataclass
class _Section:
    title: str
    anchor: str
    parts: list[str] = field(default_factory=list)
    newpage: bool = False


class HtmlReport:
    """An HTML report assembled section by section and rendered to one string.

    Parameters
    ----------
    title : str
        Page title and main heading.
    subtitle : str
        Line under the title (scenario, date).

    Examples
    --------
    >>> report = HtmlReport("Shift plan", "demo plant")
    >>> report.section("Summary")
    >>> report.paragraph("Two ovens, one tunnel.")
    >>> html_text = report.render()
    """

    def __init__(self, title: str, subtitle: str = "") -> None:
        self.title = title
        self.subtitle = subtitle
        self._preface: list[str] = []
        self._sections: list[_Section] = []
        self._footer: list[tuple[str, str]] = []
        self._anchors: set[str] = set()
        self.figure_count = 0
        self.table_names: list[str] = []

    # -- structure ---------------------------------------------------------

    def _anchor(self, text: str) -> str:
        base = "".join(c if c.isalnum() else "-" for c in text.lower()).strip("-") or "s"
        anchor, n = base, 2
        while anchor in self._anchors:
            anchor, n = f"{base}-{n}", n + 1
        self._anchors.add(anchor)
        return anchor

    def section(self, title: str, *, newpage: bool = False) -> None:
        """Start a new top-level section (listed in the contents).

        Parameters
        ----------
        title : str
            Section heading.
        newpage : bool
            Start the section on a new page when printed.
        """
        self._sections.append(_Section(title, self._anchor(title), newpage=newpage))

    def _add(self, fragment: str) -> None:
        if self._sections:
            self._sections[-1].parts.append(fragment)
        else:
            self._preface.append(fragment)

    def heading(self, text: str) -> None:
        """Add a sub-heading inside the current section."""
        self._add(f"<h3>{html.escape(text)}</h3>")

    def paragraph(self, text: str, *, css_class: str | None = None) -> None:
        """Add a paragraph of plain text (escaped)."""
        cls = f' class="{css_class}"' if css_class else ""
        self._add(f"<p{cls}>{html.escape(text)}</p>")

    def note(self, text: str) -> None:
        """Add a highlighted note (plain text, escaped)."""
        self._add(f'<div class="note">{html.escape(text)}</div>')

    def bullets(self, items: Iterable[str]) -> None:
        """Add a bulleted list of plain-text items."""
        lis = "".join(f"<li>{html.escape(i)}</li>" for i in items)
        self._add(f"<ul>{lis}</ul>")

    def caution(self, title: str, items: Iterable[str]) -> None:
        """Add a boxed caution with a heading and a list of points."""
        lis = "".join(f"<li>{html.escape(i)}</li>" for i in items)
        anchor = self._anchor(title)
        self._add(
            f'<section class="caution" id="{anchor}"><h2>{html.escape(title)}</h2>'
            f"<ul>{lis}</ul></section>"
        )

    def key_values(self, pairs: Iterable[tuple[str, Any]]) -> None:
        """Add a two-column list of labels and values."""
        rows = "".join(
            f"<dt>{html.escape(str(k))}</dt><dd>{html.escape(format_cell(v))}</dd>"
            for k, v in pairs
        )
        self._add(f'<dl class="kv">{rows}</dl>')

    def footer(self, label: str, value: str) -> None:
        """Add a line to the page footer (hash, version, time)."""
        self._footer.append((label, value))

    # -- tables ------------------------------------------------------------

    def table(
        self,
        name: str,
        table: pd.DataFrame,
        *,
        caption: str = "",
        labels: Mapping[str, str] | None = None,
        empty_text: str = "nothing planned",
        part: str | None = None,
        percent: Iterable[str] = (),
    ) -> None:
        """Add a table; cells show rounded values and keep exact ones.

        Parameters
        ----------
        name : str
            Table name, written as ``data-table`` (the exported CSV's stem).
        table : pandas.DataFrame
            The table; its index is not shown unless named.
        caption : str
            Caption above the table.
        labels : mapping of str to str, optional
            Column name → header text (the column name is kept in
            ``data-column``).
        empty_text : str
            Text of the single row shown when the table is empty.
        part : str or None
            When a table is shown in several parts (per shift), the part's
            key, written as ``data-part``; the parts together are the table.
        percent : iterable of str
            Columns holding fractions, shown as percentages (the exact
            fraction stays in ``data-value``).
        """
        frame = table.reset_index() if any(n is not None for n in table.index.names) else table
        labels = labels or {}
        as_percent = set(percent)
        columns = [str(c) for c in frame.columns]
        numeric = {
            c: pd.api.types.is_numeric_dtype(frame[c]) and not pd.api.types.is_bool_dtype(frame[c])
            for c in frame.columns
        }
        decimals = {
            c: display_decimals(c, frame[c])
            for c in frame.columns
            if numeric[c] and pd.api.types.is_float_dtype(frame[c])
        }
        num_class = ' class="num"'
        head = "".join(
            f'<th data-column="{html.escape(col, quote=True)}"'
            f"{num_class if numeric[c] else ''}>"
            f"{html.escape(labels.get(col, col))}</th>"
            for c, col in zip(frame.columns, columns, strict=True)
        )
        body_rows = []
        for row in frame.itertuples(index=False, name=None):
            cells = []
            for c, value in zip(frame.columns, row, strict=True):
                if c in as_percent and is_number(value) and not is_missing(value):
                    shown = f"{100 * float(value):.0f} %"
                else:
                    shown = format_cell(value, decimals.get(c, 2), safe_rounding(str(c)))
                is_num = is_number(value) and not is_missing(value)
                cls = ' class="num"' if is_num or numeric[c] else ""
                cells.append(
                    f'<td{cls} data-value="{html.escape(exact_text(value), quote=True)}">'
                    f"{html.escape(shown)}</td>"
                )
            body_rows.append("<tr>" + "".join(cells) + "</tr>")
        if not body_rows:
            body_rows.append(
                f'<tr class="empty"><td colspan="{max(len(columns), 1)}">'
                f"{html.escape(empty_text)}</td></tr>"
            )
        cap = f"<caption>{html.escape(caption)}</caption>" if caption else ""
        self.table_names.append(name)
        part_attr = f' data-part="{html.escape(part, quote=True)}"' if part is not None else ""
        self._add(
            f'<div class="scroll"><table data-table="{html.escape(name, quote=True)}"'
            f"{part_attr}>{cap}"
            f"<thead><tr>{head}</tr></thead><tbody>{''.join(body_rows)}</tbody></table></div>"
        )

    # -- figures -----------------------------------------------------------

    def figure(self, fig: Figure | bytes, *, caption: str, alt: str, name: str = "") -> None:
        """Embed a plot as a PNG ``data:`` URI.

        Parameters
        ----------
        fig : matplotlib.figure.Figure or bytes
            Figure to render, or PNG bytes already rendered.
        caption : str
            Caption under the plot.
        alt : str
            Text alternative for screen readers and when images are off.
        name : str
            Identifier written as ``data-figure``.
        """
        sizing = ""
        if isinstance(fig, Figure):
            png = figure_png(fig, dpi=FIGURE_DPI)
            smallest = smallest_text_px(fig, FIGURE_DPI)
            if smallest is not None:
                # narrowest width [CSS px] at which every text in the plot stays readable
                least = math.ceil(png_width(png) * MIN_TEXT_PX / smallest)
                sizing = f' data-min-font-px="{smallest:.2f}" style="--plot-min-width: {least}px"'
        else:
            png = fig
        data = base64.b64encode(png).decode("ascii")
        self.figure_count += 1
        ident = html.escape(name or f"figure-{self.figure_count}", quote=True)
        self._add(
            f'<figure class="plot" data-figure="{ident}"><img alt="{html.escape(alt, quote=True)}"'
            f'{sizing} src="data:image/png;base64,{data}">'
            f"<figcaption>{html.escape(caption)}</figcaption></figure>"
        )

    # -- output ------------------------------------------------------------

    def render(self) -> str:
        """The complete HTML document.

        Returns
        -------
        str
            A self-contained HTML5 page (inline style, embedded images).
        """
        toc = "".join(
            f'<li><a href="#{s.anchor}">{html.escape(s.title)}</a></li>' for s in self._sections
        )
        sections = []
        for s in self._sections:
            cls = ' class="newpage"' if s.newpage else ""
            sections.append(
                f'<section id="{s.anchor}"><h2{cls}>{html.escape(s.title)}</h2>'
                + "\n".join(s.parts)
                + "</section>"
            )
        foot = "".join(
            f"<div>{html.escape(k)}: <code>{html.escape(v)}</code></div>" for k, v in self._footer
        )
        sub = f'<p class="sub">{html.escape(self.subtitle)}</p>' if self.subtitle else ""
        nav = f'<nav class="toc"><ol>{toc}</ol></nav>' if len(self._sections) > 1 else ""
        return (
            "<!DOCTYPE html>\n"
            '<html lang="en"><head><meta charset="utf-8">'
            '<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<title>{html.escape(self.title)}</title><style>{_CSS}</style></head>"
            f'<body><main><header class="top"><h1>{html.escape(self.title)}</h1>{sub}</header>'
            + "\n".join(self._preface)
            + nav
            + "\n".join(sections)
            + f"<footer>{foot}</footer></main></body></html>\n"
        )


# ---------------------------------------------------------------------------
# The plan report
# ---------------------------------------------------------------------------

SAFETY_CAUTION = (
    "The dwell times, belt speeds and temperature curves in this report are model "
    "estimates for the piece sizes entered in the scenario; they are computed for the "
    "largest piece, and real pieces larger than that are not covered.",
    "Core-temperature, lethality and cooling limits come from the plant's food-safety "
    "plan and the local regulator, not from this tool.",
    "Rule sets shipped with the tool are examples; each names its source below and must "
    "be checked against the codes that apply to the plant before use.",
    "Validate every plan with calibrated probes in the thickest pieces at the coldest "
    "spot of the oven and of the tunnel before it is used in production, and again "
    "whenever a product, a piece size or an air setting changes.",
    "Plan for the largest piece, not the average one.",
)


@dataclass(frozen=True)
class RunInfo:
    """Where a report came from.

    Parameters
    ----------
    scenario_path : str
        Scenario file as given on the command line.
    scenario_sha256 : str
        SHA-256 of the scenario file's bytes.
    tool_version : str
        corepace version.
    generated : str
        Time the report was made (UTC, ISO 8601).
    plant : str
        Plant name from the scenario.
    command : str
        Command line that produced the report.
    resolved_sha256 : str
        SHA-256 of the validated scenario content (after ``extends`` and
        ``--set`` changes), "" when not known.
    """

    scenario_path: str
    scenario_sha256: str
    tool_version: str
    generated: str
    plant: str
    command: str = ""
    resolved_sha256: str = ""


def shift_timelines(result: Any, inputs: Any) -> dict[str, list[TimelineBar]]:
    """Bars per machine for each shift of a plan, in one illustrative order.

    The plan fixes how many batches of each load run on each oven in a shift
    and how many kg each tunnel run carries, not their order inside the
    shift. The timeline lays them out in one plausible order:

    * each oven runs its batches one after another, grouped by air setting
      (the oven's changeover between settings), each batch drawn as its load
      and unload time followed by its cook dwell;
    * each batch's kg go to the tunnel runs that take that product from that
      oven setting (split in proportion to the runs' kg); a tunnel handles
      its runs one after another (its changeover between runs), in the order
      their first batch is unloaded, and never starts a batch's kg before the
      batch is unloaded, so idle gaps show where the belt waits for an oven.

    Bars may run past the end of the shift: the plan balances kg per shift,
    and the last batches of a shift are then chilled at the start of the
    next.

    Parameters
    ----------
    result : optimizer.planning.results.PlanResult
        A plan.
    inputs : optimizer.planning.inputs.PlanInputs
        The inputs it was solved from (changeover minutes).

    Returns
    -------
    dict of str to list of TimelineBar
        Shift key → bars.
    """
    ovens = {o.name: o for o in inputs.ovens}
    tunnels = {t.name: t for t in inputs.tunnels}
    out: dict[str, list[TimelineBar]] = {s: [] for s in result.shifts}
    for shift in result.shifts:
        bars = out[shift]
        # (product, oven, setting) -> list of (unload time [min], kg in that batch)
        unloads: dict[tuple[str, str, str], list[tuple[float, float]]] = {}
        for oven in ovens.values():
            batches = sorted(
                (b for b in result.batches if b.oven == oven.name and b.shift == shift),
                key=lambda b: (b.setting, b.load),
            )
            clock, setting = 0.0, None
            for b in batches:
                if setting is not None and b.setting != setting and oven.changeover_min > 0:
                    bars.append(
                        TimelineBar(oven.name, clock, clock + oven.changeover_min, kind="setup")
                    )
                    clock += oven.changeover_min
                setting = b.setting
                products = " + ".join(c.product for c in b.contents)
                setup = max(b.cycle_min - b.cook_min, 0.0)
                for _ in range(b.batches):
                    # load before the cook, unload after it: half the setup each side
                    if setup > 0:
                        bars.append(TimelineBar(oven.name, clock, clock + setup / 2, kind="setup"))
                        clock += setup / 2
                    bars.append(
                        TimelineBar(oven.name, clock, clock + b.cook_min, b.setting, products)
                    )
                    clock += b.cook_min
                    if setup > 0:
                        bars.append(TimelineBar(oven.name, clock, clock + setup / 2, kind="setup"))
                        clock += setup / 2
                    for c in b.contents:
                        if b.batches > 0 and c.kg > 0:
                            unloads.setdefault((c.product, b.oven, b.setting), []).append(
                                (clock, c.kg / b.batches)
                            )
        shift_runs = [r for r in result.runs if r.shift == shift and r.kg > 0]
        taken: dict[tuple[str, str, str], float] = {}
        for r in shift_runs:
            key = (r.product, r.oven, r.oven_setting)
            taken[key] = taken.get(key, 0.0) + r.kg
        for tunnel in tunnels.values():
            groups: dict[tuple[str, str, str], list[tuple[float, float, Any]]] = {}
            for r in shift_runs:
                if r.tunnel != tunnel.name:
                    continue
                key = (r.product, r.oven, r.oven_setting)
                share = r.kg / taken[key]
                portions = unloads.get(key) or [(0.0, r.kg / share)]
                group = groups.setdefault((r.product, r.tunnel_setting, r.loading), [])
                group.extend((ready, kg * share / r.rate_kg_per_min, r) for ready, kg in portions)
            order = sorted(groups, key=lambda g: (min(p[0] for p in groups[g]), g))
            clock = 0.0
            for i, g in enumerate(order):
                if i > 0 and tunnel.changeover_min > 0:
                    bars.append(
                        TimelineBar(tunnel.name, clock, clock + tunnel.changeover_min, kind="setup")
                    )
                    clock += tunnel.changeover_min
                for ready, minutes, r in sorted(groups[g], key=lambda p: (p[0], p[1])):
                    start = max(clock, ready)
                    label = f"{r.belt_speed_m_per_min:.2f} m/min"
                    previous = bars[-1] if bars else None
                    if (
                        previous is not None
                        and previous.machine == tunnel.name
                        and previous.kind == "work"
                        and previous.group == r.product
                        and previous.label == label
                        and abs(previous.end - start) < 1e-9
                    ):
                        bars[-1] = TimelineBar(
                            tunnel.name, previous.start, start + minutes, label, r.product
                        )
                    else:
                        bars.append(
                            TimelineBar(tunnel.name, start, start + minutes, label, r.product)
                        )
                    clock = start + minutes
    return out


def utilisation_figure(utilisation: pd.DataFrame) -> Figure:
    """Bars of utilisation per machine, one bar per shift.

    Parameters
    ----------
    utilisation : pandas.DataFrame
        Columns ``machine``, ``shift``, ``utilisation`` [-].

    Returns
    -------
    matplotlib.figure.Figure
        The plot.
    """
    machines = list(dict.fromkeys(utilisation["machine"]))
    shifts = list(dict.fromkeys(utilisation["shift"]))
    fig = Figure(figsize=(7.4, 0.9 + 0.45 * max(len(machines), 1)))
    ax = fig.add_subplot(1, 1, 1)
    _style_axes(ax)
    ax.grid(True, axis="x", color="#e3e6e8", linewidth=0.7)
    ax.grid(False, axis="y")
    height = 0.8 / max(len(shifts), 1)
    for j, shift in enumerate(shifts):
        part = utilisation[utilisation["shift"] == shift].set_index("machine")
        ys = [len(machines) - 1 - i + 0.4 - height * (j + 0.5) for i in range(len(machines))]
        values = [100.0 * float(part["utilisation"].get(m, 0.0)) for m in machines]
        ax.barh(
            ys, values, height=height * 0.92, color=BAR_COLOURS[j % len(BAR_COLOURS)], label=shift
        )
    ax.axvline(100.0, color=INK, linewidth=1.0)
    ax.set_yticks([len(machines) - 1 - i for i in range(len(machines))])
    ax.set_yticklabels(machines, fontsize=8.5)
    ax.set_xlim(0, 105)
    ax.set_xlabel("utilisation [% of available minutes]", fontsize=9, color=INK)
    ax.set_title("Machine utilisation per shift", fontsize=10, color=INK, loc="left")
    ax.legend(fontsize=7.5, frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    fig.tight_layout()
    return fig


ASSUMPTION_LABELS = {
    "direction": "if wrong, the dwell",
    "applies_to": "applies to",
    "field": "scenario field",
}
"""Column labels of the assumptions table."""


def assumption_cautions(register: pd.DataFrame | None) -> list[str]:
    """Caution-box lines naming what the register says could shorten a dwell most.

    The products planned for the nominal piece (no largest-piece size) by
    name, and the belt loadings whose h is an estimate, not a calibration.
    """
    if register is None or register.empty:
        return []
    out = []
    named = register.loc[register["topic"] == "largest piece", "applies_to"].tolist()
    if named:
        out.append(
            f"No largest-piece size was given for {', '.join(named)}: their dwells are for "
            "the nominal piece, and larger pieces take longer to cook and chill."
        )
    loads = register.loc[register["topic"] == "loading factor", "applies_to"].tolist()
    if loads:
        out.append(
            f"The loaded-belt heat-transfer coefficient of {', '.join(loads)} is estimated "
            "from the belt coverage, not measured: calibrate it (h_factor) from probe logs "
            "of the loaded belt before relying on the chill times."
        )
    return out


def _kv_number(value: float | None, unit: str, decimals: int = 1) -> str:
    if value is None or not math.isfinite(value):
        return "–"
    return f"{value:,.{decimals}f} {unit}".strip()


def plan_report(
    result: Any,
    inputs: Any,
    tables: Mapping[str, pd.DataFrame],
    *,
    info: RunInfo,
    curves: Sequence[tuple[str, CurveSet, str]] = (),
    methods: Sequence[tuple[str, str]] = (),
    notes: Sequence[str] = (),
) -> str:
    """The HTML report of one plan run.

    Parameters
    ----------
    result : optimizer.planning.results.PlanResult
        The solved plan (or the diagnosis when nothing fits).
    inputs : optimizer.planning.inputs.PlanInputs
        Inputs of the solve (machines, shifts, changeovers).
    tables : mapping of str to pandas.DataFrame
        The exported tables by file stem: at least the planner's
        ``ovens``, ``tunnels``, ``totals``, ``utilisation``,
        ``shadow_prices``, ``slack`` and ``shortfalls``; ``rules``,
        ``dwell_used``, ``dwell_ruled_out`` and ``assumptions`` (the
        register, :func:`optimizer.dwell.assumptions.assumptions_table`)
        when present. Every table shown in the report is one of these
        (per-shift parts of ``ovens`` and ``tunnels``).
    info : RunInfo
        Scenario file, hash, version, time.
    curves : sequence of (product, CurveSet, caption)
        Temperature histories of each planned product at its planned
        settings.
    methods : sequence of (method, source)
        Methods used and their published sources.
    notes : sequence of str
        Extra notes shown under the summary (assumptions, warnings).

    Returns
    -------
    str
        The self-contained HTML page.
    """
    from optimizer.planning.results import ELASTIC_STOPPED, bottleneck

    unit = result.objective_unit
    status = result.status
    report = HtmlReport(
        f"Shift plan — {info.plant}",
        f"Scenario {info.scenario_path} · {len(result.shifts)} shift(s) · made {info.generated}",
    )
    register = tables.get("assumptions")
    report.caution("Food safety", [*SAFETY_CAUTION, *assumption_cautions(register)])

    # -- summary -----------------------------------------------------------
    report.section("Summary")
    bn = bottleneck(result)
    n_shifts = max(len(result.shifts), 1)
    pairs: list[tuple[str, Any]] = [
        ("plan status", status.value.replace("_", " ")),
        ("objective", f"{result.objective.value.replace('_', ' ')}"),
    ]
    if result.objective_value is not None:
        pairs.append(("objective value", _kv_number(result.objective_value, unit)))
    pairs.append(("total through the tunnels", _kv_number(result.total_kg, "kg")))
    pairs.append(("mean per shift", _kv_number(result.total_kg / n_shifts, "kg")))
    if bn is not None:
        pairs.append(("bottleneck", f"{bn.kind} {bn.machine}"))
        pairs.append(
            (
                "its shadow price",
                f"{_kv_number(bn.per_hour, unit)} per extra machine hour ({bn.reason})",
            )
        )
        pairs.append(("its mean utilisation", f"{100 * bn.utilisation:.0f} %"))
    if result.gap is not None:
        pairs.append(("relative gap", f"{100 * result.gap:.3f} %"))
    pairs.append(("solver", result.solver))
    report.key_values(pairs)
    if not status.has_plan:
        proven = not any(m.startswith(ELASTIC_STOPPED) for m in result.messages)
        report.note(
            "No plan meets every order with the machines available. The diagnosis below "
            + (
                "names the smallest shortfalls that would make the orders fit."
                if proven
                else "names shortfalls that would make the orders fit (see the note on "
                "the elastic re-solve)."
            )
            if status.value == "infeasible"
            else f"No plan: {status.value.replace('_', ' ')}."
        )
    for text in [*notes, *result.messages]:
        report.note(text)
    for product, reasons in result.excluded.items():
        report.note(f"{product} cannot be made on this plant: {'; '.join(reasons)}")
    if "totals" in tables:
        report.table(
            "totals",
            tables["totals"],
            caption="kg per product and shift",
            labels={"total": "total kg"},
        )
    if "utilisation" in tables:
        util = tables["utilisation"]
        if not util.empty and status.has_plan:
            report.figure(
                utilisation_figure(util),
                caption="Share of each machine's available minutes used in each shift "
                "(changeovers included).",
                alt="utilisation per machine and shift",
                name="utilisation",
            )
        report.table(
            "utilisation",
            util,
            caption="Utilisation per machine and shift",
            labels=COLUMN_LABELS,
            percent=("utilisation",),
        )
    if "shadow_prices" in tables:
        report.paragraph(
            f"Shadow price: how much the objective would gain ({unit}) from one more hour "
            "on a machine in a shift, with the plan's on/off choices kept and batch counts "
            "free to change; zero means the machine has spare time."
        )
        report.table(
            "shadow_prices",
            tables["shadow_prices"],
            caption=f"Shadow prices of machine time [{unit} per extra hour]",
            labels=COLUMN_LABELS,
            empty_text="not computed",
        )

    # -- assumptions -----------------------------------------------------------
    if register is not None:
        report.section("Assumptions")
        report.paragraph(
            "Every default, estimate and simplification behind the dwell times, with its "
            "value, its source and the way the dwell goes if it is wrong; those that could "
            "shorten a dwell come first. Giving the value in the scenario (the field named) "
            "replaces the assumption."
        )
        report.table(
            "assumptions",
            register,
            caption="Assumptions in force, most dangerous first",
            labels=ASSUMPTION_LABELS,
            empty_text="none: the scenario gives every value the dwell table uses",
        )

    # -- diagnosis -----------------------------------------------------------
    if "shortfalls" in tables and (not tables["shortfalls"].empty or not status.has_plan):
        report.section("What does not fit")
        report.bullets(s.message for s in result.shortfalls)
        report.table(
            "shortfalls",
            tables["shortfalls"],
            caption="Smallest shortfalls (elastic re-solve)",
            empty_text="no diagnosis available",
        )

    # -- per shift -----------------------------------------------------------
    if status.has_plan:
        timelines = shift_timelines(result, inputs)
        machines = [o.name for o in inputs.ovens] + [t.name for t in inputs.tunnels]
        shift_minutes = {s.name: s.minutes for s in inputs.shifts}
        report.section("Plan per shift", newpage=True)
        ovens = tables.get("ovens", pd.DataFrame(columns=["shift"]))
        tunnels = tables.get("tunnels", pd.DataFrame(columns=["shift"]))
        for shift in result.shifts:
            kg = float(tunnels.loc[tunnels["shift"] == shift, "kg"].sum()) if len(tunnels) else 0
            report.heading(f"{shift} — {kg:,.0f} kg")
            report.table(
                "ovens",
                ovens[ovens["shift"] == shift],
                caption=f"Ovens, {shift}: batches of each load",
                labels=COLUMN_LABELS,
                part=shift,
            )
            report.table(
                "tunnels",
                tunnels[tunnels["shift"] == shift],
                caption=f"Tunnels, {shift}: runs with belt speed and loading",
                labels=COLUMN_LABELS,
                part=shift,
            )
            if not timelines.get(shift):
                report.paragraph("Nothing is planned on any machine in this shift.")
                continue
            report.figure(
                timeline_figure(
                    timelines.get(shift, []),
                    title=f"Machine timeline, {shift}",
                    shift_minutes=shift_minutes.get(shift),
                    machines=machines,
                ),
                caption="One plausible order of the planned batches and runs (the plan fixes "
                "the counts per shift, not the order). Oven bars: cook dwell, coloured by "
                "what the batch holds; hatched: load, unload and changeovers. Tunnel bars: "
                "each product's kg at the belt speed shown, started only once its batch is "
                "unloaded (gaps: the belt waits for an oven). The black line is the end of "
                "the shift; work past it carries into the next shift.",
                alt=f"timeline of every machine in {shift}",
                name=f"timeline-{shift}",
            )

    # -- temperatures ----------------------------------------------------------
    if curves:
        report.section("Temperatures of the planned products", newpage=True)
        report.paragraph(
            "Core (slowest point) and surface temperature of the largest piece through "
            "oven, transfer and tunnel at the planned settings, with each rule's target "
            "(dashed) and time window (dotted line and shading)."
        )
        for product, curve, caption in curves:
            report.figure(
                temperature_figure(curve),
                caption=caption,
                alt=f"core and surface temperature of {product}",
                name=f"temperatures-{product}",
            )

    # -- rules, methods, appendix ------------------------------------------------
    report.section("Rules, methods and sources", newpage=True)
    if "rules" in tables:
        report.table("rules", tables["rules"], caption="Rules applied per product and their source")
    if methods:
        report.heading("Methods")
        report.bullets(f"{m} — {s}" for m, s in methods)
    if "dwell_used" in tables:
        report.heading("Dwell-table rows the plan uses")
        report.table(
            "dwell_used",
            tables["dwell_used"],
            caption="Cook and chill times of the largest piece at the planned settings",
            labels=COLUMN_LABELS,
        )
    if "dwell_ruled_out" in tables:
        report.heading("Settings the physics rules out")
        report.table(
            "dwell_ruled_out",
            tables["dwell_ruled_out"],
            caption="Combinations of the ordered products that cannot meet their rules, and why",
            labels=COLUMN_LABELS,
            empty_text="none: every combination meets its rules",
        )
    if "slack" in tables:
        report.table(
            "slack", tables["slack"], caption="Slack per constraint group", labels=COLUMN_LABELS
        )
    report.paragraph(
        "Every table in this report is also written beside it as CSV and in one XLSX "
        "workbook; cite numbers from those files together with the scenario hash below.",
        css_class="sub",
    )
    report.footer("scenario", info.scenario_path)
    report.footer("scenario file sha256", info.scenario_sha256)
    if info.resolved_sha256:
        report.footer("scenario content sha256 (after extends and --set)", info.resolved_sha256)
    report.footer("corepace version", info.tool_version)
    report.footer("made (UTC)", info.generated)
    if info.command:
        report.footer("command", info.command)
    return report.render()
