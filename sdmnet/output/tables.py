"""Result tables (pandas DataFrames) and how they are written.

Tables are built from aggregated statistics only; the file layout of each verb's output folder
is fixed here so that every verb writes the same way (CSV with a fixed float format, so the same
numbers always give the same bytes; Parquet beside it when pyarrow is installed).
"""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Callable, Sequence
from pathlib import Path

import pandas as pd

from ..equipment.costs import Price, equipment_columns, site_switch_ports
from ..equipment.installed import installed_transceivers
from ..equipment.resources import InstalledResources
from ..inputs.model import Scenario
from ..network.architectures import cable_geometries
from ..sim.engine import EngineSetup
from ..sim.precision import relative_half_width
from ..sim.stats import PointSummary

__all__ = [
    "SUMMARY_COLUMNS",
    "summary_table",
    "add_module_columns",
    "class_table",
    "pair_table",
    "site_table",
    "cable_table",
    "write_table",
    "write_json",
    "write_text",
    "atomic_write",
]

# docs/model.md, section 5 names the first columns; the rest are ours.
SUMMARY_COLUMNS = [
    "architecture",
    "switching",
    "load_erlang",
    "requests",
    "blocked",
    "blocking",
    "blocking_ci_low",
    "blocking_ci_high",
    "bandwidth_blocking",
    "transceivers_peak",
    "transceiver_lanes_peak",
    "switch_ports",
    "fiber_pairs",
    "fiber_km",
    "transceivers_installed",
    "transceiver_lanes_installed",
    "carried_erlang",
    "transceiver_mimo_lanes_installed",
    "switch_ports_line",
    "switch_ports_add_drop",
    "cost",
    "power_w",
    "carried_tbps",
    "cost_per_carried_tbps",
    "bandwidth_blocking_ci_low",
    "bandwidth_blocking_ci_high",
    "transceivers_mean",
    "transceiver_lanes_mean",
    "fiber_strands",
    "replications",
    "cores_per_unit",
    "unit_gbps",
    "unrouted_pairs",
    "steady_state",
    "steady_state_p",
    "warmup",
    "warmup_settled",
    "blocking_precision",
]

FLOAT_FORMAT = "%.10g"


def summary_table(
    scenario: Scenario,
    points: Sequence[PointSummary],
    setups: dict[str, EngineSetup],
    resources: dict[str, InstalledResources],
    prices: dict[str, dict[str, Price]] | None = None,
) -> pd.DataFrame:
    """One row per (architecture, load point), in scenario order.

    Installed transceivers are per-site overflow quantiles summed over sites
    (:mod:`sdmnet.equipment.installed`); carried Erlang is the offered load times the fraction of
    requests accepted; switch ports are line-side plus one add/drop port per installed module.
    With ``prices`` (architecture -> :func:`sdmnet.equipment.costs.unit_prices`), the cost and
    watts of everything installed at that load (NaN without).
    """
    rows = []
    for p in points:
        arch = scenario.architecture(p.architecture)
        setup = setups[arch.name]
        res = resources[arch.name]
        unit = cable_geometries(scenario, arch)[0]
        installed = installed_transceivers(p, scenario.transceiver.overflow)
        equipment = equipment_columns(scenario, p, res, installed, None if prices is None else prices[arch.name])
        rows.append(
            {
                "architecture": arch.name,
                "switching": arch.switching,
                "load_erlang": p.load_erlang,
                "requests": p.requests,
                "blocked": p.blocked,
                "blocking": p.blocking.mean,
                "blocking_ci_low": p.blocking.low,
                "blocking_ci_high": p.blocking.high,
                "bandwidth_blocking": p.bandwidth_blocking.mean,
                "transceivers_peak": p.transceivers_peak,
                "transceiver_lanes_peak": p.lanes_peak,
                "fiber_pairs": res.fiber_pairs,
                "fiber_km": res.fiber_km,
                **equipment,
                "carried_erlang": p.load_erlang * (1.0 - p.blocking.mean),
                "bandwidth_blocking_ci_low": p.bandwidth_blocking.low,
                "bandwidth_blocking_ci_high": p.bandwidth_blocking.high,
                "transceivers_mean": p.transceivers_mean,
                "transceiver_lanes_mean": p.lanes_mean,
                "fiber_strands": res.fiber_strands,
                "replications": p.replications,
                "cores_per_unit": unit.cores_per_unit,
                "unit_gbps": unit.unit_gbps,
                "unrouted_pairs": len(setup.unrouted_pairs),
                # Replications that disagree beyond their own batches (sdmnet.sim.stats).
                "steady_state": "yes" if p.steady_state.steady else "no",
                "steady_state_p": p.steady_state.p_value,
                # Warm-up arrivals per replication (mean over replications); with warmup =
                # "auto", whether every replication found its demands in flight settled.
                "warmup": p.warmup,
                "warmup_settled": "" if p.warmup_settled is None else ("yes" if p.warmup_settled else "no"),
                # Relative half-width of the blocking's interval ([run] precision; NaN: none blocked).
                "blocking_precision": relative_half_width(p.blocking),
            }
        )
    return pd.DataFrame(rows, columns=SUMMARY_COLUMNS)


def add_module_columns(summary: pd.DataFrame, modules: dict) -> pd.DataFrame:
    """Transceiver power and MIMO DSP load columns (``modules``: architecture -> ModuleFigures).

    ``transceiver_power_w_peak`` = peak modules x power of one module sized for the worst
    feasible route; ``mimo_cmul_per_bit`` uses the frequency-domain (overlap-save) equalizer,
    ``mimo_cmul_per_bit_time_domain`` the time-domain one (:mod:`sdmnet.optics.physics`).
    """
    out = summary.copy()
    fig = [modules[name] for name in out["architecture"]]
    out["module_lanes"] = [m.lanes for m in fig]
    out["mimo_size"] = [m.mimo_size for m in fig]
    out["mimo_taps"] = [m.mimo_taps for m in fig]
    out["module_power_w"] = [m.power_w for m in fig]
    out["transceiver_power_w_peak"] = out["transceivers_peak"] * out["module_power_w"]
    out["mimo_cmul_per_bit"] = [m.cmul_per_bit_frequency for m in fig]
    out["mimo_cmul_per_bit_time_domain"] = [m.cmul_per_bit_time for m in fig]
    return out


def class_table(points: Sequence[PointSummary], setups: dict[str, EngineSetup]) -> pd.DataFrame:
    """Blocking per demand-size class (the Kaufman-Roberts view)."""
    rows = []
    for p in points:
        setup = setups[p.architecture]
        for k, size in enumerate(setup.sizes_gbps):
            iv = p.class_blocking[k]
            rows.append(
                {
                    "architecture": p.architecture,
                    "load_erlang": p.load_erlang,
                    "size_gbps": size,
                    "requests": p.class_offered[k],
                    "blocked": p.class_blocked[k],
                    "blocking": iv.mean,
                    "blocking_ci_low": iv.low,
                    "blocking_ci_high": iv.high,
                }
            )
    return pd.DataFrame(rows)


def pair_table(points: Sequence[PointSummary], setups: dict[str, EngineSetup]) -> pd.DataFrame:
    """Blocking per datacenter pair."""
    rows = []
    for p in points:
        setup = setups[p.architecture]
        for i, (a, b) in enumerate(setup.pairs):
            iv = p.pair_blocking[i]
            rows.append(
                {
                    "architecture": p.architecture,
                    "load_erlang": p.load_erlang,
                    "a": a,
                    "b": b,
                    "routes": len(setup.routes[i]),
                    "requests": p.pair_offered[i],
                    "blocked": p.pair_blocked[i],
                    "blocking": iv.mean,
                    "blocking_ci_low": iv.low,
                    "blocking_ci_high": iv.high,
                }
            )
    return pd.DataFrame(rows)


def site_table(
    scenario: Scenario,
    points: Sequence[PointSummary],
    setups: dict[str, EngineSetup],
    resources: dict[str, InstalledResources],
) -> pd.DataFrame:
    """Transceivers and switch ports (line side plus one add/drop port per installed module) per site."""
    roles = {s.id: s.role for s in scenario.topology.sites}
    rows = []
    for p in points:
        setup = setups[p.architecture]
        installed = installed_transceivers(p, scenario.transceiver.overflow)
        ports = site_switch_ports(resources[p.architecture], installed, setup.sites)
        for i, site in enumerate(setup.sites):
            rows.append(
                {
                    "architecture": p.architecture,
                    "load_erlang": p.load_erlang,
                    "site": site,
                    "role": roles[site],
                    "switch_ports": sum(ports[i]),
                    "switch_ports_line": ports[i][0],
                    "switch_ports_add_drop": ports[i][1],
                    "transceivers_installed": installed.site_modules[i],
                    "transceiver_lanes_installed": installed.site_lanes[i],
                    "transceiver_mimo_lanes_installed": installed.site_mimo_lanes[i],
                    "transceivers_peak": p.site_transceivers_peak[i],
                    "transceivers_mean": p.site_transceivers_mean[i],
                    "transceiver_lanes_mean": p.site_lanes_mean[i],
                }
            )
    return pd.DataFrame(rows)


def cable_table(scenario: Scenario, points: Sequence[PointSummary]) -> pd.DataFrame:
    """Mean utilisation of every cable (busy unit positions / unit positions)."""
    rows = []
    for p in points:
        topo = scenario.topology_for(scenario.architecture(p.architecture))
        for i, cable in enumerate(topo.cables):
            rows.append(
                {
                    "architecture": p.architecture,
                    "load_erlang": p.load_erlang,
                    "cable": cable.key,
                    "length_km": cable.length_km,
                    "fiber_type": cable.fiber_type,
                    "fiber_pairs": cable.fiber_pairs,
                    "utilisation": p.cable_utilisation[i],
                }
            )
    return pd.DataFrame(rows)


def _default_mode() -> int:
    # mkstemp creates 0600 files; results should get the permissions of any other new file.
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def atomic_write(path: Path, write: Callable[[str], object]) -> None:
    """Call ``write(temporary path)``, then rename the temporary to ``path``: a reader, or a run
    stopped at any point, never sees half a file."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=".tmp-", suffix=path.suffix)
    os.close(fd)
    try:
        write(tmp)
        os.chmod(tmp, _default_mode())
        os.replace(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def write_table(frame: pd.DataFrame, path: Path) -> Path:
    """Write ``frame`` as CSV (and Parquet beside it when pyarrow is importable)."""
    path = Path(path)
    atomic_write(path, lambda tmp: frame.to_csv(tmp, index=False, float_format=FLOAT_FORMAT))
    try:
        import pyarrow  # noqa: F401
    except ImportError:
        return path
    atomic_write(path.with_suffix(".parquet"), lambda tmp: frame.to_parquet(tmp, index=False))
    return path


def write_text(text: str, path: Path) -> Path:
    """Write ``text`` as UTF-8 with Unix line ends, atomically."""
    path = Path(path)

    def _write(tmp: str) -> None:
        with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)

    atomic_write(path, _write)
    return path


def write_json(data: dict, path: Path) -> Path:
    """Write ``data`` as indented JSON, atomically."""
    path = Path(path)

    def _write(tmp: str) -> None:
        with open(tmp, "w") as fh:
            json.dump(data, fh, indent=2, sort_keys=True, default=str)
            fh.write("\n")

    atomic_write(path, _write)
    return path
