"""The house rules of the layout: data flows one way and functions take few arguments.

Every import in planner/ is read from the source (at module level, inside functions and under
``TYPE_CHECKING`` alike) and mapped to the room it comes from: a top-level package
(``planner.runs``) or module (``planner.scenario``). The rules (common practice for layered
code; DEVELOPERS.md, "How data flows"):

* the runs (``planner.runs``) and the reports (``planner.report``) never import each other:
  runs produce result objects (``planner.results``) and reports read them;
* the numerics (``planner.forecast``, ``planner.simulate``, ``planner.summaries``,
  ``planner.hospital``) and the ward's records (``planner.records``) import neither the
  scenario reader nor the command line, the runs or the reports;
* no loop between rooms;
* no function outside the click commands takes more than 8 parameters.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "planner"
MOST_PARAMETERS = 8
READER = {"planner.scenario", "planner.scenario_history", "planner.schema_checks",
          "planner.scenario_hospital"}  # fmt: skip
NUMERICS = ("planner.forecast", "planner.simulate", "planner.summaries", "planner.records",
            "planner.hospital")  # fmt: skip


def module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def room(module: str) -> str:
    """The top-level package or module of ``planner.x.y``: ``planner.x``."""
    return ".".join(module.split(".")[:2])


def imported(path: Path) -> set[str]:
    """Every planner module ``path`` imports, wherever the import stands."""
    tree = ast.parse(path.read_text())
    here = module_name(path)
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found |= {alias.name for alias in node.names}
        elif isinstance(node, ast.ImportFrom):
            if node.level:  # relative import: resolve against this module's package
                base = here.split(".")[
                    : len(here.split(".")) - node.level + (path.stem == "__init__")
                ]
                name = ".".join([*base, node.module] if node.module else base)
            else:
                name = node.module or ""
            found.add(name)
            found |= {f"{name}.{alias.name}" for alias in node.names}
    return {name for name in found if name.split(".")[0] == "planner"}


def modules() -> dict[str, set[str]]:
    return {module_name(path): imported(path) for path in sorted(PACKAGE.rglob("*.py"))}


def room_graph() -> dict[str, set[str]]:
    known = {room(name) for name in modules()}
    graph: dict[str, set[str]] = {}
    for name, targets in modules().items():
        graph.setdefault(room(name), set()).update(
            room(target)
            for target in targets
            if room(target) in known and room(target) != room(name)
        )
    return graph


def test_the_walker_sees_imports_inside_functions_and_type_checking(tmp_path):
    source = tmp_path / "planner" / "runs" / "example.py"
    source.parent.mkdir(parents=True)
    source.write_text(
        "from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    from planner.scenario import S\n"
        "def f():\n    import planner.report.html\n    from . import run\n"
    )
    global PACKAGE
    saved, PACKAGE = PACKAGE, tmp_path / "planner"
    try:
        found = imported(source)
    finally:
        PACKAGE = saved
    assert {"planner.scenario", "planner.report.html", "planner.runs.run"} <= found


@pytest.mark.parametrize(
    ("sources", "forbidden"),
    [
        (("planner.runs",), ("planner.report",)),
        (("planner.report",), ("planner.runs",)),
        (NUMERICS, (*READER, "planner.cli", "planner.runs", "planner.report")),
    ],
)
def test_imports_run_one_way(sources, forbidden):
    wrong = [
        f"{name} imports {target}"
        for name, targets in modules().items()
        if name.startswith(sources)
        for target in targets
        if target.startswith(forbidden)
    ]
    assert not wrong, wrong


def test_no_loop_between_rooms():
    graph = room_graph()
    loops = []

    def visit(node: str, trail: list[str]) -> None:
        for target in sorted(graph.get(node, ())):
            if target in trail:
                loops.append(" -> ".join(trail[trail.index(target) :] + [target]))
            elif len(trail) < len(graph):
                visit(target, [*trail, target])

    for start in sorted(graph):
        visit(start, [start])
    assert not loops, sorted(set(loops))[:10]


def is_click_command(function: ast.FunctionDef) -> bool:
    for decorator in function.decorator_list:
        call = decorator.func if isinstance(decorator, ast.Call) else decorator
        if isinstance(call, ast.Attribute) and call.attr in ("command", "group"):
            return True
    return False


def test_no_function_takes_more_than_eight_parameters():
    crowded = []
    for path in sorted(PACKAGE.rglob("*.py")):
        for node in ast.walk(ast.parse(path.read_text())):
            if not isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
                continue
            arguments = node.args
            names = [
                a.arg for a in (*arguments.posonlyargs, *arguments.args, *arguments.kwonlyargs)
            ]
            names = [name for name in names if name not in ("self", "cls")]
            if len(names) > MOST_PARAMETERS and not is_click_command(node):
                crowded.append(f"{module_name(path)}.{node.name}: {len(names)}")
    assert not crowded, crowded
