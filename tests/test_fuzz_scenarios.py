"""Mutation fuzz of the demo scenario through ``validate`` and ``plan``.

Each mutant is the demo scenario (``configs/demo.yaml``) with one to three
random changes drawn by ``random.Random(seed)``: a value replaced by a
hostile one (None, huge or tiny numbers, 10**400, NaN, long text, NUL bytes,
nested lists, a list where a name belongs, unknown units, out-of-range
temperatures), an entry deleted, a list item doubled, a value wrapped in a
list, or an unknown field added. The generator is fixed: the same seed
gives the same mutant on every machine, so a failing seed is a reproducer
(``python -m tests.test_fuzz_scenarios SEED`` prints its YAML).

Every mutant must give exit 0 or 2 from ``validate`` (1 and 2 from
``plan``; never 3), no traceback, one line per problem naming a field,
lines of bounded length, and nothing written on exit 2. A ``plan`` mutant
must not be refused by ``plan`` after ``validate`` passed it.
"""

from __future__ import annotations

import copy
import random
import re
import sys
from pathlib import Path
from typing import Any

import pytest
import yaml

from optimizer.cli import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = yaml.safe_load((ROOT / "configs" / "demo.yaml").read_text(encoding="utf-8"))

_DUMPER = getattr(yaml, "CSafeDumper", yaml.SafeDumper)

N_VALIDATE = 500
"""Mutants run through ``validate`` (seeds 0 .. N_VALIDATE - 1)."""

PLAN_SEEDS = range(100_000, 100_008)
"""Mutants of the small scenario run through ``validate`` and ``plan``."""

CAUGHT = {
    79: "a 1e30 integer echoed whole in the message",
    86: "a long unknown due shift echoed whole",
    92: "a long unknown product name echoed whole",
    119: "a list given as a geometry shape: exit 3 (unhashable type)",
    122: "a whole tunnel echoed in 'expected a mapping'",
    210: "a whole oven echoed in 'expected a mapping'",
    227: "a 5000-character name echoed in the list of known products",
    268: "a zone list echoed whole",
    290: "a 5000-character name echoed in the list of known products",
    292: "a mapping given as a geometry shape: exit 3 (unhashable type)",
    302: "an oven air temperature of 1e30 °C accepted",
}
"""Seeds this fuzzer caught before the fixes (kept as regression cases)."""

MAX_LINE = 500
"""Longest problem line accepted [characters]."""

HOSTILE: tuple[Any, ...] = (
    None, True, False, 0, -1, 1, 2, 0.5, 1e308, -1e308, 10**400, -(10**30), 10**30, "", " ",
    "x" * 5000, "a\x00b", [], {}, [[[1]]], {"a": {"b": 1}}, "nan", "inf", float("nan"),
    float("inf"), "12 parsecs", "-5 degC", "1e308 m", "0 m", "5000 degC", "-300 degC",
    "1e-300 m", "100 %", "200 %", "1e9 m/s", ["cylinder"], ["x", "y"], "=HYPERLINK(1)",
    "cook", "chill", "freeze", "slab", "rack-oven-1", "chill-tunnel", "mon-early",
    "chicken-fillet", 1e-300, 1e9, -0.0, 3,
)  # fmt: skip
"""Values a mutation puts in place of a scenario value."""

_FIELD = re.compile(r"^(line \d+: |[A-Za-z_]\w*(\[\d+\])*(\.[^\s:]+)*: )")
"""A problem line after the file name: ``line N: `` or a field path and ``: ``."""


def _paths(node: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    out = [prefix]
    if isinstance(node, dict):
        for key, value in node.items():
            out += _paths(value, (*prefix, key))
    elif isinstance(node, list):
        for index, value in enumerate(node):
            out += _paths(value, (*prefix, index))
    return out


def _mutate(data: Any, rng: random.Random) -> None:
    path = rng.choice(_paths(data)[1:])
    parent = data
    for key in path[:-1]:
        parent = parent[key]
    key = path[-1]
    op = rng.random()
    if op < 0.55:
        parent[key] = copy.deepcopy(rng.choice(HOSTILE))
    elif op < 0.65:
        if isinstance(parent, dict):
            del parent[key]
        else:
            parent.pop(key)
    elif op < 0.75:
        if isinstance(parent, list):
            parent.append(copy.deepcopy(parent[key]))
        else:
            parent[key] = [parent[key]]
    elif op < 0.85:
        value = parent[key]
        if isinstance(value, int | float) and not isinstance(value, bool):
            parent[key] = value * rng.choice([1e6, -1, 1e-6, 0, 1e300])
        elif isinstance(value, str):
            choices = [value * 50, value + " extra", value.upper(), value[:1], str(rng.random())]
            parent[key] = rng.choice(choices)
        else:
            parent[key] = copy.deepcopy(rng.choice(HOSTILE))
    elif isinstance(parent, dict):
        parent["zz_" + str(key)] = 1
    elif isinstance(parent[key], dict):
        parent[key] = dict(parent[key], extra=1)
    else:
        parent[key] = {"name": parent[key]}


def mutant(seed: int, base: dict[str, Any] = DEMO) -> str:
    """The YAML text of mutant ``seed`` of ``base``."""
    rng = random.Random(seed)
    data = copy.deepcopy(base)
    for _ in range(rng.randint(1, 3)):
        _mutate(data, rng)
    return yaml.dump(data, Dumper=_DUMPER, allow_unicode=True)


def small_demo() -> dict[str, Any]:
    """The demo cut to one oven setting, one tunnel setting and loading, one product and shift."""
    data = copy.deepcopy(DEMO)
    oven = data["ovens"][0]
    oven["settings"] = oven["settings"][:1]
    data["ovens"] = [oven]
    tunnel = data["tunnels"][0]
    tunnel.update(fed_by=[oven["name"]], settings=tunnel["settings"][:1])
    tunnel["loadings"] = tunnel["loadings"][:1]
    data["products"] = [p for p in data["products"] if p["name"] == "beef-patty"]
    data["shifts"] = data["shifts"][:1]
    data["orders"] = [o for o in data["orders"] if o["product"] == "beef-patty"]
    data["rules"] = {}
    return data


def _check(seed: int, code: int, out: str, err: str, path: Path, allowed: set[int]) -> list[str]:
    """What is wrong with one run (empty when nothing is)."""
    wrong = []
    if code not in allowed:
        wrong.append(f"exit {code}")
    if "Traceback" in out + err or "internal error" in err:
        wrong.append("traceback or internal error")
    lines = [line for line in err.splitlines() if line.strip()]
    if code == 2:
        if not lines:
            wrong.append("exit 2 without a problem line")
        for line in lines:
            rest = line.removeprefix(f"{path}: ")
            if rest == line or not _FIELD.match(rest):
                wrong.append(f"a line naming no field: {line[:200]!r}")
            if len(line) > MAX_LINE:
                wrong.append(f"a line of {len(line)} characters: {line[:120]!r}...")
    return [f"seed {seed}: {w}" for w in wrong]


def _run(capsys, *argv: object) -> tuple[int, str, str]:
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _validate(capsys, folder: Path, seed: int) -> tuple[int, list[str]]:
    path = folder / f"m{seed}.yaml"
    path.write_text(mutant(seed), encoding="utf-8")
    code, out, err = _run(capsys, "validate", path, "--quiet")
    wrong = _check(seed, code, out, err, path, {0, 2})
    if sorted(p.name for p in folder.iterdir()) != [path.name]:
        wrong.append(f"seed {seed}: validate wrote {sorted(p.name for p in folder.iterdir())}")
    path.unlink()
    return code, wrong


@pytest.mark.parametrize("seed", sorted(CAUGHT), ids=lambda s: f"seed{s}")
def test_caught_seeds_stay_fixed(capsys, tmp_path, seed):
    assert _validate(capsys, tmp_path, seed)[1] == [], CAUGHT[seed]


def test_validate_mutants(capsys, tmp_path):
    wrong: list[str] = []
    codes: dict[int, int] = {}
    for seed in range(N_VALIDATE):
        code, problems = _validate(capsys, tmp_path, seed)
        wrong += problems
        codes[code] = codes.get(code, 0) + 1
    assert wrong == [], "\n".join(wrong)
    # the mutants reach both outcomes: some pass, most are refused
    assert codes.get(0, 0) > 0 and codes.get(2, 0) > N_VALIDATE // 2, codes
    print(f"fuzz: {N_VALIDATE} validate mutants, exit codes {codes}")


def test_plan_mutants(capsys, tmp_path):
    cache = tmp_path / "cache"
    small = small_demo()
    for seed in PLAN_SEEDS:
        path = tmp_path / f"p{seed}.yaml"
        path.write_text(mutant(seed, small), encoding="utf-8")
        out_dir = tmp_path / f"out{seed}"
        checked = _run(capsys, "validate", path, "--quiet")
        ran = _run(
            capsys, "plan", path, "--quiet", "--out", out_dir, "--cache-dir", cache,
            "--time-limit", "20",
        )  # fmt: skip
        assert _check(seed, *checked, path, {0, 2}) == []
        assert _check(seed, *ran, path, {0, 1, 2}) == []
        if checked[0] == 2:
            assert ran[0] == 2 and ran[2] == checked[2], f"seed {seed}: plan and validate differ"
            assert not out_dir.exists(), f"seed {seed}: plan wrote {out_dir} on bad input"
        else:
            assert ran[0] in (0, 1), f"seed {seed}: validate passed what plan refused"


if __name__ == "__main__":  # print one mutant: python -m tests.test_fuzz_scenarios SEED
    sys.stdout.write(mutant(int(sys.argv[1])))
