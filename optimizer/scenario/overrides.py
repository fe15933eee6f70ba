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
import os
import stat
from collections.abc import Iterable, Mapping, MutableMapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml
from yaml.composer import Composer
from yaml.constructor import SafeConstructor
from yaml.nodes import MappingNode, Node, ScalarNode, SequenceNode
from yaml.parser import Parser
from yaml.reader import Reader, ReaderError
from yaml.resolver import Resolver
from yaml.scanner import Scanner

try:  # libyaml parses about seven times faster than the pure-Python parser
    from yaml._yaml import CParser as _CParser
except ImportError:  # pragma: no cover - PyYAML built without libyaml
    _CParser = None

from optimizer.scenario.units import shown, shown_key


class OverrideError(ValueError):
    """A change names a path that does not exist or is written wrongly."""


MAX_FILE_BYTES = 4 * 1024 * 1024
"""Largest scenario or study file read [bytes] (the demo scenario is about 8 kB)."""
MAX_EXPANDED_SIZE = 1_000_000
"""Largest YAML document accepted, counted after aliases are expanded: one per
value plus the characters of every text [-]. It bounds what validation and
error messages walk; an alias bomb exceeds it at once."""
MAX_NESTING = 40
"""Deepest nesting of lists and mappings accepted in a YAML document [-]."""


class _DocumentTooLarge(yaml.YAMLError):
    """Raised while composing: nesting too deep (with the line)."""

    def __init__(self, message: str, line: int | None) -> None:
        super().__init__(message)
        self.message = message
        self.line = line


class _BoundedComposer(Composer):
    """Composes nodes from parser events, refusing nesting deeper than :data:`MAX_NESTING`."""

    _depth = 0

    def compose_node(self, parent: Node | None, index: Any) -> Node | None:
        self._depth += 1
        try:
            if self._depth > MAX_NESTING:
                mark = self.peek_event().start_mark
                raise _DocumentTooLarge(
                    f"lists and mappings nested deeper than {MAX_NESTING} levels",
                    mark.line + 1 if mark is not None else None,
                )
            return super().compose_node(parent, index)
        finally:
            self._depth -= 1


if _CParser is not None:

    class _BoundedLoader(_BoundedComposer, _CParser, SafeConstructor, Resolver):
        """Safe loader: libyaml's parser (events), composed here with the nesting bound."""

        def __init__(self, stream: str) -> None:
            _CParser.__init__(self, stream)
            _BoundedComposer.__init__(self)
            SafeConstructor.__init__(self)
            Resolver.__init__(self)

else:  # pragma: no cover - PyYAML built without libyaml

    class _BoundedLoader(_BoundedComposer, Reader, Scanner, Parser, SafeConstructor, Resolver):  # type: ignore[no-redef]
        """Safe loader in pure Python, with the nesting bound."""

        def __init__(self, stream: str) -> None:
            Reader.__init__(self, stream)
            Scanner.__init__(self)
            Parser.__init__(self)
            _BoundedComposer.__init__(self)
            SafeConstructor.__init__(self)
            Resolver.__init__(self)


def _construct_int(loader: yaml.SafeLoader, node: ScalarNode) -> int:
    digits = sum(ch.isdigit() for ch in node.value)
    if digits > 1000:  # Python refuses to read integers of more than 4300 digits
        raise _DocumentTooLarge(
            f"a number of {digits} digits; accepted: numbers up to about 1e308",
            node.start_mark.line + 1,
        )
    return SafeConstructor.construct_yaml_int(loader, node)


_BoundedLoader.add_constructor("tag:yaml.org,2002:int", _construct_int)


def _expanded(node: Node, sizes: dict[int, tuple[int, int]], open_: set[int]) -> tuple[int, int]:
    """(size, depth) of ``node`` with aliases expanded; memoised on shared nodes.

    Walks in document order, so every alias target is measured before its
    first use and the recursion stays within the composed depth.
    """
    key = id(node)
    if key in sizes:
        return sizes[key]
    if key in open_:
        raise _DocumentTooLarge(
            "an alias refers to a value that contains it", node.start_mark.line + 1
        )
    if isinstance(node, ScalarNode):
        result = (1 + len(node.value), 1)
    else:
        open_.add(key)
        children: list[Node] = []
        if isinstance(node, SequenceNode):
            children = list(node.value)
        elif isinstance(node, MappingNode):
            children = [part for pair in node.value for part in pair]
        size, depth = 1, 0
        for child in children:
            s, d = _expanded(child, sizes, open_)
            size, depth = size + s, max(depth, d)
            if size > MAX_EXPANDED_SIZE:
                raise _DocumentTooLarge(
                    f"expands to more than {MAX_EXPANDED_SIZE:,} values and characters "
                    "(aliases of aliases); write the values out",
                    node.start_mark.line + 1,
                )
        if depth + 1 > MAX_NESTING:
            raise _DocumentTooLarge(
                f"lists and mappings nested deeper than {MAX_NESTING} levels (through aliases)",
                node.start_mark.line + 1,
            )
        open_.discard(key)
        result = (size, depth + 1)
    sizes[key] = result
    return result


def _not_allowed(exc: ReaderError, text: str, where: str) -> OverrideError:
    """The error for a character YAML does not allow (NUL, ...), with its line."""
    if _CParser is not None:  # libyaml counts the position in UTF-8 bytes
        line = text.encode("utf-8", "surrogatepass")[: exc.position].count(b"\n") + 1
    else:
        line = text[: exc.position].count("\n") + 1
    char = chr(exc.character) if isinstance(exc.character, int) else exc.character
    return OverrideError(f"{where}: line {line}: character {char!r} is not allowed in YAML text")


def parse_yaml(text: str, where: str) -> Any:
    """Parse one YAML document with bounded nesting and expanded size.

    Parameters
    ----------
    text : str
        The document.
    where : str
        File name or option for the error message.

    Raises
    ------
    OverrideError
        ``where: line N: ...`` for invalid YAML, nesting deeper than
        :data:`MAX_NESTING`, self-referring aliases or a document larger than
        :data:`MAX_EXPANDED_SIZE` once aliases are expanded.
    """
    try:
        loader = _BoundedLoader(text)
    except ReaderError as exc:  # a character YAML does not allow (NUL, ...)
        raise _not_allowed(exc, text, where) from None
    try:
        node = loader.get_single_node()
        if node is None:
            return None
        _expanded(node, {}, set())
        return loader.construct_document(node)
    except _DocumentTooLarge as exc:
        line = f"line {exc.line}: " if exc.line is not None else ""
        raise OverrideError(f"{where}: {line}{exc.message}") from None
    except ReaderError as exc:
        raise _not_allowed(exc, text, where) from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f"line {mark.line + 1}: " if mark is not None else ""
        problem = getattr(exc, "problem", None)
        what = f" ({problem})" if problem else ""
        raise OverrideError(f"{where}: {line}not valid YAML{what}") from None
    finally:
        loader.dispose()


def read_text_file(path: str | Path) -> str:
    """Read a scenario or study file: a regular file of UTF-8 text, at most :data:`MAX_FILE_BYTES`.

    Devices (``/dev/zero``), FIFOs and directories are refused before they
    are opened, so nothing blocks or grows without bound.

    Raises
    ------
    OverrideError
        Naming the file and what is accepted (with the line of a byte that
        is not UTF-8).
    """
    p = Path(path)
    try:
        info = os.stat(p)
    except OSError as exc:
        raise OverrideError(f"{p}: cannot read file ({exc.strerror})") from None
    except ValueError:  # an embedded NUL in the path
        raise OverrideError(f"{p!s:.200}: not a usable file name") from None
    if not stat.S_ISREG(info.st_mode):
        kind = "a directory" if stat.S_ISDIR(info.st_mode) else "not a regular file"
        raise OverrideError(f"{p}: {kind}; give a YAML file")
    limit = f"accepted: at most {MAX_FILE_BYTES // (1024 * 1024)} MiB"
    if info.st_size > MAX_FILE_BYTES:
        raise OverrideError(f"{p}: file is {info.st_size:,} bytes; {limit}")
    try:
        with open(p, "rb") as handle:
            data = handle.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise OverrideError(f"{p}: cannot read file ({exc.strerror})") from None
    if len(data) > MAX_FILE_BYTES:
        raise OverrideError(f"{p}: file is larger than {MAX_FILE_BYTES:,} bytes; {limit}")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        raise OverrideError(
            f"{p}: line {line}: byte 0x{data[exc.start]:02x} is not UTF-8 text; "
            "accepted: a YAML file saved as UTF-8"
        ) from None


def read_yaml_file(path: str | Path) -> Any:
    """Read and parse a YAML file, bounded as :func:`read_text_file` and :func:`parse_yaml` say."""
    return parse_yaml(read_text_file(path), str(path))


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
            f"--set: expected PATH=VALUE such as tunnels.main.length='24 m', got {shown(text)}"
        )
    try:
        value = parse_yaml(raw, "--set") if raw.strip() else None
    except OverrideError as exc:
        if "not valid YAML" not in str(exc):
            raise OverrideError(f"--set {path}: {str(exc).removeprefix('--set: ')}") from None
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
            known = ", ".join(sorted(map(shown_key, node))) or "none"
            raise OverrideError(f"{where}: no field {shown(segment)} here; fields present: {known}")
        return segment, node[segment]
    if isinstance(node, list):
        for i, item in enumerate(node):
            if isinstance(item, Mapping) and str(item.get("name")) == segment:
                return i, item
        if segment.isdigit() and int(segment) < len(node):
            return int(segment), node[int(segment)]
        names = [str(it.get("name")) for it in node if isinstance(it, Mapping) and "name" in it]
        accepted = ", ".join(names) if names else f"an index 0..{len(node) - 1}"
        raise OverrideError(f"{where}: no item named {shown(segment)}; accepted: {accepted}")
    raise OverrideError(
        f"{where}: {shown(segment)} cannot be looked up inside a {type(node).__name__}"
    )


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
                f"differ (at least a new name), got {shown(item)}"
            )
        merged = copy.deepcopy(dict(original))
        merged.update(item)
        item = merged
        if str(item.get("name")) == str(change.copy_of):
            raise OverrideError(
                f"{change.path}: value.name: the copy of {shown(change.copy_of)} needs a new name"
            )
    if isinstance(item, Mapping) and "name" in item:
        names = {str(x.get("name")) for x in node if isinstance(x, Mapping)}
        if str(item["name"]) in names:
            raise OverrideError(
                f"{change.path}: an item named {shown(item['name'])} exists already; "
                "give a new name"
            )
    node.append(item)


def _read_yaml(path: Path) -> dict[str, Any]:
    data = read_yaml_file(path)
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
