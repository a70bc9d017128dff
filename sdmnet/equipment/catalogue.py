"""The cost and power catalogue: every item a plan buys, with its default price and watts.

Prices are relative: one lane of the ``[transceiver]`` class costs 1.  A scenario overrides any
item in ``[costs]`` (relative units) and ``[power]`` (watts per item); the loader refuses names
not listed here.  Every default names where it comes from (docs/model.md, section 6):

- [R13] F. Rambach et al., "A multilayer cost model for metro/core networks", J. Opt. Commun.
  Netw. 5(3), 2013: relative prices of transponders, WSS-based ROADM degrees and amplifiers,
  normalized to a transponder (its figures here are from memory, scaled to a 400 Gb/s lane).
- [K12] S. K. Korotky, "Price-points for components of multi-core fiber communication systems
  in backbone optical networks", J. Opt. Commun. Netw. 4(5), 426-435, 2012: the prices at which
  multicore amplifiers, fan-in/fan-out devices and multicore fiber pay off (from memory).
- [S25] P. Sillard, "Cost estimation of space-division-multiplexing fibers", J. Lightwave
  Technol. 43(18), 8876-8884, 2025: multicore fiber of up to 7 cores at a cost per core
  comparable to single-mode fiber.
- [VH12] W. Van Heddeghem et al., "Power consumption modeling in optical multilayer networks",
  Photonic Netw. Commun., 2012, doi:10.1007/s11107-011-0370-7: reference watts of WDM
  equipment (its figures here are from memory).

What is "from memory" was recalled, not read from the source; "assumption" is our planning
choice where no published figure applies (SDM switching parts have no market price yet).
Transceiver classes (``[[transceivers]]``) are priced per class as ``transceiver_lane:CLASS`` rows
in a plan (:func:`sdmnet.planning.tables.plan_counts`), at the class's own ``cost`` and ``power_w``.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Item", "ITEMS", "ITEM_NAMES", "SWITCH_PORT_ITEMS", "LEGACY_UNIT_COSTS", "item"]


@dataclass(frozen=True)
class Item:
    """One thing a plan buys.

    Attributes
    ----------
    name : str
        Key in ``[costs]``, ``[power]`` and cost.csv.
    unit : str
        What one count is.
    cost : float
        Default relative price of one unit (a lane of the ``[transceiver]`` class = 1).
    power_w : float
        Default watts of one unit (None where the scenario's physics gives it).
    cost_source, power_source : str
        Where the defaults come from.
    """

    name: str
    unit: str
    cost: float
    power_w: float | None
    cost_source: str
    power_source: str


ITEMS: tuple[Item, ...] = (
    Item(
        "transceiver_lane", "installed lane (one core x one channel, both directions)", 1.0, None,
        "the unit of the scale: one lane of the [transceiver] class",
        "[transceiver] module_power_w (docs/physics.md)",
    ),
    Item(
        "mimo_premium", "installed lane of a MIMO module (per coupled core)", 0.1, None,
        "assumption: the MIMO DSP adds about a tenth to a lane; [K12] prices integrated SDM "
        "transceivers at or below parallel ones (from memory)",
        "the MIMO equalizer's extra work per lane (sdmnet.optics.physics.module_power_w)",
    ),
    Item(
        "wss_port_core", "per-core wavelength-selective switch port (duplex)", 0.15, 2.0,
        "[R13]: a WSS-based ROADM degree costs a few transponders, about 0.1-0.2 of a 400 Gb/s "
        "lane per port (from memory)",
        "[VH12]: a ROADM degree draws tens of watts, about 1-2 W per port (from memory)",
    ),
    Item(
        "wss_port_group", "per-group (joint) wavelength-selective switch port, one per unit position", 0.3, 2.0,
        "assumption: one steering element moves the whole group, so a port costs about two "
        "per-core ports whatever the group size",
        "assumption: as a per-core port (one steering element)",
    ),
    Item(
        "fiber_xc_port", "fiber cross-connect port (duplex)", 0.05, 0.5,
        "from memory: fiber cross-connect ports cost a few hundred dollars against several "
        "thousand for a coherent lane",
        "from memory: MEMS and robotic fiber switches draw well under a watt per port",
    ),
    Item(
        "add_drop_port", "add/drop port at a datacenter site, one per installed module", 0.1, 1.0,
        "assumption: a colorless add/drop port (multicast switch or WSS port), below a "
        "line-side WSS port [R13]",
        "assumption: about half a line-side WSS port [VH12]",
    ),
    Item(
        "fan_in_fan_out", "fan-in/fan-out device (around per-core amplifiers, at fiber ends whose cores are "
        "switched apart, at multicore add/drop ports)", 0.2, 0.0,
        "assumption: [K12] treats fan-in/fan-out as a per-fiber-end cost to amortize (no figure "
        "recalled)",
        "passive device",
    ),
    Item(
        "amplifier_core", "single-core amplifier (one per core, fiber and span)", 0.5, 15.0,
        "[R13]: an in-line amplifier costs about a 10 Gb/s transponder, about half a 400 Gb/s "
        "lane (from memory)",
        "[VH12]: a line amplifier draws about 15 W per fiber and direction (from memory)",
    ),
    Item(
        "amplifier_multicore", "multicore amplifier (one per fiber and span, pumps shared)", 1.5, 30.0,
        "assumption: about three single-core amplifiers whatever the core count; [K12] sets the "
        "price-point of multicore amplifiers below that of one amplifier per core (from memory)",
        "assumption: twice a single-core amplifier (shared, larger pumps)",
    ),
    Item(
        "fiber_pair_km", "fiber pair x km", 0.02, 0.0,
        "assumption: fiber is cheap against lanes; [S25] puts multicore fiber of up to 7 cores "
        "near single-mode fiber per core",
        "passive",
    ),
    Item(
        "cable_km", "km of cable built (trench, duct and cable)", 3.0, 0.0,
        "assumption: metro cable build costs tens of thousands per km against several thousand "
        "per coherent lane",
        "passive",
    ),
    Item(
        "regenerator_lane", "regenerated lane (counted once regeneration is planned)", 2.0, None,
        "assumption: a regenerator is a back-to-back pair of lanes",
        "two lanes' watts",
    ),
)

ITEM_NAMES: tuple[str, ...] = tuple(i.name for i in ITEMS)

#: Switch port kinds, in the order tables show them.
SWITCH_PORT_ITEMS: tuple[str, ...] = ("wss_port_core", "wss_port_group", "fiber_xc_port", "add_drop_port")

#: ``[plan.unit_costs]`` of older scenarios -> the items each key now prices.
LEGACY_UNIT_COSTS: dict[str, tuple[str, ...]] = {
    "fiber_pair_km": ("fiber_pair_km",),
    "transceiver_lane": ("transceiver_lane",),
    "switch_port": SWITCH_PORT_ITEMS,
}


def item(name: str) -> Item:
    """The catalogue entry ``name`` (KeyError if absent); ``transceiver_lane:CLASS`` is a lane of
    a named class, described as ``transceiver_lane``."""
    name = name.split(":", 1)[0]
    for entry in ITEMS:
        if entry.name == name:
            return entry
    raise KeyError(name)
