"""Tests of sdmnet.inputs.loaders: every bad input gives one exact ``FILE: WHERE: what`` line.

The expected messages below are the specification of what a user sees after ``error: ``.
The inputs are invented; the rules they break are those of the file contract (docs/model.md
section 5) and the switching rules (docs/model.md, section 2).
"""

from __future__ import annotations

import copy
import dataclasses
import xml.etree.ElementTree as ET
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest
from builders import toml_document
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sdmnet.errors import ConfigurationError, InputError
from sdmnet.inputs.loaders import load_any, load_scenario, load_topology
from sdmnet.inputs.model import Scenario, Topology

try:
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib  # type: ignore[no-redef]

ROOT = Path(__file__).resolve().parent.parent
FIXTURES = Path(__file__).resolve().parent / "fixtures"

# ----------------------------------------------------------------------------------------------
# Good inputs that the bad cases edit

TOPOLOGY = """\
name = "t"

[fiber_types.weak4]
cores = 4
coupling = "weak"
channels = 8
attenuation_db_per_km = 0.2
crosstalk_db_per_km = -50.0

[fiber_types.rand4]
cores = 4
coupling = "random"
coupled_group = 2
channels = 8
attenuation_db_per_km = 0.17

[[sites]]
id = "A"
role = "datacenter"

[[sites]]
id = "B"
role = "datacenter"

[[sites]]
id = "H"
role = "hub"

[[cables]]
a = "A"
b = "H"
length_km = 10.0
fiber_type = "weak4"
fiber_pairs = 2

[[cables]]
a = "H"
b = "B"
length_km = 12.5
fiber_type = "rand4"
fiber_pairs = 1
"""

SCENARIO = """\
topology = "topo.toml"
seed = 3

[traffic]
pattern = "uniform"
load_erlang = [5.0, 10]
mean_holding = 1.0
sizes_gbps = { "100" = 0.75, "400" = 0.25 }

[transceiver]
lane_gbps = 100

[run]
requests = 1000
warmup = 100
replications = 2
k_paths = 2

[[architectures]]
name = "joint"
switching = "joint"

[[architectures]]
name = "pairs"
switching = "fractional-joint"
group = 2

[plan]
target_blocking = 0.01

[forecast]
years = 2
growth_per_year = 0.3
"""

MATRIX_SCENARIO = SCENARIO.replace('pattern = "uniform"', 'pattern = "matrix"\nmatrix = "m.csv"')

GRAPHML_HEAD = """\
<?xml version="1.0" encoding="UTF-8"?>
<graphml xmlns="http://graphml.graphdrawing.org/xmlns">
  <key id="g1" for="graph" attr.name="fiber_types.f.cores" attr.type="int"/>
  <key id="g2" for="graph" attr.name="fiber_types.f.coupling" attr.type="string"/>
  <key id="g3" for="graph" attr.name="fiber_types.f.channels" attr.type="int"/>
  <key id="g4" for="graph" attr.name="fiber_types.f.attenuation_db_per_km" attr.type="double"/>
  <key id="n0" for="node" attr.name="role" attr.type="string"/>
  <key id="e0" for="edge" attr.name="length_km" attr.type="string"/>
  <key id="e1" for="edge" attr.name="fiber_type" attr.type="string"/>
  <key id="e2" for="edge" attr.name="fiber_pairs" attr.type="int"/>
  <graph edgedefault="undirected">
    <data key="g1">4</data>
    <data key="g2">weak</data>
    <data key="g3">8</data>
    <data key="g4">0.2</data>
    <node id="A"><data key="n0">datacenter</data></node>
    <node id="B"><data key="n0">datacenter</data></node>
"""
GRAPHML_EDGE = (
    '    <edge source="{a}" target="{b}"><data key="e0">{length}</data>'
    '<data key="e1">f</data><data key="e2">1</data></edge>\n'
)
GRAPHML_TAIL = "  </graph>\n</graphml>\n"


def graphml(*edges: tuple[str, str, str]) -> str:
    """A GraphML topology of two datacenters A, B and the given (a, b, length) edges."""
    body = "".join(GRAPHML_EDGE.format(a=a, b=b, length=length) for a, b, length in edges)
    return GRAPHML_HEAD + body + GRAPHML_TAIL


def edit(text: str, old: str, new: str) -> str:
    """``text`` with ``old`` replaced by ``new``; ``old`` must occur (else the case tests nothing)."""
    assert old in text, f"test input lacks {old!r}"
    return text.replace(old, new, 1)


def scenario_with(old: str, new: str, topology: str = TOPOLOGY) -> dict[str, str | bytes]:
    return {"scen.toml": edit(SCENARIO, old, new), "topo.toml": topology}


def matrix_case(rows: str) -> dict[str, str | bytes]:
    return {"scen.toml": MATRIX_SCENARIO, "topo.toml": TOPOLOGY, "m.csv": rows}


# ----------------------------------------------------------------------------------------------
# The table of bad inputs


@dataclass(frozen=True)
class Bad:
    """One bad input: files to write, the file to load, the file blamed and the message."""

    id: str
    files: dict[str, str | bytes]
    message: str  # "WHERE: what"
    load: str = "topo.toml"
    blamed: str | None = None  # defaults to ``load``
    loader: Callable[[Path], Any] = load_topology
    error: type[InputError] = InputError
    dirs: tuple[str, ...] = field(default=())


def topo(old: str, new: str) -> dict[str, str | bytes]:
    return {"topo.toml": edit(TOPOLOGY, old, new)}


EXTRA_CABLE = '\n[[cables]]\na = "H"\nb = "A"\nlength_km = 3.0\nfiber_type = "weak4"\nfiber_pairs = 1\n'
LONELY_SITE = '\n[[sites]]\nid = "C"\nrole = "datacenter"\n'
ALL_WEAK = edit(TOPOLOGY, 'fiber_type = "rand4"', 'fiber_type = "weak4"')
INDEPENDENT = '[[architectures]]\nname = "per-core"\nswitching = "independent"\n'

BAD_TOPOLOGIES = [
    Bad("toml-syntax", topo('coupling = "weak"', "coupling = weak"), "line 5, column 12: invalid TOML: invalid value"),
    Bad(
        "unknown-key-suggested",
        topo("length_km = 10.0", "lenght_km = 10.0"),
        "cables[0]: unknown key 'lenght_km' (did you mean 'length_km'?)",
    ),
    Bad(
        "unknown-top-key",
        {"topo.toml": TOPOLOGY.replace("[[sites]]", "[[site]]")},
        "top level: unknown key 'site' (did you mean 'sites'?)",
    ),
    Bad(
        "bool-is-not-int",
        topo("cores = 4", "cores = true"),
        "fiber_types.weak4.cores: expected an integer, got boolean true",
    ),
    Bad(
        "float-for-int",
        topo("fiber_pairs = 2", "fiber_pairs = 2.0"),
        "cables[0].fiber_pairs: expected an integer, got number 2.0 (write it without a decimal point)",
    ),
    Bad(
        "string-for-number",
        topo("length_km = 10.0", 'length_km = "10"'),
        "cables[0].length_km: expected a number, got string '10'",
    ),
    Bad("zero-length", topo("length_km = 10.0", "length_km = 0"), "cables[0].length_km: must be > 0, got 0"),
    Bad("negative-length", topo("length_km = 12.5", "length_km = -2.5"), "cables[1].length_km: must be > 0, got -2.5"),
    Bad("zero-cores", topo("cores = 4", "cores = 0"), "fiber_types.weak4.cores: must be >= 1, got 0"),
    Bad("zero-channels", topo("channels = 8", "channels = 0"), "fiber_types.weak4.channels: must be >= 1, got 0"),
    Bad(
        "zero-fiber-pairs",
        topo("fiber_pairs = 1", "fiber_pairs = 0"),
        "cables[1].fiber_pairs: must be >= 1, got 0",
    ),
    Bad(
        "infinite-length",
        topo("length_km = 10.0", "length_km = inf"),
        "cables[0].length_km: expected a finite number, got number inf",
    ),
    Bad(
        "overflowing-float",
        topo("length_km = 10.0", "length_km = 1e400"),
        "cables[0].length_km: expected a finite number, got number inf",
    ),
    Bad(
        "nan-attenuation",
        topo("attenuation_db_per_km = 0.2", "attenuation_db_per_km = nan"),
        "fiber_types.weak4.attenuation_db_per_km: expected a finite number, got number nan",
    ),
    Bad(
        "huge-integer",
        topo("fiber_pairs = 2", "fiber_pairs = 99999999999999999999"),
        "cables[0].fiber_pairs: integer too large, got integer 99999999999999999999",
    ),
    Bad(
        "integer-of-5000-digits",
        topo("fiber_pairs = 2", "fiber_pairs = " + "9" * 5000),
        "file: invalid TOML: an integer has too many digits",
    ),
    Bad(
        "deep-nesting",
        {"topo.toml": "x = " + "[" * 3000 + "]" * 3000 + "\n"},
        "file: invalid TOML: arrays or tables nested too deeply",
    ),
    Bad(
        "duplicate-site",
        topo('id = "H"', 'id = "A"'),
        "sites[2].id: duplicate site id 'A' (also sites[0])",
    ),
    Bad(
        "duplicate-cable",
        {"topo.toml": TOPOLOGY + EXTRA_CABLE},
        "cables[2]: second cable between 'H' and 'A' (first is cables[0]); give one cable more fiber_pairs instead",
    ),
    Bad(
        "unknown-site-near",
        topo('b = "H"', 'b = "HX"'),
        "cables[0].b: unknown site 'HX' (did you mean 'H'?)",
    ),
    Bad(
        "unknown-site-far",
        topo('b = "H"', 'b = "Hub"'),
        "cables[0].b: unknown site 'Hub' (known: A, B, H)",
    ),
    Bad(
        "unknown-fiber-type",
        topo('fiber_type = "weak4"', 'fiber_type = "weak5"'),
        "cables[0].fiber_type: unknown fiber type 'weak5' (did you mean 'weak4'?)",
    ),
    Bad("self-cable", topo('b = "H"', 'b = "A"'), "cables[0].b: cable joins site 'A' to itself"),
    Bad(
        "bad-coupling",
        topo('coupling = "weak"', 'coupling = "strong"'),
        "fiber_types.weak4.coupling: must be one of 'weak', 'random', got 'strong'",
    ),
    Bad(
        "coupled-group-not-dividing",
        topo("coupled_group = 2", "coupled_group = 3"),
        "fiber_types.rand4.coupled_group: must divide cores (4), got 3",
    ),
    Bad(
        "weak-coupled-group",
        topo('coupling = "weak"', 'coupling = "weak"\ncoupled_group = 2'),
        "fiber_types.weak4.coupled_group: must be 1 for weak coupling (weakly coupled cores are isolated), got 2",
    ),
    Bad(
        "missing-key",
        topo("channels = 8\n", ""),
        "fiber_types.weak4: missing required key 'channels'",
    ),
    Bad(
        "bad-role",
        topo('role = "hub"', 'role = "core"'),
        "sites[2].role: must be one of 'datacenter', 'hub', got 'core'",
    ),
    Bad(
        "one-datacenter",
        {"topo.toml": edit(TOPOLOGY, 'id = "B"\nrole = "datacenter"', 'id = "B"\nrole = "hub"')},
        "sites: a topology needs at least two datacenter sites, found 1",
    ),
    Bad(
        "unreachable-datacenter",
        {"topo.toml": TOPOLOGY.replace("[[cables]]", LONELY_SITE + "\n[[cables]]", 1)},
        "cables: no path between datacenters 'A' and 'C'",
    ),
    Bad(
        "site-id-with-dash",
        {"topo.toml": TOPOLOGY.replace('"H"', '"H-1"')},
        "sites[2].id: site id 'H-1' contains '-', which joins site ids in cable and path names",
    ),
    Bad(
        "not-utf8",
        {"topo.toml": b'name = "t"\n# caf\xe9\n'},
        "line 2: not UTF-8 text (byte 0xe9); save the file as UTF-8",
    ),
    Bad("directory", {}, "file: is a directory, not a file", load="dir.toml", dirs=("dir.toml",)),
    Bad("missing-file", {}, "file: file not found", load="nothere.toml"),
    Bad(
        "unknown-suffix",
        {"topo.txt": TOPOLOGY},
        "file: unknown file type '.txt': expected .toml or .graphml or .xml",
        load="topo.txt",
    ),
    Bad(
        "scenario-as-topology",
        {"scen.toml": SCENARIO},
        "top level: this is a scenario file (it has a 'topology' key), not a topology",
        load="scen.toml",
    ),
    Bad(
        "graphml-malformed",
        {"t.graphml": "<graphml>\n  <graph>\n</graphml>\n"},
        "line 3, column 3: invalid XML: mismatched tag",
        load="t.graphml",
    ),
    Bad(
        "graphml-string-for-number",
        {"t.graphml": graphml(("A", "B", "ten"))},
        "edge[A,B].length_km: expected a number, got string 'ten'",
        load="t.graphml",
    ),
    Bad(
        "graphml-duplicate-edge",
        {"t.graphml": graphml(("A", "B", "5"), ("B", "A", "6"))},
        "edge[B,A]: second cable between 'B' and 'A' (first is edge[A,B]); give one cable more fiber_pairs instead",
        load="t.graphml",
    ),
    Bad(
        "graphml-negative-length",
        {"t.graphml": graphml(("A", "B", "-5"))},
        "edge[A,B].length_km: must be > 0, got -5",
        load="t.graphml",
    ),
    # Upper bounds (docs/model.md, section 7): far above any real network.
    Bad(
        "too-many-fiber-pairs",
        topo("fiber_pairs = 2", "fiber_pairs = 1000000000"),
        "cables[0].fiber_pairs: must be <= 10000, got 1000000000: the largest cables hold a few thousand fibers "
        "(from memory)",
    ),
    Bad(
        "too-many-channels",
        topo("channels = 8", "channels = 10000000"),
        "fiber_types.weak4.channels: must be <= 4096, got 10000000: a C+L grid holds a few hundred channels "
        "(from memory)",
    ),
    Bad(
        "too-many-cores",
        topo("cores = 4", "cores = 1000"),
        "fiber_types.weak4.cores: must be <= 256, got 1000: multicore fibers hold tens of cores (from memory)",
    ),
    Bad(
        "too-many-sites",
        topo("[[sites]]", '[[sites]]\nid = "X"\nrole = "hub"\n' * 1001 + "[[sites]]"),
        "sites: 1004 sites, more than the 1000 allowed: far more sites than any real network plans at once",
    ),
    Bad(
        "too-long-a-cable",
        topo("length_km = 10.0", "length_km = 1e6"),
        "cables[0].length_km: must be <= 100000, got 1000000: twice around the Earth",
    ),
    Bad(
        "too-large-a-number",
        topo("attenuation_db_per_km = 0.2", "attenuation_db_per_km = 1e300"),
        "fiber_types.weak4.attenuation_db_per_km: must be between -1e+12 and 1e+12, got number 1e+300: "
        "no figure of a network needs more",
    ),
    Bad(
        "too-long-a-name",
        topo('id = "A"', 'id = "' + "A" * 100 + '"'),
        "sites[0].id: 100 characters, more than the 64 allowed: names label every table and figure",
    ),
    Bad("too-large-a-file", {"topo.toml": b"#" * (64 * 2**20 + 1)}, "file: file larger than 64 MiB: no input of "
        "sdmnet needs that much"),
]

BAD_SCENARIOS = [
    Bad(
        "topology-file-missing",
        {"scen.toml": edit(SCENARIO, '"topo.toml"', '"nothere.toml"')},
        "topology: file not found: {tmp}/nothere.toml",
    ),
    Bad(
        "topology-file-is-directory",
        {"scen.toml": edit(SCENARIO, '"topo.toml"', '"sub"')},
        "topology: is a directory, not a file: {tmp}/sub",
        dirs=("sub",),
    ),
    Bad(
        "topology-file-not-topology",
        {"scen.toml": edit(SCENARIO, '"topo.toml"', '"topo.txt"'), "topo.txt": TOPOLOGY},
        "topology: unknown file type '.txt': expected .toml or .graphml or .xml",
    ),
    Bad(
        "error-inside-topology-names-topology",
        scenario_with("seed = 3", "seed = 3", edit(TOPOLOGY, "cores = 4", "cores = -4")),
        "fiber_types.weak4.cores: must be >= 1, got -4",
        blamed="topo.toml",
    ),
    Bad(
        "topology-as-scenario",
        {"topo.toml": TOPOLOGY},
        "top level: this is a topology file (it has no 'topology' key), not a scenario",
        load="topo.toml",
    ),
    Bad(
        "unknown-section-suggested",
        scenario_with("[[architectures]]", "[[architecture]]"),
        "top level: unknown key 'architecture' (did you mean 'architectures'?)",
    ),
    Bad("seed-bool", scenario_with("seed = 3", "seed = true"), "seed: expected an integer, got boolean true"),
    Bad(
        "sizes-not-summing",
        scenario_with('"400" = 0.25', '"400" = 0.2'),
        "traffic.sizes_gbps: probabilities sum to 0.95, not 1",
    ),
    Bad(
        "zero-load",
        scenario_with("load_erlang = [5.0, 10]", "load_erlang = [5.0, 0]"),
        "traffic.load_erlang[1]: must be > 0, got 0",
    ),
    Bad(
        "negative-holding",
        scenario_with("mean_holding = 1.0", "mean_holding = -1"),
        "traffic.mean_holding: must be > 0, got -1",
    ),
    Bad(
        "zero-lane-rate", scenario_with("lane_gbps = 100", "lane_gbps = 0"), "transceiver.lane_gbps: must be > 0, got 0"
    ),
    Bad(
        "bad-pattern",
        scenario_with('pattern = "uniform"', 'pattern = "gravty"'),
        "traffic.pattern: must be one of 'uniform', 'gravity', 'matrix', got 'gravty' (did you mean 'gravity'?)",
    ),
    Bad(
        "bad-switching",
        scenario_with('switching = "joint"', 'switching = "fractional"'),
        "architectures[0].switching: must be one of 'independent', 'fractional-joint', 'joint', 'fiber', "
        "got 'fractional' (did you mean 'fractional-joint'?)",
    ),
    Bad(
        "fractional-group-missing",
        scenario_with("group = 2\n", ""),
        "architectures[1]: missing required key 'group' (cores per unit of fractional-joint switching)",
    ),
    Bad(
        "fractional-group-not-dividing",
        scenario_with("group = 2", "group = 3"),
        "architectures[1].group: group 3 does not divide the 4 cores of fiber type 'weak4'",
        error=ConfigurationError,
    ),
    Bad(
        "fractional-group-not-multiple-of-coupled",
        scenario_with("group = 2", "group = 1"),
        "architectures[1].group: group 1 is not a multiple of the coupled group (2 cores) of fiber type 'rand4'",
        error=ConfigurationError,
    ),
    Bad(
        "independent-on-random",
        scenario_with("[plan]", INDEPENDENT + "\n[plan]"),
        "architectures[2].switching: independent switching needs weakly coupled fiber, but fiber type 'rand4' "
        "is randomly coupled in groups of 2 cores (use fractional-joint with a multiple of 2, or joint)",
        error=ConfigurationError,
    ),
    Bad(
        "independent-on-random-by-override",
        scenario_with("[plan]", INDEPENDENT + 'fiber_type = "rand4"\n\n[plan]', ALL_WEAK),
        "architectures[2].switching: independent switching needs weakly coupled fiber, but fiber type 'rand4' "
        "is randomly coupled in groups of 2 cores (use fractional-joint with a multiple of 2, or joint)",
        error=ConfigurationError,
    ),
    Bad(
        "unknown-override-type",
        scenario_with("[plan]", INDEPENDENT + 'fiber_type = "rand5"\n\n[plan]', ALL_WEAK),
        "architectures[2].fiber_type: unknown fiber type 'rand5' (did you mean 'rand4'?)",
    ),
    Bad(
        "group-on-joint",
        scenario_with('switching = "joint"', 'switching = "joint"\ngroup = 2'),
        "architectures[0].group: only used with switching = 'fractional-joint', not 'joint'",
    ),
    Bad(
        "duplicate-architecture",
        scenario_with('name = "pairs"', 'name = "joint"'),
        "architectures[1].name: duplicate architecture name 'joint' (also architectures[0])",
    ),
    Bad(
        "target-blocking-one",
        scenario_with("target_blocking = 0.01", "target_blocking = 1.0"),
        "plan.target_blocking: must be between 0 and 1 (exclusive), got 1",
    ),
    Bad(
        "target-blocking-zero",
        scenario_with("target_blocking = 0.01", "target_blocking = 0"),
        "plan.target_blocking: must be between 0 and 1 (exclusive), got 0",
    ),
    Bad(
        "zero-replications",
        scenario_with("replications = 2", "replications = 0"),
        "run.replications: must be >= 1, got 0",
    ),
    Bad(
        "line-unknown-key",
        scenario_with("[run]", "[line]\nspan_lenght = 80\n\n[run]"),
        "line: unknown key 'span_lenght' (known: span_km, amplifier_nf_db, launch_dbm, amplifier, margin_db, "
        "fifo_loss_db, fifo_crosstalk_db, wss_pass_db, fiber_xc_db, band_ghz)",
    ),
    Bad("line-zero-span", scenario_with("[run]", "[line]\nspan_km = 0\n\n[run]"), "line.span_km: must be > 0, got 0"),
    Bad(
        "line-amplifier-kind",
        scenario_with("[run]", '[line]\namplifier = "raman"\n\n[run]'),
        "line.amplifier: must be one of 'per-core', 'multicore', got 'raman'",
    ),
    Bad(
        "line-band-too-narrow",
        scenario_with("[run]", "[line]\nband_ghz = 50\n\n[run]"),
        "line.band_ghz: fiber type 'weak4' has 8 channels per core, "
        "more than the 50 GHz band holds on the 12.5 GHz grid",
    ),
    Bad(
        "class-missing-osnr",
        scenario_with("[run]", '[[transceivers]]\nname = "a"\nlane_gbps = 100\nsymbol_rate_gbaud = 32\n\n[run]'),
        "transceivers[0]: missing required key 'required_osnr_db'",
    ),
    Bad(
        "class-symbol-rate-too-wide",
        scenario_with(
            "[run]",
            '[[transceivers]]\nname = "a"\nlane_gbps = 800\nsymbol_rate_gbaud = 700\nrequired_osnr_db = 20\n\n[run]',
        ),
        "transceivers[0].symbol_rate_gbaud: 700 GBd does not fit the 600 GHz channel slot of fiber type 'weak4' "
        "(4800 GHz band / 8 channels)",
    ),
    Bad(
        "legacy-symbol-rate-too-wide",
        scenario_with("lane_gbps = 100", "lane_gbps = 100\nsymbol_rate_gbaud = 650"),
        "transceiver.symbol_rate_gbaud: 650 GBd does not fit the 600 GHz channel slot of fiber type 'weak4' "
        "(4800 GHz band / 8 channels)",
    ),
    Bad("zero-requests", scenario_with("requests = 1000", "requests = 0"), "run.requests: must be >= 1, got 0"),
    Bad("negative-warmup", scenario_with("warmup = 100", "warmup = -1"), "run.warmup: must be >= 0, got -1"),
    Bad("warmup-word", scenario_with("warmup = 100", 'warmup = "automatic"'),
        "run.warmup: expected a whole number or 'auto', got string 'automatic' (did you mean 'auto'?)"),
    Bad("warmup-fraction", scenario_with("warmup = 100", "warmup = 1.5"),
        "run.warmup: expected a whole number or 'auto', got number 1.5"),
    Bad("precision-range", scenario_with("warmup = 100", "warmup = 100\nprecision = 0"),
        "run.precision: must be between 0 and 1 (exclusive), got 0"),
    Bad("max-replications", scenario_with("warmup = 100", "warmup = 100\nmax_replications = 1"),
        "run.max_replications: must be >= 2, got 1"),
    Bad("zero-k-paths", scenario_with("k_paths = 2", "k_paths = 0"), "run.k_paths: must be >= 1, got 0"),
    Bad(
        "forecast-factors-length",
        scenario_with("growth_per_year = 0.3", "factors = [1.1]"),
        "forecast.factors: has 1 values for 2 years: give one per year (1..2), or leave it out to use growth_per_year",
    ),
    Bad(
        "forecast-overflow",
        scenario_with("years = 2\ngrowth_per_year = 0.3", "years = 100\ngrowth_per_year = 1e12"),
        "forecast.growth_per_year: growth 1e+12 per year over 100 years is too large to compute",
    ),
    Bad(
        "forecast-lane-roadmap-length",
        scenario_with("growth_per_year = 0.3", "growth_per_year = 0.3\nlane_gbps_by_year = [400.0]"),
        "forecast.lane_gbps_by_year: has 1 values for 2 years: give one per year (1..2)",
    ),
    Bad(
        "forecast-lane-rate-zero",
        scenario_with("growth_per_year = 0.3", "growth_per_year = 0.3\nlane_gbps_by_year = [400.0, 0.0]"),
        "forecast.lane_gbps_by_year: must be > 0, got 0",
    ),
    Bad(
        "forecast-band-around-base",
        scenario_with("growth_per_year = 0.3", "growth_per_year = 0.3\ngrowth_band = [0.4, 0.6]"),
        "forecast.growth_band: give [low, high] yearly growth rates around growth_per_year",
    ),
    Bad(
        "forecast-site-growth-unknown",
        scenario_with("growth_per_year = 0.3", "growth_per_year = 0.3\nsite_growth = { Q = 0.1 }"),
        "forecast.site_growth.Q: no datacenter 'Q' in the topology",
    ),
    Bad(
        "forecast-site-growth-below-minus-one",
        scenario_with("growth_per_year = 0.3", "growth_per_year = 0.3\nsite_growth = { A = -1.0 }"),
        "forecast.site_growth: must be > -1, got -1",
    ),
    Bad(
        "matrix-file-missing",
        {"scen.toml": MATRIX_SCENARIO, "topo.toml": TOPOLOGY},
        "traffic.matrix: file not found: {tmp}/m.csv",
    ),
    Bad(
        "matrix-hub",
        matrix_case("a,b,weight\nH,B,1\n"),
        "line 2: site 'H' is a hub, not a datacenter",
        blamed="m.csv",
    ),
    Bad(
        "matrix-unknown-site",
        matrix_case("a,b,weight\nA,Z,1\n"),
        "line 2: unknown site 'Z' (known: A, B, H)",
        blamed="m.csv",
    ),
    Bad("matrix-negative", matrix_case("a,b,weight\nA,B,-1\n"), "line 2: weight must be >= 0, got -1", blamed="m.csv"),
    Bad(
        "matrix-not-number",
        matrix_case("a,b,weight\nA,B,lots\n"),
        "line 2: weight must be a number, got 'lots'",
        blamed="m.csv",
    ),
    Bad(
        "matrix-duplicate-pair",
        matrix_case("a,b,weight\nA,B,1\nB,A,2\n"),
        "line 3: pair B,A is already given on line 2",
        blamed="m.csv",
    ),
    Bad(
        "matrix-bad-header",
        matrix_case("from,to,weight\nA,B,1\n"),
        "line 1: header must be 'a,b,weight', got 'from,to,weight'",
        blamed="m.csv",
    ),
    Bad(
        "matrix-short-row",
        matrix_case("a,b,weight\nA,B\n"),
        "line 2: expected 3 fields (a,b,weight), got 2",
        blamed="m.csv",
    ),
    Bad(
        "matrix-not-utf8",
        matrix_case(b"a,b,weight\nA,B,1\n\xff\n"),
        "line 3: not UTF-8 text (byte 0xff); save the file as UTF-8",
        blamed="m.csv",
    ),
    Bad(
        "matrix-with-other-pattern",
        scenario_with('pattern = "uniform"', 'pattern = "uniform"\nmatrix = "m.csv"'),
        "traffic.matrix: only used with pattern = 'matrix', but pattern is 'uniform'",
    ),
    Bad(
        "unknown-cost-item-suggested",
        scenario_with("[plan]", "[costs]\ntransceiver_lanes = 2.0\n\n[plan]"),
        "costs: unknown key 'transceiver_lanes' (did you mean 'transceiver_lane'?)",
    ),
    Bad(
        "unknown-power-item-suggested",
        scenario_with("[plan]", "[power]\namplifer_core = 12\n\n[plan]"),
        "power: unknown key 'amplifer_core' (did you mean 'amplifier_core'?)",
    ),
    Bad(
        "negative-price",
        scenario_with("[plan]", "[costs]\ncable_km = -1\n\n[plan]"),
        "costs.cable_km: must be >= 0, got -1",
    ),
    Bad(
        "negative-watts",
        scenario_with("[plan]", "[power]\nwss_port_core = -0.5\n\n[plan]"),
        "power.wss_port_core: must be >= 0, got -0.5",
    ),
    Bad(
        "overflow-outside-unit",
        scenario_with("lane_gbps = 100", "lane_gbps = 100\noverflow = 0"),
        "transceiver.overflow: must be between 0 and 1 (exclusive), got 0",
    ),
    Bad(
        "size-beyond-any-demand",
        scenario_with('sizes_gbps = { "100" = 0.75, "400" = 0.25 }', 'sizes_gbps = { "1e30" = 1.0 }'),
        "traffic.sizes_gbps.1e30: size must be <= 1000000 Gb/s, got '1e30': 1 Pb/s, far above any single demand",
    ),
    Bad(
        "load-beyond-any-network",
        scenario_with("load_erlang = [5.0, 10]", "load_erlang = [5.0, 1e9]"),
        "traffic.load_erlang[1]: must be <= 10000000, got 1000000000: ten million demands in progress at once, far "
        "above any network",
    ),
    Bad(
        "growth-beyond-any-network",
        scenario_with("years = 2\ngrowth_per_year = 0.3", "years = 100\ngrowth_per_year = 1.0"),
        "forecast.growth_per_year: year 20 would offer 10485760 Erlang, more than the 10000000 allowed: ten million "
        "demands in progress at once, far above any network",
    ),
    Bad(
        "too-many-replications",
        scenario_with("replications = 2", "replications = 1000000"),
        "run.replications: must be <= 10000, got 1000000: intervals narrow with the square root: more replications "
        "add little",
    ),
    Bad(
        "too-long-a-path",
        scenario_with('topology = "topo.toml"', 'topology = "' + "t" * 5000 + '"'),
        "topology: 5000 characters, more than the 4096 allowed: no file path needs more characters",
    ),
    Bad(
        "holding-time-unit-too-large",
        scenario_with("mean_holding = 1.0", "mean_holding = 1e9"),
        "traffic.mean_holding: must be <= 1e+06, got 1000000000: the time unit is too large",
    ),
]


def as_scenario_case(case: Bad) -> Bad:
    """A scenario case loads ``scen.toml`` with load_scenario (or what it names otherwise)."""
    load = "scen.toml" if "scen.toml" in case.files else case.load
    return dataclasses.replace(case, load=load, loader=load_scenario)


BAD_SCENARIOS = [as_scenario_case(case) for case in BAD_SCENARIOS]


@pytest.mark.parametrize("case", BAD_TOPOLOGIES + BAD_SCENARIOS, ids=lambda c: c.id)
def test_bad_input_gives_one_exact_line(case: Bad, tmp_path: Path) -> None:
    for name, content in case.files.items():
        target = tmp_path / name
        if isinstance(content, bytes):
            target.write_bytes(content)
        else:
            target.write_text(content, encoding="utf-8")
    for name in case.dirs:
        (tmp_path / name).mkdir()
    with pytest.raises(InputError) as caught:
        case.loader(tmp_path / case.load)
    blamed = tmp_path / (case.blamed or case.load)
    expected = f"{blamed}: " + case.message.replace("{tmp}", str(tmp_path))
    assert str(caught.value) == expected
    assert type(caught.value) is case.error
    assert "\n" not in str(caught.value)


def test_bad_input_table_is_large_enough() -> None:
    ids = [c.id for c in BAD_TOPOLOGIES + BAD_SCENARIOS]
    assert len(ids) >= 30
    assert len(ids) == len(set(ids))


def test_load_any_refuses_a_directory_and_a_missing_file(tmp_path: Path) -> None:
    (tmp_path / "d").mkdir()
    with pytest.raises(InputError) as caught:
        load_any(tmp_path / "d")
    assert str(caught.value) == f"{tmp_path / 'd'}: file: is a directory, not a file"
    with pytest.raises(InputError) as caught:
        load_any(tmp_path / "none.toml")
    assert str(caught.value) == f"{tmp_path / 'none.toml'}: file: file not found"


def test_control_characters_in_messages_are_escaped(tmp_path: Path) -> None:
    path = tmp_path / "topo.toml"
    path.write_text(edit(TOPOLOGY, 'b = "H"', 'b = "H\\nX"'), encoding="utf-8")
    with pytest.raises(InputError) as caught:
        load_topology(path)
    assert str(caught.value) == f"{path}: cables[0].b: unknown site 'H\\nX' (known: A, B, H)"


# ----------------------------------------------------------------------------------------------
# Good inputs


def test_toml_and_graphml_fixtures_give_equal_topologies() -> None:
    from_toml = load_topology(FIXTURES / "small.toml")
    from_graphml = load_topology(FIXTURES / "small.graphml")
    assert dataclasses.replace(from_toml, source=None) == dataclasses.replace(from_graphml, source=None)
    assert from_toml.source == FIXTURES / "small.toml"


def test_small_fixture_values() -> None:
    topology = load_topology(FIXTURES / "small.toml")
    assert [s.id for s in topology.sites] == ["A", "B", "H", "C"]
    assert [c.key for c in topology.cables] == ["A-H", "H-B", "H-C", "A-B"]
    # An integer is fine where a number is expected: length_km = 25 reads as 25.0.
    assert topology.cables[2].length_km == 25.0 and isinstance(topology.cables[2].length_km, float)
    assert topology.fiber_types["mcf4"].coupled_group == 1  # weak coupling: isolated cores
    assert topology.fiber_types["ccf4"].coupled_group == 4
    assert topology.site("B").traffic_weight == 1.0  # the default


def test_scenario_with_matrix() -> None:
    scenario = load_scenario(FIXTURES / "scenario.toml")
    assert scenario.name == "small-scenario"
    assert scenario.seed == 7
    assert scenario.traffic.pattern == "matrix"
    assert scenario.traffic.matrix == (("A", "B", 3.0), ("A", "C", 1.0), ("B", "C", 0.5))
    assert scenario.traffic.matrix_file == FIXTURES / "matrix.csv"
    assert scenario.traffic.loads_erlang == (10.0, 20.5)
    assert scenario.traffic.sizes_gbps == ((100.0, 0.5), (400.0, 0.25), (1600.0, 0.25))
    assert [a.name for a in scenario.architectures] == ["per-core", "joint", "per-core-weak", "fiber"]
    assert scenario.architecture("per-core-weak").fiber_type == "mcf4"
    assert scenario.run.requests == 5000 and scenario.run.replications == 3
    assert scenario.plan is not None and scenario.plan.unit_costs == {"fiber_pair_km": 1.0, "transceiver_lane": 5.0}
    assert scenario.forecast is not None and scenario.forecast.factor(3) == 2.0


def test_load_any_tells_topology_from_scenario() -> None:
    assert isinstance(load_any(FIXTURES / "small.toml"), Topology)
    assert isinstance(load_any(FIXTURES / "small.graphml"), Topology)
    assert isinstance(load_any(FIXTURES / "scenario.toml"), Scenario)


def write_good(tmp_path: Path) -> Path:
    (tmp_path / "topo.toml").write_text(TOPOLOGY, encoding="utf-8")
    (tmp_path / "scen.toml").write_text(SCENARIO, encoding="utf-8")
    return tmp_path / "scen.toml"


def test_good_inline_scenario(tmp_path: Path) -> None:
    scenario = load_scenario(write_good(tmp_path))
    assert scenario.name == "scen"  # the file stem when no name is given
    assert scenario.traffic.loads_erlang == (5.0, 10.0)
    assert scenario.architecture("pairs").group == 2


def test_warmup_auto_and_precision(tmp_path: Path) -> None:
    (tmp_path / "topo.toml").write_text(TOPOLOGY, encoding="utf-8")
    text = edit(SCENARIO, "warmup = 100", 'warmup = "auto"\nprecision = 0.05\nmax_replications = 40')
    (tmp_path / "scen.toml").write_text(text, encoding="utf-8")
    run = load_scenario(tmp_path / "scen.toml").run
    assert (run.warmup, run.precision, run.max_replications) == ("auto", 0.05, 40)
    assert load_scenario(tmp_path / "scen.toml", overrides={"run.warmup": 300}).run.warmup == 300


def test_independent_allowed_when_override_is_weak(tmp_path: Path) -> None:
    (tmp_path / "topo.toml").write_text(TOPOLOGY, encoding="utf-8")
    text = edit(SCENARIO, "[plan]", INDEPENDENT + 'fiber_type = "weak4"\n\n[plan]')
    (tmp_path / "scen.toml").write_text(text, encoding="utf-8")
    scenario = load_scenario(tmp_path / "scen.toml")
    assert scenario.architecture("per-core").switching == "independent"


def test_overrides_apply(tmp_path: Path) -> None:
    scenario = load_scenario(write_good(tmp_path), overrides={"seed": 11, "run.requests": 50, "run.replications": 4})
    assert (scenario.seed, scenario.run.requests, scenario.run.replications) == (11, 50, 4)
    assert scenario.run.warmup == 100  # untouched keys keep the file's value


@pytest.mark.parametrize(
    ("overrides", "message"),
    [
        ({"run.requests": 0}, "run.requests: must be >= 1, got 0"),
        ({"run.replications": 0}, "run.replications: must be >= 1, got 0"),
        ({"seed": -1}, "seed: must be >= 0, got -1"),
        ({"seed": True}, "seed: expected an integer, got boolean true"),
        ({"run.request": 5}, "run.request: unknown setting (did you mean 'run.requests'?)"),
    ],
    ids=["requests", "replications", "negative-seed", "bool-seed", "unknown"],
)
def test_overrides_are_validated_and_blame_the_command_line(
    tmp_path: Path, overrides: dict[str, Any], message: str
) -> None:
    with pytest.raises(InputError) as caught:
        load_scenario(write_good(tmp_path), overrides=overrides)
    assert str(caught.value) == f"<command line>: {message}"


BUNDLED = sorted(
    [
        *(ROOT / "topologies").glob("*.toml"),
        ROOT / "topologies" / "nsfnet.graphml",
        *(ROOT / "scenarios").glob("*.toml"),
    ]
)


@pytest.mark.parametrize("path", BUNDLED, ids=lambda p: f"{p.parent.name}/{p.name}")
def test_bundled_files_load(path: Path) -> None:
    if not path.exists():
        pytest.skip(f"{path} is not written yet")
    loaded = load_any(path)
    expected = Scenario if path.parent.name == "scenarios" else Topology
    assert isinstance(loaded, expected)
    assert loaded.source == path


# ----------------------------------------------------------------------------------------------
# Fuzzing: nothing but InputError escapes


def test_toml_writer_round_trips() -> None:
    data = tomllib.loads(TOPOLOGY)
    assert tomllib.loads(toml_document(data)) == data
    odd = {"x": [1, 'a"b\n', {"k": float("inf")}], "t": {"u": -0.5, "v": True}}
    assert tomllib.loads(toml_document(odd)) == odd


SCALARS = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(min_value=-(2**70), max_value=2**70),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=8),
    st.sampled_from(["A", "B", "H", "weak4", "rand4", "joint", "random", "weak", "hub", "0", "-1", "1e400"]),
)
VALUES = st.recursive(
    SCALARS,
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=4), inner, max_size=3),
    max_leaves=6,
)


def paths_of(data: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    """Every key path into nested dicts and lists."""
    found = [prefix] if prefix else []
    if isinstance(data, dict):
        for key, value in data.items():
            found += paths_of(value, (*prefix, key))
    elif isinstance(data, list):
        for index, value in enumerate(data):
            found += paths_of(value, (*prefix, index))
    return found


@st.composite
def mutated(draw: st.DrawFn, text: str) -> dict[str, Any]:
    """``text`` parsed, then a few keys dropped or values swapped for random ones."""
    data = tomllib.loads(text)
    for _ in range(draw(st.integers(min_value=1, max_value=3))):
        paths = paths_of(data)
        path = draw(st.sampled_from(paths))
        parent = data
        for step in path[:-1]:
            parent = parent[step]
        if draw(st.booleans()):
            del parent[path[-1]]
        else:
            new = draw(VALUES)
            if new is None:
                continue
            parent[path[-1]] = new
        if not data:
            break
    return data


def drop_none(value: Any) -> Any:
    """TOML has no null: remove None anywhere."""
    if isinstance(value, dict):
        return {k: drop_none(v) for k, v in value.items() if v is not None}
    if isinstance(value, list):
        return [drop_none(v) for v in value if v is not None]
    return value


FUZZ = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])


def only_input_errors(loader: Callable[[Path], Any], path: Path) -> None:
    """``loader(path)`` returns a model object or raises a one-line InputError; nothing else."""
    try:
        loaded = loader(path)
    except InputError as err:
        text = str(err)
        assert text == f"{err.file}: {err.where}: {err.what}"
        assert "\n" not in text and err.where and err.what
    else:
        assert isinstance(loaded, Topology | Scenario)


@FUZZ
@given(data=st.binary(max_size=300))
def test_random_bytes_raise_only_input_errors(tmp_path: Path, data: bytes) -> None:
    for name, loader in (("b.toml", load_topology), ("b.graphml", load_topology), ("s.toml", load_scenario)):
        (tmp_path / name).write_bytes(data)
        only_input_errors(loader, tmp_path / name)


@FUZZ
@given(text=st.text(max_size=300))
def test_random_text_raises_only_input_errors(tmp_path: Path, text: str) -> None:
    (tmp_path / "topo.toml").write_text(TOPOLOGY, encoding="utf-8")
    for name, loader in (("t.toml", load_topology), ("t.graphml", load_topology), ("s.toml", load_scenario)):
        (tmp_path / name).write_text(text, encoding="utf-8")
        only_input_errors(loader, tmp_path / name)
    # The same text after a valid start, so the parser gets past the first line.
    (tmp_path / "s.toml").write_text(SCENARIO + text, encoding="utf-8")
    only_input_errors(load_scenario, tmp_path / "s.toml")


@FUZZ
@given(data=mutated(TOPOLOGY))
def test_mutated_topology_raises_only_input_errors(tmp_path: Path, data: dict[str, Any]) -> None:
    path = tmp_path / "topo.toml"
    path.write_text(toml_document(drop_none(data)), encoding="utf-8")
    only_input_errors(load_topology, path)


@FUZZ
@given(data=mutated(SCENARIO), rows=st.sampled_from(["a,b,weight\nA,B,1\n", "a,b,weight\nA,B,x\n", "", "\x00"]))
def test_mutated_scenario_raises_only_input_errors(tmp_path: Path, data: dict[str, Any], rows: str) -> None:
    (tmp_path / "topo.toml").write_text(TOPOLOGY, encoding="utf-8")
    (tmp_path / "m.csv").write_text(rows, encoding="utf-8")
    if isinstance(data.get("traffic"), dict) and data["traffic"].get("pattern") == "uniform":
        data["traffic"]["pattern"] = "matrix"  # reach the CSV reader in some examples
        data["traffic"]["matrix"] = "m.csv"
    path = tmp_path / "scen.toml"
    path.write_text(toml_document(drop_none(data)), encoding="utf-8")
    only_input_errors(load_scenario, path)


GRAPHML_TEXTS = st.text(max_size=6) | st.sampled_from(["-1", "0", "1e400", "nan", "true", "A", "hub", "random"])
GRAPHML_NAMES = st.sampled_from(["source", "target", "attr.type", "attr.name", "for", "id", "key"])
GRAPHML_ATTRIBUTE_VALUES = st.text(max_size=5) | st.sampled_from(["A", "B", "H", "int", "double", "boolean", "edge"])


@FUZZ
@given(data=st.data())
def test_mutated_graphml_raises_only_input_errors(tmp_path: Path, data: st.DataObject) -> None:
    root = ET.fromstring((FIXTURES / "small.graphml").read_bytes())
    for _ in range(data.draw(st.integers(min_value=1, max_value=3))):
        parents = {child: parent for parent in root.iter() for child in parent}
        element = data.draw(st.sampled_from(list(root.iter())))
        action = data.draw(st.sampled_from(["text", "attribute", "drop", "copy"]))
        if action == "text":
            element.text = data.draw(GRAPHML_TEXTS)
        elif action == "attribute":
            element.set(data.draw(GRAPHML_NAMES), data.draw(GRAPHML_ATTRIBUTE_VALUES))
        elif element in parents:
            parent = parents[element]
            if action == "drop":
                parent.remove(element)
            else:
                parent.append(copy.deepcopy(element))
    path = tmp_path / "g.graphml"
    path.write_bytes(ET.tostring(root))
    only_input_errors(load_topology, path)
