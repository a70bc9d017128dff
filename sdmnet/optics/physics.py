"""Physical layer of a path: loss, delay spread, MIMO length, crosstalk, MDL, feasibility.

A path is a sequence of hops ``(Cable, FiberType)`` in path order.  :func:`evaluate_path` adds up
what each cable contributes and checks the result against a
:class:`~sdmnet.inputs.model.TransceiverSpec`.  :func:`mimo_cmul_per_bit` and :func:`module_power_w`
price the MIMO equalizer that randomly coupled fiber needs.  Formulas, defaults and limits of
the model are written out in ``docs/physics.md``.

Regimes (docs/model.md, section 1):

- **random coupling** (cores mixed in groups of ``coupled_group``): group-delay variances of
  cables add, so the RMS spread is ``sqrt(sum coef_i^2 L_i)`` (square-root growth with length,
  Ho & Kahn, JLT 2011); mode-dependent loss grows the same way (Ho & Kahn, Opt. Express 2011).
  A receiver must run a MIMO equalizer over every coupled group.
- **weak coupling** (isolated cores): a differential group delay given per km adds linearly
  (deterministic); inter-core crosstalk power grows linearly with length, in dB
  ``XT_per_km + 10 log10(L)``, and adds in power across cables.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

from ..inputs.model import Cable, FiberType, TransceiverSpec
from . import defaults

__all__ = [
    "PathPhysics",
    "evaluate_path",
    "splices_in",
    "mimo_group",
    "mimo_taps_for_spread",
    "mimo_cmul_per_symbol",
    "mimo_cmul_per_bit",
    "module_power_w",
]

Domain = Literal["time", "frequency"]


@dataclass(frozen=True)
class PathPhysics:
    """Physical figures of one path and whether a transceiver can close it.

    Attributes
    ----------
    length_km : float
        Sum of cable lengths.
    loss_db : float
        Fiber attenuation, connectors and splices of every cable, and one switch pass per
        intermediate site.
    gd_spread_ps : float
        Group-delay spread the receiver sees: RMS spread of the randomly coupled cables plus the
        deterministic delay of the weakly coupled ones (0 when neither applies).
    mimo_taps : int
        MIMO equalizer length in taps at the sample rate; 0 when the path needs no MIMO.
    crosstalk_db : float
        Accumulated inter-core crosstalk of the weakly coupled cables; NaN (not applicable)
        when the path has no weakly coupled cable.
    mdl_db : float
        Accumulated mode-dependent loss of the randomly coupled cables (0 without any).
    feasible : bool
        Every limit of the transceiver holds.
    reason : str
        Every limit broken, joined by ``"; "`` (empty when feasible).
    mimo_size : int
        Dimension D of each D x D MIMO equalizer (2 polarizations x cores of a coupled group on
        the path); 0 when the path needs no MIMO.
    """

    length_km: float
    loss_db: float
    gd_spread_ps: float
    mimo_taps: int
    crosstalk_db: float
    mdl_db: float
    feasible: bool
    reason: str
    mimo_size: int = 0


def splices_in(length_km: float, spacing_km: float) -> int:
    """Fusion splices inside one cable: ``ceil(L / spacing) - 1`` joints between sections."""
    if spacing_km <= 0 or length_km <= 0:
        return 0
    # The tolerance keeps a 10.0 km cable of 5 km sections at one splice despite float noise.
    return max(0, math.ceil(length_km / spacing_km - 1e-9) - 1)


def mimo_group(fibers: Sequence[FiberType]) -> int:
    """Cores mixed together along a path: lcm of the coupled groups of its random cables.

    Groups are aligned blocks of consecutive cores; chaining blocks of sizes a and b mixes
    blocks of lcm(a, b) cores.  1 when no cable is randomly coupled in groups larger than 1.
    """
    group = 1
    for f in fibers:
        if f.coupling == "random" and f.coupled_group > 1:
            group = group * f.coupled_group // math.gcd(group, f.coupled_group)
    return group


def mimo_taps_for_spread(spread_ps: float, transceiver: TransceiverSpec) -> int:
    """Equalizer taps for an RMS delay spread: ``ceil(spread Rs sps margin) + base``.

    ``spread_ps * symbol_rate_gbaud * 1e-3`` is the spread in symbols; times samples per symbol
    in samples; ``tap_margin`` widens the RMS figure to the impulse-response width; the base
    taps cover residual dispersion and filtering that exist without any modal spread.
    """
    symbols = spread_ps * 1e-12 * transceiver.symbol_rate_gbaud * 1e9
    window = symbols * transceiver.samples_per_symbol * transceiver.tap_margin
    # The tolerance keeps an exact integer window (e.g. 8.000000001) from gaining a tap.
    return math.ceil(window - 1e-9) + transceiver.mimo_base_taps


def evaluate_path(
    hops: Sequence[tuple[Cable, FiberType]], transceiver: TransceiverSpec, cores_per_unit: int
) -> PathPhysics:
    """Evaluate a path given as (cable, fiber type) per hop, for units of ``cores_per_unit`` cores.

    Parameters
    ----------
    hops : sequence of (Cable, FiberType)
        The cables in path order with their fiber types.
    transceiver : TransceiverSpec
        Limits, DSP figures and passive losses.
    cores_per_unit : int
        Cores one switching unit (one transceiver module) spans; MIMO is needed only when the
        unit spans a randomly coupled group.

    Returns
    -------
    PathPhysics
        Figures of the path and the verdict; ``reason`` names every limit broken.

    Notes
    -----
    - Loss: ``sum(att_i L_i + connector + splices_i * splice) + switch * (hops - 1)``: one
      switch pass at each intermediate site; the end sites' add/drop is in the budget.
    - Group-delay spread: random cables ``sqrt(sum coef_i^2 L_i)`` (variances add); weakly
      coupled cables with a ``dgd_ps_per_km`` add ``coef_i L_i`` linearly.  A path with both
      adds the two parts linearly: the deterministic skew shifts the random impulse response
      as a whole, and a sum of the two widths bounds the total width (worst case).
    - A fiber type without its coupling figure uses the default of :mod:`sdmnet.optics.defaults`
      (random: GD spread and MDL coefficients; weak: crosstalk per km); a weak fiber without
      ``dgd_ps_per_km`` contributes no delay.
    """
    if cores_per_unit < 1:
        raise ValueError(f"cores_per_unit must be >= 1, got {cores_per_unit}")
    t = transceiver
    length = 0.0
    loss = 0.0
    random_variance = 0.0  # ps^2
    deterministic_ps = 0.0
    mdl_variance = 0.0  # dB^2
    xt_power = 0.0  # linear, summed over weak cables
    any_weak = False
    for cable, fiber in hops:
        L = cable.length_km
        length += L
        loss += fiber.attenuation_db_per_km * L + t.connector_loss_db
        loss += splices_in(L, t.splice_spacing_km) * t.splice_loss_db
        if fiber.coupling == "random":
            gd = fiber.gd_spread_ps_per_sqrt_km
            gd = defaults.GD_SPREAD_RANDOM_PS_PER_SQRT_KM if gd is None else gd
            random_variance += gd * gd * L
            mdl = fiber.mdl_db_per_sqrt_km
            mdl = defaults.MDL_RANDOM_DB_PER_SQRT_KM if mdl is None else mdl
            mdl_variance += mdl * mdl * L
        else:
            if fiber.dgd_ps_per_km is not None:
                deterministic_ps += fiber.dgd_ps_per_km * L
            xt = fiber.crosstalk_db_per_km
            xt = defaults.CROSSTALK_WEAK_DB_PER_KM if xt is None else xt
            if L > 0:
                any_weak = True
                xt_power += 10.0 ** ((xt + 10.0 * math.log10(L)) / 10.0)
    loss += t.switch_insertion_loss_db * max(0, len(hops) - 1)
    spread = math.sqrt(random_variance) + deterministic_ps
    mdl_db = math.sqrt(mdl_variance)
    # NaN, not -inf: crosstalk is not a figure of randomly coupled fiber (MIMO undoes the mixing).
    crosstalk = 10.0 * math.log10(xt_power) if any_weak else math.nan

    group = mimo_group([f for _, f in hops])
    needs_mimo = group > 1
    taps = mimo_taps_for_spread(spread, t) if needs_mimo else 0
    mimo_size = defaults.POLARIZATIONS * group if needs_mimo else 0

    reasons = []
    if length > t.reach_km:
        reasons.append(f"length {length:.1f} km exceeds reach {t.reach_km:g} km")
    if loss > t.power_budget_db:
        reasons.append(f"loss {loss:.1f} dB exceeds power budget {t.power_budget_db:g} dB")
    if any_weak and crosstalk > t.crosstalk_limit_db:
        reasons.append(f"crosstalk {crosstalk:.1f} dB exceeds limit {t.crosstalk_limit_db:g} dB")
    if needs_mimo and group > cores_per_unit:
        reasons.append(
            f"cores mix in groups of {group} along the path but a unit spans {cores_per_unit} "
            f"(MIMO cannot separate them)"
        )
    if taps > t.max_mimo_taps:
        reasons.append(f"MIMO taps {taps} exceed DSP limit {t.max_mimo_taps}")
    if mdl_db > t.mdl_limit_db:
        reasons.append(f"MDL {mdl_db:.1f} dB exceeds limit {t.mdl_limit_db:g} dB")
    return PathPhysics(
        length_km=length,
        loss_db=loss,
        gd_spread_ps=spread,
        mimo_taps=taps,
        crosstalk_db=crosstalk,
        mdl_db=mdl_db,
        feasible=not reasons,
        reason="; ".join(reasons),
        mimo_size=mimo_size,
    )


def mimo_cmul_per_symbol(mimo_size: int, taps: int, samples_per_symbol: float, domain: Domain) -> float:
    """Complex multiplications per symbol per mode of an adaptive D x D MIMO equalizer.

    The two structures are those compared by S. Ö. Arık, J. M. Kahn and K.-P. Ho, "MIMO signal
    processing for mode-division multiplexing", IEEE Signal Processing Magazine 31(2), 2014:
    a time-domain (TD) FIR equalizer with LMS adaptation, and a frequency-domain (FD) equalizer
    with overlap-save filtering and frequency-domain LMS.  The operation counts below are our
    own derivation under the stated assumptions.

    Parameters
    ----------
    mimo_size : int
        D, the number of MIMO inputs and outputs (2 polarizations x coupled cores).
    taps : int
        N, taps of each of the D x D filters, spaced at the input sample period.
    samples_per_symbol : float
        s, input samples per symbol; outputs are taken once per symbol.
    domain : {"time", "frequency"}

    Returns
    -------
    float
        Complex multiplications per output symbol per mode.

    Notes
    -----
    Time domain, per output symbol of each of the D outputs: the filter takes D N products
    and the LMS update w += mu e x* one product per tap, D N more (mu e is computed once per
    output, negligible), so ``C_TD = 2 D N``.

    Frequency domain, overlap-save with FFT size M = the smallest power of two >= 2N, so each
    block yields B = M - N + 1 new samples per mode (B / s symbols).  A radix-2 FFT of size M
    costs (M/2) log2 M.  Per block: D input FFTs, D^2 M products to filter, D output IFFTs,
    D FFTs of the zero-padded error block and D^2 M products for the gradient; the gradient
    constraint (D^2 extra FFT pairs) is left out (unconstrained FD-LMS).  Hence
    ``C_FD = s M (1.5 log2 M + 2 D) / B``.
    """
    if mimo_size < 1 or taps < 1:
        raise ValueError("mimo_size and taps must be >= 1")
    d, n, s = mimo_size, taps, samples_per_symbol
    if domain == "time":
        return 2.0 * d * n
    if domain == "frequency":
        m = 1 << math.ceil(math.log2(2 * n))
        block = m - n + 1
        return s * m * (1.5 * math.log2(m) + 2.0 * d) / block
    raise ValueError(f"domain must be 'time' or 'frequency', got {domain!r}")


def mimo_cmul_per_bit(mimo_size: int, taps: int, transceiver: TransceiverSpec, domain: Domain = "frequency") -> float:
    """Complex multiplications per net bit of a D x D MIMO equalizer with ``taps`` taps.

    :func:`mimo_cmul_per_symbol` divided by the net bits one mode carries per symbol,
    ``lane_gbps / (2 symbol_rate_gbaud)`` (a lane's two polarizations are two of the D modes).
    Formulas after Arık, Kahn & Ho, IEEE Signal Processing Magazine 2014 (see
    :func:`mimo_cmul_per_symbol` for the derivation and assumptions).
    """
    per_symbol = mimo_cmul_per_symbol(mimo_size, taps, transceiver.samples_per_symbol, domain)
    bits_per_symbol_per_mode = transceiver.lane_gbps / (defaults.POLARIZATIONS * transceiver.symbol_rate_gbaud)
    return per_symbol / bits_per_symbol_per_mode


def module_power_w(
    transceiver: TransceiverSpec, lanes: int, mimo_size: int, taps: int, domain: Domain = "frequency"
) -> float:
    """Electrical power of one module of ``lanes`` lanes with a D x D MIMO of ``taps`` taps.

    ``lanes * module_power_w`` covers the optics and each lane's own 2 x 2 polarization
    equalizer of ``mimo_base_taps`` taps.  A spatial MIMO (D > 2, taps > 0) replaces those
    equalizers, so only its extra work is added:
    ``pJ/cmul * 1e-12 * (lanes * lane_gbps * 1e9) * max(0, c(D, taps) - c(2, base))``
    with c in complex multiplications per bit (:func:`mimo_cmul_per_bit`).
    """
    if lanes < 0:
        raise ValueError("lanes must be >= 0")
    power = lanes * transceiver.module_power_w
    if mimo_size <= defaults.POLARIZATIONS or taps <= 0 or lanes == 0:
        return power
    spatial = mimo_cmul_per_bit(mimo_size, taps, transceiver, domain)
    base = mimo_cmul_per_bit(defaults.POLARIZATIONS, max(1, transceiver.mimo_base_taps), transceiver, domain)
    bits_per_second = lanes * transceiver.lane_gbps * 1e9
    return power + transceiver.mimo_pj_per_cmul * 1e-12 * bits_per_second * max(0.0, spatial - base)
