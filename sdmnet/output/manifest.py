"""What every verb writes besides its tables: the output folder check and run.json."""

from __future__ import annotations

import platform
import sys
from collections.abc import Mapping
from dataclasses import asdict
from importlib import metadata
from pathlib import Path

from .. import __version__
from ..errors import InputError
from ..inputs.model import Scenario
from ..sim.engine import EngineSetup, prepare
from ..sim.sweep import scenario_fingerprint

__all__ = ["software_versions", "ensure_out_dir", "run_manifest"]


def software_versions() -> dict[str, str]:
    """Versions of Python and of the libraries that shape the results."""
    out = {"python": platform.python_version(), "sdmnet": __version__}
    for name in ("numpy", "scipy", "simpy", "networkx", "pandas", "matplotlib"):
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def ensure_out_dir(out_dir: Path | str) -> Path:
    """Create ``out_dir`` (and parents) and check it is writable; InputError otherwise."""
    path = Path(out_dir)
    try:
        path.mkdir(parents=True, exist_ok=True)
        probe = path / ".write-probe"
        probe.write_text("")
        probe.unlink()
    except OSError as exc:
        raise InputError(path, "--out", f"cannot write the output folder ({exc.strerror or exc})") from None
    return path


def run_manifest(
    scenario: Scenario,
    verb: str,
    wall_time_s: float,
    *,
    setups: Mapping[str, EngineSetup] | None = None,
    **options: object,
) -> dict:
    """Inputs, seeds, versions and wall time of a run, for run.json."""
    unrouted = {}
    for arch in scenario.architectures:
        setup = setups[arch.name] if setups is not None else prepare(scenario, arch)
        if setup.unrouted_pairs:
            unrouted[arch.name] = ["-".join(p) for p in setup.unrouted_pairs]
    return {
        "verb": verb,
        "scenario_file": str(scenario.source) if scenario.source else None,
        "topology_file": str(scenario.topology.source) if scenario.topology.source else None,
        "scenario": asdict(scenario),
        "fingerprint": scenario_fingerprint(scenario),
        "seeds": {
            "scenario_seed": scenario.seed,
            "rule": "replication r uses numpy SeedSequence(scenario_seed, spawn_key=(r,)), spawned into "
            "4 streams (interarrival, pair, size, holding), arrival i taking draw i of each; the same for "
            "every architecture and load",
            "replications": scenario.run.replications,
        },
        "pairs_without_feasible_route": unrouted,
        "options": options,
        "versions": software_versions(),
        "command": sys.argv,
        "wall_time_s": round(wall_time_s, 3),
    }
