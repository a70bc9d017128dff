"""Installed resources that follow from the topology and the architecture, not from traffic.

Switch ports count line-side ports: every fiber of a cable ending at a site occupies
``ports_per_fiber`` ports of that site's switch (docs/model.md, section 2), counting one duplex port
per fiber pair (common practice, no source: a duplex port terminates a fiber pair).
Fiber-km counts strands: 2 x fiber pairs x length.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..inputs.model import Architecture, Scenario
from ..network.architectures import cable_geometries

__all__ = ["InstalledResources", "installed_resources", "ModuleFigures", "module_figures"]


@dataclass(frozen=True)
class InstalledResources:
    """Ports and fibers of one architecture on one topology.

    Attributes
    ----------
    site_switch_ports : dict of str to int
        Line-side switch ports per site.
    switch_ports : int
        Total over sites.
    fiber_pairs : int
        Fiber pairs over all cables.
    fiber_strands : int
        Fibers (2 x pairs).
    fiber_km : float
        Strand-km: sum of 2 x pairs x length.
    """

    site_switch_ports: dict[str, int]
    switch_ports: int
    fiber_pairs: int
    fiber_km: float

    @property
    def fiber_strands(self) -> int:
        """Fibers: two per pair."""
        return 2 * self.fiber_pairs


def installed_resources(scenario: Scenario, arch: Architecture) -> InstalledResources:
    """Switch ports and fibers of ``arch`` on the scenario's topology (with its override)."""
    topo = scenario.topology_for(arch)
    ports = {s.id: 0 for s in topo.sites}
    for cable, geo in zip(topo.cables, cable_geometries(scenario, arch)):
        per_end = cable.fiber_pairs * geo.ports_per_fiber
        ports[cable.a] += per_end
        ports[cable.b] += per_end
    pairs = sum(c.fiber_pairs for c in topo.cables)
    return InstalledResources(
        site_switch_ports=ports,
        switch_ports=sum(ports.values()),
        fiber_pairs=pairs,
        fiber_km=sum(2 * c.fiber_pairs * c.length_km for c in topo.cables),
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
