"""Tests of sdmnet.optics.line (amplifier noise, the closed-form GN model) through the paths that
use it (sdmnet.optics.physics.evaluate_path), checked against published expressions."""

from __future__ import annotations

import math

import numpy as np
import pytest

from sdmnet.inputs.model import Cable, FiberType, LineSpec, TransceiverClass, TransceiverSpec
from sdmnet.optics.line import (
    SpanFiber,
    amplifier_ase_w,
    manakov_coefficient,
    nli_coefficient,
    optimum_launch_w,
    span_fiber,
    strong_coupling_nli_factor,
)
from sdmnet.optics.physics import evaluate_path

# A lossless transmitter side (no connectors, no splices, no switch loss) and one single-core
# fiber of 0.2 dB/km: a span of 80 km loses exactly 16 dB and nothing else loses anything.
BARE = TransceiverSpec(reach_km=1e6, connector_loss_db=0.0, splice_loss_db=0.0)
SMF = FiberType("smf", 1, "weak", 1, 64, 0.2, effective_area_um2=80.0, dispersion_ps_per_nm_km=17.0)
QPSK64 = TransceiverClass("c", 200.0, 64.0, required_osnr_db=0.0)


def one_cable(length_km: float) -> list[tuple[Cable, FiberType]]:
    return [(Cable("A", "B", length_km, SMF.name, 1), SMF)]


def fixed_line(launch_dbm: float | None, nf_db: float = 5.0) -> LineSpec:
    return LineSpec(span_km=80.0, amplifier_nf_db=nf_db, launch_dbm=launch_dbm, wss_pass_db=0.0)


def test_ase_only_osnr_follows_the_58_db_rule():
    # OSNR[0.1 nm] = 58 + P - L_span - NF - 10 log10(N) (common practice), within 0.1 dB.  The
    # 58 is -10 log10(h nu B_ref / 1 mW) at 1550 nm and 12.5 GHz, derived here from the SI
    # constants (exact by definition): 57.95 dB.
    h, c = 6.62607015e-34, 299_792_458.0
    fifty_eight = -10 * math.log10(h * c / 1550e-9 * 12.5e9 / 1e-3)
    assert fifty_eight == pytest.approx(58.0, abs=0.06)
    for n in (1, 2, 5, 20):
        for launch, nf in ((0.0, 5.0), (2.0, 4.5)):
            phys = evaluate_path(one_cable(80.0 * n), BARE, 1, line=fixed_line(launch, nf), classes=[QPSK64])
            assert phys.spans == n
            assert phys.osnr_db == pytest.approx(58 + launch - 16.0 - nf - 10 * math.log10(n), abs=0.1)


def test_nli_grows_as_the_cube_of_launch_power():
    # GN model (Poggiolini, JLT 30(24), 2012): NLI power ~ P^3, so the NLI-to-signal ratio
    # ~ P^2: +1 dB of launch raises it by 2 dB.
    def nli_to_signal(launch: float) -> float:
        phys = evaluate_path(one_cable(800.0), BARE, 1, line=fixed_line(launch), classes=[QPSK64])
        return 10 ** (-phys.gsnr_db / 10) - 10 ** (-phys.osnr_db / 10)

    assert nli_to_signal(2.0) / nli_to_signal(1.0) == pytest.approx(10**0.2, rel=1e-9)
    assert nli_to_signal(4.0) / nli_to_signal(1.0) == pytest.approx(10**0.6, rel=1e-9)


def test_optimum_launch_matches_the_published_closed_form():
    # P_opt = (P_ASE / (2 eta))^(1/3), where the NLI is half the ASE, so GSNR = OSNR - 10 log10(1.5)
    # (Poggiolini, JLT 30(24), 2012).  A scan of fixed launch powers finds the same optimum.
    scan = np.arange(-6.0, 6.0, 0.01)
    gsnr = [evaluate_path(one_cable(800.0), BARE, 1, line=fixed_line(p), classes=[QPSK64]).gsnr_db for p in scan]
    best = evaluate_path(one_cable(800.0), BARE, 1, line=fixed_line(None), classes=[QPSK64])
    assert max(gsnr) == pytest.approx(best.gsnr_db, abs=0.001)
    ase = amplifier_ase_w(16.0, 5.0)
    eta = nli_coefficient(span_fiber(SMF), 80.0, 64.0, 75.0, 64)
    assert scan[int(np.argmax(gsnr))] == pytest.approx(10 * math.log10(optimum_launch_w(ase, eta) * 1e3), abs=0.011)
    assert best.osnr_db - best.gsnr_db == pytest.approx(10 * math.log10(1.5), abs=1e-9)


@pytest.mark.parametrize("channels", [5, 17, 64, 161])
def test_channel_sum_agrees_with_the_nyquist_closed_form(channels):
    # Nyquist WDM (spacing = symbol rate): eq. (36) of Poggiolini, Bosco, Carena et al., "The
    # GN-model of fiber non-linear propagation and its applications", JLT 32(4), 2014:
    # G_NLI = 8/27 gamma^2 G^3 L_eff^2 asinh(pi^2/2 |beta2| L_a B_WDM^2) / (pi |beta2| L_a),
    # written out here with the parameters of a public script that implements it (D = 17,
    # gamma = 1.3 /W/km, 30 GBd, 100 km of 0.2 dB/km).  Our sum over channels must agree.
    alpha = 0.2e-3 / (10 / math.log(10))
    beta2 = 1550e-9**2 * 17e-6 / (2 * math.pi * 299_792_458.0)
    gamma, rate, span = 1.3e-3, 30e9, 100e3
    l_eff, l_a = (1 - math.exp(-alpha * span)) / alpha, 1 / alpha
    b_wdm = channels * rate
    g_per_p3 = 8 / 27 * gamma**2 * l_eff**2 * math.asinh(math.pi**2 / 2 * beta2 * l_a * b_wdm**2)
    g_per_p3 /= math.pi * beta2 * l_a * rate**3
    published = g_per_p3 * 12.5e9
    ours = nli_coefficient(SpanFiber(gamma, alpha, beta2, 1.0), 100.0, 30.0, 30.0, channels)
    assert 10 * math.log10(ours / published) == pytest.approx(0.0, abs=0.1)


@pytest.mark.parametrize("rate, spacing", [(32.0, 50.0), (64.0, 75.0)])
def test_optimum_launch_on_standard_fiber_is_near_0_dbm(rate, spacing):
    # From memory: on 80 km spans of standard fiber with a full C band, the per-channel optimum
    # of 30-60 GBd channels lies within a few dB of 0 dBm.  (The GN model gives about -2 dBm at
    # 32 GBd on 50 GHz and +0.4 dBm at 64 GBd on 75 GHz.)
    eta = nli_coefficient(span_fiber(SMF), 80.0, rate, spacing, int(4800 // spacing))
    optimum_dbm = 10 * math.log10(optimum_launch_w(amplifier_ase_w(16.0, 5.0), eta) * 1e3)
    assert -3.0 < optimum_dbm < 3.0


def test_effective_area_lowers_the_nli_as_its_square():
    # gamma = 2 pi n2 / (lambda A_eff) and the GN model's NLI ~ gamma^2 (Poggiolini 2012): a
    # G.654.E-like 125 um^2 core against an 80 um^2 one: (80/125)^2.
    large = FiberType("e", 1, "weak", 1, 64, 0.2, effective_area_um2=125.0, dispersion_ps_per_nm_km=17.0)
    def eta(fiber: FiberType) -> float:
        return nli_coefficient(span_fiber(fiber), 80.0, 64.0, 75.0, 64)

    ratio = eta(large) / eta(SMF)
    assert ratio == pytest.approx((80.0 / 125.0) ** 2)


@pytest.mark.parametrize("cores", [1, 2, 4])
def test_strong_coupling_average_of_the_kerr_term(cores):
    # The average of v^H N(v) over random unit vectors v of 2 x cores modes (each core's Kerr
    # term with random birefringence) gives the coefficient the model uses.  For one core this
    # is the Manakov equation's 8/9 (Marcuse, Menyuk and Wai, JLT 15(9), 1997, from memory).
    rng = np.random.default_rng(11)
    v = rng.normal(size=(400_000, 2 * cores)) + 1j * rng.normal(size=(400_000, 2 * cores))
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    x, y = v[:, 0::2], v[:, 1::2]
    kerr = np.abs(x) ** 4 + np.abs(y) ** 4 + 4 / 3 * np.abs(x) ** 2 * np.abs(y) ** 2
    kerr = kerr + 2 / 3 * np.real(y**2 * np.conj(x) ** 2)
    assert kerr.sum(axis=1).mean() == pytest.approx(manakov_coefficient(cores), rel=0.01)
    if cores == 1:
        assert manakov_coefficient(1) == pytest.approx(8 / 9)


def test_strong_coupling_factor_is_one_for_a_single_core_and_falls_with_the_group():
    assert strong_coupling_nli_factor(1) == pytest.approx(1.0)
    assert strong_coupling_nli_factor(4) == pytest.approx(3 / 9)
    assert strong_coupling_nli_factor(7) < strong_coupling_nli_factor(4)
