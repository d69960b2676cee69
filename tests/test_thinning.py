"""Plot data of a long trace: a fixed budget over the whole trace, every channel's peaks kept.

Expected values are constructed in each test (a spike placed by hand must come back).
"""

from __future__ import annotations

import numpy as np
import pytest

from soacheck.library import bundled_library
from soacheck.partfiles import read_part
from soacheck.thinning import PeakThinner, SpanThinner, bin_maxima
from soacheck.trace import TraceChecker


def test_maxima_of_each_bin_match_a_loop_over_bins():
    rng = np.random.default_rng(3)
    bins = np.repeat(np.arange(50), rng.integers(1, 40, 50))
    a, b = rng.normal(size=bins.size), rng.integers(0, 3, bins.size).astype(float)  # b has ties
    want = set()
    for k in np.unique(bins):  # the obvious way, bin by bin
        where = np.flatnonzero(bins == k)
        want |= {int(where[np.argmax(x[where])]) for x in (a, b)}
    assert bin_maxima(bins, [a, b]).tolist() == sorted(want)


@pytest.mark.parametrize("chunk", [37, 1000, 250_000])
def test_a_single_spike_survives_and_the_budget_holds_whatever_the_chunks(chunk):
    n = 500_000
    t = np.arange(n) * 1e-5
    v = np.full(n, 10.0)
    v[454_321] = 50.0  # one sample of 50 V in half a million at 10 V: a plain every-n-th sample would miss it
    v[123_456] = 1.0  # and one dip
    thinner = PeakThinner(100, ("time", "voltage"), 2)
    for start in range(0, n, chunk):
        piece = slice(start, start + chunk)
        thinner.add([v[piece], -v[piece]], lambda k, piece=piece: [t[piece][k], v[piece][k]])  # highest and lowest
    kept = thinner.result()
    assert kept["voltage"].size <= 100 * 2 + 2 * 2  # bins x (highest, lowest), a partial bin at each end
    assert kept["voltage"].max() == 50.0 and kept["voltage"].min() == 1.0
    assert kept["time"][np.argmax(kept["voltage"])] == pytest.approx(4.54321)
    assert np.all(np.diff(kept["time"]) > 0)


def test_the_trace_checker_keeps_a_bounded_plot_whatever_the_chunk_size():
    part = read_part(bundled_library() / "demo-npn-to3-250w")  # invented demo part
    n = 200_000
    t = np.arange(n) * 1e-5
    v = np.full(n, 20.0)
    i = np.full(n, 1.0)
    i[150_000:150_010] = 9.0  # a 100 µs pulse: its peak current must be in the plot
    sizes = []
    for chunk in (1000, 200_000):
        checker = TraceChecker(part, tc_c=40.0, plot_points=2000)
        for start in range(0, n, chunk):
            checker.feed(t[start : start + chunk], v[start : start + chunk], i[start : start + chunk])
        plot = checker.result().plot
        assert plot["current"].max() == 9.0
        assert plot["tj"].max() == pytest.approx(checker.result().tj_peak_c)
        sizes.append(plot["time"].size)
    assert max(sizes) <= 2 * 2000


@pytest.mark.parametrize("batch", [1, 7, 5000])
def test_excursion_spans_keep_the_worst_of_each_within_the_budget(batch):
    # 5000 excursions of 3 samples every 10 (invented): each kept span must cover whole
    # excursions and carry the least margin among them with its time, checked by a loop
    rng = np.random.default_rng(8)
    first = np.arange(5000) * 10
    start_s, end_s = first * 1e-3, (first + 2) * 1e-3
    margin = rng.uniform(-0.5, 1.0, first.size)
    margin_time = start_s + 1e-3
    spans = SpanThinner(64)
    for lo in range(0, first.size, batch):
        part = slice(lo, lo + batch)
        spans.add(first[part], start_s[part], end_s[part], margin[part], margin_time[part])
    kept = spans.result()
    assert 32 <= kept["start"].size <= 64  # the budget, at least half used
    assert kept["margin"].min() == margin.min()  # the worst excursion survives
    assert np.all(kept["end"][:-1] < kept["start"][1:])  # spans in time order, not overlapping
    for start, end, least, when in zip(*(kept[name] for name in SpanThinner.names), strict=True):
        covered = (start_s >= start) & (end_s <= end)
        assert covered.any() and least == margin[covered].min()
        assert when == margin_time[covered][np.argmin(margin[covered])]
    covered_all = np.zeros(first.size, bool)
    for start, end in zip(kept["start"], kept["end"], strict=True):
        covered_all |= (start_s >= start) & (end_s <= end)
    assert covered_all.all()  # no excursion is dropped from the plot, only merged
