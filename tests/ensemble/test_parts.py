"""Members streamed to part files as they finish read back as the members gathered in memory,
in member order, whatever order they arrived in (failed members included)."""
from __future__ import annotations

import numpy as np

from bedflux.ensembles.members import run_member
from bedflux.ensembles.run import Gatherer
from bedflux.ensembles.spec import build_spec

from ensemble_columns import column


def test_parts_read_back_as_in_memory(tmp_path):
    spec = build_spec(column(), 11, [{"path": "bed.kv", "distribution": "uniform", "min": 0.5, "max": 1.2}], seed=8)
    results = [run_member(spec, spec.draw(i)) for i in range(spec.members)]
    assert any(r.failure for r in results) and not all(r.failure for r in results)
    order = [7, 2, 9, 0, 10, 4, 1, 8, 3, 6, 5]
    memory, streamed = Gatherer(spec), Gatherer(spec, tmp_path, part_members=3)
    for i in order:
        memory.add(results[i])
        streamed.add(results[i])
    assert len(list(tmp_path.glob("part-*.nc"))) == 3
    a, b = memory.dataset(), streamed.dataset().load()
    np.testing.assert_array_equal(b["member"].values, np.arange(11))
    for name in ("parameter_value", "bed_flux", "exchange", "failed"):
        np.testing.assert_array_equal(a[name].values, b[name].values)
    assert list(a["failure"].values) == list(b["failure"].values)
