"""Transceiver classes: the ``[[transceivers]]`` of a scenario, or ``[transceiver]`` as the only one.

Classes are tried cheapest first (:func:`scenario_classes`); a path takes the first whose
requirements it meets (:func:`sdmnet.optics.physics.evaluate_path`).
"""

from __future__ import annotations

import math

from ..inputs.model import Scenario, TransceiverClass, TransceiverSpec
from . import defaults
from .line import linear_to_db, osnr_to_snr_db, snr_to_osnr_db

__all__ = ["LEGACY_CLASS_NAME", "bits_per_symbol", "derived_required_osnr_db", "legacy_class", "scenario_classes"]

#: Name of the class that ``[transceiver]`` stands for when a scenario has no ``[[transceivers]]``.
LEGACY_CLASS_NAME = "transceiver"


def bits_per_symbol(lane_gbps: float, symbol_rate_gbaud: float) -> float:
    """Net bits per symbol per polarization of a dual-polarization lane: ``lane / (2 R_s)``."""
    return lane_gbps / (defaults.POLARIZATIONS * symbol_rate_gbaud)


def _snr_gap_db() -> float:
    """Gap (dB) between the SNR a 400ZR module needs and the Shannon SNR of its net rate."""
    shannon = 2.0 ** bits_per_symbol(defaults.LANE_GBPS, defaults.SYMBOL_RATE_GBAUD) - 1.0
    return osnr_to_snr_db(defaults.REQUIRED_OSNR_400ZR_DB, defaults.SYMBOL_RATE_GBAUD) - linear_to_db(shannon)


def derived_required_osnr_db(lane_gbps: float, symbol_rate_gbaud: float) -> float:
    """Required OSNR (0.1 nm) of a lane of ``lane_gbps`` at ``symbol_rate_gbaud``, when no figure is given.

    The Shannon SNR of the net bits per symbol and polarization, ``2^b - 1``, plus the gap of the
    one published point we hold, a 400ZR module (400 Gb/s, 59.84 GBd, 26 dB,
    :data:`~sdmnet.optics.defaults.REQUIRED_OSNR_400ZR_DB`), converted to 0.1 nm.  This is our
    assumption: it returns 26 dB for the default 400ZR figures and scales with spectral
    efficiency; a module with stronger FEC or DSP than a 400ZR pluggable needs less, so give
    ``required_osnr_db`` where it is known.
    """
    shannon = 2.0 ** bits_per_symbol(lane_gbps, symbol_rate_gbaud) - 1.0
    return snr_to_osnr_db(linear_to_db(shannon) + _snr_gap_db(), symbol_rate_gbaud)


def legacy_class(transceiver: TransceiverSpec) -> TransceiverClass:
    """The one class that ``[transceiver]`` stands for: its lane rate, symbol rate, reach and
    module power; its ``required_osnr_db`` or, without one, :func:`derived_required_osnr_db`."""
    required = transceiver.required_osnr_db
    if required is None:
        required = derived_required_osnr_db(transceiver.lane_gbps, transceiver.symbol_rate_gbaud)
    return TransceiverClass(
        name=LEGACY_CLASS_NAME,
        lane_gbps=transceiver.lane_gbps,
        symbol_rate_gbaud=transceiver.symbol_rate_gbaud,
        required_osnr_db=required,
        reach_km=transceiver.reach_km,
        power_w=transceiver.module_power_w,
    )


def _cost_per_gbps(cls: TransceiverClass) -> float:
    return math.inf if cls.cost is None else cls.cost / cls.lane_gbps


def scenario_classes(scenario: Scenario) -> tuple[TransceiverClass, ...]:
    """The classes a path may use, cheapest per Gb/s first.

    ``[[transceivers]]`` classes by ``cost / lane_gbps``; classes without a cost come after those
    with one; ties keep file order.  Without ``[[transceivers]]``: :func:`legacy_class`.
    """
    if not scenario.transceivers:
        return (legacy_class(scenario.transceiver),)
    return tuple(sorted(scenario.transceivers, key=_cost_per_gbps))
