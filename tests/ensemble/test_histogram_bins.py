"""Histograms of answers that the members share to within float resolution.

numpy cannot make equal-width bins over a range below the spacing of the floats around the
values (numpy.histogram raises "Too many bins for data range"; numpy documentation of
``histogram_bin_edges``): members of an ensemble whose drawn values do not change an answer give
such ranges (a reversal that starts at the same output time in every member, 86,400 s up to
round-off). The figure must still be drawn, with every member counted.
"""
from __future__ import annotations

import numpy as np

from bedflux.ensembles.figures import _bins


def test_bins_of_answers_equal_to_round_off_count_every_member():
    v = np.array([86400.0, 86400.0 + 1.5e-11, 86400.0, 86400.0 + 1.5e-11, 86400.0])
    counts, _ = np.histogram(v, bins=_bins(v))
    assert counts.sum() == v.size


def test_bins_of_spread_answers_cover_their_range():
    v = np.linspace(-3.0, 5.0, 40)
    edges = _bins(v)
    assert edges[0] == v.min() and edges[-1] == v.max() and 5 <= edges.size - 1 <= 30
    assert np.histogram(v, bins=edges)[0].sum() == v.size
