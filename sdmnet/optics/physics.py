"""Physical layer of a path: amplified line, OSNR and GSNR, delay spread, MIMO length, crosstalk,
MDL, the transceiver class that closes it, feasibility.

A path is a sequence of hops ``(Cable, FiberType)`` in path order.  :func:`evaluate_path` builds
its amplified line (spans and boosters, :mod:`sdmnet.optics.line`), adds up what each cable
contributes and picks the cheapest transceiver class that closes it.  :func:`mimo_cmul_per_bit`
and :func:`module_power_w` price the MIMO equalizer that randomly coupled fiber needs.  Formulas, defaults and limits of
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

from ..inputs.model import Cable, FiberType, LineSpec, TransceiverClass, TransceiverSpec
from . import defaults
from .classes import legacy_class
from .line import (
    SpanFiber,
    amplifier_ase_w,
    db_to_linear,
    linear_to_db,
    nli_coefficient,
    optimum_launch_w,
    span_count,
    span_fiber,
)

__all__ = [
    "PathPhysics",
    "evaluate_path",
    "crosstalk_applies",
    "fiber_crosstalk_per_km_db",
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
    spans : int
        Amplifier spans along the path.
    osnr_db : float
        OSNR from amplifier noise alone, 0.1 nm reference bandwidth.
    gsnr_db : float
        Generalized SNR in 0.1 nm: amplifier noise, nonlinear interference and crosstalk.
    margin_db : float
        ``gsnr_db`` minus the required OSNR of the class reported (the chosen one, or the one
        closest to closing the path when none does).
    transceiver_class : str or None
        The cheapest class that closes the path; None when none does.
    lane_gbps : float or None
        Lane rate of that class; None when none closes the path.
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
    spans: int = 0
    osnr_db: float = math.nan
    gsnr_db: float = math.nan
    margin_db: float = math.nan
    transceiver_class: str | None = None
    lane_gbps: float | None = None


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


def mimo_taps_for_spread(spread_ps: float, transceiver: TransceiverSpec, symbol_rate_gbaud: float | None = None) -> int:
    """Equalizer taps for an RMS delay spread: ``ceil(spread Rs sps margin) + base``.

    ``spread_ps * symbol_rate_gbaud * 1e-3`` is the spread in symbols; times samples per symbol
    in samples; ``tap_margin`` widens the RMS figure to the impulse-response width; the base
    taps cover residual dispersion and filtering that exist without any modal spread.  The
    symbol rate is the transceiver's unless a class's is given.
    """
    rate = transceiver.symbol_rate_gbaud if symbol_rate_gbaud is None else symbol_rate_gbaud
    symbols = spread_ps * 1e-12 * rate * 1e9
    window = symbols * transceiver.samples_per_symbol * transceiver.tap_margin
    # The tolerance keeps an exact integer window (e.g. 8.000000001) from gaining a tap.
    return math.ceil(window - 1e-9) + transceiver.mimo_base_taps


def crosstalk_applies(fiber: FiberType) -> bool:
    """Whether a signal in ``fiber`` has neighbours whose leakage is noise: a weakly coupled fiber
    with more than one core, or a randomly coupled one with more than one coupled group (leakage
    inside a group is undone by MIMO)."""
    if fiber.coupling == "weak":
        return fiber.cores > 1
    return fiber.cores > fiber.coupled_group


def fiber_crosstalk_per_km_db(fiber: FiberType) -> float:
    """Crosstalk after 1 km between cores (weak) or coupled groups (random), default if unstated."""
    if fiber.coupling == "weak":
        xt = fiber.crosstalk_db_per_km
        return defaults.CROSSTALK_WEAK_DB_PER_KM if xt is None else xt
    xt = fiber.group_crosstalk_db_per_km
    return defaults.GROUP_CROSSTALK_DB_PER_KM if xt is None else xt


@dataclass(frozen=True)
class _Span:
    """``count`` identical spans of one cable: the fiber, the span length and the loss in front of
    the amplifier that ends each span."""

    fiber: SpanFiber
    span_km: float
    loss_db: float
    count: int
    channels: int


@dataclass(frozen=True)
class _Booster:
    """The amplifier where a signal leaves a site: the loss in front of it, and the index of the
    span group whose launch power the signal had before that loss (the previous cable's spans,
    or the first cable's at the transmitter)."""

    loss_db: float
    reference: int


@dataclass(frozen=True)
class _Line:
    """A path's amplified line, independent of the transceiver class."""

    spans: tuple[_Span, ...]
    boosters: tuple[_Booster, ...]
    crosstalk: float  # linear, summed over fiber and fan-in/fan-out
    crosstalk_applies: bool
    loss_db: float  # every passive loss from transmitter to receiver
    slot_ghz: float  # narrowest channel slot along the path


def _line_of_path(
    hops: Sequence[tuple[Cable, FiberType]], t: TransceiverSpec, line: LineSpec, switching: str,
    memo: dict | None = None,
) -> _Line:
    """Spans, boosters and crosstalk of a path (docs/physics.md, "The amplified line").

    ``memo`` (one per transceiver, line and switching: :func:`evaluate_path`) keeps what each
    cable contributes whatever the path, so the many routes over one cable compute it once.
    """
    per_core_amps = line.amplifier == "per-core"
    # Cores leave the fiber at an intermediate site when they are switched one by one, or when
    # every core has its own amplifier; at the path's ends they always do.
    separated_at_sites = per_core_amps or switching in ("independent", "fractional-joint")
    if switching == "fiber":
        express = line.fiber_xc_db
        add = line.fiber_xc_db + line.wss_pass_db  # the fiber is switched to a channel mux
    else:
        express = defaults.WSS_PASSES_EXPRESS * line.wss_pass_db
        add = line.wss_pass_db
    drop = add
    spans: list[_Span] = []
    boosters: list[_Booster] = []
    crosstalk = 0.0
    applies = False
    passive = add + drop + express * max(0, len(hops) - 1)
    previous_fifo_out = 0.0
    fifo_crosstalk = db_to_linear(line.fifo_crosstalk_db)
    for k, (cable, fiber) in enumerate(hops):
        terms = None if memo is None else memo.get(id(cable))
        if terms is None:
            terms = _cable_terms(cable, fiber, t, line)
            if memo is not None:
                memo[id(cable)] = terms
        _cable, cable_loss, n, fifo, span, fiber_crosstalk = terms
        first, last = k == 0, k == len(hops) - 1
        fifo_in = fifo if (first or separated_at_sites) else 0.0  # fan-in where the cable starts
        fifo_out = fifo if (last or separated_at_sites) else 0.0  # fan-out where it ends
        if per_core_amps:
            # A fan-out before and a fan-in after every amplifier: the fan-out's loss is in front
            # of the amplifier (it costs OSNR), the fan-in's after it (made up by its gain).
            fifos = 2 * n if fiber.cores > 1 else 0
            booster_loss = add if first else express
        else:
            fifos = (fifo_in > 0) + (fifo_out > 0)
            booster_loss = (add if first else express + previous_fifo_out) + fifo_in
        boosters.append(_Booster(booster_loss, reference=max(0, k - 1)))
        spans.append(span)
        passive += cable_loss + fifos * line.fifo_loss_db
        previous_fifo_out = fifo_out
        if fiber_crosstalk is not None:
            applies = True
            crosstalk += fifos * fifo_crosstalk
            crosstalk += fiber_crosstalk
    slot = min((line.channel_slot_ghz(f.channels) for _, f in hops), default=0.0)
    return _Line(tuple(spans), tuple(boosters), crosstalk, applies, passive, slot)


def _cable_terms(
    cable: Cable, fiber: FiberType, t: TransceiverSpec, line: LineSpec
) -> tuple[Cable, float, int, float, _Span, float | None]:
    """What one cable contributes to any path over it: ``(cable, loss, spans, fan-in/fan-out
    loss, its span group, its own crosstalk or None where crosstalk does not apply)``."""
    length = cable.length_km
    cable_loss = fiber.attenuation_db_per_km * length + t.connector_loss_db
    cable_loss += splices_in(length, t.splice_spacing_km) * t.splice_loss_db
    n = span_count(length, line.span_km)
    fifo = line.fifo_loss_db if fiber.cores > 1 else 0.0
    # With per-core amplifiers the fan-out in front of every amplifier is part of the span loss.
    span_loss = cable_loss / n + fifo if line.amplifier == "per-core" else cable_loss / n
    span = _Span(span_fiber(fiber), length / n, span_loss, n, fiber.channels)
    own = None
    if crosstalk_applies(fiber):
        own = db_to_linear(fiber_crosstalk_per_km_db(fiber) + 10.0 * math.log10(length))
    return cable, cable_loss, n, fifo, span, own


@dataclass(frozen=True)
class _Budget:
    """OSNR and GSNR of a path for one class, in dB over 0.1 nm."""

    osnr_db: float
    gsnr_db: float


def _budget(path_line: _Line, line: LineSpec, cls: TransceiverClass, memo: dict | None = None) -> _Budget:
    """Noise of ``path_line`` for a class: ASE of every amplifier, NLI of every span, crosstalk.

    ``memo``: as for :func:`_line_of_path`; a span group's launch power and noise are kept per
    class.
    """
    launches = []
    inv_ase = inv_nli = 0.0
    for span in path_line.spans:
        terms = None if memo is None else memo.get((id(span), id(cls)))
        if terms is None:
            terms = _span_terms(span, line, cls)
            if memo is not None:
                memo[(id(span), id(cls))] = terms
        _span, _cls, power, ase_term, nli_term = terms
        launches.append(power)
        inv_ase += ase_term
        inv_nli += nli_term
    for booster in path_line.boosters:
        if booster.loss_db > 0:  # with no loss to make up there is no booster
            inv_ase += amplifier_ase_w(booster.loss_db, line.amplifier_nf_db) / launches[booster.reference]
    inv_xt = path_line.crosstalk * defaults.OSNR_REFERENCE_GHZ / cls.symbol_rate_gbaud
    return _Budget(linear_to_db(1.0 / inv_ase), linear_to_db(1.0 / (inv_ase + inv_nli + inv_xt)))


def _span_terms(
    span: _Span, line: LineSpec, cls: TransceiverClass
) -> tuple[_Span, TransceiverClass, float, float, float]:
    """A span group's launch power, and its ASE and NLI over that power for a class (the span
    and class ride along so that the memo's keys stay theirs)."""
    ase = amplifier_ase_w(span.loss_db, line.amplifier_nf_db)
    spacing = line.channel_slot_ghz(span.channels)
    eta = nli_coefficient(span.fiber, span.span_km, cls.symbol_rate_gbaud, spacing, span.channels)
    power = optimum_launch_w(ase, eta) if line.launch_dbm is None else db_to_linear(line.launch_dbm) * 1e-3
    return span, cls, power, span.count * ase / power, span.count * eta * power * power


def evaluate_path(
    hops: Sequence[tuple[Cable, FiberType]],
    transceiver: TransceiverSpec,
    cores_per_unit: int,
    *,
    line: LineSpec | None = None,
    classes: Sequence[TransceiverClass] | None = None,
    switching: str = "independent",
    memo: dict | None = None,
) -> PathPhysics:
    """Evaluate a path given as (cable, fiber type) per hop, for units of ``cores_per_unit`` cores.

    Parameters
    ----------
    hops : sequence of (Cable, FiberType)
        The cables in path order with their fiber types.
    transceiver : TransceiverSpec
        DSP figures, MDL limit and the passive losses of cables (connectors, splices).
    cores_per_unit : int
        Cores one switching unit (one transceiver module) spans; MIMO is needed only when the
        unit spans a randomly coupled group.
    line : LineSpec, optional
        The amplified line and the parts between fiber and switch (default: ``LineSpec()``).
    classes : sequence of TransceiverClass, optional
        Classes to try, in order (cheapest first); default: ``transceiver`` as the only class
        (:func:`sdmnet.optics.classes.legacy_class`).
    switching : str
        The architecture's switching, which decides switch losses and where cores are fanned
        out (docs/physics.md).
    memo : dict, optional
        What each cable and span group contributes, kept across calls that share the
        transceiver, line, classes and switching (a fresh dict per such set: the caller's).
        Every figure is the same with or without it.

    Returns
    -------
    PathPhysics
        Figures of the path, the first class that closes it (or none) and the verdict;
        ``reason`` names every limit broken.

    Notes
    -----
    - Line: every cable is cut into equal spans with an amplifier after each; a booster at
      every site the signal leaves makes up the add or express loss.  OSNR counts the ASE of
      every amplifier; GSNR adds the NLI of every span (closed-form GN model) and crosstalk,
      ``1/GSNR = 1/OSNR + 1/SNR_NLI + 1/SNR_XT`` on the 0.1 nm reference bandwidth.
    - A class closes the path when ``GSNR - required_osnr_db >= line.margin_db``, the path is
      within its ``reach_km`` (if any), its symbol rate fits the channel slot and the MIMO
      equalizer at its symbol rate fits the DSP.  The figures reported are the chosen class's,
      or, when none closes the path, those of the class closest to closing it.
    - Group-delay spread: random cables ``sqrt(sum coef_i^2 L_i)`` (variances add); weakly
      coupled cables with a ``dgd_ps_per_km`` add ``coef_i L_i`` linearly.
    - ``power_budget_db`` and ``crosstalk_limit_db`` of the transceiver are not limits any more:
      loss is made up by amplifiers and crosstalk is noise in the GSNR.
    """
    if cores_per_unit < 1:
        raise ValueError(f"cores_per_unit must be >= 1, got {cores_per_unit}")
    t = transceiver
    line = LineSpec() if line is None else line
    tried = tuple(classes) if classes else (legacy_class(t),)
    length = 0.0
    random_variance = 0.0  # ps^2
    deterministic_ps = 0.0
    mdl_variance = 0.0  # dB^2
    for cable, fiber in hops:
        L = cable.length_km
        length += L
        if fiber.coupling == "random":
            gd = fiber.gd_spread_ps_per_sqrt_km
            gd = defaults.GD_SPREAD_RANDOM_PS_PER_SQRT_KM if gd is None else gd
            random_variance += gd * gd * L
            mdl = fiber.mdl_db_per_sqrt_km
            mdl = defaults.MDL_RANDOM_DB_PER_SQRT_KM if mdl is None else mdl
            mdl_variance += mdl * mdl * L
        elif fiber.dgd_ps_per_km is not None:
            deterministic_ps += fiber.dgd_ps_per_km * L
    spread = math.sqrt(random_variance) + deterministic_ps
    mdl_db = math.sqrt(mdl_variance)
    path_line = _line_of_path(hops, t, line, switching, memo)
    # NaN, not -inf: crosstalk is not a figure of a path whose signals have no neighbours.
    crosstalk = linear_to_db(path_line.crosstalk) if path_line.crosstalk_applies else math.nan

    group = mimo_group([f for _, f in hops])
    needs_mimo = group > 1
    mimo_size = defaults.POLARIZATIONS * group if needs_mimo else 0

    reasons = []
    if needs_mimo and group > cores_per_unit:
        reasons.append(
            f"cores mix in groups of {group} along the path but a unit spans {cores_per_unit} "
            f"(MIMO cannot separate them)"
        )
    if mdl_db > t.mdl_limit_db:
        reasons.append(f"MDL {mdl_db:.1f} dB exceeds limit {t.mdl_limit_db:g} dB")

    chosen = closest = None
    shortfalls = []
    for cls in tried:
        budget = _budget(path_line, line, cls, memo)
        taps = mimo_taps_for_spread(spread, t, cls.symbol_rate_gbaud) if needs_mimo else 0
        trial = (cls, budget, taps)
        if closest is None or budget.gsnr_db - cls.required_osnr_db > closest[1].gsnr_db - closest[0].required_osnr_db:
            closest = trial
        short = _class_shortfalls(cls, budget, taps, length, path_line.slot_ghz, line, t)
        if not short:
            chosen = trial
            break
        shortfalls.append(f"{cls.name}: " + ", ".join(short))
    if chosen is None:
        reasons.append("no transceiver class closes the path (" + "; ".join(shortfalls) + ")")
    cls, budget, taps = chosen or closest
    return PathPhysics(
        length_km=length,
        loss_db=path_line.loss_db,
        gd_spread_ps=spread,
        mimo_taps=taps,
        crosstalk_db=crosstalk,
        mdl_db=mdl_db,
        feasible=not reasons,
        reason="; ".join(reasons),
        mimo_size=mimo_size,
        spans=sum(span.count for span in path_line.spans),
        osnr_db=budget.osnr_db,
        gsnr_db=budget.gsnr_db,
        margin_db=budget.gsnr_db - cls.required_osnr_db,
        transceiver_class=cls.name if chosen is not None else None,
        lane_gbps=cls.lane_gbps if chosen is not None else None,
    )


def _class_shortfalls(
    cls: TransceiverClass,
    budget: _Budget,
    taps: int,
    length: float,
    slot_ghz: float,
    line: LineSpec,
    t: TransceiverSpec,
) -> list[str]:
    """What keeps ``cls`` from closing a path (empty when it closes it)."""
    short = []
    if cls.symbol_rate_gbaud > slot_ghz:
        short.append(f"{cls.symbol_rate_gbaud:g} GBd does not fit the {slot_ghz:g} GHz channel slot")
    if cls.reach_km is not None and length > cls.reach_km:
        short.append(f"length {length:.1f} km exceeds reach {cls.reach_km:g} km")
    needed = cls.required_osnr_db + line.margin_db
    if budget.gsnr_db < needed:
        short.append(
            f"GSNR {budget.gsnr_db:.1f} dB below {cls.required_osnr_db:g} dB required + {line.margin_db:g} dB margin"
        )
    if taps > t.max_mimo_taps:
        short.append(f"MIMO taps {taps} exceed DSP limit {t.max_mimo_taps}")
    return short


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
