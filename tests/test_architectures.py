"""Units of each switching architecture on each fiber type (docs/model.md, section 2)."""

from __future__ import annotations

import pytest
from builders import fiber_type, scenario, single_cable

from sdmnet.errors import ConfigurationError
from sdmnet.inputs.model import Architecture
from sdmnet.network.architectures import cable_geometries, unit_geometry, units_needed, why_not_allowed

WEAK7 = fiber_type("w7", cores=7, channels=16)
RC8 = fiber_type("rc8", cores=8, coupling="random", coupled_group=4, channels=16)


@pytest.mark.parametrize(
    ("arch", "fiber", "cores", "positions", "ports", "unit_gbps"),
    [
        (Architecture("i", "independent"), WEAK7, 1, 7, 7, 400.0),
        (Architecture("j", "joint"), WEAK7, 7, 1, 1, 2800.0),
        (Architecture("fj", "fractional-joint", group=4), RC8, 4, 2, 2, 1600.0),
        (Architecture("j", "joint"), RC8, 8, 1, 1, 3200.0),
        (Architecture("f", "fiber"), WEAK7, 7, 1, 1, 7 * 16 * 400.0),
    ],
)
def test_unit_geometry_follows_the_table(arch, fiber, cores, positions, ports, unit_gbps):
    geo = unit_geometry(arch, fiber, 400.0)
    assert (geo.cores_per_unit, geo.groups_per_fiber, geo.ports_per_fiber) == (cores, positions, ports)
    assert geo.unit_gbps == unit_gbps
    assert geo.whole_fiber == (arch.switching == "fiber")


def test_units_needed_rounds_up_and_tolerates_float_noise():
    geo = unit_geometry(Architecture("i", "independent"), WEAK7, 400.0)
    assert units_needed(400.0, geo) == 1
    assert units_needed(400.0000000001, geo) == 1
    assert units_needed(401.0, geo) == 2
    assert units_needed(100.0, geo) == 1


@pytest.mark.parametrize(
    ("arch", "fiber", "fragment"),
    [
        (Architecture("i", "independent"), RC8, "needs weakly coupled fiber"),
        (Architecture("fj", "fractional-joint", group=3), RC8, "does not divide the 8 cores"),
        (Architecture("fj", "fractional-joint", group=2), RC8, "not a multiple of the coupled group"),
        (Architecture("fj", "fractional-joint"), RC8, "needs 'group'"),
    ],
)
def test_forbidden_combinations_are_explained(arch, fiber, fragment):
    assert fragment in why_not_allowed(arch, fiber)
    with pytest.raises(ValueError, match=fragment.split("'")[0]):
        unit_geometry(arch, fiber, 400.0)


def test_cable_geometries_name_the_architecture_and_cable():
    arch = Architecture("i", "independent")
    sc = scenario(single_cable(RC8), [arch])
    with pytest.raises(ConfigurationError) as err:
        cable_geometries(sc, arch)
    assert err.value.where == "architectures[0]"
    assert err.value.what.startswith("cable A-B (#0): independent switching needs weakly coupled fiber")
