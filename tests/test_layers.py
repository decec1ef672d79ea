"""The layers hold: read from the source with ``ast`` (and one real import), not from a list kept by hand.

The rules are the shared design's (DESIGN.md "Data flow", STYLE.md §1, §7,
§12): the pure pipeline and metrology import no I/O library, drivers depend on
nothing above them, only the store speaks SQL, the product starts the
simulators only for the demo, ``simulate`` and the benchmarks, and the import
graph has no circle. Each allowed exception is listed here with its reason.
"""

from __future__ import annotations

import ast
import subprocess
import sys
import tomllib
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

#: foreign libraries that do I/O or drive a terminal: none of them in a pure module
IO_LIBRARIES = ("serial", "pyvisa", "pyvisa_py", "sqlite3", "sqlite_utils", "textual")

#: modules that may import sqlite3 besides the store package, and why
SQLITE_ALLOWED = {
    "soaklog.bench": "the ingest benchmark's baseline is bare sqlite3 executemany into the same schema",
}

#: where the product may start the simulators: (module or function name part, reason)
SIMULATOR_PLACES = (
    ("demo", "`soaklog demo` runs the simulated lab"),
    ("simulat", "`soaklog simulate` runs one simulator standalone"),
    ("bench", "the benchmarks measure against the simulators, imported inside the functions that run them"),
    ("soaklog.clock", "a type only (under TYPE_CHECKING): AcceleratedClock runs on a simulation's time source"),
)

@dataclass(frozen=True)
class Import:
    """One import statement's target, where it is, and whether it runs when the module is imported."""

    module: str  # the importing module
    target: str  # the module imported (``a.b`` for ``from a import b`` when ``a.b`` is a module)
    top_level: bool  # runs at import time (not inside a function, not under TYPE_CHECKING)
    function: str  # the enclosing function's name ("" at module level)
    line: int


def _package_dirs() -> dict[str, Path]:
    """Import name -> folder, from pyproject's package-dir (the one place that maps them)."""
    data = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    return {name: ROOT / folder for name, folder in data["tool"]["setuptools"]["package-dir"].items()}


def _modules() -> dict[str, Path]:
    out: dict[str, Path] = {}
    for pkg, folder in _package_dirs().items():
        for f in sorted(folder.rglob("*.py")):
            parts = list(f.relative_to(folder).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts = parts[:-1]
            out[".".join([pkg, *parts])] = f
    return out


MODULES = _modules()


def _is_type_checking(test: ast.expr) -> bool:
    return (isinstance(test, ast.Name) and test.id == "TYPE_CHECKING") or (
        isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING"
    )


def _resolve(module: str, node: ast.ImportFrom) -> str:
    if not node.level:
        return node.module or ""
    pkg = module if MODULES[module].name == "__init__.py" else module.rpartition(".")[0]
    for _ in range(node.level - 1):
        pkg = pkg.rpartition(".")[0]
    return f"{pkg}.{node.module}" if node.module else pkg


def imports_of(module: str, source: str | None = None) -> Iterator[Import]:
    """Every import in a module, with whether it runs at import time and the function it sits in."""
    tree = ast.parse(MODULES[module].read_text(encoding="utf-8") if source is None else source)

    def visit(node: ast.AST, top: bool, function: str) -> Iterator[Import]:
        for child in ast.iter_child_nodes(node):
            if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef)):
                yield from visit(child, False, function or child.name)
            elif isinstance(child, ast.Lambda):
                yield from visit(child, False, function or "<lambda>")
            elif isinstance(child, ast.If) and _is_type_checking(child.test):
                for sub in child.body:
                    yield from visit(ast.Module(body=[sub], type_ignores=[]), False, function)
                for sub in child.orelse:
                    yield from visit(ast.Module(body=[sub], type_ignores=[]), top, function)
            elif isinstance(child, ast.Import):
                for alias in child.names:
                    yield Import(module, alias.name, top, function, child.lineno)
            elif isinstance(child, ast.ImportFrom):
                base = _resolve(module, child)
                for alias in child.names:
                    full = f"{base}.{alias.name}"
                    yield Import(module, full if full in MODULES else base, top, function, child.lineno)
            else:
                yield from visit(child, top, function)

    yield from visit(tree, True, "")


IMPORTS = [imp for m in MODULES for imp in imports_of(m)]


def _top_graph() -> dict[str, set[str]]:
    """soaklog module -> the soaklog modules it imports at import time."""
    graph: dict[str, set[str]] = {m: set() for m in MODULES}
    for imp in IMPORTS:
        if imp.top_level and imp.target in MODULES and imp.target != imp.module:
            graph[imp.module].add(imp.target)
    return graph


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """The strongly connected components with more than one module (Tarjan), each sorted."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def strong(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                strong(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                found.append(sorted(comp))

    for v in sorted(graph):
        if v not in index:
            strong(v)
    return found


def _loaded_by(module: str) -> set[str]:
    """What importing ``module`` loads, following import-time imports and the parent packages they run."""
    graph = _top_graph()
    foreign = {m: {i.target for i in IMPORTS if i.module == m and i.top_level and i.target not in MODULES}
               for m in MODULES}
    seen: set[str] = set()
    todo = [module]
    out: set[str] = set()
    while todo:
        m = todo.pop()
        if m in seen:
            continue
        seen.add(m)
        parts = m.split(".")
        todo.extend(p for p in (".".join(parts[:i]) for i in range(1, len(parts))) if p in MODULES)
        todo.extend(graph[m])
        out |= {f.split(".")[0] for f in foreign[m]}
    return out | seen


# ---------------------------------------------------------------- the reader of the source itself


def test_the_source_walk_finds_the_packages_and_knows_module_level_from_function_level():
    assert {"soaklog.pipeline", "soaklog.store.reader", "soaklog.drivers.base", "soaklog.simulators.lab"} <= set(MODULES)
    assert not any(m.startswith("soaklog.drivers.") and "daq" in str(p) for m, p in MODULES.items())
    src = (
        "import os\nfrom typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    import sqlite3\n"
        "def f():\n    import serial\nclass C:\n    import json\n"
    )
    got = {(i.target, i.top_level, i.function) for i in imports_of("soaklog.pipeline", src)}
    assert ("os", True, "") in got and ("json", True, "") in got
    assert ("sqlite3", False, "") in got and ("serial", False, "f") in got
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]


# ---------------------------------------------------------------- the rules


def test_no_import_circle_among_soaklog_modules():
    assert _cycles(_top_graph()) == []


@pytest.mark.parametrize("module", ["soaklog.pipeline", "soaklog.sensors"])
def test_the_pure_pipeline_and_metrology_import_no_io_library(module):
    by_source = _loaded_by(module) & set(IO_LIBRARIES)
    assert by_source == set(), f"{module} loads {sorted(by_source)} (following the source)"
    # and the interpreter agrees, in a fresh process
    code = f"import sys, {module}; print(' '.join(sorted(m for m in {IO_LIBRARIES!r} if m in sys.modules)))"
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=True)
    assert run.stdout.split() == [], f"importing {module} loaded {run.stdout.split()}"


def test_only_the_store_imports_sqlite():
    offenders = sorted(
        f"{i.module}:{i.line}" for i in IMPORTS
        if i.target.split(".")[0] in ("sqlite3", "sqlite_utils")
        and not (i.module == "soaklog.store" or i.module.startswith("soaklog.store."))
        and i.module not in SQLITE_ALLOWED
    )
    assert offenders == []


def _names_sqlite(path: Path) -> bool:
    return any(isinstance(n, ast.Name) and n.id in ("sqlite3", "sqlite_utils")
               for n in ast.walk(ast.parse(path.read_text(encoding="utf-8"))))


def test_viewers_do_not_handle_sqlite_errors_themselves():
    # the store translates every sqlite3.Error into StorageError: a viewer that names sqlite3 is a leak
    viewers = [m for m in MODULES if m.startswith(("soaklog.dashboard", "soaklog.report"))
               or m in ("soaklog.status", "soaklog.export", "soaklog.cli", "soaklog.alarms_cli", "soaklog.demo")]
    assert len(viewers) > 10
    assert _names_sqlite(MODULES["soaklog.store.core"])  # the check sees the real thing
    assert [m for m in viewers if _names_sqlite(MODULES[m])] == []


def test_drivers_import_nothing_above_them():
    # drivers take plain settings: nothing from the config, the clock or the store (DESIGN.md "Data flow")
    above = sorted(
        f"{i.module}:{i.line} imports {i.target}" for i in IMPORTS
        if i.module.startswith("soaklog.drivers") and i.target.startswith("soaklog")
        and not i.target.startswith("soaklog.drivers") and i.target != "soaklog.errors"
    )
    assert above == []


def test_the_product_starts_the_simulators_only_in_demo_simulate_and_the_benchmarks():
    outside = [i for i in IMPORTS if i.target.startswith("soaklog.simulators")
               and not i.module.startswith("soaklog.simulators")]
    assert outside, "the walk should see the demo's import of the simulated lab"
    at_import = [f"{i.module}:{i.line}" for i in outside if i.top_level]
    assert at_import == []
    elsewhere = [f"{i.module}:{i.line} in {i.function}()" for i in outside
                 if not any(part in i.module or part in i.function for part, _why in SIMULATOR_PLACES)]
    assert elsewhere == []


def test_the_report_does_not_import_the_status_command():
    assert [f"{i.module}:{i.line}" for i in IMPORTS
            if i.module.startswith("soaklog.report") and i.target == "soaklog.status"] == []
