"""``corepace rules``: the shipped rule sets and the fields of a rule written in a scenario."""

from __future__ import annotations

import argparse

import pandas as pd

from optimizer.cli.common import EXIT_OK
from optimizer.cli.options import Formatter, add_common
from optimizer.cli.terminal import Ui, rich_table
from optimizer.dwell.describe import rule_text
from optimizer.reporting import export
from optimizer.scenario.models import (
    ChillRuleSpec,
    CookRuleSpec,
    FreezeRuleSpec,
    builtin_rules,
)

__all__ = ["add_parser", "cmd_rules", "rule_fields_table", "shipped_rules_table"]


def add_parser(subparsers: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add ``corepace rules`` to the command's subparsers."""
    p = subparsers.add_parser(
        "rules",
        help="shipped rule sets and the fields of a rule",
        description="List the rule sets shipped with corepace (name them in a product's "
        "cook_rule or chill_rule) and the fields of a rule written inline or under "
        "the scenario's rules: section.",
        epilog="examples:\n  corepace rules\n  corepace rules --json\n",
        formatter_class=Formatter,
    )
    add_common(p, out=False)
    p.set_defaults(func=cmd_rules)
    return p


def shipped_rules_table() -> pd.DataFrame:
    """One row per shipped rule set: name, kind, requirement in words, source."""
    rows = [
        {"name": name, "kind": rule.kind, "requirement": rule_text(rule), "source": rule.source}
        for name, rule in sorted(builtin_rules().items())
    ]
    return pd.DataFrame(rows, columns=["name", "kind", "requirement", "source"])


def rule_fields_table() -> pd.DataFrame:
    """One row per field of a cook, chill and freeze rule: kind, field, required, meaning."""
    rows = []
    for model in (CookRuleSpec, ChillRuleSpec, FreezeRuleSpec):
        kind = model.model_fields["kind"].default
        for name, f in model.model_fields.items():
            rows.append(
                {
                    "kind": kind,
                    "field": f.alias or name,
                    "required": f.is_required(),
                    "meaning": f.description
                    or (f"{kind}: the kind of rule" if name == "kind" else ""),
                }
            )
    return pd.DataFrame(rows, columns=["kind", "field", "required", "meaning"])


def cmd_rules(args: argparse.Namespace, ui: Ui) -> int:
    """``corepace rules``: print the shipped rule sets and the fields of a rule."""
    shipped, fields = shipped_rules_table(), rule_fields_table()
    ui.emit_json({"rules": export.table_records(shipped), "fields": export.table_records(fields)})
    ui.result(
        rich_table(
            shipped,
            title="Shipped rule sets (examples: check them against the plant's food-safety plan)",
        )
    )
    ui.say(rich_table(fields, title="Fields of a rule written in a scenario"))
    return EXIT_OK
