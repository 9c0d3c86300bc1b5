"""The package's import rule: rooms on floors, imports only downward (or within a room).

Floors, bottom up (DEVELOPERS.md states the same rule):

0. ``errors``, ``version``
1. ``scenario``           the validated description of a run
2. ``section``            the forward model: discretise, solve, fluxes, results
3. ``forward``            what calibration and planning see of the model
   ``flowpaths``          flow paths and residence times traced through a solved run
4. ``outputs``            files, summary, figures of a result (never discretises or solves)
5. ``field``, ``report``  field sheets (knows nothing of the model), the report (reads outputs)
6. ``calibration``, ``planning``, ``ensembles``  (planning and ensembles may use calibration's fit, never
   the reverse)
7. ``cli``, ``bench``, the package's ``__init__``

The test parses every module (imports inside functions count too) and fails on an upward or
sideways import, and on a cycle between rooms.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "model" / "bedflux"

FLOOR = {"errors": 0, "version": 0, "scenario": 1, "section": 2, "forward": 3, "flowpaths": 3,
         "outputs": 4,
         "field": 5, "report": 5, "calibration": 6, "planning": 6, "ensembles": 6, "cli": 7, "bench": 7, "": 7}
#: sideways imports allowed on one floor (from room -> to room)
SIDEWAYS = {("planning", "calibration"), ("ensembles", "calibration")}
#: rooms that may not import certain lower rooms at all
FORBIDDEN = {
    "field": {"section", "forward", "calibration", "planning", "report"},  # knows nothing of the model
    "report": {"section", "forward", "calibration", "planning"},           # reads outputs only
    "calibration": {"section"},                                             # through forward only
    "planning": {"section"},
    "outputs": set(),
}
#: outputs read results; these section modules discretise or solve and are not for them
OUTPUTS_MAY_NOT = {"bedflux.section.discretisation", "bedflux.section.steady", "bedflux.section.transient",
                   "bedflux.section.linear", "bedflux.section.operator"}


def room_of(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


def imports() -> list[tuple[str, str]]:
    edges = []
    for path in PACKAGE.rglob("*.py"):
        rel = path.relative_to(PACKAGE.parent).with_suffix("")
        module = ".".join(p for p in rel.parts if p != "__init__")
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom) and node.level:
                raise AssertionError(f"{module}: relative import; the package uses absolute imports")
            if isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("bedflux"):
                edges.append((module, node.module))
            elif isinstance(node, ast.Import):
                edges += [(module, a.name) for a in node.names if a.name.startswith("bedflux")]
    return edges


def violations(edges: list[tuple[str, str]]) -> list[str]:
    bad = []
    for a, b in edges:
        ra, rb = room_of(a), room_of(b)
        if ra == rb or b == "bedflux":
            if b == "bedflux" and ra not in ("cli", "bench", ""):
                bad.append(f"{a} -> {b} (the package's top level is for users)")
            continue
        if rb in FORBIDDEN.get(ra, set()):
            bad.append(f"{a} -> {b} ({ra} may not use {rb})")
        elif ra == "outputs" and b in OUTPUTS_MAY_NOT:
            bad.append(f"{a} -> {b} (outputs read results; they do not discretise or solve)")
        elif FLOOR[rb] > FLOOR[ra] or (FLOOR[rb] == FLOOR[ra] and (ra, rb) not in SIDEWAYS):
            bad.append(f"{a} -> {b} (floor {FLOOR[ra]} imports floor {FLOOR[rb]})")
    return bad


def test_every_module_is_in_a_room():
    rooms = {room_of(".".join(p.relative_to(PACKAGE.parent).with_suffix("").parts)) for p in PACKAGE.rglob("*.py")}
    assert rooms <= set(FLOOR) | {"__init__"}, rooms - set(FLOOR)


def test_imports_go_down_only():
    assert violations(imports()) == []


@pytest.mark.parametrize("edge", [("bedflux.section.transient", "bedflux.outputs.summary"),
                                  ("bedflux.outputs.figures", "bedflux.section.discretisation"),
                                  ("bedflux.calibration.estimate", "bedflux.planning.worth"),
                                  ("bedflux.field.run", "bedflux.section.simulate"),
                                  ("bedflux.report.findings", "bedflux.forward.sensitivity")])
def test_the_rule_catches_a_back_edge(edge):
    # the checker itself must be able to fail
    assert violations([edge])
