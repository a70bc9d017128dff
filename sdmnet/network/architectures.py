"""What one switching architecture means on one fiber type (docs/model.md, section 2).

Each architecture switches a *unit* of g cores x one channel (a spatial superchannel when
g > 1), or, for ``fiber`` switching, a whole fiber.  This module turns an
:class:`~sdmnet.inputs.model.Architecture` and a :class:`~sdmnet.inputs.model.FiberType` into a
:class:`UnitGeometry` that the engine, the analytic estimate and the dimensioning share.

To add a switching architecture: add its name to ``model.SWITCHINGS``, give it a branch in
:func:`why_not_allowed` and :func:`unit_geometry`, and the rest follows.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import ConfigurationError
from ..inputs.model import Architecture, FiberType, Scenario

__all__ = [
    "UnitGeometry",
    "why_not_allowed",
    "unit_geometry",
    "cable_geometries",
    "units_needed",
]


@dataclass(frozen=True)
class UnitGeometry:
    """The switching unit of one architecture on one fiber type.

    Attributes
    ----------
    cores_per_unit : int
        g: cores moved together (all cores for ``joint`` and ``fiber``).
    groups_per_fiber : int
        Unit positions across the cores of one fiber (cores / g); 1 for ``joint``/``fiber``.
    channels : int
        Unit positions along the spectrum; 1 for ``fiber`` (the unit is the whole fiber).
    unit_gbps : float
        Capacity of one unit.
    lanes_per_unit : int
        Lanes (core x channel) in one unit.
    ports_per_fiber : int
        Switch ports one fiber occupies at a switch.
    whole_fiber : bool
        The unit is a whole fiber (``fiber`` switching): no channel continuity, and a demand
        lights ceil(s / lane) single-lane modules rather than one module per unit.
    """

    cores_per_unit: int
    groups_per_fiber: int
    channels: int
    unit_gbps: float
    lanes_per_unit: int
    ports_per_fiber: int
    whole_fiber: bool = False

    @property
    def units_per_fiber(self) -> int:
        """Unit positions in one fiber."""
        return self.groups_per_fiber * self.channels


def why_not_allowed(arch: Architecture, fiber: FiberType) -> str | None:
    """Why ``arch`` cannot run on ``fiber``, or None when it can.

    Rules of docs/model.md, section 2: independent switching needs weak coupling; a fractional-joint
    group divides the cores and is a multiple of the coupled group.
    """
    if arch.switching == "independent":
        if fiber.coupling != "weak":
            return (
                f"independent switching needs weakly coupled fiber, but fiber type "
                f"'{fiber.name}' is randomly coupled in groups of {fiber.coupled_group} cores "
                f"(use fractional-joint with a multiple of {fiber.coupled_group}, or joint)"
            )
        return None
    if arch.switching == "fractional-joint":
        g = arch.group
        if g is None or g < 1:
            return "fractional-joint switching needs 'group' (cores per unit), a positive integer"
        if fiber.cores % g:
            return f"group {g} does not divide the {fiber.cores} cores of fiber type '{fiber.name}'"
        if g % fiber.coupled_group:
            return (
                f"group {g} is not a multiple of the coupled group ({fiber.coupled_group} cores) "
                f"of fiber type '{fiber.name}'"
            )
        return None
    if arch.switching in ("joint", "fiber"):
        return None
    return f"unknown switching '{arch.switching}'"


def unit_geometry(arch: Architecture, fiber: FiberType, lane_gbps: float) -> UnitGeometry:
    """The unit of ``arch`` on ``fiber``; ValueError if the pair is not allowed.

    Validate first with :func:`why_not_allowed` to get a message for the user.
    """
    reason = why_not_allowed(arch, fiber)
    if reason is not None:
        raise ValueError(reason)
    if arch.switching == "independent":
        g = 1
    elif arch.switching == "fractional-joint":
        assert arch.group is not None
        g = arch.group
    else:
        g = fiber.cores
    if arch.switching == "fiber":
        lanes = fiber.cores * fiber.channels
        return UnitGeometry(fiber.cores, 1, 1, lanes * lane_gbps, lanes, 1, whole_fiber=True)
    return UnitGeometry(g, fiber.cores // g, fiber.channels, g * lane_gbps, g, fiber.cores // g)


def cable_geometries(scenario: Scenario, arch: Architecture) -> list[UnitGeometry]:
    """The unit of ``arch`` on every cable of the scenario (with its fiber-type override).

    Raises
    ------
    ConfigurationError
        Naming the architecture and the first cable whose fiber type does not allow it.
    """
    topo = scenario.topology_for(arch)
    out = []
    for i, cable in enumerate(topo.cables):
        try:
            out.append(unit_geometry(arch, topo.fiber_types[cable.fiber_type], scenario.transceiver.lane_gbps))
        except ValueError as exc:
            known = arch in scenario.architectures
            where = f"architectures[{scenario.architectures.index(arch)}]" if known else arch.name
            raise ConfigurationError(
                scenario.source or "<scenario>", where, f"cable {cable.key} (#{i}): {exc}"
            ) from None
    return out


def units_needed(size_gbps: float, geometry: UnitGeometry) -> int:
    """Units a demand of ``size_gbps`` takes on every hop: ceil(s / unit capacity)."""
    # A tiny tolerance keeps 400.0000001 from asking for a second unit through float noise.
    return max(1, math.ceil(size_gbps / geometry.unit_gbps - 1e-9))
