"""Tests of sdmnet.optics.physics and the sourced defaults in sdmnet.optics.defaults."""

from __future__ import annotations

import math
from dataclasses import replace

import pytest

from sdmnet.inputs.model import Cable, FiberType, LineSpec, TransceiverSpec
from sdmnet.optics import defaults
from sdmnet.optics.physics import (
    evaluate_path,
    mimo_cmul_per_bit,
    mimo_cmul_per_symbol,
    mimo_group,
    mimo_taps_for_spread,
    module_power_w,
    splices_in,
)

# A transceiver with round numbers so expected values can be worked out by hand.
ROUND = TransceiverSpec(
    lane_gbps=400.0,
    symbol_rate_gbaud=50.0,
    samples_per_symbol=2.0,
    reach_km=1000.0,
    power_budget_db=1000.0,
    max_mimo_taps=10_000,
    crosstalk_limit_db=0.0,
    mdl_limit_db=100.0,
    module_power_w=15.0,
    mimo_pj_per_cmul=1.0,
    switch_insertion_loss_db=6.0,
    connector_loss_db=1.0,
    splice_loss_db=0.1,
    splice_spacing_km=5.0,
    mimo_base_taps=10,
    tap_margin=1.5,
)


def random_fiber(name: str = "cc", gd: float = 3.0, mdl: float = 0.1, cores: int = 4, group: int = 4) -> FiberType:
    return FiberType(name, cores, "random", group, 64, 0.2, gd_spread_ps_per_sqrt_km=gd, mdl_db_per_sqrt_km=mdl)


def weak_fiber(name: str = "w", xt: float = -60.0, dgd: float | None = None, cores: int = 7) -> FiberType:
    return FiberType(name, cores, "weak", 1, 64, 0.2, crosstalk_db_per_km=xt, dgd_ps_per_km=dgd)


def hop(length: float, fiber: FiberType, a: str = "A", b: str = "B") -> tuple[Cable, FiberType]:
    return Cable(a, b, length, fiber.name, 1), fiber


# --- group-delay spread -----------------------------------------------------------------------


def test_random_coupling_spread_grows_with_sqrt_length():
    # Ho & Kahn, "Statistics of group delays in multimode fiber with strong mode coupling",
    # JLT 2011: under strong (random) coupling the RMS spread grows as sqrt(L): 4x length -> 2x.
    f = random_fiber(gd=3.0)
    short = evaluate_path([hop(25.0, f)], ROUND, 4).gd_spread_ps
    long = evaluate_path([hop(100.0, f)], ROUND, 4).gd_spread_ps
    assert long == pytest.approx(2.0 * short)
    assert short == pytest.approx(3.0 * 5.0)  # coef * sqrt(25 km)


def test_deterministic_spread_grows_linearly():
    # Ho & Kahn, JLT 2011: in the weak-coupling (deterministic) regime the spread grows as L:
    # 4x length -> 4x.
    f = weak_fiber(dgd=0.5)
    short = evaluate_path([hop(25.0, f)], ROUND, 1).gd_spread_ps
    long = evaluate_path([hop(100.0, f)], ROUND, 1).gd_spread_ps
    assert long == pytest.approx(4.0 * short)
    assert short == pytest.approx(12.5)


def test_two_random_types_in_series_add_in_quadrature():
    # Independent random delays: variances add (Ho & Kahn, JLT 2011), so
    # sqrt(3^2 * 16 + 4^2 * 16) = sqrt(144 + 256) = 20 ps (worked by hand).
    a = random_fiber("a", gd=3.0)
    b = random_fiber("b", gd=4.0)
    phys = evaluate_path([hop(16.0, a), hop(16.0, b, "B", "C")], ROUND, 4)
    assert phys.gd_spread_ps == pytest.approx(20.0)


def test_mixed_path_adds_random_and_deterministic_parts_linearly():
    # Documented choice (docs/physics.md): random RMS part + deterministic skew, worst case.
    # Worked by hand: 3 * sqrt(16) = 12 ps, plus 0.5 ps/km * 10 km = 5 ps -> 17 ps.
    phys = evaluate_path([hop(16.0, random_fiber(gd=3.0)), hop(10.0, weak_fiber(dgd=0.5), "B", "C")], ROUND, 4)
    assert phys.gd_spread_ps == pytest.approx(17.0)


# --- MIMO taps ----------------------------------------------------------------------------------


def test_mimo_taps_hand_computed():
    # Worked by hand: 10 ps/sqrt(km) * sqrt(100 km) = 100 ps; at 50 GBd that is 5 symbols,
    # 10 samples at 2 samples/symbol, 15 with margin 1.5, plus 10 base taps = 25.
    phys = evaluate_path([hop(100.0, random_fiber(gd=10.0))], ROUND, 4)
    assert phys.gd_spread_ps == pytest.approx(100.0)
    assert phys.mimo_taps == 25
    assert phys.mimo_size == 8  # 4 coupled cores x 2 polarizations
    assert mimo_taps_for_spread(100.0, ROUND) == 25


def test_no_mimo_on_weakly_coupled_path_even_for_joint_units():
    # docs/model.md, section 1: only randomly coupled groups need MIMO; weak cores are received alone.
    phys = evaluate_path([hop(50.0, weak_fiber(dgd=1.0))], ROUND, 7)
    assert phys.mimo_taps == 0
    assert phys.mimo_size == 0
    assert phys.gd_spread_ps == pytest.approx(50.0)


def test_mimo_group_is_lcm_of_coupled_groups():
    # Aligned blocks of 2 and 3 consecutive cores chain into blocks of 6 (arithmetic).
    a = random_fiber("a", cores=6, group=2)
    b = random_fiber("b", cores=6, group=3)
    assert mimo_group([a, b]) == 6
    assert mimo_group([weak_fiber()]) == 1
    phys = evaluate_path([hop(10.0, a), hop(10.0, b, "B", "C")], ROUND, 2)
    assert not phys.feasible
    assert "groups of 6" in phys.reason


# --- crosstalk ----------------------------------------------------------------------------------


# Fan-in/fan-out crosstalk switched off, to see the fiber's own law.
NO_FIFO_XT = LineSpec(fifo_crosstalk_db=-300.0)


def test_crosstalk_rises_10log10_2_per_doubling():
    # Inter-core crosstalk power of weakly coupled MCF grows linearly with length (common
    # practice; Hayashi et al., Opt. Express 20(26) B94, 2012): +10 log10(2) dB per doubling.
    f = weak_fiber(xt=-60.0)
    xt = [evaluate_path([hop(L, f)], ROUND, 1, line=NO_FIFO_XT).crosstalk_db for L in (10.0, 20.0, 40.0)]
    assert xt[1] - xt[0] == pytest.approx(10 * math.log10(2))
    assert xt[2] - xt[1] == pytest.approx(10 * math.log10(2))
    assert xt[0] == pytest.approx(-50.0)  # -60 + 10 log10(10)


def test_crosstalk_adds_in_power_across_cables():
    # Powers add (common practice): two 40 km cables of one type give the crosstalk of one 80 km
    # cable.
    f = weak_fiber(xt=-60.0)
    two = evaluate_path([hop(40.0, f), hop(40.0, f, "B", "C")], ROUND, 1, line=NO_FIFO_XT).crosstalk_db
    one = evaluate_path([hop(80.0, f)], ROUND, 1, line=NO_FIFO_XT).crosstalk_db
    assert two == pytest.approx(one)


def test_default_weak_crosstalk_reproduces_published_80km_figure():
    # Hayashi et al., Opt. Express 20(26) B94, 2012: -53 dB after 6.99 km, "equivalent to
    # -42.5 dB after 80 km".  The default per-km figure must give that after 80 km.
    f = FiberType("w", 7, "weak", 1, 64, 0.17)  # no crosstalk given: default applies
    xt = evaluate_path([hop(80.0, f)], ROUND, 1, line=NO_FIFO_XT).crosstalk_db
    assert xt == pytest.approx(-42.5, abs=0.15)


def test_fan_in_fan_out_crosstalk_adds_in_power_where_cores_are_fanned_out():
    # Powers add (common practice).  Two 40 km cables of a weak 7-core fiber, multicore
    # amplifiers: per-core switching fans the cores out at the middle site too (4 devices:
    # both ends and the site's pair); joint switching only at the ends (2 devices).
    f = weak_fiber(xt=-60.0)
    path = [hop(40.0, f), hop(40.0, f, "B", "C")]
    line = LineSpec(amplifier="multicore", fifo_crosstalk_db=-50.0)
    fiber_part = 10 ** ((-60.0 + 10 * math.log10(40.0)) / 10) * 2
    for switching, devices in (("independent", 4), ("joint", 2), ("fiber", 2)):
        xt = evaluate_path(path, ROUND, 1, line=line, switching=switching).crosstalk_db
        assert xt == pytest.approx(10 * math.log10(fiber_part + devices * 1e-5)), switching
    # Per-core amplifiers need a fan-out before and a fan-in after every amplifier: 2 per span.
    per_core = evaluate_path(path, ROUND, 1, line=replace(line, amplifier="per-core"), switching="joint")
    assert per_core.crosstalk_db == pytest.approx(10 * math.log10(fiber_part + 4 * 1e-5))


def test_crosstalk_not_applicable_without_neighbours():
    # Documented choice: NaN ("not applicable"), written as an empty cell in paths.csv: a single
    # coupled group (MIMO undoes the mixing) or a single-core fiber has no neighbour.
    assert math.isnan(evaluate_path([hop(50.0, random_fiber())], ROUND, 4).crosstalk_db)
    assert math.isnan(evaluate_path([hop(50.0, weak_fiber(cores=1))], ROUND, 1).crosstalk_db)


def test_crosstalk_between_coupled_groups_is_counted():
    # Two coupled groups of 4 in one fiber: leakage between the groups is noise (no more NaN);
    # it grows with 10 log10(L) like weak coupling (common practice).
    f = replace(random_fiber(cores=8, group=4), group_crosstalk_db_per_km=-60.0)
    xt = [evaluate_path([hop(L, f)], ROUND, 4, line=NO_FIFO_XT, switching="fractional-joint").crosstalk_db
          for L in (10.0, 20.0)]  # fmt: skip
    assert xt[0] == pytest.approx(-50.0)
    assert xt[1] - xt[0] == pytest.approx(10 * math.log10(2))


def test_crosstalk_enters_the_gsnr_as_noise_on_the_signal_bandwidth():
    # 1/GSNR = 1/OSNR + 1/SNR_NLI + 1/SNR_XT on 0.1 nm (the combination): crosstalk XT
    # of the signal's power spread over its symbol rate adds XT * 12.5 GHz / R_s (Hayashi et al.
    # 2012 treat crosstalk as additive white Gaussian noise).
    quiet = evaluate_path([hop(80.0, weak_fiber(xt=-300.0))], ROUND, 1, line=NO_FIFO_XT)
    noisy = evaluate_path([hop(80.0, weak_fiber(xt=-60.0))], ROUND, 1, line=NO_FIFO_XT)
    added = 10 ** (noisy.crosstalk_db / 10) * 12.5 / ROUND.symbol_rate_gbaud
    assert 10 ** (-noisy.gsnr_db / 10) == pytest.approx(10 ** (-quiet.gsnr_db / 10) + added)
    assert noisy.osnr_db == pytest.approx(quiet.osnr_db)  # crosstalk is not amplifier noise


# --- MDL ----------------------------------------------------------------------------------------


def test_mdl_grows_with_sqrt_length_and_adds_in_quadrature():
    # Ho & Kahn, "Mode-dependent loss and gain: statistics and effect on mode-division
    # multiplexing", Opt. Express 19(17), 2011: small accumulated MDL grows as sqrt(L) under
    # strong coupling.  Worked by hand: 0.1 * sqrt(100) = 1 dB; two such cables sqrt(2) dB.
    f = random_fiber(mdl=0.1)
    assert evaluate_path([hop(100.0, f)], ROUND, 4).mdl_db == pytest.approx(1.0)
    assert evaluate_path([hop(100.0, f), hop(100.0, f, "B", "C")], ROUND, 4).mdl_db == pytest.approx(math.sqrt(2))
    assert evaluate_path([hop(100.0, weak_fiber())], ROUND, 1).mdl_db == 0.0


# --- loss, reach and the verdict ----------------------------------------------------------------


def test_loss_hand_computed():
    # Worked by hand, two cables of a single-core fiber (no fan-in/fan-out), WSS switching:
    # fiber 0.2 dB/km * 50 km = 10 dB; connectors 2 x 1 dB; splices every 5 km: 30 km -> 5,
    # 20 km -> 3, 8 x 0.1 = 0.8 dB; add and drop one WSS pass each (6 dB), the middle site's
    # express path two passes (12 dB).  Total 36.8 dB.  A fiber cross-connect instead: add and
    # drop 2 + 6 dB each (the fiber switched to a channel mux), express 2 dB: 30.8 dB.
    f = weak_fiber(cores=1)
    path = [hop(30.0, f), hop(20.0, f, "B", "C")]
    line = LineSpec(wss_pass_db=6.0, fiber_xc_db=2.0)
    phys = evaluate_path(path, ROUND, 1, line=line)
    assert phys.length_km == pytest.approx(50.0)
    assert phys.loss_db == pytest.approx(36.8)
    assert evaluate_path(path, ROUND, 1, line=line, switching="fiber").loss_db == pytest.approx(30.8)


def test_splice_count():
    # ceil(L / spacing) - 1 joints between reel sections (arithmetic).
    assert splices_in(10.0, 5.0) == 1
    assert splices_in(10.5, 5.0) == 2
    assert splices_in(4.0, 5.0) == 0
    assert splices_in(10.0, 0.0) == 0


def test_beyond_reach_is_infeasible_with_reason():
    # docs/model.md, section 3: length within the transceiver's reach.
    t = TransceiverSpec(reach_km=120.0, power_budget_db=1000.0)
    phys = evaluate_path([hop(130.0, weak_fiber())], t, 1)
    assert not phys.feasible
    assert "reach" in phys.reason


def test_power_budget_no_longer_limits_an_amplified_path():
    # The loss budget of an unamplified link is retired from feasibility: 100 km at 0.2 dB/km
    # is 22.9 dB of cable loss, over a 22 dB budget, yet amplifiers make it up.
    t = TransceiverSpec(reach_km=1000.0, power_budget_db=22.0, connector_loss_db=1.0)
    phys = evaluate_path([hop(100.0, weak_fiber())], t, 1)
    assert phys.feasible, phys.reason


def test_reason_names_every_limit_broken():
    t = TransceiverSpec(reach_km=10.0, max_mimo_taps=5, mdl_limit_db=0.01, required_osnr_db=60.0)
    path = [hop(50.0, random_fiber(gd=10.0, mdl=0.5)), hop(50.0, weak_fiber(xt=-60.0), "B", "C")]
    phys = evaluate_path(path, t, 4)
    assert not phys.feasible
    for words in ("reach", "GSNR", "MIMO taps", "MDL", "no transceiver class"):
        assert words in phys.reason
    assert len(phys.reason.split("; ")) == 2  # MDL; then the class with its three shortfalls
    assert phys.transceiver_class is None


def test_feasible_path_has_empty_reason():
    phys = evaluate_path([hop(20.0, weak_fiber())], TransceiverSpec(), 1)
    assert phys.feasible
    assert phys.reason == ""


# --- defaults against published limits -----------------------------------------------------------


def test_default_attenuation_within_g652d_limits():
    # ITU-T G.652 (11/2016) Table 2 "G.652.D attributes", cable attributes (clause 6.1): max
    # attenuation 0.30 dB/km at 1550 nm and 0.40 dB/km over 1310-1625 nm (values from memory).
    a = defaults.ATTENUATION_G652D_DB_PER_KM
    assert 0.0 < a <= defaults.G652D_MAX_ATTENUATION_1550_DB_PER_KM
    assert a <= defaults.G652D_MAX_ATTENUATION_1310_1625_DB_PER_KM
    assert defaults.G652D_MAX_ATTENUATION_1550_DB_PER_KM == 0.30
    assert "G.652" in defaults.G652D_TABLE and "Table 2" in defaults.G652D_TABLE


def test_default_attenuation_within_g654e_limit():
    # ITU-T G.654 (03/2020) clause 7.1 (cable attenuation) and clause 8 recommended value
    # tables, G.654.E: max 0.23 dB/km at 1550 nm (value from memory).
    a = defaults.ATTENUATION_G654E_DB_PER_KM
    assert 0.0 < a <= defaults.G654E_MAX_ATTENUATION_1550_DB_PER_KM
    assert defaults.G654E_MAX_ATTENUATION_1550_DB_PER_KM == 0.23
    # Ultra-low-loss G.654.E is below G.652.D (both ITU-T tables, from memory).
    assert a < defaults.ATTENUATION_G652D_DB_PER_KM


def test_default_symbol_rate_matches_400zr_line_rate():
    # 478.75 Gb/s DP-16QAM (vendor 400ZR-class datasheet) / (2 pol x 4 bit) = 59.84375 GBd
    # (the OIF 400ZR symbol rate, from memory).
    assert TransceiverSpec().symbol_rate_gbaud == pytest.approx(59.84375)
    assert TransceiverSpec().lane_gbps == 400.0


# --- MIMO DSP cost (Arik, Kahn & Ho, IEEE Signal Processing Magazine 2014) --------------------------


def test_time_domain_cmul_hand_computed():
    # Time-domain equalizer: per output symbol and mode, D N products to filter and D N to
    # update the taps by LMS (derivation in mimo_cmul_per_symbol; structure after Arik, Kahn &
    # Ho, IEEE SPM 2014).  D = 2, N = 8: 2 * 2 * 8 = 32.  A 400 Gb/s lane at 50 GBd carries
    # 400 / (2 * 50) = 4 bit per symbol per polarization, so 32 / 4 = 8 per bit.
    assert mimo_cmul_per_symbol(2, 8, 2.0, "time") == pytest.approx(32.0)
    assert mimo_cmul_per_bit(2, 8, ROUND, "time") == pytest.approx(8.0)


def test_frequency_domain_cmul_hand_computed():
    # Overlap-save frequency-domain equalizer with FD-LMS (Arik, Kahn & Ho, IEEE SPM 2014),
    # D = 2, N = 8, 2 samples/symbol, counted by hand:
    #   FFT size M = 16 (smallest power of 2 >= 2N), new samples per block B = M - N + 1 = 9,
    #   a radix-2 FFT of 16 points costs (16/2) * 4 = 32 products;
    #   per block: 2 input FFTs (64) + 2 output IFFTs (64) + 2 error FFTs (64)
    #              + filtering D^2 M = 64 + gradient D^2 M = 64  -> 320 products;
    #   the block yields 9 / 2 = 4.5 symbols on each of the 2 modes -> 9 symbol-modes;
    #   320 / 9 = 35.555... per symbol per mode, / 4 bit = 8.888... per bit.
    assert mimo_cmul_per_symbol(2, 8, 2.0, "frequency") == pytest.approx(320.0 / 9.0)
    assert mimo_cmul_per_bit(2, 8, ROUND, "frequency") == pytest.approx(80.0 / 9.0)


def test_frequency_domain_wins_for_long_equalizers():
    # Arik, Kahn & Ho, IEEE SPM 2014: FD complexity grows with log N, TD with N, so FD is far
    # cheaper for long equalizers.  D = 8, N = 200.
    td = mimo_cmul_per_symbol(8, 200, 2.0, "time")
    fd = mimo_cmul_per_symbol(8, 200, 2.0, "frequency")
    assert fd < td / 10


def test_module_power_hand_computed():
    # Worked by hand with ROUND (1 pJ per product, 400 Gb/s lanes at 50 GBd, 10 base taps):
    # 4 lanes * 15 W = 60 W; time-domain 8x8 MIMO of 10 taps: 2*8*10 / 4 = 40 per bit, minus the
    # 2x2 base equalizers 2*2*10 / 4 = 10 per bit -> 30 per bit * 1.6e12 bit/s * 1e-12 J = 48 W.
    assert module_power_w(ROUND, 4, 8, 10, domain="time") == pytest.approx(108.0)
    # No spatial MIMO: only the modules.
    assert module_power_w(ROUND, 4, 0, 0) == pytest.approx(60.0)
    assert module_power_w(ROUND, 1, 2, 10) == pytest.approx(15.0)


def test_mimo_cost_rejects_bad_input():
    with pytest.raises(ValueError):
        mimo_cmul_per_symbol(0, 8, 2.0, "time")
    with pytest.raises(ValueError):
        mimo_cmul_per_symbol(2, 8, 2.0, "spectral")  # type: ignore[arg-type]


def test_span_count_cuts_cables_into_equal_spans_no_longer_than_the_span() -> None:
    from sdmnet.optics.line import span_count

    # ceil(L / span): common practice, no source (an amplifier after each span).
    assert span_count(80.0, 80.0) == 1
    assert span_count(160.0, 80.0) == 2
    assert span_count(161.0, 80.0) == 3
    assert span_count(5.0, 80.0) == 1
