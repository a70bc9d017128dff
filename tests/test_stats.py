"""Student-t intervals over replications."""

from __future__ import annotations

import math

import pytest

from sdmnet.sim.stats import ratio_interval, t_interval


def test_t_interval_matches_a_hand_computed_case():
    # Values 1..5: mean 3, s = sqrt(2.5); t(0.975, 4) = 2.776 (Student-t table, any statistics
    # text, e.g. Law, Simulation Modeling and Analysis, table T.1).
    iv = t_interval([1, 2, 3, 4, 5], 0.95)
    half = 2.776 * math.sqrt(2.5) / math.sqrt(5)
    assert iv.mean == 3
    assert iv.high - iv.mean == pytest.approx(half, rel=1e-3)
    assert iv.mean - iv.low == pytest.approx(half, rel=1e-3)


def test_one_value_has_no_interval():
    iv = t_interval([0.5])
    assert iv.mean == 0.5 and math.isnan(iv.low) and math.isnan(iv.high)


def test_ratio_interval_is_clipped_to_probabilities_and_skips_empty_replications():
    iv = ratio_interval([0, 0, 1], [100, 0, 100])
    assert iv.low == 0.0 and iv.high <= 1.0
    assert iv.mean == pytest.approx(0.005)
