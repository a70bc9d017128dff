"""The amplified line of a cable: spans, amplifier noise, nonlinear interference (docs/physics.md).

A cable of L km is cut into ``ceil(L / span_km)`` equal spans with an amplifier after each, the
last one being the receiving end's preamplifier.  Every figure here is a plain function of
numbers, so a whole network's spans can later be evaluated at once.

Noise is kept as a ratio to the signal power in the 0.1 nm reference bandwidth (12.5 GHz), so
ASE, nonlinear interference and crosstalk add as inverse signal-to-noise ratios on the same
bandwidth.
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import NamedTuple

from ..inputs.model import FiberType
from . import defaults

__all__ = [
    "PHOTON_ENERGY_J",
    "REFERENCE_HZ",
    "span_count",
    "db_to_linear",
    "linear_to_db",
    "amplifier_ase_w",
    "osnr_to_snr_db",
    "snr_to_osnr_db",
    "strong_coupling_nli_factor",
    "manakov_coefficient",
    "SpanFiber",
    "span_fiber",
    "nli_coefficient",
    "optimum_launch_w",
]

#: Photon energy at the reference wavelength (1550 nm), h c / lambda, in J.
PHOTON_ENERGY_J = defaults.PLANCK_J_S * defaults.SPEED_OF_LIGHT_M_S / (defaults.REFERENCE_WAVELENGTH_NM * 1e-9)
#: The OSNR reference bandwidth (0.1 nm) in Hz.
REFERENCE_HZ = defaults.OSNR_REFERENCE_GHZ * 1e9


def span_count(length_km: float, span_km: float) -> int:
    """Equal spans of a cable of ``length_km`` with spans no longer than ``span_km`` (at least 1)."""
    if span_km <= 0:
        raise ValueError(f"span_km must be > 0, got {span_km}")
    # The tolerance keeps a 160.0 km cable on 80 km spans at two spans despite float noise.
    return max(1, math.ceil(length_km / span_km - 1e-9))


#: Largest magnitude of a ratio in dB turned linear: past it no light arrives (or the gain is
#: absurd) and the path is infeasible either way; holding the ratio at 10^100 keeps the sums of
#: ASE, NLI and crosstalk finite (a file may give losses whose sum overflows a float).
DB_HELD = 1000.0


def db_to_linear(db: float) -> float:
    """10^(dB / 10), with ``db`` held within +-:data:`DB_HELD`."""
    return 10.0 ** (max(-DB_HELD, min(DB_HELD, db)) / 10.0)


def linear_to_db(ratio: float) -> float:
    """10 log10(ratio); -inf for 0 and +inf for an infinite ratio."""
    if ratio <= 0:
        return -math.inf
    return 10.0 * math.log10(ratio)


def amplifier_ase_w(loss_db: float, noise_figure_db: float) -> float:
    """ASE power (W) in the 0.1 nm reference bandwidth at the output of an amplifier whose gain
    makes up ``loss_db``, referred to its output: ``NF h nu B_ref G``.

    The high-gain form (G rather than G - 1) is the one behind the planning rule
    OSNR = 58 + P - L - NF - 10 log10(N) (common practice).
    """
    return db_to_linear(noise_figure_db) * PHOTON_ENERGY_J * REFERENCE_HZ * db_to_linear(loss_db)


def osnr_to_snr_db(osnr_db: float, symbol_rate_gbaud: float) -> float:
    """SNR over the signal bandwidth (the symbol rate) of an OSNR in 0.1 nm, two polarizations:
    ``SNR = OSNR B_ref / R_s`` (R.-J. Essiambre et al., "Capacity limits of optical fiber
    networks", JLT 28(4), 2010, eq. (34), from memory; the same conversion is written out in
    public GN-model scripts citing that equation)."""
    return osnr_db + linear_to_db(defaults.OSNR_REFERENCE_GHZ / symbol_rate_gbaud)


def snr_to_osnr_db(snr_db: float, symbol_rate_gbaud: float) -> float:
    """Inverse of :func:`osnr_to_snr_db`."""
    return snr_db - linear_to_db(defaults.OSNR_REFERENCE_GHZ / symbol_rate_gbaud)


def manakov_coefficient(cores: int) -> float:
    """Kerr coefficient, relative to gamma, of a strongly coupled group of ``cores`` identical cores
    acting on the group's total power: ``(8/3) / (2 cores + 1)``.

    Our derivation (docs/physics.md): the Kerr term of each core, averaged over uniform random
    unitary mixing of the ``2 cores`` modes (polarizations included), is this multiple of the
    total power.  For one core it is 8/9, the Manakov equation's coefficient for a single-mode
    fiber with random birefringence (D. Marcuse, C. R. Menyuk and P. K. A. Wai, JLT 15(9), 1997,
    from memory).
    """
    if cores < 1:
        raise ValueError(f"cores must be >= 1, got {cores}")
    return (8.0 / 3.0) / (2 * cores + 1)


def strong_coupling_nli_factor(cores: int) -> float:
    """NLI of one core of a strongly coupled group of ``cores`` cores, relative to an uncoupled
    core of the same effective area and power per core: ``3 / (2 cores + 1)`` (1 for one core).

    Our derivation (docs/physics.md): the GN model's NLI scales as the square of the Kerr
    coefficient (:func:`manakov_coefficient`, applied to the group's total power) times the
    fourth-order moment count of a ``D = 2 cores``-dimensional Gaussian signal, ``D + 1`` (3 for a
    single-mode fiber, which with (8/9)^2 gives the GN model's 16/27 up to the common 1/4).
    """
    return manakov_coefficient(cores) ** 2 * (2 * cores + 1) / (manakov_coefficient(1) ** 2 * 3)


class SpanFiber(NamedTuple):
    """The fiber figures the NLI of a span depends on, in SI units (hashable, for caching)."""

    gamma: float  #: nonlinear coefficient, 1/(W m)
    alpha: float  #: power attenuation, 1/m
    beta2: float  #: |beta2|, s^2/m
    nli_factor: float  #: strong-coupling factor (1 for weak coupling)


def span_fiber(fiber: FiberType) -> SpanFiber:
    """:class:`SpanFiber` of a fiber type, with the G.652.D defaults for figures it does not state.

    ``gamma = 2 pi n2 / (lambda A_eff)``; ``alpha`` from the attenuation in dB/km;
    ``|beta2| = D lambda^2 / (2 pi c)``; ``nli_factor`` is :func:`strong_coupling_nli_factor` of the
    coupled group for random coupling, 1 for weak coupling.
    """
    wavelength_m = defaults.REFERENCE_WAVELENGTH_NM * 1e-9
    area_um2 = fiber.effective_area_um2 or defaults.EFFECTIVE_AREA_G652D_UM2
    dispersion = fiber.dispersion_ps_per_nm_km
    dispersion = defaults.DISPERSION_G652D_PS_PER_NM_KM if dispersion is None else dispersion
    gamma = 2.0 * math.pi * defaults.NONLINEAR_INDEX_M2_PER_W / (wavelength_m * area_um2 * 1e-12)
    alpha = fiber.attenuation_db_per_km / (10.0 * math.log10(math.e)) / 1e3
    beta2 = dispersion * 1e-6 * wavelength_m**2 / (2.0 * math.pi * defaults.SPEED_OF_LIGHT_M_S)
    factor = strong_coupling_nli_factor(fiber.coupled_group) if fiber.coupling == "random" else 1.0
    return SpanFiber(gamma, alpha, beta2, factor)


@lru_cache(maxsize=8192)
def nli_coefficient(
    fiber: SpanFiber, span_km: float, symbol_rate_gbaud: float, spacing_ghz: float, channels: int
) -> float:
    """eta (1/W^2): NLI power in the 0.1 nm reference bandwidth of the centre channel after one
    span is ``eta P^3`` with every channel launched at ``P``.

    The incoherent GN model in closed form for a comb of ``channels`` channels of bandwidth
    ``R_s`` (Nyquist-shaped) spaced ``spacing`` apart, the centre channel ``i`` under test
    (P. Poggiolini, G. Bosco, A. Carena, V. Curri, Y. Jiang, F. Forghieri, "The GN-model of fiber
    non-linear propagation and its applications", JLT 32(4), 2014, eqs. (36) and (41); the
    self-channel term is the single-channel case of P. Poggiolini, JLT 30(24), 2012)::

        G_NLI = 8/27 gamma^2 L_eff^2 G^3 / (pi |beta2| L_a) * [ asinh(pi^2/2 |beta2| L_a R_s^2)
                + sum_{k != i} ( asinh(pi^2 |beta2| L_a R_s (f_k - f_i + R_s/2))
                               - asinh(pi^2 |beta2| L_a R_s (f_k - f_i - R_s/2)) ) ]

    with ``G = P / R_s``, ``L_eff = (1 - exp(-alpha L)) / alpha``, ``L_a = 1 / alpha`` (alpha the
    power attenuation).  For large arguments each cross-channel term tends to
    ``ln((f_k - f_i + R_s/2) / (f_k - f_i - R_s/2))``, the form of P. Johannisson and E. Agrell,
    JLT 32(23), 2014 (from memory).  ``nli_factor`` scales the result for strong coupling.
    """
    gamma, alpha, beta2, factor = fiber
    span_m = span_km * 1e3
    rate = symbol_rate_gbaud * 1e9
    spacing = spacing_ghz * 1e9
    l_eff = (1.0 - math.exp(-alpha * span_m)) / alpha
    l_a = 1.0 / alpha
    x = math.pi**2 * beta2 * l_a
    total = math.asinh(x * rate * rate / 2.0)
    centre = (channels - 1) // 2
    for k in range(-centre, channels - centre):
        if k:
            df = k * spacing
            total += math.asinh(x * rate * (df + rate / 2.0)) - math.asinh(x * rate * (df - rate / 2.0))
    g_nli_per_p3 = (8.0 / 27.0) * gamma**2 * l_eff**2 * total / (math.pi * beta2 * l_a * rate**3)
    return factor * g_nli_per_p3 * REFERENCE_HZ


def optimum_launch_w(ase_w: float, eta: float) -> float:
    """Launch power per channel that maximizes ``P / (ase + eta P^3)``: ``(ase / (2 eta))^(1/3)``
    (P. Poggiolini, JLT 30(24), 2012: at the optimum the NLI is half the ASE)."""
    return (ase_w / (2.0 * eta)) ** (1.0 / 3.0)
