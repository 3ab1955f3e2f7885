"""The architecture of the package, read from its code: floors, imports and the contributor
guide's map.

Every module of ``server/bodycensus`` belongs to a floor (its folder). A module may import
modules of its own floor and of floors below it, never above: the science knows nothing of
storage or the web. ``render_map()`` draws the map of DEVELOPERS.md from the modules' own
docstrings; ``python tests/architecture.py`` writes it there, and tests/test_architecture.py
fails when the written map is stale.
"""

from __future__ import annotations

import ast
import sys
from dataclasses import dataclass
from functools import cache
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "server" / "bodycensus"
GUIDE = ROOT / "DEVELOPERS.md"
MAP_START, MAP_END = "<!-- map:start (python tests/architecture.py) -->", "<!-- map:end -->"

# Lowest first: (floor, its package prefix, what it holds).
FLOORS: tuple[tuple[str, str, str], ...] = (
    ("base", "bodycensus.errors", "the exception tree every floor raises; durable writes; "
     "progress reports"),
    ("science", "bodycensus.science", "units, families, physics, rules, artefacts"),
    ("input", "bodycensus.input", "formats, readers, the column mapping, ingest"),
    ("storage", "bodycensus.storage", "the data directory, manifests, SQLite, durable writes"),
    ("engines", "bodycensus.engines", "a whole check of one catalogue"),
    ("diagrams", "bodycensus.diagrams", "aggregates and the figures drawn from them"),
    ("demo", "bodycensus.demo", "the invented demo catalogue and its scoring"),
    ("dashboard", "bodycensus.dashboard", "the web application (FastAPI, jinja2)"),
    ("bench", "bodycensus.bench", "the benchmark: whole processes and a served dashboard "
     "measured against baselines; the plain pandas reference of the rules"),
    ("cli", "bodycensus.cli", "the command line"),
    ("entry", "bodycensus.__main__", "`python -m bodycensus`"),
)


@dataclass(frozen=True)
class Module:
    """One module of the package: its dotted name, file, floor and what it imports of ours."""

    name: str
    path: Path
    floor: str
    imports: frozenset[str]
    job: str


BASE_MODULES = ("bodycensus", "bodycensus.errors", "bodycensus.durable", "bodycensus.progress")


def floor_of(name: str) -> str:
    """The floor of a dotted module name: its folder, or base for the package's own modules."""
    if name in BASE_MODULES:
        return "base"
    for floor, prefix, _ in FLOORS[1:-1]:
        if name == prefix or name.startswith(prefix + "."):
            return floor
    return "entry"


def floor_rank(floor: str) -> int:
    """The floor's height: 0 for the lowest."""
    return [f for f, _, _ in FLOORS].index(floor)


def _module_name(path: Path) -> str:
    """``server/bodycensus/science/units.py`` -> ``bodycensus.science.units``."""
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _our_imports(tree: ast.Module, name: str, is_package: bool) -> set[str]:
    """Dotted names of our modules that a module's code imports (lazy imports included)."""
    known, found = module_names(), set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = name.split(".") if is_package else name.split(".")[:-1]
                anchor = anchor[: len(anchor) - node.level + 1]
                base = ".".join([*anchor, base] if base else anchor)
            found.add(base)
            found.update(f"{base}.{alias.name}" for alias in node.names)
    return {n for n in found if n in known and n != name}


@cache
def module_names() -> frozenset[str]:
    """Every module of the package by dotted name."""
    return frozenset(_module_name(p) for p in PACKAGE.rglob("*.py"))


@cache
def modules() -> tuple[Module, ...]:
    """Every module of the package, parsed once."""
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        name = _module_name(path)
        tree = ast.parse(path.read_text(encoding="utf-8"))
        doc = (ast.get_docstring(tree) or "").strip()
        job = " ".join(doc.split("\n\n")[0].split())
        imports = _our_imports(tree, name, path.name == "__init__.py")
        found.append(Module(name, path, floor_of(name), frozenset(imports), job))
    return tuple(found)


# Modules with logic that no test imports directly, and the test that exercises them instead.
TESTED_THROUGH: dict[str, str] = {
    "bodycensus.bench.pandas_catalogue": "test_pandas_reference.py: the pandas reference's "
                                         "findings equal the engine's",
    "bodycensus.bench.pandas_context": "test_pandas_reference.py: the pandas reference's "
                                       "findings equal the engine's",
    "bodycensus.bench.pandas_rules": "test_pandas_reference.py: the pandas reference's findings "
                                     "equal the engine's",
    "bodycensus.bench.run": "test_bench_cli.py runs `python -m bodycensus bench` as a process",
    "bodycensus.bench.served": "test_bench_cli.py: the served dashboard's latency table",
    "bodycensus.cli.bench": "test_bench_cli.py runs `python -m bodycensus bench` as a process",
    "bodycensus.cli.compare": "test_gate_cli.py runs `python -m bodycensus compare` as a process",
    "bodycensus.cli.gate": "test_gate_cli.py runs check --decisions/--baseline as a process",
    "bodycensus.dashboard.routes.compare": "test_triage_api.py: the Compare screen and its JSON",
    "bodycensus.dashboard.routes.triage": "test_triage_api.py, test_security.py through the app",
    "bodycensus.dashboard.deps": "test_api.py: every route receives its store and settings",
    "bodycensus.dashboard.intake.uploads": "test_api_lifecycle.py, test_hostile_input.py upload",
    "bodycensus.dashboard.security.guard": "test_security.py, test_auth.py through the app",
    "bodycensus.demo.defects_body": "test_demo_planted.py checks every planted defect",
    "bodycensus.demo.defects_orbit": "test_demo_planted.py checks every planted defect",
    "bodycensus.demo.defects_rings": "test_demo_planted.py checks every planted defect",
    "bodycensus.demo.names": "test_demo.py: names of a written demo",
    "bodycensus.demo.orbits": "test_demo.py: orbits of a written demo obey Kepler and Hill",
    "bodycensus.demo.planter": "test_demo_planted.py: truth rows of each planted defect",
    "bodycensus.demo.rings": "test_demo.py: the clean rings of a written demo",
    "bodycensus.demo.stars": "test_demo.py: stellar masses and radii of a written demo",
    "bodycensus.demo.tides": "test_demo.py: tides damped the clean eccentricities, took doomed "
                             "moons",
    "bodycensus.progress": "a Protocol; test_ingest.py and test_local.py record progress calls",
    "bodycensus.science.rules.body": "test_rules.py through the rule registry (all_rules)",
    "bodycensus.input.astro_tables": "test_formats.py: the VOTable and FITS records and their "
                                     "metadata units",
    "bodycensus.science.rules.uncertainty_context": "test_rules.py: denser-than-iron in sigma, "
                                                    "upper limits, the Kepler tolerance",
    "bodycensus.science.rules.errors": "test_rules.py through the rule registry (all_rules)",
    "bodycensus.science.rules.needs": "test_base.py and test_rules.py: coverage's why-skipped",
    "bodycensus.science.rules.statistics": "test_rules.py through the rule registry (all_rules)",
}


def has_logic(module: Module) -> bool:
    """Whether a module defines any function (constants and re-exports need no test file)."""
    tree = ast.parse(module.path.read_text(encoding="utf-8"))
    return any(isinstance(n, ast.FunctionDef | ast.AsyncFunctionDef) for n in ast.walk(tree))


def tested_directly() -> dict[str, set[str]]:
    """Module name -> the test files that import it."""
    users: dict[str, set[str]] = {}
    for path in sorted((ROOT / "tests").rglob("test_*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for name in _our_imports(tree, "tests", False):
            users.setdefault(name, set()).add(path.name)
    return users


def untested_modules() -> list[str]:
    """Modules with logic that no test file imports and that are not listed as tested
    through another test."""
    users = tested_directly()
    return [m.name for m in modules() if has_logic(m) and m.name not in users
            and m.name not in TESTED_THROUGH]


def upward_imports() -> list[str]:
    """Each import that reaches up a floor, as 'importer -> imported'."""
    return [f"{m.name} ({m.floor}) -> {i} ({floor_of(i)})" for m in modules()
            for i in sorted(m.imports) if floor_rank(floor_of(i)) > floor_rank(m.floor)]


def import_cycles() -> list[list[str]]:
    """Cycles in the import graph of modules (packages' ``__init__`` re-exports included)."""
    graph = {m.name: set(m.imports) for m in modules()}
    cycles, state = [], dict.fromkeys(graph, 0)

    def visit(node: str, path: list[str]) -> None:
        state[node] = 1
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                cycles.append([*path[path.index(nxt):], nxt] if nxt in path else [node, nxt])
            elif state.get(nxt) == 0:
                visit(nxt, [*path, nxt])
        state[node] = 2

    for start in sorted(graph):
        if state[start] == 0:
            visit(start, [start])
    return cycles


def import_levels() -> int:
    """The number of import levels: the longest chain of modules importing one another."""
    graph = {m.name: set(m.imports) for m in modules()}

    @cache
    def depth(node: str) -> int:
        return 1 + max((depth(n) for n in graph.get(node, ()) if n != node), default=0)

    return max(depth(name) for name in graph)


def render_map() -> str:
    """The module map of DEVELOPERS.md: one table, floor by floor, lowest first."""
    lines = [MAP_START, "",
             f"{len(modules())} modules on {import_levels()} import levels; lowest floor first. "
             "Each module's job is the first paragraph of its docstring.", "",
             "| floor | module | job |", "|---|---|---|"]
    for floor, _, holds in FLOORS:
        members = [m for m in modules() if m.floor == floor]
        for i, module in enumerate(members):
            shown = module.path.relative_to(PACKAGE.parent).as_posix()
            cell = f"**{floor}**: {holds}" if i == 0 else ""
            lines.append(f"| {cell} | `{shown}` | {module.job.replace('|', '/')} |")
    lines += ["", MAP_END]
    return "\n".join(lines)


def written_map() -> str | None:
    """The map as DEVELOPERS.md holds it now (None when the markers are missing)."""
    text = GUIDE.read_text(encoding="utf-8")
    if MAP_START not in text or MAP_END not in text:
        return None
    return text[text.index(MAP_START): text.index(MAP_END) + len(MAP_END)]


def write_map() -> None:
    """Replace the map in DEVELOPERS.md with one drawn from the code."""
    text, current = GUIDE.read_text(encoding="utf-8"), written_map()
    if current is None:
        raise SystemExit(f"DEVELOPERS.md has no {MAP_START} ... {MAP_END} markers")
    GUIDE.write_text(text.replace(current, render_map()), encoding="utf-8")


if __name__ == "__main__":
    write_map()
    print(f"DEVELOPERS.md map: {len(modules())} modules, {import_levels()} import levels",
          file=sys.stderr)
