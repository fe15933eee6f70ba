"""Atomic writing of the files a run produces: CSV, XLSX, JSON, HTML.

Every file is first written to a temporary file in the destination directory
and then moved over the final name with :func:`os.replace`, which is atomic on
POSIX and Windows when both names are on the same file system. A reader
therefore sees either the old file or the complete new one, never half a
file, and an interrupted run leaves no partial output behind.

Input files are never written: every writer takes a ``protect`` set of paths
(the scenario files of the run) and refuses to write over any of them.

Text that a spreadsheet would read as a formula (a cell starting with ``=``,
``+``, ``-``, ``@``, a tab or a carriage return, such as a product named
``=HYPERLINK(...)``) is never live: XLSX cells holding it are written as
text with Excel's quote prefix, and CSV cells get a leading single quote, as
the usual CSV-injection guidance says (OWASP, "CSV Injection"). Numbers are
not touched, so a negative number stays a number.

The JSON helpers turn the objects of a run (pandas tables, numpy scalars,
frozen dataclasses, enums, paths) into plain JSON values; NaN and infinities
become ``null`` so the output is strict JSON that any parser accepts.
"""

from __future__ import annotations

import csv
import dataclasses
import enum
import io
import json
import math
import os
import re
import tempfile
from collections.abc import Iterable, Mapping
from datetime import date, datetime
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from optimizer.planning.rounding import safe_rounding
from optimizer.reporting.cells import column_decimals

__all__ = [
    "FORMULA_STARTS",
    "OutputError",
    "atomic_write_bytes",
    "atomic_write_text",
    "display_format",
    "excel_sheet_names",
    "formula_like",
    "header_text",
    "prepare_out_dir",
    "table_records",
    "to_jsonable",
    "write_csv",
    "write_json",
    "write_tables",
    "write_xlsx",
]


class OutputError(ValueError):
    """An output location cannot be used (a file where a directory is needed,
    an input file in the way, no permission)."""


def _resolved(path: str | os.PathLike[str]) -> Path:
    return Path(path).expanduser().resolve()


def _check_protected(path: Path, protect: Iterable[str | os.PathLike[str]] | None) -> None:
    if not protect:
        return
    target = _resolved(path)
    for item in protect:
        if _resolved(item) == target:
            raise OutputError(f"{path}: is an input file of this run; refusing to overwrite it")


def prepare_out_dir(path: str | os.PathLike[str]) -> Path:
    """Create the output directory (and its parents) when missing.

    Parameters
    ----------
    path : str or path-like
        Directory that will receive the run's files.

    Returns
    -------
    pathlib.Path
        The directory.

    Raises
    ------
    OutputError
        When the path exists and is not a directory, or cannot be created.
    """
    out = Path(path).expanduser()
    if out.exists() and not out.is_dir():
        raise OutputError(f"--out {out}: exists and is not a directory; give a directory path")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"--out {out}: cannot create the directory ({exc.strerror})") from exc
    return out


def atomic_write_bytes(
    path: str | os.PathLike[str],
    data: bytes,
    *,
    protect: Iterable[str | os.PathLike[str]] | None = None,
) -> Path:
    """Write ``data`` to ``path`` atomically (temporary file + ``os.replace``).

    Parameters
    ----------
    path : str or path-like
        Final file name. Its directory must exist.
    data : bytes
        File contents.
    protect : iterable of path-like, optional
        Paths that must never be written (the run's input files).

    Returns
    -------
    pathlib.Path
        The written path.

    Raises
    ------
    OutputError
        When ``path`` is a protected input file or its directory is missing
        or not writable.
    """
    target = Path(path)
    _check_protected(target, protect)
    directory = target.parent if str(target.parent) else Path(".")
    if not directory.is_dir():
        raise OutputError(f"{target}: directory {directory} does not exist")
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=directory)
    except OSError as exc:
        raise OutputError(f"{target}: cannot write in {directory} ({exc.strerror})") from exc
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        # mkstemp creates 0600; give the file the usual permissions under the umask.
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp_name, 0o666 & ~umask)
        os.replace(tmp_name, target)
    except BaseException:
        try:
            os.unlink(tmp_name)
        except FileNotFoundError:
            pass
        raise
    return target


def atomic_write_text(
    path: str | os.PathLike[str],
    text: str,
    *,
    encoding: str = "utf-8",
    protect: Iterable[str | os.PathLike[str]] | None = None,
) -> Path:
    """Write ``text`` to ``path`` atomically; see :func:`atomic_write_bytes`.

    Parameters
    ----------
    path : str or path-like
        Final file name.
    text : str
        File contents.
    encoding : str
        Text encoding (UTF-8 by default).
    protect : iterable of path-like, optional
        Paths that must never be written.

    Returns
    -------
    pathlib.Path
        The written path.
    """
    return atomic_write_bytes(path, text.encode(encoding), protect=protect)


def to_jsonable(obj: Any) -> Any:
    """Convert ``obj`` into plain JSON values (dict, list, str, float, int, bool, None).

    Handles pandas DataFrames (list of row records) and Series (dict),
    numpy arrays and scalars, dataclasses (dict of fields), enums (their
    value), paths and dates (strings), mappings and sequences. Non-finite
    floats become ``None``.

    Parameters
    ----------
    obj : Any
        Object to convert.

    Returns
    -------
    Any
        A value :func:`json.dumps` accepts with ``allow_nan=False``.
    """
    if obj is None or isinstance(obj, bool | str):
        return obj
    if isinstance(obj, enum.Enum):
        return to_jsonable(obj.value)
    if isinstance(obj, int | np.integer):
        return int(obj)
    if isinstance(obj, float | np.floating):
        value = float(obj)
        return value if math.isfinite(value) else None
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, pd.DataFrame):
        return table_records(obj)
    if isinstance(obj, pd.Series):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, np.ndarray):
        return [to_jsonable(v) for v in obj.tolist()]
    if isinstance(obj, pd.Timestamp | datetime | date):
        return obj.isoformat()
    if isinstance(obj, Path):
        return str(obj)
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: to_jsonable(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, Mapping):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple | set | frozenset):
        return [to_jsonable(v) for v in obj]
    if obj is pd.NA or obj is pd.NaT:
        return None
    raise TypeError(f"cannot write {type(obj).__name__} as JSON")


def table_records(table: pd.DataFrame) -> list[dict[str, Any]]:
    """Rows of ``table`` as JSON-ready dicts (column name → value; NaN → None).

    Parameters
    ----------
    table : pandas.DataFrame
        Any table; the index is dropped unless it is named.

    Returns
    -------
    list of dict
        One dict per row, in row order.
    """
    frame = table.reset_index() if _has_named_index(table) else table
    columns = [str(c) for c in frame.columns]
    records = []
    for row in frame.itertuples(index=False, name=None):
        records.append({c: _cell_json(v) for c, v in zip(columns, row, strict=True)})
    return records


def _cell_json(value: Any) -> Any:
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, float | np.floating) and not math.isfinite(float(value)):
        return None
    return to_jsonable(value)


def _has_named_index(table: pd.DataFrame) -> bool:
    return any(name is not None for name in table.index.names)


FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
"""First characters that make a spreadsheet read a text cell as a formula."""


def formula_like(value: Any) -> bool:
    """True when ``value`` is text a spreadsheet would take for a formula.

    A lone ``-`` or ``+`` (a table's placeholder for "no value") is not a
    formula in any spreadsheet and is left as it is.
    """
    return isinstance(value, str) and value.startswith(FORMULA_STARTS) and value not in "-+"


def _is_text(column: pd.Series) -> bool:
    return column.dtype == object or pd.api.types.is_string_dtype(column.dtype)


def _csv_guarded(frame: pd.DataFrame) -> pd.DataFrame:
    """``frame`` with every formula-like text cell and header prefixed by ``'``."""

    def guard(value: Any) -> Any:
        return "'" + value if formula_like(value) else value

    text_columns = [c for c in frame.columns if _is_text(frame[c])]
    if not text_columns and not any(formula_like(c) for c in frame.columns):
        return frame
    out = frame.copy()
    for column in text_columns:
        out[column] = out[column].map(guard)
    out.columns = [guard(c) for c in out.columns]
    return out


def write_json(
    path: str | os.PathLike[str],
    obj: Any,
    *,
    protect: Iterable[str | os.PathLike[str]] | None = None,
) -> Path:
    """Write ``obj`` as indented, strict JSON (no NaN), atomically.

    Parameters
    ----------
    path : str or path-like
        Final file name.
    obj : Any
        Anything :func:`to_jsonable` accepts.
    protect : iterable of path-like, optional
        Paths that must never be written.

    Returns
    -------
    pathlib.Path
        The written path.
    """
    text = json.dumps(to_jsonable(obj), indent=2, allow_nan=False, ensure_ascii=False) + "\n"
    return atomic_write_text(path, text, protect=protect)


def write_csv(
    path: str | os.PathLike[str],
    table: pd.DataFrame,
    *,
    protect: Iterable[str | os.PathLike[str]] | None = None,
) -> Path:
    """Write ``table`` as UTF-8 CSV (comma separated, no index), atomically.

    Floats are written with full precision (``repr``), so reading the file
    back gives the same numbers; missing values are empty cells. Text cells
    (and headers) a spreadsheet would read as a formula get a leading ``'``.

    Parameters
    ----------
    path : str or path-like
        Final file name.
    table : pandas.DataFrame
        Table to write; a named index is written as columns.
    protect : iterable of path-like, optional
        Paths that must never be written.

    Returns
    -------
    pathlib.Path
        The written path.
    """
    frame = _csv_guarded(table.reset_index() if _has_named_index(table) else table)
    # The csv writer quotes a field holding "\n" but not one holding a bare
    # "\r", which readers take for a line break: then quote every text field.
    bare_cr = any(
        isinstance(v, str) and "\r" in v
        for column in frame.columns
        if _is_text(frame[column])
        for v in frame[column]
    ) or any("\r" in str(c) for c in frame.columns)
    quoting = csv.QUOTE_NONNUMERIC if bare_cr else csv.QUOTE_MINIMAL
    text = frame.to_csv(index=False, lineterminator="\n", quoting=quoting)
    return atomic_write_text(path, text, protect=protect)


_SHEET_BAD = re.compile(r"[\[\]:*?/\\]")


def excel_sheet_names(names: Iterable[str]) -> list[str]:
    """Turn table names into valid, unique Excel sheet names (≤ 31 characters).

    Parameters
    ----------
    names : iterable of str
        Table names in order.

    Returns
    -------
    list of str
        Sheet names, same order; characters Excel forbids become ``_`` and
        clashes after truncation get a numeric suffix.
    """
    used: set[str] = set()
    result = []
    for name in names:
        base = _SHEET_BAD.sub("_", str(name)).strip("'") or "table"
        candidate = base[:31]
        n = 2
        while candidate.lower() in used:
            suffix = f"~{n}"
            candidate = base[: 31 - len(suffix)] + suffix
            n += 1
        used.add(candidate.lower())
        result.append(candidate)
    return result


# Column-name endings that carry a unit, longest first: "cook_min" -> "cook [min]".
_UNIT_ENDINGS = (
    ("_kwh_per_t", "kWh/t"),
    ("_m_per_min", "m/min"),
    ("_kj_per_kg", "kJ/kg"),
    ("_kg_per_h", "kg/h"),
    ("_kg_per_week", "kg/week"),
    ("_per_kg", "per kg"),
    ("_per_year", "per year"),
    ("_per_h", "per h"),
    ("_kwh", "kWh"),
    ("_min", "min"),
    ("_kg", "kg"),
    ("_h", "h"),
    ("_s", "s"),
    ("_m", "m"),
)
_WHOLE_NAMES = {
    "kg_per_week": "kg per week",
    "kg_per_shift": "kg per shift",
    "value_per_week": "value per week",
    "total_kg": "total kg",
    "n_shifts": "shifts",
    "shifts_per_week": "shifts per week",
    "npv": "NPV",
}
PERCENT_COLUMNS = frozenset({"utilisation", "gap", "share"})
"""Columns holding fractions [-], shown as percentages in workbooks (value kept)."""


def header_text(column: Any) -> str:
    """A column's workbook header: words, and the unit in brackets.

    ``cook_min`` → ``cook [min]``, ``belt_speed_m_per_min`` → ``belt speed
    [m/min]``, ``utilisation`` → ``utilisation [%]``; names without a unit
    ending just lose their underscores (``oven_setting`` → ``oven setting``).
    """
    name = str(column)
    if name in _WHOLE_NAMES:
        return _WHOLE_NAMES[name]
    if name in PERCENT_COLUMNS:
        return f"{name} [%]"
    for ending, unit in _UNIT_ENDINGS:
        if name.endswith(ending) and len(name) > len(ending):
            return f"{name[: -len(ending)].replace('_', ' ')} [{unit}]"
    return name.replace("_", " ")


def display_format(column: str, values: pd.Series) -> str | None:
    """Excel number format for a numeric column (None: leave as it is).

    Dwell minutes and belt speeds (columns with a safe-side rounding,
    :func:`optimizer.planning.rounding.safe_rounding`) get none, since a
    format rounds to nearest. Fractions in :data:`PERCENT_COLUMNS` show as
    percentages; floats get a
    thousands separator and the decimals their size needs (none for whole
    numbers and values of 1000 and more, one from 10, two from 0.1, four
    below); the cell keeps the full value.
    """
    if pd.api.types.is_bool_dtype(values) or not pd.api.types.is_numeric_dtype(values):
        return None
    if safe_rounding(column) is not None:
        # a display format rounds to nearest and could show a dwell short or a belt
        # fast: minutes and speeds keep Excel's general format (their full value)
        return None
    if column in PERCENT_COLUMNS:
        return "0.0%"
    if pd.api.types.is_integer_dtype(values):
        return "#,##0"
    decimals = column_decimals(values)
    return "#,##0" + ("." + "0" * decimals if decimals else "")


def _shown_width(value: Any, fmt: str | None) -> int:
    if fmt and isinstance(value, int | float | np.integer | np.floating):
        number = float(value)
        if not math.isfinite(number):
            return 3
        if fmt.endswith("%"):
            return len(f"{100 * number:.1f}%")
        decimals = len(fmt.partition(".")[2])
        return len(f"{number:,.{decimals}f}")
    return len(str(value))


def write_xlsx(
    path: str | os.PathLike[str],
    tables: Mapping[str, pd.DataFrame],
    *,
    protect: Iterable[str | os.PathLike[str]] | None = None,
) -> Path:
    """Write several tables into one XLSX workbook, one sheet each, atomically.

    Each sheet has a frozen header row whose headers name the unit
    (:func:`header_text`), display formats on numeric columns
    (:func:`display_format`; the cells keep full precision) and column
    widths fitted to the shown text.

    Parameters
    ----------
    path : str or path-like
        Final file name (``.xlsx``).
    tables : mapping of str to pandas.DataFrame
        Sheet name → table, in sheet order. Names are made valid with
        :func:`excel_sheet_names`.
    protect : iterable of path-like, optional
        Paths that must never be written.

    Returns
    -------
    pathlib.Path
        The written path.

    Notes
    -----
    Every text cell a spreadsheet would read as a formula (see
    :data:`FORMULA_STARTS`) is stored as text with the quote prefix, so it
    shows as typed and is never evaluated.
    """
    buffer = io.BytesIO()
    sheets = excel_sheet_names(tables.keys())
    with pd.ExcelWriter(buffer, engine="openpyxl") as writer:
        if not tables:
            pd.DataFrame().to_excel(writer, sheet_name="empty", index=False)
        for sheet, table in zip(sheets, tables.values(), strict=True):
            frame = table.reset_index() if _has_named_index(table) else table
            names = [str(c) for c in frame.columns]
            shown = frame.set_axis([header_text(c) for c in names], axis=1)
            shown.to_excel(writer, sheet_name=sheet, index=False)
            worksheet = writer.sheets[sheet]
            _as_text(worksheet)
            worksheet.freeze_panes = "A2"
            for idx, (name, column) in enumerate(zip(names, frame.columns, strict=True), 1):
                fmt = display_format(name, frame[column])
                letter = _excel_column(idx)
                if fmt is not None:
                    for (cell,) in worksheet.iter_rows(min_row=2, min_col=idx, max_col=idx):
                        if isinstance(cell.value, int | float) and not isinstance(cell.value, bool):
                            cell.number_format = fmt
                widths = [len(header_text(name))]
                widths += [_shown_width(v, fmt) for v in frame[column].head(200)]
                worksheet.column_dimensions[letter].width = min(max(widths) + 2, 48)
    return atomic_write_bytes(path, buffer.getvalue(), protect=protect)


def _as_text(worksheet: Any) -> None:
    """Store every formula-like text cell of an openpyxl worksheet as quoted text."""
    for row in worksheet.iter_rows():
        for cell in row:
            if formula_like(cell.value):
                cell.data_type = "s"
                cell.quotePrefix = True


def _excel_column(index: int) -> str:
    letters = ""
    while index:
        index, rem = divmod(index - 1, 26)
        letters = chr(ord("A") + rem) + letters
    return letters


def write_tables(
    out_dir: str | os.PathLike[str],
    tables: Mapping[str, pd.DataFrame],
    *,
    workbook: str,
    protect: Iterable[str | os.PathLike[str]] | None = None,
    extra_sheets: Mapping[str, pd.DataFrame] | None = None,
) -> list[Path]:
    """Write every table as ``<name>.csv`` and all of them into one workbook.

    Parameters
    ----------
    out_dir : str or path-like
        Existing output directory.
    tables : mapping of str to pandas.DataFrame
        File stem → table. Stems must be plain file names.
    workbook : str
        File name of the XLSX workbook holding every table (one sheet each).
    protect : iterable of path-like, optional
        Paths that must never be written.
    extra_sheets : mapping of str to pandas.DataFrame, optional
        Sheets only in the workbook, after the tables (a wide view of a
        long table, for reading).

    Returns
    -------
    list of pathlib.Path
        Written files: the CSVs in table order, then the workbook.
    """
    out = Path(out_dir)
    written = []
    for name, table in tables.items():
        if Path(name).name != name or name in ("", ".", ".."):
            raise OutputError(f"table name {name!r}: must be a plain file name")
        written.append(write_csv(out / f"{name}.csv", table, protect=protect))
    sheets = {**tables, **(extra_sheets or {})}
    written.append(write_xlsx(out / workbook, sheets, protect=protect))
    return written
