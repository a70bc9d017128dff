"""Plain, typed data classes for everything sdmnet reads.

The loaders (:mod:`sdmnet.inputs.loaders`) turn TOML / GraphML / CSV files into these objects and
validate them; every later stage (routing, physics, engine, statistics, reports) reads them and
never touches files.  All classes are frozen: a scenario is a value.

Units follow the file contract: lengths in km, rates in Gb/s, loads in Erlang, times in the
scenario's own holding-time unit, losses in dB.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Literal

from ..optics import defaults

if TYPE_CHECKING:  # networkx is imported where a graph is built: it is slow to import
    import networkx as nx

__all__ = [
    "COUPLINGS",
    "ROLES",
    "SWITCHINGS",
    "PATTERNS",
    "FiberType",
    "Site",
    "Cable",
    "Topology",
    "TrafficSpec",
    "TransceiverSpec",
    "AMPLIFIERS",
    "LineSpec",
    "TransceiverClass",
    "RunSpec",
    "Architecture",
    "PlanSpec",
    "ForecastSpec",
    "Scenario",
]

Coupling = Literal["weak", "random"]
Role = Literal["datacenter", "hub"]
Switching = Literal["independent", "fractional-joint", "joint", "fiber"]
Pattern = Literal["uniform", "gravity", "matrix"]
Survive = Literal["none", "cable-cut"]
EstimateChoice = Literal["auto", "routed", "fixed-point", "none"]

COUPLINGS: tuple[str, ...] = ("weak", "random")
ROLES: tuple[str, ...] = ("datacenter", "hub")
SWITCHINGS: tuple[str, ...] = ("independent", "fractional-joint", "joint", "fiber")
PATTERNS: tuple[str, ...] = ("uniform", "gravity", "matrix")


@dataclass(frozen=True)
class FiberType:
    """A multicore fiber design.

    Attributes
    ----------
    name : str
        Key of the type in the topology file.
    cores : int
        Cores per fiber.
    coupling : {"weak", "random"}
        ``weak``: isolated cores, switchable one by one, crosstalk grows with length.
        ``random``: cores mix within groups of ``coupled_group`` and must be received with
        MIMO DSP and switched together.
    coupled_group : int
        Cores per randomly coupled group (1 for weak coupling); divides ``cores``.
    channels : int
        Spectral channels per core on a fixed grid.
    attenuation_db_per_km : float
        Fiber loss.
    gd_spread_ps_per_sqrt_km : float or None
        Random coupling: RMS group-delay spread coefficient; spread = coef * sqrt(L).
    dgd_ps_per_km : float or None
        Weak or deterministic coupling: differential group delay per km; spread = coef * L.
    crosstalk_db_per_km : float or None
        Weak coupling: inter-core crosstalk after 1 km, in dB (negative); after L km it is
        ``crosstalk_db_per_km + 10 log10(L)``.
    mdl_db_per_sqrt_km : float or None
        Mode-dependent loss coefficient (random coupling); MDL = coef * sqrt(L).
    effective_area_um2 : float or None
        Effective area of one core at 1550 nm, for the nonlinear interference of the line model
        (random coupling spreads a channel over its group; docs/physics.md says how that
        enters); None: the G.652.D default of :mod:`sdmnet.optics.defaults`.
    dispersion_ps_per_nm_km : float or None
        Chromatic dispersion at 1550 nm; None: the default.
    cladding_um : float or None
        Cladding diameter (125 um is the standard); None when not stated.
    group_crosstalk_db_per_km : float or None
        Random coupling with several coupled groups: crosstalk between groups after 1 km, in dB
        (negative), growing as ``10 log10(L)``; None: the default.
    """

    name: str
    cores: int
    coupling: Coupling
    coupled_group: int
    channels: int
    attenuation_db_per_km: float
    gd_spread_ps_per_sqrt_km: float | None = None
    dgd_ps_per_km: float | None = None
    crosstalk_db_per_km: float | None = None
    mdl_db_per_sqrt_km: float | None = None
    effective_area_um2: float | None = None
    dispersion_ps_per_nm_km: float | None = None
    cladding_um: float | None = None
    group_crosstalk_db_per_km: float | None = None


@dataclass(frozen=True)
class Site:
    """A data-center campus (originates and terminates traffic) or a switching hub.

    ``transit = false``: no route passes through the site (it only originates and terminates).
    """

    id: str
    role: Role
    traffic_weight: float = 1.0
    x_km: float | None = None
    y_km: float | None = None
    transit: bool = True


@dataclass(frozen=True)
class Cable:
    """A cable between two sites holding ``fiber_pairs`` pairs of one fiber type.

    Cables with the same ``risk_group`` (a shared duct or bridge) fail together.
    """

    a: str
    b: str
    length_km: float
    fiber_type: str
    fiber_pairs: int
    risk_group: str | None = None

    @property
    def key(self) -> str:
        """The cable's name in every table: ``a-b`` as written in the topology."""
        return f"{self.a}-{self.b}"


@dataclass(frozen=True)
class Topology:
    """Sites joined by cables, plus the fiber types the cables use.

    At most one cable joins two sites (validated by the loader).
    """

    name: str
    fiber_types: dict[str, FiberType]
    sites: tuple[Site, ...]
    cables: tuple[Cable, ...]
    source: Path | None = None

    def site(self, site_id: str) -> Site:
        """The site with id ``site_id`` (KeyError if absent)."""
        for site in self.sites:
            if site.id == site_id:
                return site
        raise KeyError(site_id)

    @property
    def datacenters(self) -> tuple[Site, ...]:
        """Sites that originate and terminate traffic, in file order."""
        return tuple(s for s in self.sites if s.role == "datacenter")

    def graph(self) -> nx.Graph:
        """An undirected networkx graph: node per site, edge per cable.

        Edge attributes: ``length_km``, ``cable`` (index into ``cables``), ``fiber_type``,
        ``fiber_pairs``. Node attributes: the site's fields.
        """
        import networkx as nx

        g = nx.Graph(name=self.name)
        for s in self.sites:
            g.add_node(s.id, role=s.role, traffic_weight=s.traffic_weight, x_km=s.x_km, y_km=s.y_km)
        for i, c in enumerate(self.cables):
            g.add_edge(
                c.a, c.b, length_km=c.length_km, cable=i, fiber_type=c.fiber_type, fiber_pairs=c.fiber_pairs
            )
        return g

    def with_fiber_pairs(self, pairs: dict[str, int]) -> Topology:
        """A copy with the fiber pairs of the cables named in ``pairs`` (by ``Cable.key``) replaced."""
        cables = tuple(replace(c, fiber_pairs=pairs.get(c.key, c.fiber_pairs)) for c in self.cables)
        return replace(self, cables=cables)

    def with_fiber_type(self, fiber_type: str) -> Topology:
        """A copy in which every cable uses ``fiber_type`` (an architecture's override)."""
        return replace(self, cables=tuple(replace(c, fiber_type=fiber_type) for c in self.cables))


@dataclass(frozen=True)
class TrafficSpec:
    """Dynamic demand.

    Attributes
    ----------
    pattern : {"uniform", "gravity", "matrix"}
        How the total load spreads over datacenter pairs.
    loads_erlang : tuple of float
        Total offered load points (arrival rate x mean holding time).
    mean_holding : float
        Mean of the exponential holding time (sets the time unit).
    sizes_gbps : tuple of (size, probability)
        Discrete demand-size distribution, probabilities summing to 1, sizes ascending.
    matrix : tuple of (a, b, weight) or None
        For ``pattern = "matrix"``: relative weight of each unordered datacenter pair.
    matrix_file : Path or None
        Where the matrix came from (for reports).
    """

    pattern: Pattern
    loads_erlang: tuple[float, ...]
    mean_holding: float = 1.0
    sizes_gbps: tuple[tuple[float, float], ...] = ((100.0, 1.0),)
    matrix: tuple[tuple[str, str, float], ...] | None = None
    matrix_file: Path | None = None

    def scaled(self, factor: float) -> TrafficSpec:
        """The same traffic with every load point multiplied by ``factor`` (growth)."""
        return replace(self, loads_erlang=tuple(x * factor for x in self.loads_erlang))


@dataclass(frozen=True)
class TransceiverSpec:
    """A coherent transceiver class: lane rate, DSP and the physical limits of a path.

    Defaults and their sources live in :mod:`sdmnet.optics.defaults`; what each figure does is in
    :mod:`sdmnet.optics.physics` and ``docs/physics.md``.

    Attributes
    ----------
    lane_gbps : float
        Net rate of one lane (one core x one channel).
    symbol_rate_gbaud : float
        Symbol rate per lane.
    samples_per_symbol : float
        Oversampling of the DSP (sets MIMO taps per unit of delay spread).
    reach_km : float
        Longest path the module is specified for.
    power_budget_db : float
        Loss budget of an unamplified link.  Read for old scenarios but no longer a feasibility
        limit: every cable is an amplified line whose OSNR and GSNR decide (docs/physics.md).
    max_mimo_taps : int
        Longest MIMO equalizer (taps, at the sample rate) the DSP supports.
    crosstalk_limit_db : float
        Highest accumulated inter-core crosstalk the modulation tolerates (dB, negative).  Read
        for old scenarios but no longer a feasibility limit: crosstalk is noise in the GSNR.
    mdl_limit_db : float
        Highest accumulated mode-dependent loss tolerated.
    required_osnr_db : float or None
        OSNR (0.1 nm) the module needs when this section stands for the only transceiver class;
        None: derived from the lane rate and symbol rate (:mod:`sdmnet.optics.classes`).
    module_power_w : float
        Electrical power of a single-lane module (optics and its own 2x2 DSP).
    mimo_pj_per_cmul : float
        Energy of one complex multiplication of the MIMO equalizer, in pJ
        (see :func:`sdmnet.optics.physics.module_power_w`).
    switch_insertion_loss_db : float
        Loss of one pass through a switch at an intermediate site.
    connector_loss_db : float
        Loss of the connectors of one cable (both ends together).
    splice_loss_db : float
        Loss of one fusion splice inside a cable.
    splice_spacing_km : float
        Cable section length between splices; a cable of L km has ceil(L / spacing) - 1 splices.
    mimo_base_taps : int
        Equalizer taps needed without any modal delay spread (residual dispersion, filtering).
    tap_margin : float
        Equalizer window in units of the RMS group-delay spread.
    overflow : float
        Installed transceivers: each site gets the fewest modules (lanes) whose chance of being
        all in use, with more wanted, is at most this: the smallest N with P(in use > N) <=
        overflow (docs/model.md, section 4).
    """

    lane_gbps: float = defaults.LANE_GBPS
    symbol_rate_gbaud: float = defaults.SYMBOL_RATE_GBAUD
    samples_per_symbol: float = defaults.SAMPLES_PER_SYMBOL
    reach_km: float = defaults.REACH_KM
    power_budget_db: float = defaults.POWER_BUDGET_DB
    max_mimo_taps: int = defaults.MAX_MIMO_TAPS
    crosstalk_limit_db: float = defaults.CROSSTALK_LIMIT_DB
    mdl_limit_db: float = defaults.MDL_LIMIT_DB
    module_power_w: float = defaults.MODULE_POWER_W
    mimo_pj_per_cmul: float = defaults.MIMO_PJ_PER_CMUL
    required_osnr_db: float | None = None
    switch_insertion_loss_db: float = defaults.SWITCH_INSERTION_LOSS_DB
    connector_loss_db: float = defaults.CONNECTORS_PER_CABLE * defaults.CONNECTOR_LOSS_DB
    splice_loss_db: float = defaults.SPLICE_LOSS_DB
    splice_spacing_km: float = defaults.SPLICE_SPACING_KM
    mimo_base_taps: int = defaults.MIMO_BASE_TAPS
    tap_margin: float = defaults.TAP_MARGIN
    # One time in a thousand: assumption (planning choice, no source), the order of the grade of
    # service a network is planned for.
    overflow: float = 0.001


Amplifier = Literal["per-core", "multicore"]
AMPLIFIERS: tuple[str, ...] = ("per-core", "multicore")


@dataclass(frozen=True)
class LineSpec:
    """The amplified line and the parts between fiber and switch (``[line]``).

    Every cable is cut into ``ceil(length / span_km)`` equal spans with an amplifier after each.
    Defaults and their sources: :mod:`sdmnet.optics.defaults`; the model: ``docs/physics.md``.

    Attributes
    ----------
    span_km : float
        Longest amplifier span.
    amplifier_nf_db : float
        Noise figure of every amplifier.
    launch_dbm : float or None
        Launch power per channel per core into every span; None: each span at its own optimum
        under the GN model (docs/physics.md).
    amplifier : {"per-core", "multicore"}
        One amplifier per core, or one multicore amplifier per fiber sharing its pumps.
    margin_db : float
        OSNR margin a path keeps above a transceiver class's requirement.
    fifo_loss_db, fifo_crosstalk_db : float
        Loss and crosstalk of one fan-in/fan-out device (weakly coupled fiber switched core by core).
    wss_pass_db : float
        Loss of one pass through a wavelength-selective switch.
    fiber_xc_db : float
        Loss of one pass through a fiber cross-connect.
    band_ghz : float
        Optical band shared by the channels of one core; a fiber type's channel slot is
        ``band / channels`` rounded down to the 12.5 GHz grid (:meth:`channel_slot_ghz`).
    """

    span_km: float = defaults.SPAN_KM
    amplifier_nf_db: float = defaults.AMPLIFIER_NF_DB
    launch_dbm: float | None = defaults.LAUNCH_DBM
    amplifier: Amplifier = "per-core"
    margin_db: float = defaults.OSNR_MARGIN_DB
    fifo_loss_db: float = defaults.FIFO_LOSS_DB
    fifo_crosstalk_db: float = defaults.FIFO_CROSSTALK_DB
    wss_pass_db: float = defaults.WSS_PASS_DB
    fiber_xc_db: float = defaults.FIBER_XC_DB
    band_ghz: float = defaults.BAND_GHZ

    def channel_slot_ghz(self, channels: int) -> float:
        """Width of one channel slot when ``channels`` share the band: ``band / channels`` rounded
        down to a multiple of 12.5 GHz (ITU-T G.694.1 flexible grid); 0 when they do not fit."""
        grid = defaults.GRID_GRANULARITY_GHZ
        # The tolerance keeps 4800 / 64 = 75 GHz at 75 despite float noise.
        return grid * math.floor(self.band_ghz / channels / grid + 1e-9)


@dataclass(frozen=True)
class TransceiverClass:
    """One transceiver class of ``[[transceivers]]``: what it carries and what it needs.

    Attributes
    ----------
    name : str
        Label in tables.
    lane_gbps : float
        Net rate of one lane.
    symbol_rate_gbaud : float
        Symbol rate per lane.
    required_osnr_db : float
        OSNR the class needs, in the 0.1 nm reference bandwidth.
    reach_km : float or None
        Longest path the class is specified for (None: limited by OSNR alone).
    power_w : float or None
        Electrical power of one lane (None: the cost model's default).
    cost : float or None
        Relative cost of one lane (None: the cost model's default).
    """

    name: str
    lane_gbps: float
    symbol_rate_gbaud: float
    required_osnr_db: float
    reach_km: float | None = None
    power_w: float | None = None
    cost: float | None = None


@dataclass(frozen=True)
class RunSpec:
    """How long and how often to simulate.

    Attributes
    ----------
    requests : int
        Arrivals measured per replication, after the warm-up.
    warmup : int or "auto"
        Arrivals simulated and discarded at the start of each replication; ``"auto"``: each
        replication warms up until the demands in flight have settled (MSER-5,
        :mod:`sdmnet.sim.warmup`).
    replications : int
        Independent replications per (architecture, load) point; >= 2 for an interval.  With
        ``precision``, the replications of the first round.
    k_paths : int
        Candidate shortest paths tried per datacenter pair.
    confidence : float
        Level of the Student-t interval.
    precision : float or None
        Relative half-width of the network request blocking's interval to reach: replications
        are added, round by round, at every load point still wider, until it is reached or
        ``max_replications`` (:mod:`sdmnet.sim.precision`).  None: ``replications`` exactly.
    max_replications : int or None
        Most replications per point with ``precision`` (None: ten times ``replications``).
    estimate : {"auto", "routed", "fixed-point", "none"}
        The analytic estimate ``simulate`` writes beside its results (summary.csv's
        ``estimate_*`` columns, :mod:`sdmnet.analysis.estimate`): ``"auto"`` the routed
        reduced-load estimate while it is cheap and the plain Erlang fixed point on larger
        networks; ``"none"`` leaves the columns empty.  It does not change the simulation.
    """

    requests: int = 20_000
    warmup: int | Literal["auto"] = 2_000
    replications: int = 5
    k_paths: int = 3
    confidence: float = 0.95
    precision: float | None = None
    max_replications: int | None = None
    estimate: EstimateChoice = "auto"


@dataclass(frozen=True)
class Architecture:
    """A switching architecture under comparison.

    Attributes
    ----------
    name : str
        Label in every table.
    switching : {"independent", "fractional-joint", "joint", "fiber"}
        Switching granularity (docs/model.md, section 2).
    group : int or None
        Cores per unit for ``fractional-joint``; ignored otherwise.
    lane_change : bool
        A unit may move to another core (group) at a switch.
    share : bool
        Spare capacity of lit units between the same sites on the same path carries later
        demands (grooming).
    fiber_type : str or None
        If set, every cable uses this fiber type under this architecture (a what-if).
    """

    name: str
    switching: Switching
    group: int | None = None
    lane_change: bool = True
    share: bool = False
    fiber_type: str | None = None


@dataclass(frozen=True)
class PlanSpec:
    """Dimensioning target.

    Attributes
    ----------
    target_blocking : float
        Network request blocking to stay under.
    per_pair : bool
        Also keep every datacenter pair's blocking under the target.
    max_fiber_pairs : int
        Upper bound of the search per cable.
    unit_costs : dict
        Optional unit prices: keys ``fiber_pair_km``, ``transceiver_lane``, ``switch_port``.
    confidence : float
        Level of the interval whose upper bound must be at or below the target.
    pair_target : float or None
        No datacenter pair's blocking above it (None: reported, not enforced).
    survive : {"none", "cable-cut"}
        ``cable-cut``: after any single cut (of a cable, or of a risk group), blocking stays at
        or below ``cut_target``.
    cut_target : float or None
        Blocking allowed after a cut (None with ``survive = "cable-cut"``: the target).
    regeneration : bool
        Serve pairs that no transceiver class reaches through regenerators (plan and forecast).
    """

    target_blocking: float = 0.01
    per_pair: bool = False
    max_fiber_pairs: int = 64
    unit_costs: dict[str, float] = field(default_factory=dict)
    confidence: float = 0.95
    pair_target: float | None = None
    survive: Survive = "none"
    cut_target: float | None = None
    regeneration: bool = True


@dataclass(frozen=True)
class ForecastSpec:
    """Demand growth over a horizon.

    Attributes
    ----------
    years : int
        Horizon; years 0..years are planned.
    growth_per_year : float
        Yearly growth rate (0.3 = +30 %/year), used when ``factors`` is empty.
    factors : tuple of float
        Optional explicit load factor per year 1..years (relative to year 0).
    lane_gbps_by_year : tuple of float
        Optional lane rate per year 1..years (newer transceivers carry more per lane); year 0
        and an empty tuple use ``[transceiver] lane_gbps``.
    site_growth : dict of str to float
        Extra yearly growth of the traffic of a datacenter, on top of the overall growth: a
        pair's load is multiplied by the geometric mean of its two ends' ``(1 + g) ** year``.
    growth_band : tuple of float
        Optional ``(low, high)`` yearly growth rates planned beside ``growth_per_year`` and drawn
        as a band (used when ``factors`` is empty).
    """

    years: int = 5
    growth_per_year: float = 0.3
    factors: tuple[float, ...] = ()
    lane_gbps_by_year: tuple[float, ...] = ()
    site_growth: dict[str, float] = field(default_factory=dict)
    growth_band: tuple[float, ...] = ()

    def factor(self, year: int, growth: float | None = None) -> float:
        """Load multiplier of ``year`` relative to year 0 (at yearly ``growth`` when given)."""
        if year == 0:
            return 1.0
        if self.factors and growth is None:
            return self.factors[year - 1]
        return (1.0 + (self.growth_per_year if growth is None else growth)) ** year

    def peak_factor(self, year: int) -> float:
        """An upper bound of the total load multiplier of ``year``: the largest of the growth cases
        (``growth_band`` included) times the fastest site growth (a pair grows by the geometric
        mean of its ends', so never faster)."""
        cases = [None, *self.growth_band]
        sites = max((1.0 + g) ** year for g in [0.0, *self.site_growth.values()])
        return max(self.factor(year, growth) for growth in cases) * sites

    def lane_gbps(self, year: int, base: float) -> float:
        """Lane rate in ``year`` (``base``, the ``[transceiver]`` rate, in year 0 or without a roadmap)."""
        if year == 0 or not self.lane_gbps_by_year:
            return base
        return self.lane_gbps_by_year[year - 1]


@dataclass(frozen=True)
class Scenario:
    """Everything one run needs: topology, traffic, transceiver, run lengths, architectures.

    ``line`` is the amplified line (``[line]``); ``transceivers`` the classes of
    ``[[transceivers]]`` (empty: ``transceiver`` is the only class); ``costs`` and ``power`` the
    scenario's overrides of the cost model's relative unit costs and watts per item
    (:mod:`sdmnet.equipment`).
    """

    name: str
    topology: Topology
    seed: int
    traffic: TrafficSpec
    transceiver: TransceiverSpec
    run: RunSpec
    architectures: tuple[Architecture, ...]
    plan: PlanSpec | None = None
    forecast: ForecastSpec | None = None
    source: Path | None = None
    line: LineSpec = field(default_factory=LineSpec)
    transceivers: tuple[TransceiverClass, ...] = ()
    costs: dict[str, float] = field(default_factory=dict)
    power: dict[str, float] = field(default_factory=dict)

    def architecture(self, name: str) -> Architecture:
        """The architecture named ``name`` (KeyError if absent)."""
        for arch in self.architectures:
            if arch.name == name:
                return arch
        raise KeyError(name)

    def topology_for(self, arch: Architecture) -> Topology:
        """The topology as ``arch`` sees it (with its fiber-type override applied)."""
        if arch.fiber_type is None:
            return self.topology
        return self.topology.with_fiber_type(arch.fiber_type)
