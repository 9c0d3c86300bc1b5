"""Set-ups shared by the whole test session.

The worked example (the README's chain on the shipped scenarios) is computed once and read by the
browser test of the report, the tests of the ``fit`` verb and the field uncertainty tests. Tests
that use it only read its folders; a test that changes an output works on its own copy.
"""
from __future__ import annotations

import importlib.util
from dataclasses import dataclass, field
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SCENARIOS = ROOT / "scenarios"


@dataclass
class WorkedExample:
    """The project folder of the worked example and the exit status of each command."""

    root: Path
    status: dict[str, int] = field(default_factory=dict)

    def assert_all_succeeded(self) -> None:
        failed = {name: code for name, code in self.status.items() if code != 0}
        assert not failed, f"bedflux commands of the worked example failed (exit status): {failed}"


@pytest.fixture(scope="session")
def worked_example(tmp_path_factory) -> WorkedExample:
    """``bedflux run`` on scenarios/flood_pulse.toml (folder ``pulse``) and scenarios/reach_long.toml
    (``reach``), ``bedflux field`` on scenarios/field (``field``), ``bedflux fit`` on
    scenarios/reach_fit.toml (``fit``) and, when that verb exists, ``bedflux plan`` on the first
    scenarios/*plan*.toml (``plan``), all into one project folder."""
    from bedflux.cli import main

    root = tmp_path_factory.mktemp("worked") / "project"
    steps = {"pulse": ["run", str(SCENARIOS / "flood_pulse.toml"), "-o", str(root / "pulse"), "-q"],
             "reach": ["run", str(SCENARIOS / "reach_long.toml"), "-o", str(root / "reach"), "-q"],
             "field": ["field", str(SCENARIOS / "field"), "-o", str(root / "field"), "-q"],
             "fit": ["fit", str(SCENARIOS / "reach_fit.toml"), "-o", str(root / "fit"), "-q"]}
    if importlib.util.find_spec("bedflux.planning.command") is not None:
        plans = sorted(SCENARIOS.glob("*plan*.toml"))
        if not plans:
            pytest.fail("bedflux plan exists but scenarios/ has no *plan*.toml for the worked example")
        steps["plan"] = ["plan", str(plans[0]), "-o", str(root / "plan"), "-q"]
    example = WorkedExample(root)
    for name, argv in steps.items():
        example.status[name] = main(argv)
    return example
