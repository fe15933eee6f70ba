"""Read data-logger CSV files: a time column and core, surface and air probe columns.

The files temperature loggers export differ in small ways; :func:`read_log`
accepts the usual ones and records every oddity it met as a :class:`LogNote`
(never silently):

* separators ``,``, ``;`` or tab; with ``;`` or tab a decimal comma is read
  (``72,4``); a UTF-8 (with or without byte-order mark) or Windows-1252 file;
* lines before the header (logger name, serial number) and ``#`` comments;
* temperatures in °C, °F or K, from the column header (``core [°F]``,
  ``air (degC)``) or the ``temperature_unit`` option;
* times as dates with times (``2026-03-14 06:30:05``, ``14.03.2026 06:30``,
  ``14/03/2026 06:30:05``), as clock times only (a run through midnight
  rolls over to the next day), or as elapsed seconds, minutes or hours (the
  unit from the header, ``time [min]``, or the ``time_unit`` option);
* missing readings (empty, ``NaN``, ``---``, ``OL``, ``Err`` ...) and
  readings outside the plausible range: kept as missing (NaN), never filled;
* repeated rows and timestamps (the first is kept), rows out of time order
  (sorted), and gaps of more than three logging intervals;
* a core probe pulled out of the piece: a sudden jump to within a few kelvin
  of the air temperature, after which its readings are not used.

Channels are named by option (``core=["T1", "T2"]``) or recognised from the
header: a header with ``air`` or ``ambient`` is the air probe, ``surf`` a
surface probe, ``core``, ``centre``, ``center`` or ``probe`` a core probe.

A file that cannot be read raises :class:`LogFileError`, one line naming the
file, the line and the column.
"""

from __future__ import annotations

import csv
import hashlib
import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, replace
from datetime import datetime, timedelta
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "MAX_LOG_BYTES",
    "Channel",
    "LogFileError",
    "LogNote",
    "ProbeLog",
    "read_log",
]

MAX_LOG_BYTES = 64 * 1024 * 1024
"""Largest logger file read [bytes] (a year of 1 s readings of 8 channels is ~ 2 GB;
a trial run at one reading a second for a day is ~ 3 MB)."""

VALID_RANGE_C = (-80.0, 400.0)
"""Readings outside this range are sensor faults, not temperatures [°C] (common
practice: thermocouple loggers report open circuits as -999, 9999 or 3276.7)."""

PULLED_WITHIN_K = 3.0
"""A core reading that jumps to within this of the air temperature counts as a
pulled probe [K]."""

PULLED_JUMP_K = 5.0
"""Smallest jump of a core reading between two samples that may mean a pulled
probe [K] (also at least ten times the probe's median step)."""

GAP_INTERVALS = 3.0
"""A time step longer than this many median logging intervals is noted as a gap [-]."""

_MISSING = {
    "",
    "nan",
    "na",
    "n/a",
    "-",
    "--",
    "---",
    "----",
    "ol",
    "open",
    "err",
    "error",
    "null",
    "none",
}
_MISSING_TEXT = "empty, NaN, N/A, ---, OL, open or Err"

_ROLE_WORDS = (
    ("air", ("air", "ambient")),
    ("surface", ("surface", "surf")),
    ("core", ("core", "centre", "center", "probe", "product")),
    ("air", ("oven", "chamber", "room", "tunnel", "cabinet")),
)
"""Header words of each role, tried in order (a word starts a word of the header)."""
_TIME_WORDS = ("time", "timestamp", "date", "elapsed", "zeit", "datetime", "datum", "clock")
_DATE_ONLY = ("date", "datum", "day")
_CLOCK_ONLY = ("time", "clock", "zeit", "uhrzeit")
_TIME_UNITS = {
    "s": 1.0,
    "sec": 1.0,
    "secs": 1.0,
    "second": 1.0,
    "seconds": 1.0,
    "min": 60.0,
    "mins": 60.0,
    "minute": 60.0,
    "minutes": 60.0,
    "h": 3600.0,
    "hr": 3600.0,
    "hrs": 3600.0,
    "hour": 3600.0,
    "hours": 3600.0,
}
_TEMP_UNITS = {
    "c": "degC",
    "°c": "degC",
    "degc": "degC",
    "celsius": "degC",
    "f": "degF",
    "°f": "degF",
    "degf": "degF",
    "fahrenheit": "degF",
    "k": "K",
    "kelvin": "K",
}
_DATE_FORMATS = {
    "ymd": ("%Y-%m-%d", "%Y/%m/%d"),
    "dmy": ("%d.%m.%Y", "%d/%m/%Y", "%d-%m-%Y", "%d.%m.%y", "%d/%m/%y"),
    "mdy": ("%m/%d/%Y", "%m-%d-%Y", "%m/%d/%y"),
}
_CLOCK_FORMATS = ("%H:%M:%S.%f", "%H:%M:%S", "%H:%M")
_NUMBER = re.compile(r"^[+-]?(\d+([.]\d*)?|[.]\d+)([eE][+-]?\d+)?$")
_UNIT_IN_HEADER = re.compile(r"^(?P<name>.*?)\s*[\[(](?P<unit>[^\])]*)[\])]\s*$")
_UNIT_AT_END = re.compile(
    r"^(?P<name>.*?)(?:\s+|_)(?P<unit>[°º]\s?[CFcf]|deg[CFcf]|min|sec|s|h)\s*$"
)


class LogFileError(ValueError):
    """A logger file that cannot be read: one line naming the file, line and column.

    Attributes
    ----------
    path : str
        The file.
    line : int or None
        1-based line number in the file (None for the file as a whole).
    column : str or None
        Column header (None when the problem is not in one column).
    """

    def __init__(self, path: str, line: int | None, column: str | None, problem: str) -> None:
        self.path, self.line, self.column, self.problem = str(path), line, column, problem
        where = self.path + (f":{line}" if line is not None else "")
        col = f" column {column!r}:" if column is not None else ""
        super().__init__(f"{where}:{col} {problem}")


@dataclass(frozen=True)
class LogNote:
    """Something in a logger file that was not a plain reading, and what was done.

    Attributes
    ----------
    kind : str
        ``"missing"``, ``"out_of_range"``, ``"duplicate"``, ``"out_of_order"``,
        ``"gap"``, ``"pulled"``, ``"jump"`` (no air channel to judge it), ``"midnight"``
        or ``"ignored_column"``.
    channel : str or None
        Column concerned (None for whole rows).
    line : int or None
        First file line concerned.
    count : int
        Readings or rows concerned.
    message : str
        One line for the record.
    """

    kind: str
    channel: str | None
    line: int | None
    count: int
    message: str


@dataclass(frozen=True)
class Channel:
    """One probe column of a log, in °C.

    Attributes
    ----------
    name : str
        Column header as written (without the unit).
    role : str
        ``"core"``, ``"surface"`` or ``"air"``.
    values : ndarray
        Readings [°C] at the log's times; NaN where missing, out of range or
        after the probe was pulled.
    unit : str
        Unit the file gave (``"degC"``, ``"degF"`` or ``"K"``).
    pulled_at : float or None
        Time from the start of the log at which the probe was pulled [s].
    """

    name: str
    role: str
    values: NDArray[np.float64]
    unit: str
    pulled_at: float | None = None

    @property
    def valid(self) -> NDArray[np.bool_]:
        """Readings that may be used (finite)."""
        return np.isfinite(self.values)


@dataclass(frozen=True)
class ProbeLog:
    """A logger file read into times and probe channels.

    Attributes
    ----------
    path : str
        The file read.
    sha256 : str
        SHA-256 of the file's bytes (hex), for the record.
    times : ndarray
        Time of each sample from the first one [s], increasing.
    lines : ndarray of int
        File line of each sample.
    started : datetime or None
        Date and time of the first sample when the file gives dates.
    channels : tuple of Channel
        Core, surface and air channels, in file order.
    notes : tuple of LogNote
        Everything that was not a plain reading.
    """

    path: str
    sha256: str
    times: NDArray[np.float64]
    lines: NDArray[np.int_]
    started: datetime | None
    channels: tuple[Channel, ...]
    notes: tuple[LogNote, ...]

    def role(self, role: str) -> tuple[Channel, ...]:
        """Channels with ``role`` (``"core"``, ``"surface"`` or ``"air"``)."""
        return tuple(c for c in self.channels if c.role == role)

    @property
    def cores(self) -> tuple[Channel, ...]:
        """Core probe channels."""
        return self.role("core")

    @property
    def surfaces(self) -> tuple[Channel, ...]:
        """Surface probe channels."""
        return self.role("surface")

    @property
    def air(self) -> Channel | None:
        """The air probe (None when the log has none)."""
        found = self.role("air")
        return found[0] if found else None

    def channel(self, name: str) -> Channel:
        """The channel called ``name``."""
        for c in self.channels:
            if c.name == name:
                return c
        raise KeyError(f"no channel {name!r}; channels: {[c.name for c in self.channels]}")

    @property
    def duration(self) -> float:
        """Time from the first to the last sample [s]."""
        return float(self.times[-1] - self.times[0])

    def part(self, start: float, end: float) -> ProbeLog:
        """The readings from ``start`` to ``end`` [s from the first reading], times
        counted from the first reading kept (``started`` moves with it).

        Raises
        ------
        ValueError
            When fewer than 3 readings fall inside.
        """
        keep = (self.times >= start) & (self.times <= end)
        if keep.sum() < 3:
            raise ValueError(
                f"window: holds {int(keep.sum())} readings ({start / 60:g} to {end / 60:g} min); "
                "needs at least 3"
            )
        t0 = float(self.times[keep][0])
        chans = tuple(
            Channel(
                c.name,
                c.role,
                c.values[keep],
                c.unit,
                None if c.pulled_at is None or c.pulled_at > end else max(c.pulled_at - t0, 0.0),
            )
            for c in self.channels
        )
        started = None if self.started is None else self.started + timedelta(seconds=t0)
        return replace(
            self,
            times=self.times[keep] - t0,
            lines=self.lines[keep],
            started=started,
            channels=chans,
        )


# --------------------------------------------------------------------------- text


def _read_text(path: Path) -> tuple[str, bytes]:
    try:
        if not path.is_file():
            what = "a directory" if path.is_dir() else "not found"
            raise LogFileError(str(path), None, None, f"cannot read the log: {what}")
        size = path.stat().st_size
        if size > MAX_LOG_BYTES:
            raise LogFileError(
                str(path),
                None,
                None,
                f"file of {size:,} bytes is larger than the {MAX_LOG_BYTES:,} accepted",
            )
        data = path.read_bytes()
    except OSError as exc:
        raise LogFileError(str(path), None, None, f"cannot read the log: {exc.strerror}") from None
    if b"\x00" in data:
        raise LogFileError(
            str(path), None, None, "is not a text file (NUL bytes); export the log as CSV text"
        )
    try:
        return data.decode("utf-8-sig"), data
    except UnicodeDecodeError:
        return data.decode("cp1252", errors="replace"), data


def _separator(header: str) -> str:
    counts = {sep: header.count(sep) for sep in (";", "\t", ",")}
    best = max(counts, key=lambda s: counts[s])
    return best if counts[best] else ","


def _split(line: str, sep: str) -> list[str]:
    """The fields of one line (quoted fields may hold the separator)."""
    try:
        cells = next(csv.reader([line], delimiter=sep, skipinitialspace=True))
    except (csv.Error, StopIteration):
        cells = line.split(sep)
    return [cell.strip() for cell in cells]


def _words(text: str) -> list[str]:
    return [w for w in re.split(r"[^a-z0-9]+", text.lower()) if w]


def _known_unit(unit: str) -> bool:
    key = unit.lower().replace(" ", "").replace("º", "°")
    return key in _TEMP_UNITS or key in _TIME_UNITS


def _header_unit(text: str) -> tuple[str, str | None]:
    """``"core [°F]"`` -> ``("core", "°F")``; also ``core °F``, ``core_degF``, ``time_min``.

    Brackets holding a known temperature or time unit, or something short
    that can only be a unit (``[psi]``, refused later), give the unit; other
    brackets (``core (oven 1)``) are part of the name.
    """
    m = _UNIT_IN_HEADER.match(text)
    if m:
        unit = m.group("unit").strip()
        looks_like_unit = (
            "°" in unit or unit.lower().startswith("deg") or (unit.isalpha() and len(unit) <= 4)
        )
        if _known_unit(unit) or looks_like_unit:
            return m.group("name").strip(), unit
        return text, None
    m = _UNIT_AT_END.match(text)
    if m and m.group("name").strip():
        return m.group("name").strip(), m.group("unit")
    return text, None


def _temperature_unit(unit: str | None, option: str | None, path: str, line: int, col: str) -> str:
    if option is not None:
        return option
    if unit is None:
        return "degC"
    key = unit.lower().replace(" ", "").replace("º", "°")
    if key not in _TEMP_UNITS:
        raise LogFileError(
            path,
            line,
            col,
            f"unit {unit!r} in the header is not a temperature unit; accepted: °C, °F, K "
            "(or give the temperature unit as an option)",
        )
    return _TEMP_UNITS[key]


def _to_celsius(values: NDArray[np.float64], unit: str) -> NDArray[np.float64]:
    if unit == "degF":
        return (values - 32.0) * (5.0 / 9.0)
    if unit == "K":
        return values - 273.15
    return values


def _number(cell: str, decimal_comma: bool) -> float | None:
    """A reading, None for a missing-reading token; raises ValueError otherwise."""
    text = cell.strip()
    if text.lower() in _MISSING:
        return None
    if decimal_comma or (text.count(",") == 1 and "." not in text):
        # a decimal comma (with a "," separator only inside a quoted field)
        text = text.replace(",", ".")
    if not _NUMBER.match(text):
        raise ValueError(text)
    value = float(text)
    if not math.isfinite(value):
        return None
    return value


# --------------------------------------------------------------------------- time


def _clock(text: str) -> tuple[datetime | None, str | None]:
    for fmt in _CLOCK_FORMATS:
        try:
            return datetime.strptime(text, fmt), fmt
        except ValueError:
            continue
    return None, None


def _date_orders(cells: Sequence[str]) -> list[str]:
    """Date orders that read every cell (``ymd``, ``dmy``, ``mdy``)."""
    out = []
    for order, formats in _DATE_FORMATS.items():
        ok = True
        for cell in cells:
            date_part = re.split(r"[ T]", cell.strip(), maxsplit=1)[0]
            if not any(_try_date(date_part, f) for f in formats):
                ok = False
                break
        if ok:
            out.append(order)
    return out


def _try_date(text: str, fmt: str) -> bool:
    try:
        datetime.strptime(text, fmt)
        return True
    except ValueError:
        return False


def _parse_datetime(cell: str, order: str) -> datetime | None:
    text = cell.strip()
    parts = re.split(r"[ T]", text, maxsplit=1)
    date_part = parts[0]
    clock_part = parts[1].strip() if len(parts) > 1 else "00:00:00"
    for fmt in _DATE_FORMATS[order]:
        try:
            day = datetime.strptime(date_part, fmt)
        except ValueError:
            continue
        clock, _ = _clock(clock_part.removesuffix("Z"))
        if clock is None:
            return None
        return day.replace(
            hour=clock.hour, minute=clock.minute, second=clock.second, microsecond=clock.microsecond
        )
    return None


def _times(
    cells: Sequence[str],
    lines: Sequence[int],
    *,
    path: str,
    column: str,
    unit_text: str | None,
    time_unit: str | None,
    decimal_comma: bool,
    date_order: str | None,
) -> tuple[NDArray[np.float64], datetime | None, list[LogNote]]:
    """Seconds from the first row (file order), the start date and notes."""
    notes: list[LogNote] = []
    first = cells[0].strip()
    try:
        numeric = _number(first, decimal_comma) is not None
    except ValueError:
        numeric = False
    if numeric:
        name = time_unit or unit_text
        if name is None:
            raise LogFileError(
                path,
                lines[0],
                column,
                "elapsed times need a unit: write it in the header ('time [min]') or give the "
                "time unit as an option (s, min or h)",
            )
        factor = _TIME_UNITS.get(name.strip().lower())
        if factor is None:
            raise LogFileError(path, lines[0], column, f"time unit {name!r}: accepted: s, min, h")
        out = np.empty(len(cells))
        for i, (cell, line) in enumerate(zip(cells, lines, strict=True)):
            try:
                v = _number(cell, decimal_comma)
            except ValueError:
                v = None
            if v is None:
                raise LogFileError(
                    path, line, column, f"{cell!r} is not an elapsed time (a number of {name})"
                )
            out[i] = v * factor
        return out, None, notes
    clock, _ = _clock(first)
    if clock is not None:
        out = np.empty(len(cells))
        day = 0
        prev = None
        for i, (cell, line) in enumerate(zip(cells, lines, strict=True)):
            c, _ = _clock(cell.strip())
            if c is None:
                raise LogFileError(
                    path, line, column, f"{cell!r} is not a clock time like 06:30:05"
                )
            sec = c.hour * 3600 + c.minute * 60 + c.second + c.microsecond * 1e-6
            if prev is not None and sec + day * 86400.0 < prev - 43200.0:
                day += 1
                notes.append(
                    LogNote(
                        "midnight",
                        None,
                        line,
                        1,
                        f"line {line}: clock went past midnight; read as the next day",
                    )
                )
            out[i] = sec + day * 86400.0
            prev = out[i]
        return out - out[0], None, notes
    orders = _date_orders(cells) if date_order is None else [date_order]
    if not orders:
        bad = _first_bad_date(cells, lines)
        raise LogFileError(
            path,
            bad[1],
            column,
            f"{bad[0]!r} is not a date and time; accepted: 2026-03-14 06:30:05, "
            "14.03.2026 06:30, 14/03/2026 06:30:05, a clock time or elapsed s/min/h",
        )
    stamps: list[datetime] = []
    for cell, line in zip(cells, lines, strict=True):
        d = _parse_datetime(cell, orders[0])
        if d is None:
            raise LogFileError(
                path, line, column, f"{cell!r} does not read as a {orders[0]} date and time"
            )
        stamps.append(d)
    if len(orders) > 1:
        alt = [_parse_datetime(c, orders[1]) for c in cells]
        if any(a != b for a, b in zip(alt, stamps, strict=True)) and (
            len({s.date() for s in stamps}) > 1
        ):
            raise LogFileError(
                path,
                lines[0],
                column,
                f"dates read both as {orders[0]} and {orders[1]} and the run spans days; "
                "give the date order as an option",
            )
    start = stamps[0]
    out = np.array([(s - start).total_seconds() for s in stamps])
    return out, start, notes


def _first_bad_date(cells: Sequence[str], lines: Sequence[int]) -> tuple[str, int]:
    for cell, line in zip(cells, lines, strict=True):
        if not _date_orders([cell]):
            return cell, line
    return cells[0], lines[0]


# --------------------------------------------------------------------------- columns


def _role_from_header(name: str) -> str | None:
    tokens = _words(name)
    for role, words in _ROLE_WORDS:
        if any(t.startswith(w) for t in tokens for w in words):
            return role
    return None


def _assign(
    names: Sequence[str],
    time_index: int,
    core: Sequence[str] | None,
    surface: Sequence[str] | None,
    air: str | None,
    path: str,
    header_line: int,
) -> dict[int, str]:
    """Column index -> role: named by option, else recognised from the header.

    A role given by option takes only the columns named; the roles not given
    are recognised from the header words.
    """
    given = {"core": core, "surface": surface, "air": None if air is None else [air]}
    named: dict[str, str] = {}
    for role, cols in given.items():
        for n in cols or ():
            if n not in names:
                raise LogFileError(
                    path,
                    header_line,
                    n,
                    f"no such column in the header; columns: {', '.join(names)}",
                )
            if n == names[time_index]:
                raise LogFileError(path, header_line, n, "is the time column, not a probe")
            if n in named:
                raise LogFileError(path, header_line, n, "is named for two probe roles")
            named[n] = role
    out: dict[int, str] = {}
    for i, n in enumerate(names):
        if i == time_index:
            continue
        if n in named:
            out[i] = named[n]
            continue
        role = _role_from_header(n)
        if role is not None and given[role] is None:
            out[i] = role
    return out


def _find_header(
    rows: list[tuple[int, str]], path: str, time_column: str | None
) -> tuple[int, str, list[str], int]:
    """(row index, separator, names, time column index) of the header line."""
    for k, (_line, text) in enumerate(rows):
        sep = _separator(text)
        cells = _split(text, sep)
        # a header has two fields or more and the row after it as many
        # (a preamble line such as "Start time: 06:30" is not one)
        if len(cells) < 2:
            continue
        if k + 1 < len(rows) and len(_split(rows[k + 1][1], sep)) < len(cells):
            continue
        bare = [_header_unit(c)[0] for c in cells]
        if time_column is not None:
            if time_column in bare:
                return k, sep, cells, bare.index(time_column)
            continue
        for i, b in enumerate(bare):
            if any(t.startswith(w) for t in _words(b) for w in _TIME_WORDS):
                return k, sep, cells, i
    first = rows[0][0] if rows else 1
    wanted = repr(time_column) if time_column else "a time column (time, timestamp, date, elapsed)"
    raise LogFileError(path, first, None, f"no header line with {wanted}; name it as an option")


def _clock_column(bare: Sequence[str], t_idx: int) -> int | None:
    """A separate clock-time column beside a date-only time column, or None."""
    if not all(w in _DATE_ONLY for w in _words(bare[t_idx])):
        return None
    for i, b in enumerate(bare):
        words = _words(b)
        if i != t_idx and words and all(w in _CLOCK_ONLY for w in words):
            return i
    return None


# --------------------------------------------------------------------------- read


def read_log(
    path: str | Path,
    *,
    time_column: str | None = None,
    core: Sequence[str] | None = None,
    surface: Sequence[str] | None = None,
    air: str | None = None,
    temperature_unit: str | None = None,
    time_unit: str | None = None,
    date_order: str | None = None,
    valid_range: tuple[float, float] = VALID_RANGE_C,
) -> ProbeLog:
    """Read a data-logger CSV file.

    Parameters
    ----------
    path : str or Path
        The file.
    time_column : str, optional
        Header of the time column (default: the first header naming time,
        timestamp, date or elapsed).
    core, surface : sequence of str, optional
        Headers of the core and surface probe columns (default: recognised
        from the header words).
    air : str, optional
        Header of the air probe column.
    temperature_unit : {"degC", "degF", "K"}, optional
        Unit of every probe column (default: from each header, else °C).
    time_unit : {"s", "min", "h"}, optional
        Unit of elapsed times (default: from the header).
    date_order : {"ymd", "dmy", "mdy"}, optional
        Order of dates when the file's dates could be read more than one way.
    valid_range : tuple of float
        Lowest and highest plausible reading [°C]; others are sensor faults.

    Returns
    -------
    ProbeLog

    Raises
    ------
    LogFileError
        A file that cannot be read, with the file, line and column.
    """
    p = Path(path)
    name = str(path)
    if temperature_unit is not None and temperature_unit not in ("degC", "degF", "K"):
        raise LogFileError(
            name, None, None, f"temperature unit {temperature_unit!r}: accepted: degC, degF, K"
        )
    if time_unit is not None and time_unit not in _TIME_UNITS:
        raise LogFileError(name, None, None, f"time unit {time_unit!r}: accepted: s, min, h")
    if date_order is not None and date_order not in _DATE_FORMATS:
        raise LogFileError(name, None, None, f"date order {date_order!r}: accepted: ymd, dmy, mdy")
    text, raw = _read_text(p)
    rows = [
        (i + 1, line.rstrip("\r\n"))
        for i, line in enumerate(text.splitlines())
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not rows:
        raise LogFileError(name, None, None, "is empty: no header and no readings")
    k, sep, header, t_idx = _find_header(rows, name, time_column)
    header_line = rows[k][0]
    bare = [_header_unit(c)[0] for c in header]
    units = [_header_unit(c)[1] for c in header]
    if len(set(bare)) != len(bare):
        dup = next(b for b in bare if bare.count(b) > 1)
        raise LogFileError(name, header_line, dup, "appears twice in the header")
    clock_idx = _clock_column(bare, t_idx)
    roles = {
        i: r
        for i, r in _assign(bare, t_idx, core, surface, air, name, header_line).items()
        if i != clock_idx
    }
    if not any(r == "core" for r in roles.values()):
        raise LogFileError(
            name,
            header_line,
            None,
            "no core probe column: name one as an option, or use a header with core, "
            f"centre or probe; columns: {', '.join(bare)}",
        )
    if sum(r == "air" for r in roles.values()) > 1:
        names_air = [bare[i] for i, r in roles.items() if r == "air"]
        raise LogFileError(
            name,
            header_line,
            None,
            f"more than one air column ({', '.join(names_air)}); name the one to use as an option",
        )
    decimal_comma = sep in (";", "\t")
    data = rows[k + 1 :]
    if len(data) < 3:
        raise LogFileError(name, header_line, None, f"needs at least 3 readings, got {len(data)}")
    notes: list[LogNote] = []
    ignored = [bare[i] for i in range(len(bare)) if i not in (t_idx, clock_idx) and i not in roles]
    if ignored:
        notes.append(
            LogNote(
                "ignored_column",
                None,
                header_line,
                len(ignored),
                f"columns not used (not core, surface or air): {', '.join(ignored)}",
            )
        )
    cells_rows: list[list[str]] = []
    for line, row in data:
        cells = _split(row, sep)
        if len(cells) > len(header) and all(c == "" for c in cells[len(header) :]):
            cells = cells[: len(header)]
        if len(cells) != len(header):
            raise LogFileError(
                name,
                line,
                None,
                f"has {len(cells)} fields, the header {len(header)} (separator {sep!r})",
            )
        cells_rows.append(cells)
    lines = np.array([line for line, _ in data], dtype=np.int_)
    stamps = [c[t_idx] if clock_idx is None else f"{c[t_idx]} {c[clock_idx]}" for c in cells_rows]
    times, started, t_notes = _times(
        stamps,
        list(lines),
        path=name,
        column=bare[t_idx],
        unit_text=units[t_idx],
        time_unit=time_unit,
        decimal_comma=decimal_comma,
        date_order=date_order,
    )
    notes += t_notes
    columns: dict[int, NDArray[np.float64]] = {}
    col_units: dict[int, str] = {}
    for i in roles:
        unit = _temperature_unit(units[i], temperature_unit, name, header_line, bare[i])
        values = np.empty(len(cells_rows))
        for j, cells in enumerate(cells_rows):
            try:
                v = _number(cells[i], decimal_comma)
            except ValueError:
                raise LogFileError(
                    name,
                    int(lines[j]),
                    bare[i],
                    f"{cells[i]!r} is not a reading; accepted: a number "
                    f"({'decimal comma or point' if decimal_comma else 'decimal point'}) or "
                    f"{_MISSING_TEXT} for a missing reading",
                ) from None
            values[j] = np.nan if v is None else v
        columns[i] = _to_celsius(values, unit)
        col_units[i] = unit
    times, lines, columns, order_notes = _order(times, lines, columns, bare)
    notes += order_notes
    if times[-1] - times[0] <= 0:
        raise LogFileError(name, int(lines[0]), bare[t_idx], "every reading has the same time")
    times = times - times[0]
    notes += _gaps(times, lines)
    lo, hi = valid_range
    for i, values in columns.items():
        missing = np.isnan(values)
        if missing.any():
            first = int(lines[np.argmax(missing)])
            notes.append(
                LogNote(
                    "missing",
                    bare[i],
                    first,
                    int(missing.sum()),
                    f"{bare[i]}: {int(missing.sum())} missing reading(s), first at line {first}; "
                    "left out, not filled",
                )
            )
        bad = ~missing & ((values < lo) | (values > hi))
        if bad.any():
            first = int(lines[np.argmax(bad)])
            notes.append(
                LogNote(
                    "out_of_range",
                    bare[i],
                    first,
                    int(bad.sum()),
                    f"{bare[i]}: {int(bad.sum())} reading(s) outside {lo:g}..{hi:g} °C "
                    f"(sensor faults), first at line {first}; left out",
                )
            )
            values[bad] = np.nan
        if np.isnan(values).all():
            raise LogFileError(
                name, header_line, bare[i], "has no usable reading (all missing or out of range)"
            )
    air_idx = next((i for i, r in roles.items() if r == "air"), None)
    channels = []
    for i, role in sorted(roles.items()):
        values = columns[i]
        pulled = None
        if role == "core" and air_idx is not None:
            at = _pulled_index(values, columns[air_idx])
            if at is not None:
                pulled = float(times[at])
                notes.append(
                    LogNote(
                        "pulled",
                        bare[i],
                        int(lines[at]),
                        int(np.isfinite(values[at:]).sum()),
                        f"{bare[i]}: jumped to the air temperature at line {int(lines[at])} "
                        f"({pulled / 60:.1f} min): probe pulled out; later readings not used",
                    )
                )
                values = values.copy()
                values[at:] = np.nan
                if np.isnan(values).all():
                    raise LogFileError(
                        name, int(lines[at]), bare[i], "probe pulled out before any reading"
                    )
        elif role == "core":
            jump = _jump_index(values)
            if jump is not None:
                notes.append(
                    LogNote(
                        "jump",
                        bare[i],
                        int(lines[jump]),
                        1,
                        f"{bare[i]}: sudden jump at line {int(lines[jump])} "
                        f"({times[jump] / 60:.1f} min) and no air channel to tell whether the "
                        "probe was pulled out; readings kept, check the run",
                    )
                )
        channels.append(Channel(bare[i], role, values, col_units[i], pulled))
    return ProbeLog(
        path=name,
        sha256=hashlib.sha256(raw).hexdigest(),
        times=times,
        lines=lines,
        started=started,
        channels=tuple(channels),
        notes=tuple(notes),
    )


def _order(times, lines, columns, bare):
    """Sort rows into time order and drop repeated timestamps, with notes."""
    notes: list[LogNote] = []
    back = np.diff(times) < 0
    if back.any():
        first = int(lines[1:][back][0])
        notes.append(
            LogNote(
                "out_of_order",
                None,
                first,
                int(back.sum()),
                f"{int(back.sum())} row(s) earlier than the row before, first at line {first}; "
                "rows sorted by time",
            )
        )
    order = np.argsort(times, kind="stable")
    times, lines = times[order], lines[order]
    columns = {i: v[order] for i, v in columns.items()}
    same = np.concatenate([[False], np.diff(times) == 0])
    if same.any():
        keys = sorted(columns)
        stacked = np.stack([columns[i] for i in keys]) if keys else np.zeros((0, times.size))
        prev = np.roll(stacked, 1, axis=1)
        equal = np.all((stacked == prev) | (np.isnan(stacked) & np.isnan(prev)), axis=0)
        conflicting = same & ~equal
        first = int(lines[same][0])
        extra = (
            f", {int(conflicting.sum())} with other readings (the first row kept)"
            if conflicting.any()
            else ""
        )
        notes.append(
            LogNote(
                "duplicate",
                None,
                first,
                int(same.sum()),
                f"{int(same.sum())} row(s) repeat an earlier timestamp, first at line {first}"
                f"{extra}; dropped",
            )
        )
        keep = ~same
        times, lines = times[keep], lines[keep]
        columns = {i: v[keep] for i, v in columns.items()}
    return times, lines, columns, notes


def _gaps(times: NDArray[np.float64], lines: NDArray[np.int_]) -> list[LogNote]:
    step = np.diff(times)
    if step.size < 2:
        return []
    usual = float(np.median(step))
    big = step > GAP_INTERVALS * usual
    out = []
    for k in np.flatnonzero(big):
        out.append(
            LogNote(
                "gap",
                None,
                int(lines[k + 1]),
                1,
                f"no reading for {step[k] / 60:.1f} min before line {int(lines[k + 1])} "
                f"(logging every {usual:g} s); the model holds the air linearly across it",
            )
        )
    return out


def _jump_index(core: NDArray[np.float64]) -> int | None:
    """First sample at which a core probe jumps by far more than its usual step, or None."""
    ok = np.flatnonzero(np.isfinite(core))
    if ok.size < 3:
        return None
    jumps = np.abs(np.diff(core[ok]))
    limit = max(4 * PULLED_JUMP_K, 20.0 * float(np.median(jumps)))
    big = np.flatnonzero(jumps > limit)
    return int(ok[big[0] + 1]) if big.size else None


def _pulled_index(core: NDArray[np.float64], air: NDArray[np.float64]) -> int | None:
    """First sample at which a core probe jumps to the air temperature, or None."""
    ok = np.flatnonzero(np.isfinite(core))
    if ok.size < 3:
        return None
    y = core[ok]
    jumps = np.abs(np.diff(y))
    usual = float(np.median(jumps)) if jumps.size else 0.0
    limit = max(PULLED_JUMP_K, 10.0 * usual)
    for j in np.flatnonzero(jumps > limit):
        k = ok[j + 1]
        a = air[k]
        if np.isfinite(a) and abs(core[k] - a) <= PULLED_WITHIN_K:
            before = core[ok[j]]
            if abs(before - a) > PULLED_WITHIN_K + PULLED_JUMP_K * 0.5:
                return int(k)
    return None
