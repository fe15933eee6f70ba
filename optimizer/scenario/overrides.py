"""Changes to a scenario before validation: ``--set`` overrides and ``extends``.

A change is a dotted path into the raw scenario mapping and a new value. Path
segments address mapping keys; inside a list they address the item whose
``name`` equals the segment (or, failing that, a zero-based index), so
``tunnels.main.length`` is the ``length`` of the tunnel named ``main``.
Values keep their units as strings (``"24 m"``); the scenario models convert
them once, exactly as if they had been written in the file.

A scenario file may extend another::

    extends: demo.yaml          # path relative to this file
    changes:
      - set: tunnels.main.length
        value: 24 m
      - set: ovens.oven-2.settings.roast.air_temperature
        value: 185 degC

A change may also append an item to a list (``add``), optionally starting
from a copy of an existing item (``copy_of``, by name); the ``value`` mapping
then holds the fields that differ from the copy, and must give a new
``name``::

      - add: ovens
        copy_of: rack-oven-1
        value: {name: rack-oven-3}
      - add: tunnels.chill-tunnel.fed_by
        value: rack-oven-3

Changes apply in order, after the base file (itself possibly an extension)
is resolved.
"""

from __future__ import annotations

import copy
from collections.abc import Iterable, Mapping, MutableMapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml


class OverrideError(ValueError):
    """A change names a path that does not exist or is written wrongly."""


CHANGE_OPS = ("set", "add")
"""Operations a :class:`Change` may carry."""


@dataclass(frozen=True)
class Change:
    """One change: a dotted path and its new value.

    Parameters
    ----------
    path : str
        Dotted path, e.g. ``"tunnels.main.length"``.
    value : Any
        New value, as it would be written in the scenario file. For ``add``:
        the item appended (with ``copy_of``: the fields that differ from the
        copy, a mapping).
    op : str
        ``"set"`` (replace the value at ``path``) or ``"add"`` (append
        ``value`` to the list at ``path``).
    copy_of : str or None
        For ``add``: name of the item of that list to start from (deep copy).
    """

    path: str
    value: Any
    op: str = "set"
    copy_of: str | None = None

    def __post_init__(self) -> None:
        if self.op not in CHANGE_OPS:
            raise OverrideError(
                f"{self.path}: change operation must be one of {', '.join(CHANGE_OPS)}, "
                f"got {self.op!r}"
            )
        if self.copy_of is not None and self.op != "add":
            raise OverrideError(f"{self.path}: copy_of is only accepted with 'add'")

    def describe(self) -> str:
        """One readable line: ``path=value`` or ``path += value``."""
        if self.op == "add":
            copy = f" (copy of {self.copy_of})" if self.copy_of is not None else ""
            return f"{self.path} += {self.value}{copy}"
        return f"{self.path}={self.value}"


def parse_assignment(text: str) -> Change:
    """Parse ``PATH=VALUE`` as given to ``--set``.

    The value is read as YAML, so ``3`` is a number, ``[a, b]`` a list and
    ``24 m`` a string with units.

    Raises
    ------
    OverrideError
        If there is no ``=`` or the path is empty.
    """
    path, sep, raw = text.partition("=")
    path = path.strip()
    if not sep or not path:
        raise OverrideError(
            f"--set: expected PATH=VALUE such as tunnels.main.length='24 m', got {text!r}"
        )
    try:
        value = yaml.safe_load(raw) if raw.strip() else None
    except yaml.YAMLError:
        value = raw.strip()
    return Change(path=path, value=value)


def _segments(path: str) -> list[str]:
    parts = path.split(".")
    if any(not p for p in parts):
        raise OverrideError(f"{path}: empty segment in dotted path (write names joined by '.')")
    return parts


def _child(node: Any, segment: str, where: str) -> tuple[Any, Any]:
    """Return (container key/index, child) for ``segment`` under ``node``."""
    if isinstance(node, Mapping):
        if segment not in node:
            known = ", ".join(sorted(map(str, node))) or "none"
            raise OverrideError(f"{where}: no field {segment!r} here; fields present: {known}")
        return segment, node[segment]
    if isinstance(node, list):
        for i, item in enumerate(node):
            if isinstance(item, Mapping) and str(item.get("name")) == segment:
                return i, item
        if segment.isdigit() and int(segment) < len(node):
            return int(segment), node[int(segment)]
        names = [str(it.get("name")) for it in node if isinstance(it, Mapping) and "name" in it]
        accepted = ", ".join(names) if names else f"an index 0..{len(node) - 1}"
        raise OverrideError(f"{where}: no item named {segment!r}; accepted: {accepted}")
    raise OverrideError(f"{where}: {segment!r} cannot be looked up inside a {type(node).__name__}")


def apply_changes(raw: Mapping[str, Any], changes: Iterable[Change]) -> dict[str, Any]:
    """Return a deep copy of ``raw`` with ``changes`` applied in order.

    The last segment of a path may name a new mapping key (so an optional
    field can be set); every earlier segment must exist.

    Raises
    ------
    OverrideError
        Naming the path and what exists at the point where it fails.
    """
    out: dict[str, Any] = copy.deepcopy(dict(raw))
    for change in changes:
        if change.op == "add":
            _append(out, change)
            continue
        parts = _segments(change.path)
        node: Any = out
        for depth, seg in enumerate(parts[:-1]):
            where = ".".join(parts[: depth + 1])
            _, node = _child(node, seg, where)
        last = parts[-1]
        if isinstance(node, MutableMapping):
            node[last] = copy.deepcopy(change.value)
        elif isinstance(node, list):
            key, _ = _child(node, last, change.path)
            node[key] = copy.deepcopy(change.value)
        else:
            raise OverrideError(f"{change.path}: cannot set a field inside a {type(node).__name__}")
    return out


def _append(root: dict[str, Any], change: Change) -> None:
    """Apply an ``add`` change to ``root`` in place."""
    parts = _segments(change.path)
    node: Any = root
    for depth, seg in enumerate(parts):
        _, node = _child(node, seg, ".".join(parts[: depth + 1]))
    if not isinstance(node, list):
        raise OverrideError(
            f"{change.path}: 'add' needs a list here, found a {type(node).__name__}"
        )
    item = copy.deepcopy(change.value)
    if change.copy_of is not None:
        _, original = _child(node, str(change.copy_of), f"{change.path}.{change.copy_of}")
        if not isinstance(original, Mapping):
            raise OverrideError(f"{change.path}: copy_of needs items that are mappings")
        if item is None:
            item = {}
        if not isinstance(item, Mapping):
            raise OverrideError(
                f"{change.path}: value: with copy_of, give a mapping of the fields that "
                f"differ (at least a new name), got {item!r}"
            )
        merged = copy.deepcopy(dict(original))
        merged.update(item)
        item = merged
        if str(item.get("name")) == str(change.copy_of):
            raise OverrideError(
                f"{change.path}: value.name: the copy of {change.copy_of!r} needs a new name"
            )
    if isinstance(item, Mapping) and "name" in item:
        names = {str(x.get("name")) for x in node if isinstance(x, Mapping)}
        if str(item["name"]) in names:
            raise OverrideError(
                f"{change.path}: an item named {item['name']!r} exists already; give a new name"
            )
    node.append(item)


def _read_yaml(path: Path) -> dict[str, Any]:
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise OverrideError(f"{path}: cannot read file ({exc.strerror})") from None
    try:
        data = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f" at line {mark.line + 1}" if mark is not None else ""
        raise OverrideError(f"{path}: not valid YAML{line}") from None
    if not isinstance(data, dict):
        raise OverrideError(
            f"{path}: must hold a mapping of scenario fields, got {type(data).__name__}"
        )
    return data


def _changes_from(data: Any, source: Path) -> list[Change]:
    if data is None:
        return []
    if isinstance(data, Mapping):
        return [Change(str(k), v) for k, v in data.items()]
    if not isinstance(data, list):
        raise OverrideError(f"{source}: changes: must be a list of {{set: PATH, value: VALUE}}")
    out = []
    for i, item in enumerate(data):
        out.append(change_from_mapping(item, f"{source}: changes[{i}]"))
    return out


def change_from_mapping(item: Any, where: str) -> Change:
    """Read one change written as ``{set: PATH, value: V}`` or ``{add: PATH, value: V}``.

    ``add`` also accepts ``copy_of: NAME``.

    Raises
    ------
    OverrideError
        Naming ``where`` and the accepted forms.
    """
    accepted = (
        "must be a mapping with keys 'set' and 'value', or 'add' and 'value' "
        "(and optionally 'copy_of')"
    )
    if not isinstance(item, Mapping) or ("set" in item) == ("add" in item):
        raise OverrideError(f"{where}: {accepted}")
    if "set" in item:
        extra = sorted(set(map(str, item)) - {"set", "value"})
        if extra or "value" not in item:
            raise OverrideError(f"{where}: {accepted}")
        return Change(str(item["set"]), item["value"])
    extra = sorted(set(map(str, item)) - {"add", "value", "copy_of"})
    if extra or ("value" not in item and "copy_of" not in item):
        raise OverrideError(f"{where}: {accepted}")
    copy_of = item.get("copy_of")
    return Change(
        str(item["add"]),
        item.get("value"),
        op="add",
        copy_of=None if copy_of is None else str(copy_of),
    )


def load_raw(path: str | Path, extra: Iterable[Change] = ()) -> dict[str, Any]:
    """Read a scenario file as a plain mapping, resolving ``extends`` chains.

    Parameters
    ----------
    path : str or Path
        Scenario file (YAML).
    extra : iterable of Change
        Further changes applied last (``--set`` on the command line).

    Raises
    ------
    OverrideError
        For unreadable files, bad YAML, cycles in ``extends`` and bad paths.
    """
    seen: list[Path] = []

    def resolve(p: Path) -> dict[str, Any]:
        p = p.resolve()
        if p in seen:
            chain = " -> ".join(str(s.name) for s in [*seen, p])
            raise OverrideError(f"{p}: extends forms a cycle ({chain})")
        seen.append(p)
        data = _read_yaml(p)
        base = data.pop("extends", None)
        changes = _changes_from(data.pop("changes", None), p)
        if base is None:
            if changes:
                raise OverrideError(f"{p}: changes: given without 'extends' naming a base scenario")
            return data
        resolved = resolve(p.parent / str(base))
        merged = apply_changes(resolved, changes)
        merged.update({k: v for k, v in data.items()})
        return merged

    return apply_changes(resolve(Path(path)), extra)
