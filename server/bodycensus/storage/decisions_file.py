"""The decisions file: a team's triage decisions as TOML, one table per decision, for pipelines
and for review in a diff.

::

    # bodycensus decisions (format 1): see DEVELOPERS.md, "The decisions file"
    format = 1
    catalogue = "universe"

    [[label]]                      # every finding of a rule on bodies of one label
    rule = "inside-fluid-roche"
    label = "icy moon"
    status = "accepted"            # confirmed | accepted | wontfix
    note = "fluid Roche limit; these moons are rigid"
    by = "Ana"
    decided = "2026-12-03T10:00:00+00:00"

    [[system]]                     # every finding of a rule in one system: rule, system, ...
    [[finding]]                    # one finding: rule, body, ...

Tables come broadest first (label, system, finding), each kind sorted by rule and target, so
two exports of the same decisions are the same bytes and a change is one table in a diff.
Reading uses the standard library's ``tomllib``; writing is the small ``dumps`` below.
"""

from __future__ import annotations

import json
import tomllib
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Any, cast

from bodycensus.errors import BadInput
from bodycensus.storage.decisions import SCOPES, Decision, Scope, Status

FORMAT = 1
TARGET_KEY: dict[Scope, str] = {"label": "label", "system": "system", "finding": "body"}
FILE_ORDER: tuple[Scope, ...] = ("label", "system", "finding")
_FIELDS = ("status", "note", "by", "decided")


@dataclass(frozen=True)
class DecisionsFile:
    """What a decisions file holds: the catalogue key it was written for and its decisions."""

    catalogue: str
    decisions: tuple[Decision, ...]


def toml_string(text: str) -> str:
    """``text`` as a TOML basic string.

    Hand-written rather than a TOML-writing dependency because the file holds only flat tables
    of strings and one integer: JSON's string escapes (``\\"``, ``\\\\``, ``\\n``, ``\\uXXXX``)
    are all TOML escapes too, and DEL, which TOML wants escaped and JSON does not, is escaped
    here. ``tests/test_decisions_file.py`` round-trips arbitrary text through ``tomllib``."""
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


def dumps(catalogue: str, decisions: Iterable[Decision]) -> str:
    """The decisions file's text for ``catalogue``'s decisions, in the stable order above."""
    lines = ["# bodycensus decisions (format 1): see DEVELOPERS.md, \"The decisions file\"",
             f"format = {FORMAT}", f"catalogue = {toml_string(catalogue)}"]
    rank = {scope: i for i, scope in enumerate(FILE_ORDER)}
    for d in sorted(decisions, key=lambda d: (rank[d.scope], d.rule, d.target)):
        lines += ["", f"[[{d.scope}]]", f"rule = {toml_string(d.rule)}",
                  f"{TARGET_KEY[d.scope]} = {toml_string(d.target)}"]
        lines += [f"{name} = {toml_string(getattr(d, name))}" for name in _FIELDS
                  if getattr(d, name) or name == "status"]
    return "\n".join(lines) + "\n"


def loads(text: str, where: str = "the decisions file") -> DecisionsFile:
    """Read a decisions file; BadInput naming the table and key of the first problem."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise BadInput(f"{where} is not TOML: {err}") from err
    if data.get("format") != FORMAT:
        raise BadInput(f"{where}: 'format = {FORMAT}' is missing or another version")
    unknown = set(data) - {"format", "catalogue", *SCOPES}
    if unknown:
        raise BadInput(f"{where}: unknown key '{sorted(unknown)[0]}'; tables are "
                       "[[label]], [[system]] and [[finding]]")
    catalogue = data.get("catalogue", "")
    if not isinstance(catalogue, str):
        raise BadInput(f"{where}: catalogue must be a string")
    found: list[Decision] = []
    for scope in FILE_ORDER:
        tables = data.get(scope, [])
        if not isinstance(tables, list):
            raise BadInput(f"{where}: write [[{scope}]] (an array of tables), not [{scope}]")
        found += [_decision(scope, table, f"{where}, [[{scope}]] number {n}")
                  for n, table in enumerate(tables, 1)]
    return DecisionsFile(catalogue, tuple(_unique(found, where)))


def _decision(scope: Scope, table: dict[str, Any], where: str) -> Decision:
    """One table as a Decision."""
    target_key = TARGET_KEY[scope]
    allowed = {"rule", target_key, *_FIELDS}
    extra = sorted(set(table) - allowed)
    if extra:
        raise BadInput(f"{where}: unknown key '{extra[0]}'; use {', '.join(sorted(allowed))}")
    for name in ("rule", target_key, "status"):
        if not isinstance(table.get(name), str):
            raise BadInput(f"{where}: '{name}' is missing or not a string")
    texts = {name: table.get(name, "") for name in ("note", "by", "decided")}
    if not all(isinstance(v, str) for v in texts.values()):
        raise BadInput(f"{where}: note, by and decided must be strings")
    try:
        return Decision(scope, table["rule"], table[target_key], cast(Status, table["status"]),
                        texts["note"], texts["by"], texts["decided"])
    except BadInput as err:
        raise BadInput(f"{where}: {err}") from err


def _unique(decisions: Sequence[Decision], where: str) -> list[Decision]:
    """The decisions, refusing two that cover the same findings."""
    seen: set[tuple[str, str, str]] = set()
    for d in decisions:
        if d.key in seen:
            raise BadInput(f"{where}: rule {d.rule} on {d.scope} '{d.target}' is decided twice")
        seen.add(d.key)
    return list(decisions)
