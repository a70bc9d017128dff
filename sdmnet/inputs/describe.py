"""A readable plain-text summary of a topology or scenario (what ``sdmnet check FILE`` prints)."""

from __future__ import annotations

from dataclasses import fields

from ..network.architectures import unit_geometry, why_not_allowed
from ..optics import defaults
from .model import Architecture, FiberType, Scenario, Topology

__all__ = ["describe", "describe_topology", "describe_scenario", "fiber_pair_km", "warnings_for"]

INDENT = "  "


def describe(obj: Topology | Scenario) -> str:
    """Multi-line summary of ``obj``, a :class:`Topology` or a :class:`Scenario`.

    Raises
    ------
    TypeError
        For anything else.
    """
    if isinstance(obj, Scenario):
        return describe_scenario(obj)
    if isinstance(obj, Topology):
        return describe_topology(obj)
    raise TypeError(f"describe() takes a Topology or a Scenario, not {type(obj).__name__}")


def warnings_for(obj: Topology | Scenario) -> list[tuple[str, str, str]]:
    """``(file, where, what)`` for what is allowed but doubtful in ``obj`` (``sdmnet check`` prints
    them as ``warning: FILE: WHERE: what``).

    A weakly coupled fiber type with more cores than a standard 125 um cladding fits (about 4 for
    wideband use, 8 for the O band only: common practice, no source), unless it states a larger
    ``cladding_um``.
    """
    topology = obj.topology if isinstance(obj, Scenario) else obj
    file = str(topology.source) if topology.source is not None else "<topology>"
    found = []
    for fiber in topology.fiber_types.values():
        cladding = fiber.cladding_um
        large = cladding is not None and cladding > defaults.CLADDING_STANDARD_UM
        if fiber.coupling != "weak" or fiber.cores <= defaults.WEAK_CORES_IN_STANDARD_CLADDING or large:
            continue
        stated = "no cladding_um given" if cladding is None else f"cladding {_num(cladding)} um"
        found.append(
            (
                file,
                f"fiber_types.{fiber.name}",
                f"{fiber.cores} weakly coupled cores with {stated}: a standard "
                f"{_num(defaults.CLADDING_STANDARD_UM)} um cladding fits about "
                f"{defaults.WEAK_CORES_IN_STANDARD_CLADDING} for wideband use "
                f"({defaults.WEAK_CORES_IN_STANDARD_CLADDING_O_BAND} for the O band only); "
                f"set cladding_um if this is a larger-cladding design",
            )
        )
    return found


def fiber_pair_km(topology: Topology) -> float:
    """Sum over cables of fiber pairs x length (each pair is two fiber strands)."""
    return sum(c.fiber_pairs * c.length_km for c in topology.cables)


def _num(value: float | None) -> str:
    """A number without noise: 22.5, 80, 0.17."""
    if value is None:
        return "-"
    return f"{value:.10g}"


def _count(n: int, word: str) -> str:
    """``1 hub``, ``2 hubs``."""
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def _source(path: object) -> str:
    return f" ({path})" if path is not None else ""


def _fiber_type_line(fiber: FiberType) -> str:
    coupling = "weakly coupled" if fiber.coupling == "weak" else f"randomly coupled in groups of {fiber.coupled_group}"
    parts = [
        f"{fiber.cores} cores {coupling}",
        f"{fiber.channels} channels per core",
        f"{_num(fiber.attenuation_db_per_km)} dB/km",
    ]
    figures = (
        ("GD spread", fiber.gd_spread_ps_per_sqrt_km, "ps/sqrt(km)"),
        ("DGD", fiber.dgd_ps_per_km, "ps/km"),
        ("crosstalk", fiber.crosstalk_db_per_km, "dB after 1 km"),
        ("MDL", fiber.mdl_db_per_sqrt_km, "dB/sqrt(km)"),
        ("group crosstalk", fiber.group_crosstalk_db_per_km, "dB after 1 km"),
        ("effective area", fiber.effective_area_um2, "um^2"),
        ("dispersion", fiber.dispersion_ps_per_nm_km, "ps/(nm km)"),
        ("cladding", fiber.cladding_um, "um"),
    )
    parts += [f"{label} {_num(value)} {unit}" for label, value, unit in figures if value is not None]
    return f"{fiber.name}: " + ", ".join(parts)


def _topology_lines(topology: Topology) -> list[str]:
    datacenters = topology.datacenters
    hubs = [s for s in topology.sites if s.role == "hub"]
    lines = [f"topology '{topology.name}'{_source(topology.source)}"]

    lines.append(
        f"{INDENT}sites: {len(topology.sites)} ({_count(len(datacenters), 'datacenter')}, {_count(len(hubs), 'hub')})"
    )
    width = max((len(s.id) for s in topology.sites), default=0)
    for role, group in (("datacenter", datacenters), ("hub", hubs)):
        for site in group:
            text = f"{INDENT * 2}{role:<10}  {site.id:<{width}}"
            if role == "datacenter":
                text += f"  traffic weight {_num(site.traffic_weight)}"
            if site.x_km is not None and site.y_km is not None:
                text += f"  at ({_num(site.x_km)}, {_num(site.y_km)}) km"
            if not site.transit:
                text += "  no transit"
            lines.append(text.rstrip())

    lines.append(f"{INDENT}fiber types: {len(topology.fiber_types)}")
    lines += [f"{INDENT * 2}{_fiber_type_line(f)}" for f in topology.fiber_types.values()]

    route_km = sum(c.length_km for c in topology.cables)
    pair_km = fiber_pair_km(topology)
    lines.append(f"{INDENT}cables: {len(topology.cables)}, {_num(route_km)} km of route")
    key_width = max((len(c.key) for c in topology.cables), default=0)
    for cable in topology.cables:
        lines.append(
            f"{INDENT * 2}{cable.key:<{key_width}}  {_num(cable.length_km):>7} km  {cable.fiber_type}"
            f"  x {_count(cable.fiber_pairs, 'fiber pair')}"
        )
    lines.append(f"{INDENT}fiber: {_num(pair_km)} fiber-pair-km = {_num(2 * pair_km)} fiber-km (both strands)")
    return lines


def describe_topology(topology: Topology) -> str:
    """Sites by role, fiber types with their figures, cables, and total fiber-km."""
    return "\n".join(_topology_lines(topology)) + "\n"


def _architecture_lines(scenario: Scenario, arch: Architecture) -> list[str]:
    options = [f"switching {arch.switching}"]
    if arch.group is not None:
        options.append(f"group {arch.group}")
    if arch.switching in ("independent", "fractional-joint"):
        options.append("lane change" if arch.lane_change else "no lane change")
    options.append("sharing spare capacity" if arch.share else "no sharing")
    if arch.fiber_type is not None:
        options.append(f"every cable as fiber type {arch.fiber_type}")
    lines = [f"{INDENT * 2}{arch.name}: " + ", ".join(options)]
    topology = scenario.topology_for(arch)
    used = list(dict.fromkeys(c.fiber_type for c in topology.cables))
    lane = scenario.transceiver.lane_gbps
    for type_name in used:
        fiber = topology.fiber_types[type_name]
        reason = why_not_allowed(arch, fiber)
        if reason is not None:  # the loader refuses this; shown for scenarios built in code
            lines.append(f"{INDENT * 3}on {type_name}: not allowed: {reason}")
            continue
        unit = unit_geometry(arch, fiber, lane)
        what = "whole fiber" if unit.whole_fiber else f"{_count(unit.cores_per_unit, 'core')} x 1 channel"
        lines.append(
            f"{INDENT * 3}on {type_name}: unit = {what}, {_num(unit.unit_gbps)} Gb/s, "
            f"{_count(unit.units_per_fiber, 'unit')} per fiber, {_count(unit.ports_per_fiber, 'switch port')} per fiber"
        )
    return lines


def _field_lines(title: str, spec: object) -> list[str]:
    """``title`` then one ``name = value`` line per dataclass field of ``spec``."""
    lines = [f"{INDENT}{title}:"]
    for f in fields(spec):  # type: ignore[arg-type]
        value = getattr(spec, f.name)
        shown = _num(value) if isinstance(value, float) else value
        lines.append(f"{INDENT * 2}{f.name} = {shown}")
    return lines


def describe_scenario(scenario: Scenario) -> str:
    """The topology, then traffic, transceiver, run lengths, architectures, plan and forecast."""
    lines = [f"scenario '{scenario.name}'{_source(scenario.source)}, seed {scenario.seed}"]
    lines += [INDENT + line for line in _topology_lines(scenario.topology)]

    traffic = scenario.traffic
    lines.append(f"{INDENT}traffic: pattern {traffic.pattern}, mean holding time {_num(traffic.mean_holding)}")
    loads = ", ".join(_num(x) for x in traffic.loads_erlang)
    lines.append(f"{INDENT * 2}load points ({len(traffic.loads_erlang)}): {loads} Erlang")
    sizes = ", ".join(f"{_num(s)} Gb/s with p = {_num(p)}" for s, p in traffic.sizes_gbps)
    mean_size = sum(s * p for s, p in traffic.sizes_gbps)
    lines.append(f"{INDENT * 2}sizes: {sizes} (mean {_num(mean_size)} Gb/s)")
    if traffic.matrix is not None:
        lines.append(f"{INDENT * 2}matrix{_source(traffic.matrix_file)}: {len(traffic.matrix)} rows")
        for a, b, weight in traffic.matrix:
            lines.append(f"{INDENT * 3}{a}-{b}: weight {_num(weight)}")

    lines += _field_lines("transceiver", scenario.transceiver)
    lines += _field_lines("line", scenario.line)
    if scenario.transceivers:
        lines.append(f"{INDENT}transceiver classes: {len(scenario.transceivers)}")
        for cls in scenario.transceivers:
            text = (
                f"{INDENT * 2}{cls.name}: {_num(cls.lane_gbps)} Gb/s at {_num(cls.symbol_rate_gbaud)} GBd, "
                f"needs {_num(cls.required_osnr_db)} dB OSNR"
            )
            extras = (("reach", cls.reach_km, " km"), ("power", cls.power_w, " W"), ("cost", cls.cost, ""))
            text += "".join(f", {label} {_num(v)}{unit}" for label, v, unit in extras if v is not None)
            lines.append(text)
    run = scenario.run
    lines.append(
        f"{INDENT}run: {_count(run.replications, 'replication')} x ({run.warmup} warm-up + {run.requests} measured "
        f"requests) per load point, {_count(run.k_paths, 'candidate path')}, {_num(run.confidence * 100)} % intervals"
    )
    lines.append(f"{INDENT}architectures: {len(scenario.architectures)}")
    for arch in scenario.architectures:
        lines += _architecture_lines(scenario, arch)
    if scenario.plan is not None:
        plan = scenario.plan
        text = f"{INDENT}plan: target blocking {_num(plan.target_blocking)}"
        text += ", per pair too" if plan.per_pair else ""
        text += f", up to {plan.max_fiber_pairs} fiber pairs per cable"
        if plan.unit_costs:
            text += "; unit costs " + ", ".join(f"{k} {_num(v)}" for k, v in plan.unit_costs.items())
        lines.append(text)
    if scenario.forecast is not None:
        forecast = scenario.forecast
        factors = ", ".join(_num(forecast.factor(y)) for y in range(1, forecast.years + 1))
        how = "given factors" if forecast.factors else f"growth {_num(forecast.growth_per_year * 100)} %/year"
        lines.append(f"{INDENT}forecast: {forecast.years} years, {how}; load factors {factors}")
    return "\n".join(lines) + "\n"
