"""Limits that keep a careless input from hanging the machine or exhausting its memory.

Foster terms with nearly equal time constants are merged (rule in
:func:`soacheck.thermal.merge_close_time_constants`); the merge keeps Zth(∞) = ΣR and the
area ΣRτ exactly (both linear in the terms, elementary) and moves Zth(t) by less than
ΣR·rel_tol/e, from |∂Zth/∂τ| = (R t/τ²)·e^(−t/τ) ≤ R/(e τ) (elementary calculus).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from soacheck.thermal import Foster, chain, merge_close_time_constants
from soacheck.thermal_response import _branch_any_step

from .helpers import invoke

NEAR = Foster([0.02, 0.06, 0.22, 0.4], [1e-4, 1e-3, 1e-2, 1e-2 * (1 + 1e-9)])


def test_nearly_equal_time_constants_merge_keeping_rth_and_area():
    merged = merge_close_time_constants(NEAR)
    assert merged.tau_s.size == 3
    assert merged.rth_k_per_w == pytest.approx(0.70, rel=1e-12)  # ΣR, elementary
    area = float(np.sum(NEAR.r_k_per_w * NEAR.tau_s))
    assert float(np.sum(merged.r_k_per_w * merged.tau_s)) == pytest.approx(area, rel=1e-12)  # ΣRτ, elementary
    t = np.geomspace(1e-6, 10, 200)
    assert np.max(np.abs(merged.zth(t) - NEAR.zth(t))) <= 0.62 * 1e-9 / math.e  # bound of the docstring


def test_distinct_time_constants_are_kept():
    four = Foster([0.05, 0.15, 0.30, 0.50], [1e-4, 1e-3, 1e-2, 1e-1])
    merged = merge_close_time_constants(four)
    np.testing.assert_array_equal(merged.tau_s, four.tau_s)
    np.testing.assert_array_equal(merged.r_k_per_w, four.r_k_per_w)


@pytest.mark.parametrize("delta", [0.0, 1e-12, 1e-9, 1e-6, 1e-4, 9e-4])
def test_a_heatsink_chain_of_nearly_equal_terms_is_a_valid_network(delta):
    foster = Foster([0.02, 0.06, 0.22, 0.4], [1e-4, 1e-3, 1e-2, 1e-2 * (1 + delta)])
    ladder, weights = chain(foster, case_sink_k_per_w=0.3, sink_ambient_k_per_w=1.0, sink_j_per_k=100.0)
    junction = ladder.to_foster()
    # junction to ambient at DC: Rjc + Rcs + Rsa = 0.70 + 0.3 + 1.0 K/W (series resistances, elementary)
    assert junction.rth_k_per_w == pytest.approx(2.0, rel=1e-9)
    assert np.all(junction.tau_s > 0) and np.all(np.isfinite(junction.tau_s))


def test_a_branch_spanning_many_more_time_constants_than_samples_needs_no_memory():
    """τ = 1 ps over 10⁶ s is 10¹⁸ time constants; the rise settles to R·P at each later sample."""
    t = np.array([0.0, 1e-3, 5.0, 1e6])
    rise = _branch_any_step(t, np.ones(4), 1.0, 1e-12, 0.0)
    np.testing.assert_allclose(rise, [0.0, 1.0, 1.0, 1.0])  # θ = R·P·(1 − e^(−Δt/τ)), closed form


def test_a_trace_through_a_heatsink_with_nearly_equal_terms_runs(tmp_path):
    from .conftest import write_part

    extra = "[thermal]\nfoster_r = [0.05, 0.15, 0.30, 0.50]\nfoster_tau = [1e-4, 1e-3, 1e-2, 1.0000001e-2]\n"
    folder = write_part(tmp_path / "near", extra=extra)
    trace = tmp_path / "t.csv"
    trace.write_text("time,voltage,current\n0,10,1\n0.001,10,1\n0.003,10,1\n0.0031,10,1\n0.01,10,1\n")
    result = invoke("trace", folder, trace, "--heatsink-rth", "1", "--heatsink-capacity", "100", "--json")
    assert result.exit_code == 0, result.output  # 10 W on a 125 W part with 2.3 K/W to ambient: far inside


def test_a_run_too_large_for_memory_stops_before_it_starts(tmp_path):
    stage = tmp_path / "s.toml"
    stage.write_text('part = "demo-npn-to3-250w"\ncount = 10000\nballast = 0.1\ncase_temp = 40\n')
    args = ("sweep", stage, "--ramp", "current", "--from", "0", "--to", "6", "--at", "10", "--samples", "1000000")
    result = invoke(*args)
    assert result.exit_code == 2, result.output
    # 20 arrays x 8 bytes x 10 000 devices x 10⁶ samples = 1.6e12 bytes = 1490 GiB
    assert "a run of 10000 devices over 1000000 samples would need about 1.49e+03 GiB" in result.stderr


def test_a_monte_carlo_too_long_to_run_is_refused(tmp_path):
    stage = tmp_path / "s.toml"
    stage.write_text('part = "demo-npn-to3-250w"\ncount = 1000\nballast = 0.1\nvbe_spread = 0.02\ncase_temp = 40\n')
    result = invoke("sharing", stage, "-i", "100", "-v", "5", "--draws", "1000000")
    assert result.exit_code == 2, result.output
    assert "1000000 draws of 1000 devices is 1e+09 device solutions" in result.stderr
