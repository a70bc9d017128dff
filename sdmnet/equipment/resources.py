"""Installed resources that follow from the topology and the architecture, not from traffic.

Line-side switch ports: every fiber of a cable ending at a site occupies ``ports_per_fiber``
ports of that site's switch (docs/model.md, section 2), counting one duplex port per fiber pair
(common practice, no source: a duplex port terminates a fiber pair); their kind follows the
unit: a per-core wavelength-selective port for single-core units, a per-group port for
superchannels, a fiber cross-connect port under fiber switching.  Add/drop ports depend on the
traffic and are counted with the installed transceivers (:mod:`sdmnet.equipment.costs`).

Fan-in/fan-out devices sit where the physical layer puts them (docs/physics.md) on multicore
fiber: with ``[line] amplifier = "per-core"``, a fan-out before and a fan-in after every
amplifier (2 per span and strand; the last amplifier is the receiving site's preamplifier, so
these also give the switch its cores one by one); with ``"multicore"`` amplifiers, one at each
end of every strand whose cores are switched apart (more than one unit position across the
cores).  Where a switch's add/drop ports are multicore (units of several cores), each add/drop
port has one too (counted with the installed modules, :mod:`sdmnet.equipment.costs`), since
transceivers have single-core pigtails.
Amplifiers: ``ceil(length / span_km)`` per fiber strand of a cable (:func:`sdmnet.optics.line.span_count`),
one per core with ``"per-core"``, one per fiber with ``"multicore"``.
Fiber-km counts strands: 2 x fiber pairs x length; fiber-pair-km and cable-km count pairs and cables.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..inputs.model import Architecture, Scenario
from ..network.architectures import UnitGeometry, cable_geometries
from ..optics.line import span_count

__all__ = ["InstalledResources", "installed_resources", "line_port_item", "ModuleFigures", "module_figures"]


@dataclass(frozen=True)
class InstalledResources:
    """Line-side ports, fibers, fan-in/fan-out devices and amplifiers of one architecture.

    Attributes
    ----------
    site_line_ports : dict of str to int
        Line-side switch ports per site.
    line_ports : dict of str to int
        Line-side ports over all sites, by catalogue item (``wss_port_core``,
        ``wss_port_group``, ``fiber_xc_port``).
    fiber_pairs : int
        Fiber pairs over all cables.
    fiber_km : float
        Strand-km: sum of 2 x pairs x length.
    fiber_pair_km : float
        Sum of pairs x length.
    cable_km : float
        Sum of cable lengths.
    fan_in_fan_out : int
        Fan-in/fan-out devices on the line side (around amplifiers, or at fiber ends).
    multicore_add_drop : bool
        The add/drop ports are multicore (units of several cores of multicore fiber), so each
        needs a fan-in/fan-out device.
    amplifiers : int
        Amplifiers, of the kind ``amplifier_item`` (``amplifier_core`` or ``amplifier_multicore``).
    """

    site_line_ports: dict[str, int]
    line_ports: dict[str, int]
    fiber_pairs: int
    fiber_km: float
    fiber_pair_km: float
    cable_km: float
    fan_in_fan_out: int
    multicore_add_drop: bool
    amplifiers: int
    amplifier_item: str

    @property
    def fiber_strands(self) -> int:
        """Fibers: two per pair."""
        return 2 * self.fiber_pairs

    @property
    def line_port_count(self) -> int:
        """Line-side ports of every kind."""
        return sum(self.line_ports.values())


def line_port_item(geometry: UnitGeometry) -> str:
    """The catalogue item of a line-side port for this unit."""
    if geometry.whole_fiber:
        return "fiber_xc_port"
    return "wss_port_core" if geometry.cores_per_unit == 1 else "wss_port_group"


def installed_resources(scenario: Scenario, arch: Architecture) -> InstalledResources:
    """Line ports, fibers, fan-in/fan-out devices and amplifiers of ``arch`` on the scenario's
    topology (with its override)."""
    topo = scenario.topology_for(arch)
    line = scenario.line
    per_core = line.amplifier == "per-core"
    site_ports = {s.id: 0 for s in topo.sites}
    by_item: dict[str, int] = {}
    fifo = amplifiers = 0
    multicore_add_drop = False
    for cable, geo in zip(topo.cables, cable_geometries(scenario, arch)):
        per_end = cable.fiber_pairs * geo.ports_per_fiber
        site_ports[cable.a] += per_end
        site_ports[cable.b] += per_end
        kind = line_port_item(geo)
        by_item[kind] = by_item.get(kind, 0) + 2 * per_end
        strands = 2 * cable.fiber_pairs
        spans = span_count(cable.length_km, line.span_km)
        cores = topo.fiber_types[cable.fiber_type].cores
        amplifiers += spans * strands * (cores if per_core else 1)
        if cores > 1:
            if per_core:
                fifo += 2 * spans * strands  # a fan-out before and a fan-in after every amplifier
            elif geo.groups_per_fiber > 1:
                fifo += 2 * strands  # both ends of every strand
            multicore_add_drop = multicore_add_drop or geo.cores_per_unit > 1
    return InstalledResources(
        site_line_ports=site_ports,
        line_ports=by_item,
        fiber_pairs=sum(c.fiber_pairs for c in topo.cables),
        fiber_km=sum(2 * c.fiber_pairs * c.length_km for c in topo.cables),
        fiber_pair_km=sum(c.fiber_pairs * c.length_km for c in topo.cables),
        cable_km=sum(c.length_km for c in topo.cables),
        fan_in_fan_out=fifo,
        multicore_add_drop=multicore_add_drop,
        amplifiers=amplifiers,
        amplifier_item="amplifier_core" if per_core else "amplifier_multicore",
    )


@dataclass(frozen=True)
class ModuleFigures:
    """Transceiver module of one architecture, sized for its worst feasible route.

    Attributes
    ----------
    lanes : int
        Lanes per module: the cores a randomly coupled group mixes (a MIMO module receives the
        group whole), 1 on weakly coupled fiber (docs/model.md, section 2).
    mimo_size : int
        D of the D x D MIMO equalizer (0 when no spatial MIMO is needed).
    mimo_taps : int
        Longest equalizer over the feasible routes.
    power_w : float
        Power of one module (:func:`sdmnet.optics.physics.module_power_w`).
    cmul_per_bit_frequency, cmul_per_bit_time : float
        MIMO DSP load in complex multiplications per bit, frequency-domain (overlap-save) and
        time-domain equalizer (:func:`sdmnet.optics.physics.mimo_cmul_per_bit`); 0 without MIMO.
    """

    lanes: int
    mimo_size: int
    mimo_taps: int
    power_w: float
    cmul_per_bit_frequency: float
    cmul_per_bit_time: float


def module_figures(scenario: Scenario, arch: Architecture) -> ModuleFigures:
    """The module ``arch`` needs, from the physics of its feasible routes (worst case)."""
    from ..optics.defaults import POLARIZATIONS
    from ..optics.pathtable import evaluated_routes
    from ..optics.physics import mimo_cmul_per_bit, module_power_w

    trx = scenario.transceiver
    feasible = [phys for *_pair, found in evaluated_routes(scenario, arch) for _route, phys in found if phys.feasible]
    size = max((phys.mimo_size for phys in feasible), default=0)
    taps = max((phys.mimo_taps for phys in feasible), default=0)
    # D = 2 polarizations x the coupled cores, so the module has D / 2 lanes (1 without MIMO).
    lanes = max(1, size // POLARIZATIONS)
    if size and taps:
        fd = mimo_cmul_per_bit(size, taps, trx, "frequency")
        td = mimo_cmul_per_bit(size, taps, trx, "time")
    else:
        fd = td = 0.0
    return ModuleFigures(lanes, size, taps, module_power_w(trx, lanes, size, taps), fd, td)
