"""Start-up stays quick: ``import bedflux`` and ``bedflux --help`` load no heavy library.

The public names are imported when first used (design brief, "quick start-up"); docs/performance.md
records the start-up times against ``import numpy, scipy.sparse``. Each check runs in a fresh
interpreter, since this test process has long imported everything.
"""
from __future__ import annotations

import json
import subprocess
import sys

import pytest

#: Libraries that take tenths of a second each to import and that no start-up path needs.
HEAVY = ("matplotlib", "pandas", "xarray", "pint", "scipy.stats", "h5py", "jinja2", "tqdm")


def loaded_after(code: str) -> list[str]:
    probe = f"import sys\n{code}\nimport json\nprint(json.dumps(sorted(sys.modules)))"
    r = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    return json.loads(r.stdout.splitlines()[-1])


@pytest.mark.parametrize("code", [
    "import bedflux",
    "import bedflux.cli\ntry:\n    bedflux.cli.main(['--help'])\nexcept SystemExit:\n    pass",
    "import bedflux.cli\ntry:\n    bedflux.cli.main(['run', '--help'])\nexcept SystemExit:\n    pass",
], ids=["import", "help", "run-help"])
def test_start_up_imports_no_heavy_library(code):
    loaded = loaded_after(code)
    assert "bedflux" in loaded
    heavy = [m for m in HEAVY if m in loaded]
    assert not heavy, f"{code!r} imports {heavy}"


def test_public_names_still_load_on_use():
    loaded = loaded_after("import bedflux\nbedflux.simulate")
    assert "bedflux.section.simulate" in loaded and "xarray" in loaded
