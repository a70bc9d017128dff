"""Line-side ports, fan-in/fan-out devices and amplifiers counted by hand on small topologies."""

from __future__ import annotations

from dataclasses import replace

import pytest
from builders import chain, fiber_type, scenario

from sdmnet.equipment.resources import installed_resources
from sdmnet.inputs.model import Architecture, Cable, LineSpec


def _two_cables(arch, amplifier="per-core"):
    # S0 - S1 - S2: cables of 100 km and 30 km, 2 fiber pairs of 7-core weakly coupled fiber.
    topo = chain(fiber_type(cores=7, channels=4), 2, fiber_pairs=2)
    topo = replace(topo, cables=(replace(topo.cables[0], length_km=100.0), replace(topo.cables[1], length_km=30.0)))
    sc = scenario(topo, [arch])
    return replace(sc, line=LineSpec(span_km=80.0, amplifier=amplifier))


@pytest.mark.parametrize(
    ("arch", "kind", "ports_per_fiber", "apart", "multicore_ports"),
    [
        # Per-core switching: 7 ports per fiber pair at each end, cores fanned out at each fiber end.
        (Architecture("ind", "independent"), "wss_port_core", 7, True, False),
        (Architecture("fj", "fractional-joint", group=7), "wss_port_group", 1, False, True),
        (Architecture("joint", "joint"), "wss_port_group", 1, False, True),
        (Architecture("fiber", "fiber"), "fiber_xc_port", 1, False, True),
    ],
)
def test_line_ports_and_fan_in_fan_out_devices_with_multicore_amplifiers(
    arch, kind, ports_per_fiber, apart, multicore_ports
):
    res = installed_resources(_two_cables(arch, "multicore"), arch)
    # Each cable end: 2 pairs x ports per fiber; the middle site S1 has both cables' ends.
    assert res.site_line_ports == {"S0": 2 * ports_per_fiber, "S1": 4 * ports_per_fiber, "S2": 2 * ports_per_fiber}
    assert res.line_ports == {kind: 8 * ports_per_fiber}
    # Cores switched apart: a fan-in/fan-out at both ends of every strand, 2 cables x 2 pairs x
    # 2 strands x 2 ends; units of several cores use multicore ports instead (docs/physics.md).
    assert res.fan_in_fan_out == (16 if apart else 0)
    assert res.multicore_add_drop == multicore_ports
    assert (res.fiber_pair_km, res.cable_km, res.fiber_km) == (260.0, 130.0, 520.0)


def test_amplifiers_per_span_strand_and_core():
    arch = Architecture("joint", "joint")
    # 100 km on 80 km spans: 2 spans; 30 km: 1 span.  4 strands per cable, 7 cores per strand.
    per_core = installed_resources(_two_cables(arch), arch)
    assert (per_core.amplifiers, per_core.amplifier_item) == ((2 + 1) * 4 * 7, "amplifier_core")
    # Per-core amplifiers on multicore fiber: a fan-out before and a fan-in after each of the
    # 3 span positions of every strand (docs/physics.md).
    assert per_core.fan_in_fan_out == 2 * (2 + 1) * 4
    multicore = installed_resources(_two_cables(arch, "multicore"), arch)
    assert (multicore.amplifiers, multicore.amplifier_item) == ((2 + 1) * 4, "amplifier_multicore")
    assert multicore.fan_in_fan_out == 0


def test_single_core_fiber_needs_no_fan_in_fan_out():
    arch = Architecture("ind", "independent")
    sc = scenario(chain(fiber_type(cores=1, channels=4), 2, fiber_pairs=2), [arch])
    res = installed_resources(sc, arch)
    assert res.fan_in_fan_out == 0 and not res.multicore_add_drop


def test_every_cable_end_adds_its_ports_at_its_site():
    arch = Architecture("ind", "independent")
    sc = _two_cables(arch)
    extra = Cable("S0", "S2", 50.0, sc.topology.cables[0].fiber_type, 1)
    sc = replace(sc, topology=replace(sc.topology, cables=(*sc.topology.cables, extra)))
    res = installed_resources(sc, arch)
    assert res.site_line_ports["S0"] == 2 * 7 + 7
    assert res.fiber_pairs == 5
