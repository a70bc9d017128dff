"""Student-t intervals over replications, and the steady-state test across replications."""

from __future__ import annotations

import math
from dataclasses import replace
from types import SimpleNamespace

import numpy as np
import pytest

from sdmnet.inputs.bundled import bundled_scenario
from sdmnet.inputs.loaders import load_scenario
from sdmnet.sim.engine import prepare, simulate_replication
from sdmnet.sim.stats import f_survival, ratio_interval, steady_state_check, t_interval, t_quantile

# Upper critical values t(1 - alpha, df) of Student's t, as printed (3 decimals) in the
# NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.2, "Critical Values of the
# Student's t Distribution": {df: {1 - alpha: value}}.  The table's 0.999 column is left out:
# three of its entries (df 1, 9, 10: 318.313, 4.296, 4.143) are off in the third decimal from
# the exact values (318.309, 4.297, 4.144 in other printed tables and in scipy).
NIST_T_TABLE = {
    1: {0.90: 3.078, 0.95: 6.314, 0.975: 12.706, 0.99: 31.821, 0.995: 63.657},
    2: {0.90: 1.886, 0.95: 2.920, 0.975: 4.303, 0.99: 6.965, 0.995: 9.925},
    3: {0.90: 1.638, 0.95: 2.353, 0.975: 3.182, 0.99: 4.541, 0.995: 5.841},
    4: {0.90: 1.533, 0.95: 2.132, 0.975: 2.776, 0.99: 3.747, 0.995: 4.604},
    5: {0.90: 1.476, 0.95: 2.015, 0.975: 2.571, 0.99: 3.365, 0.995: 4.032},
    9: {0.90: 1.383, 0.95: 1.833, 0.975: 2.262, 0.99: 2.821, 0.995: 3.250},
    10: {0.90: 1.372, 0.95: 1.812, 0.975: 2.228, 0.99: 2.764, 0.995: 3.169},
    19: {0.90: 1.328, 0.95: 1.729, 0.975: 2.093, 0.99: 2.539, 0.995: 2.861},
    30: {0.90: 1.310, 0.95: 1.697, 0.975: 2.042, 0.99: 2.457, 0.995: 2.750},
    100: {0.90: 1.290, 0.95: 1.660, 0.975: 1.984, 0.99: 2.364, 0.995: 2.626},
}


@pytest.mark.parametrize("df", sorted(NIST_T_TABLE))
def test_t_quantile_matches_the_printed_table(df: int) -> None:
    for probability, printed in NIST_T_TABLE[df].items():
        assert t_quantile(probability, df) == pytest.approx(printed, abs=0.0005 + 1e-12)


def test_t_quantile_agrees_with_a_reference_library_to_rounding() -> None:
    # scipy's stdtrit (Cephes) as an independent implementation; sdmnet does not import it.
    from scipy.special import stdtrit

    for df in (1, 2, 3, 6, 7, 24, 25, 200, 999):
        for probability in (0.6, 0.9, 0.975, 0.9995):
            assert t_quantile(probability, df) == pytest.approx(float(stdtrit(df, probability)), rel=1e-9)
    assert t_quantile(0.5, 7) == 0.0


# Upper 5 % points F(0.95; dfn, dfd) of Fisher's F as printed in the NIST/SEMATECH e-Handbook of
# Statistical Methods, section 1.3.6.7.3, "Upper Critical Values of the F Distribution" (from
# memory, 3 decimals): P(F > value) must be 0.05 to the printed precision.
F_UPPER_5_PERCENT = {(1, 10): 4.965, (2, 10): 4.103, (4, 20): 2.866, (9, 30): 2.211, (1, 100): 3.936}


@pytest.mark.parametrize(("dfs", "printed"), sorted(F_UPPER_5_PERCENT.items()))
def test_f_survival_matches_the_printed_table(dfs: tuple[int, int], printed: float) -> None:
    below, above = f_survival(*dfs, printed - 0.0005), f_survival(*dfs, printed + 0.0005)
    assert above < 0.05 < below


def test_f_survival_agrees_with_a_reference_library() -> None:
    # scipy's fdtrc (Cephes) as an independent implementation; sdmnet does not import it.
    from scipy.special import fdtrc

    for dfn in (1, 2, 3, 9, 99):
        for dfd in (1, 2, 20, 1000, 20_000):
            for f in (1e-6, 0.3, 1.0, 1.7, 10.0, 1e3):
                assert f_survival(dfn, dfd, f) == pytest.approx(float(fdtrc(dfn, dfd, f)), rel=1e-9, abs=1e-300)
    assert f_survival(3, 10, 0.0) == 1.0


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


def test_replications_frozen_in_different_states_are_flagged():
    # Batches of each replication agree with each other (blocking 0.1 or 0.6 throughout) but the
    # replications do not: the analysis of variance rejects one steady state.
    offered = [[[100] * 10] for _ in range(4)]
    frozen = [SimpleNamespace(pair_batch_offered=o, pair_batch_blocked=[[b] * 10])
              for o, b in zip(offered, (10, 60, 11, 59))]  # fmt: skip
    check = steady_state_check(frozen)
    assert not check.steady and check.p_value < 1e-10


def test_replications_of_one_steady_state_pass():
    # Binomial batches with the same blocking in every replication: no flag (seeded draws).
    rng = np.random.default_rng(3)
    recs = [
        SimpleNamespace(
            pair_batch_offered=[[200] * 10, [100] * 10],
            pair_batch_blocked=[rng.binomial(200, 0.2, 10).tolist(), rng.binomial(100, 0.05, 10).tolist()],
        )
        for _ in range(5)
    ]
    assert steady_state_check(recs).steady


def test_locking_fiber_grooming_is_flagged_and_provisioned_fibers_are_not():
    # The demo's fiber switching with fibers lit by the first demand and freed by the last one
    # locks in (which pairs hold fibers is set by the warm-up); provisioned fiber paths do not.
    sc = load_scenario(bundled_scenario("demo"))
    arch = next(a for a in sc.architectures if a.switching == "fiber" and a.share)
    setup = prepare(sc, arch)
    for provisioned, steady in ((False, False), (True, True)):
        run = replace(setup, provisioned_fibers=provisioned)
        recs = [simulate_replication(run, 80.0, sc.seed, r, 4000, 1000) for r in range(4)]
        assert steady_state_check(recs).steady is steady
