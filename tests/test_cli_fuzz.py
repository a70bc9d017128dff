"""No traceback on any input: extreme values in every field of a scenario and of a topology,
through the real command line (:func:`sdmnet.cli.main`, in-process for speed).

Every run must either succeed (exit 0) or stop with exit status 2 and exactly one line
``error: FILE: WHERE: what`` on stderr; nothing else may escape, and no warning may be printed.

The fields are not listed by hand: they come from the model's data classes and the loader's key
lists, so a field added to the model is fuzzed with no change here.  A new top-level key of a
scenario or topology file must be placed in one of the maps below (a test checks that none is
missing).

Figures: drawing them takes most of an accepted run's time, so the fuzz tests replace the figure
functions with a stub that writes a 1 x 1 PNG (the report still embeds it); everything else runs
as in production.  :func:`test_accepted_extremes_with_real_figures` draws the real figures for
the extreme values that reach them.

The "ci" Hypothesis profile (tests/conftest.py) is derandomized; ``SDMNET_HYPOTHESIS=long``
draws ten times as many random examples per field and also runs the exhaustive sweep of every
extreme value in every field.
"""

from __future__ import annotations

import contextlib
import copy
import dataclasses
import io
import os
import struct
import tempfile
import warnings
import zlib
from pathlib import Path
from typing import Any

import pytest
from builders import toml_document
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sdmnet import api
from sdmnet.cli import main
from sdmnet.inputs import loaders
from sdmnet.inputs.model import (
    Architecture,
    Cable,
    FiberType,
    ForecastSpec,
    LineSpec,
    PlanSpec,
    RunSpec,
    Site,
    TransceiverClass,
    TransceiverSpec,
)
from sdmnet.output import figures
from sdmnet.planning import forecasting

# ----------------------------------------------------------------------------------------------
# The valid files every example starts from: every section present, both couplings, a hub, and a
# run short enough that an accepted example costs well under a second.

TOPOLOGY: dict[str, Any] = {
    "name": "fuzz",
    "fiber_types": {
        "weak": {
            "cores": 2,
            "coupling": "weak",
            "coupled_group": 1,
            "channels": 4,
            "attenuation_db_per_km": 0.2,
            "dgd_ps_per_km": 0.1,
            "crosstalk_db_per_km": -60.0,
            "effective_area_um2": 80.0,
            "dispersion_ps_per_nm_km": 17.0,
            "cladding_um": 125.0,
        },
        "rand": {
            "cores": 4,
            "coupling": "random",
            "coupled_group": 2,
            "channels": 4,
            "attenuation_db_per_km": 0.2,
            "gd_spread_ps_per_sqrt_km": 3.0,
            "mdl_db_per_sqrt_km": 0.05,
            "effective_area_um2": 80.0,
            "dispersion_ps_per_nm_km": 20.0,
            "cladding_um": 125.0,
            "group_crosstalk_db_per_km": -50.0,
        },
    },
    "sites": [
        {"id": "A", "role": "datacenter", "traffic_weight": 1.0, "x_km": 0.0, "y_km": 0.0, "transit": True},
        {"id": "B", "role": "datacenter", "traffic_weight": 2.0, "x_km": 60.0, "y_km": 0.0},
        {"id": "H", "role": "hub", "x_km": 30.0, "y_km": 20.0},
    ],
    "cables": [
        {"a": "A", "b": "H", "length_km": 20.0, "fiber_type": "weak", "fiber_pairs": 2, "risk_group": "duct"},
        {"a": "H", "b": "B", "length_km": 30.0, "fiber_type": "weak", "fiber_pairs": 1, "risk_group": "duct"},
        {"a": "A", "b": "B", "length_km": 70.0, "fiber_type": "rand", "fiber_pairs": 1},
    ],
}


def _defaults(cls: type, **given: Any) -> dict[str, Any]:
    """A section holding every field of ``cls`` that has a TOML value: its default or ``given``."""
    out = {}
    for f in dataclasses.fields(cls):
        if f.default is not dataclasses.MISSING:
            value = f.default
        elif f.default_factory is not dataclasses.MISSING:
            value = f.default_factory()
        else:
            value = None
        value = given.get(f.name, value)
        if value is not None and value != () and value != {}:
            out[f.name] = list(value) if isinstance(value, tuple) else value
    return out


SCENARIO: dict[str, Any] = {
    "name": "fuzz",
    "topology": "topo.toml",
    "seed": 3,
    "traffic": {
        "pattern": "gravity", "load_erlang": [2.0], "mean_holding": 1.0, "sizes_gbps": {"100": 0.5, "800": 0.5}
    },
    "transceiver": _defaults(TransceiverSpec, lane_gbps=100.0),
    "run": _defaults(RunSpec, requests=60, warmup=10, replications=2, k_paths=2),
    "architectures": [
        {"name": "per-core", "switching": "independent", "lane_change": True, "share": False, "fiber_type": "weak"},
        {"name": "groups", "switching": "fractional-joint", "group": 2, "lane_change": False, "share": True},
    ],
    "plan": _defaults(PlanSpec, unit_costs={"fiber_pair_km": 1.0}, pair_target=0.05, cut_target=0.05),
    "forecast": _defaults(ForecastSpec, years=2, factors=[1.5, 2.0]),
    "line": _defaults(LineSpec),
    "transceivers": [_defaults(TransceiverClass, name="c1", lane_gbps=100.0, symbol_rate_gbaud=32.0,
                               required_osnr_db=12.0, reach_km=1000.0, power_w=10.0, cost=1.0)],
    "costs": {"transceiver_lane": 1.0},
    "power": {"transceiver_lane": 5.0},
}

# Where every top-level key of a file is fuzzed: as one table of a model class, as an array of
# such tables, as a table of free item names, or as a plain value.
TOPOLOGY_TABLES = {"fiber_types": FiberType}
TOPOLOGY_ARRAYS = {"sites": Site, "cables": Cable}
TOPOLOGY_VALUES = {"name"}
SCENARIO_TABLES = {
    "transceiver": TransceiverSpec,
    "run": RunSpec,
    "plan": PlanSpec,
    "forecast": ForecastSpec,
    "line": LineSpec,
}
SCENARIO_ARRAYS = {"architectures": Architecture, "transceivers": TransceiverClass}
SCENARIO_ITEMS = {"costs", "power"}
SCENARIO_VALUES = {"name", "topology", "seed"}
SCENARIO_TRAFFIC = "traffic"

# ----------------------------------------------------------------------------------------------
# Targets: (file, key path) of every field, each table and each array


def _targets() -> list[tuple[str, tuple[Any, ...]]]:
    out: list[tuple[str, tuple[Any, ...]]] = []
    for key in TOPOLOGY_VALUES:
        out.append(("topology", (key,)))
    for key, cls in TOPOLOGY_TABLES.items():
        out.append(("topology", (key,)))
        for type_name in TOPOLOGY[key]:
            out.append(("topology", (key, type_name)))
            out += [("topology", (key, type_name, f.name)) for f in dataclasses.fields(cls) if f.name != "name"]
    for key, cls in TOPOLOGY_ARRAYS.items():
        out.append(("topology", (key,)))
        for index in range(len(TOPOLOGY[key])):
            out.append(("topology", (key, index)))
            out += [("topology", (key, index, f.name)) for f in dataclasses.fields(cls)]
    for key in SCENARIO_VALUES:
        out.append(("scenario", (key,)))
    out.append(("scenario", (SCENARIO_TRAFFIC,)))
    out += [("scenario", (SCENARIO_TRAFFIC, key)) for key in loaders.TRAFFIC_KEYS]
    out.append(("scenario", (SCENARIO_TRAFFIC, "sizes_gbps", "100")))
    out.append(("scenario", (SCENARIO_TRAFFIC, "sizes_gbps", SIZE_KEY)))
    for key, cls in SCENARIO_TABLES.items():
        out.append(("scenario", (key,)))
        out += [("scenario", (key, f.name)) for f in dataclasses.fields(cls)]
    out += [("scenario", ("plan", "unit_costs", key)) for key in loaders.UNIT_COST_KEYS]
    for key, cls in SCENARIO_ARRAYS.items():
        out.append(("scenario", (key,)))
        out.append(("scenario", (key, 0)))
        out += [("scenario", (key, 0, f.name)) for f in dataclasses.fields(cls)]
    for key in SCENARIO_ITEMS:
        out.append(("scenario", (key,)))
        out.append(("scenario", (key, "transceiver_lane")))
    return out


# A size class whose *key* is the fuzzed value (sizes are the keys of traffic.sizes_gbps).
SIZE_KEY = "<size key>"
TARGETS = _targets()

# ----------------------------------------------------------------------------------------------
# Values

DELETE = object()  # drop the key instead of setting it

EXTREMES = [
    DELETE,
    0,
    -1,
    1,
    2,
    0.5,
    -0.5,
    0.0,
    -0.0,
    1e-300,
    5e-324,
    1e300,
    -1e300,
    1.7976931348623157e308,
    float("nan"),
    float("inf"),
    float("-inf"),
    2**31,
    2**53 + 1,
    2**63 - 1,
    2**63,
    2**64,
    10**30,
    -(10**30),
    10**300,
    "",
    " ",
    "\u00e9\u2603\u202e\U0001f600",
    "x" * 5000,
    "1e30",
    "nan",
    "-",
    "A",
    "H",
    "weak",
    "random",
    "hub",
    True,
    False,
    [],
    [0],
    [1e300, -1],
    {},
    {"": 1},
    {"x": {"y": [1]}},
]
VALUES = st.one_of(
    st.sampled_from(EXTREMES),
    st.integers(min_value=-(2**70), max_value=2**70),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
)


def _mutated(
    target: tuple[str, tuple[Any, ...]],
    value: Any,
    topology: dict[str, Any] = TOPOLOGY,
    scenario: dict[str, Any] = SCENARIO,
) -> tuple[dict[str, Any], dict[str, Any]]:
    """Copies of both files with ``value`` set at ``target`` (or the key dropped)."""
    files = {"topology": copy.deepcopy(topology), "scenario": copy.deepcopy(scenario)}
    which, path = target
    if path[-1] == SIZE_KEY:
        sizes = files["scenario"][SCENARIO_TRAFFIC]["sizes_gbps"]
        if value is not DELETE:
            sizes.clear()
            sizes[str(value)] = 1.0
        return files["topology"], files["scenario"]
    parent = files[which]
    for step in path[:-1]:
        parent = parent[step]
    if value is DELETE:
        if isinstance(parent, dict):
            parent.pop(path[-1], None)
        elif path[-1] < len(parent):
            del parent[path[-1]]
    else:
        parent[path[-1]] = value
    return files["topology"], files["scenario"]


def _drop_none(value: Any) -> Any:
    if isinstance(value, dict):
        return {k: _drop_none(v) for k, v in value.items() if v is not None}
    if isinstance(value, list):
        return [_drop_none(v) for v in value if v is not None]
    return value


def run_cli(argv: list[str]) -> tuple[int, str, str]:
    """``sdmnet ARGV`` in this process: exit status, stdout, stderr (warnings land in stderr)."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err), warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        try:
            status = main(argv)
        except SystemExit as exc:  # argparse's own exit
            status = exc.code if isinstance(exc.code, int) else 1
    shown = "".join(warnings.formatwarning(w.message, w.category, w.filename, w.lineno) for w in seen)
    return status, out.getvalue(), err.getvalue() + shown


def assert_clean_outcome(status: int, stderr: str) -> None:
    """Success, or status 2 with one ``error:`` line and nothing else."""
    lines = stderr.splitlines()
    if status == 0:
        assert not any(line.startswith("error:") for line in lines), stderr
        assert all(line.startswith("note:") for line in lines), stderr
    else:
        assert status == 2, stderr
        assert len(lines) == 1 and lines[0].startswith("error: "), stderr


def simulate_files(topology: dict[str, Any], scenario: dict[str, Any], *extra: str) -> tuple[int, str]:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        (folder / "topo.toml").write_text(toml_document(_drop_none(topology)), encoding="utf-8")
        (folder / "s.toml").write_text(toml_document(_drop_none(scenario)), encoding="utf-8")
        status, _out, err = run_cli(["simulate", str(folder / "s.toml"), "-o", str(folder / "out"), "--quiet", *extra])
    return status, err


def _png_chunk(kind: bytes, data: bytes) -> bytes:
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data))


# A valid 1 x 1 grey PNG (signature, IHDR, IDAT, IEND; the PNG specification, W3C).
TINY_PNG = (
    b"\x89PNG\r\n\x1a\n"
    + _png_chunk(b"IHDR", struct.pack(">IIBBBBB", 1, 1, 8, 0, 0, 0, 0))
    + _png_chunk(b"IDAT", zlib.compress(b"\x00\x00"))
    + _png_chunk(b"IEND", b"")
)
FIGURE_FUNCTIONS = [name for name in dir(figures) if name.endswith("_figure") and not name.startswith("_")]


def _stub_figure(*args: Any, **kwargs: Any) -> Path:
    path = next(Path(a) for a in (*args, *kwargs.values()) if isinstance(a, Path))
    path.write_bytes(TINY_PNG)
    return path


@pytest.fixture
def stub_figures(monkeypatch: pytest.MonkeyPatch) -> None:
    for module in (figures, api, forecasting):
        for name in FIGURE_FUNCTIONS:
            if hasattr(module, name):
                monkeypatch.setattr(module, name, _stub_figure)


LONG = os.environ.get("SDMNET_HYPOTHESIS") == "long"

# ----------------------------------------------------------------------------------------------
# Tests


def test_every_top_level_key_has_a_place() -> None:
    assert set(loaders.TOPOLOGY_KEYS) == set(TOPOLOGY_TABLES) | set(TOPOLOGY_ARRAYS) | TOPOLOGY_VALUES
    placed = set(SCENARIO_TABLES) | set(SCENARIO_ARRAYS) | SCENARIO_ITEMS | SCENARIO_VALUES | {SCENARIO_TRAFFIC}
    assert set(loaders.SCENARIO_KEYS) == placed


def test_every_field_of_the_model_is_a_target() -> None:
    fuzzed = {(file, path[0], path[-1]) for file, path in TARGETS}
    for key, cls in {**TOPOLOGY_TABLES, **TOPOLOGY_ARRAYS}.items():
        for f in dataclasses.fields(cls):
            assert f.name == "name" or ("topology", key, f.name) in fuzzed
    for key, cls in {**SCENARIO_TABLES, **SCENARIO_ARRAYS}.items():
        for f in dataclasses.fields(cls):
            assert ("scenario", key, f.name) in fuzzed


def test_the_base_files_run() -> None:
    status, err = simulate_files(TOPOLOGY, SCENARIO)
    assert status == 0, err


# Examples per field: 2 in the "ci" profile (100 // 50), 20 in "long".
PER_FIELD = settings(
    max_examples=max(2, settings.default.max_examples // 50),
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)
TARGET_IDS = [f"{file}:{'.'.join(map(str, path))}" for file, path in TARGETS]


@pytest.mark.parametrize("target", TARGETS, ids=TARGET_IDS)
@PER_FIELD
@given(value=VALUES)
def test_extreme_value_in_any_field(stub_figures: None, target: tuple[str, tuple[Any, ...]], value: Any) -> None:
    topology, scenario = _mutated(target, value)
    status, err = simulate_files(topology, scenario)
    assert_clean_outcome(status, err)


@pytest.mark.skipif(not LONG, reason="exhaustive sweep: run with SDMNET_HYPOTHESIS=long")
@pytest.mark.parametrize("target", TARGETS, ids=TARGET_IDS)
def test_every_extreme_value_in_every_field(stub_figures: None, target: tuple[str, tuple[Any, ...]]) -> None:
    for value in EXTREMES:
        topology, scenario = _mutated(target, value)
        status, err = simulate_files(topology, scenario)
        assert_clean_outcome(status, err)


# Extreme values the loader accepts that reach the figures and the report, set together: the
# largest drawing extent, the longest and oddest names, one replication, the shortest cable, the
# largest weight; then the smallest and largest loads.  (A cable of 10,000 fiber pairs is left
# out: the analytic estimate's Kaufman-Roberts recursion steps through every unit of a cable,
# half a minute here; tests/test_memory.py builds the engine's occupancy at that size.)
REACHING_FIGURES = {
    "extents-names-sizes": [
        (("topology", ("sites", 1, "x_km")), 1e5),
        (("topology", ("sites", 2, "y_km")), -1e5),
        (("topology", ("sites", 1, "id")), "\u00e9\u2603\u202e" + "B" * 61),
        (("scenario", ("architectures", 0, "name")), "x" * 64),
        (("scenario", ("run", "replications")), 1),
        (("topology", ("cables", 1, "length_km")), 1e-3),
        (("topology", ("sites", 0, "traffic_weight")), 1e12),
    ],
    "loads": [(("scenario", ("traffic", "load_erlang")), [1e-6, 5e6])],
}


@pytest.mark.slow
@pytest.mark.parametrize("case", list(REACHING_FIGURES))
def test_accepted_extremes_with_real_figures(case: str) -> None:
    topology, scenario = TOPOLOGY, SCENARIO
    for target, value in REACHING_FIGURES[case]:
        file, path = target
        topology, scenario = _mutated((file, path), value, topology, scenario)
        if path[:3] == ("sites", 1, "id"):  # the cables name the site too
            for cable in topology["cables"]:
                for end in ("a", "b"):
                    if cable[end] == "B":
                        cable[end] = value
    status, err = simulate_files(topology, scenario)
    assert status == 0, err
    assert_clean_outcome(status, err)
