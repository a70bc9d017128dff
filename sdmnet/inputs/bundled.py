"""The scenarios and topologies that ship inside the package (``sdmnet/data``).

They are package data, found through :mod:`importlib.resources`, so ``sdmnet demo`` works from
any folder after a plain ``pip install``; in a repository checkout ``scenarios/`` and
``topologies/`` at the top are links to the same files.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

__all__ = ["data_dir", "bundled_scenario", "bundled_topology"]


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
