"""What every verb writes besides its tables: the output folder check, its lock, and run.json."""

from __future__ import annotations

import errno
import os
import platform
import sys
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from dataclasses import asdict
from importlib import metadata
from pathlib import Path

from .. import __version__
from ..errors import InputError
from ..inputs.model import Scenario
from ..sim.engine import EngineSetup, prepare
from ..sim.sweep import scenario_fingerprint

__all__ = ["software_versions", "ensure_out_dir", "out_dir_lock", "LOCK_FILE", "run_manifest"]

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX: folders are not locked
    fcntl = None  # type: ignore[assignment]

#: The lock file in every output folder (kept: removing it would let two writers lock two files).
LOCK_FILE = ".sdmnet.lock"

# Folders this process holds locked: resolved path -> the lock file's descriptor.
_held: dict[Path, int] = {}


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


@contextmanager
def out_dir_lock(out_dir: Path | str) -> Iterator[Path]:
    """Hold ``out_dir`` for this process alone while the block runs: one writer per results folder.

    Creates the folder (:func:`ensure_out_dir`) and takes an exclusive ``flock`` on its
    :data:`LOCK_FILE`, which holds the writer's process id.  The operating system releases the
    lock when the holder exits in any way, a crash or ``kill -9`` included, so a lock file left
    behind never blocks a later run (``--resume`` after a crash works).  Nested use by the same
    process (a demo running every verb into one folder) holds the lock once.

    Raises
    ------
    InputError
        When another process holds the folder, naming it and that process.
    """
    path = ensure_out_dir(out_dir)
    key = path.resolve()
    if key in _held or fcntl is None:  # held by an outer block of this process already
        yield path
        return
    lock = key / LOCK_FILE
    try:
        fd = os.open(lock, os.O_RDWR | os.O_CREAT, 0o666)
    except OSError as exc:
        raise InputError(path, "--out", f"cannot open the folder's lock file ({exc.strerror or exc})") from None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError as exc:
        holder = os.pread(fd, 32, 0).decode(errors="replace").strip()
        os.close(fd)
        if exc.errno not in (errno.EWOULDBLOCK, errno.EAGAIN, errno.EACCES):
            raise InputError(path, "--out", f"cannot lock the folder ({exc.strerror or exc})") from None
        who = f" (process {holder})" if holder.isdigit() else ""
        raise InputError(
            path, "--out", f"another sdmnet run{who} is writing into this folder; wait for it, or choose another --out"
        ) from None
    os.ftruncate(fd, 0)
    os.pwrite(fd, f"{os.getpid()}\n".encode(), 0)
    _held[key] = fd
    try:
        yield path
    finally:
        del _held[key]
        os.close(fd)  # releases the lock


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
