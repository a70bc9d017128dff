"""The scenarios and topologies that ship inside the package (``sdmnet/data``).

They are package data, found through :mod:`importlib.resources`, so ``sdmnet demo`` works from
any folder after a plain ``pip install``; in a repository checkout ``scenarios/`` and
``topologies/`` at the top are links to the same files.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

from ..errors import InputError

__all__ = ["data_dir", "bundled_scenario", "bundled_topology", "STARTER_FILES", "copy_starter"]


def data_dir() -> Path:
    """The folder holding ``scenarios/`` and ``topologies/``.

    Raises
    ------
    FileNotFoundError
        If the installation lacks its data (a broken install, not bad input).
    """
    folder = Path(str(files("sdmnet") / "data"))
    if not (folder / "scenarios").is_dir():
        raise FileNotFoundError(folder / "scenarios")
    return folder


def bundled_scenario(name: str) -> Path:
    """Path of the bundled scenario ``name`` (``"demo"``, ``"nsfnet"``...)."""
    return data_dir() / "scenarios" / f"{name}.toml"


def bundled_topology(name: str) -> Path:
    """Path of the bundled topology file ``name`` (with its suffix, e.g. ``"nsfnet.graphml"``)."""
    return data_dir() / "topologies" / name


# The starter is the demo: its scenario as scenario.toml, its topology as topology.toml beside it.
STARTER_FILES = ("scenario.toml", "topology.toml")
_DEMO_TOPOLOGY_LINE = 'topology = "../topologies/demo-metro.toml"'
_STARTER_HEADER = (
    "# A starter scenario, copied by `sdmnet starter` from the bundled demo: edit it freely.\n"
    "# Check it with `sdmnet check scenario.toml`; the keys are described in docs/model.md.\n\n"
)


def copy_starter(folder: Path | str) -> list[Path]:
    """Copy the demo scenario and its topology into ``folder`` for the user to edit.

    Writes ``scenario.toml`` (pointing at ``topology.toml`` beside it) and ``topology.toml``;
    ``folder`` is created if needed.

    Returns
    -------
    list of Path
        The two files written.

    Raises
    ------
    InputError
        Either file exists already (nothing is overwritten), or ``folder`` cannot be written.
    """
    out = Path(folder)
    targets = [out / name for name in STARTER_FILES]
    for target in targets:
        if target.exists():
            raise InputError(target, "starter", "already exists; nothing was overwritten (pick another folder)")
    scenario = bundled_scenario("demo").read_text(encoding="utf-8")
    if _DEMO_TOPOLOGY_LINE not in scenario:  # the demo changed: keep this copy in step with it
        raise FileNotFoundError(f"{bundled_scenario('demo')}: no line {_DEMO_TOPOLOGY_LINE!r}")
    scenario = _STARTER_HEADER + scenario.replace(_DEMO_TOPOLOGY_LINE, f'topology = "{STARTER_FILES[1]}"', 1)
    topology = bundled_topology("demo-metro.toml").read_text(encoding="utf-8")
    try:
        out.mkdir(parents=True, exist_ok=True)
        for target, text in zip(targets, (scenario, topology)):
            with open(target, "x", encoding="utf-8", newline="\n") as fh:  # "x": never overwrite
                fh.write(text)
    except FileExistsError as exc:
        raise InputError(exc.filename, "starter", "already exists; nothing was overwritten") from None
    except OSError as exc:
        raise InputError(out, "starter", f"cannot write here ({exc.strerror})") from None
    return targets
