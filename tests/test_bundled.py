"""The bundled data found as package data, and the starter copied out of it."""

from __future__ import annotations

from pathlib import Path

import pytest

from sdmnet.cli import main
from sdmnet.errors import InputError
from sdmnet.inputs.bundled import STARTER_FILES, bundled_scenario, bundled_topology, copy_starter, data_dir
from sdmnet.inputs.loaders import load_scenario

ROOT = Path(__file__).resolve().parent.parent


def test_bundled_files_sit_in_the_package_and_the_repository_links_to_them() -> None:
    assert data_dir().parent.name == "sdmnet"
    assert bundled_scenario("demo").is_file() and bundled_topology("demo-metro.toml").is_file()
    assert (ROOT / "scenarios" / "demo.toml").resolve() == bundled_scenario("demo").resolve()


def test_the_starter_is_the_demo_with_its_topology_beside_it(tmp_path: Path) -> None:
    scenario_path, topology_path = copy_starter(tmp_path / "mine")
    assert [p.name for p in (scenario_path, topology_path)] == list(STARTER_FILES)
    mine, demo = load_scenario(scenario_path), load_scenario(bundled_scenario("demo"))
    assert mine.topology.source == topology_path
    assert mine.topology.sites == demo.topology.sites and mine.topology.cables == demo.topology.cables
    assert mine.architectures == demo.architectures and mine.traffic == demo.traffic
    assert topology_path.read_bytes() == bundled_topology("demo-metro.toml").read_bytes()


def test_the_starter_overwrites_nothing(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    (tmp_path / "topology.toml").write_text("mine")
    with pytest.raises(InputError, match="already exists"):
        copy_starter(tmp_path)
    assert (tmp_path / "topology.toml").read_text() == "mine"
    assert not (tmp_path / "scenario.toml").exists(), "neither file written when one is in the way"
    assert main(["starter", str(tmp_path)]) == 2
    assert capsys.readouterr().err == (
        f"error: {tmp_path / 'topology.toml'}: starter: already exists; nothing was overwritten (pick another folder)\n"
    )


def test_the_starter_verb_writes_files_that_check_passes(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    assert main(["starter", str(tmp_path / "new")]) == 0
    assert main(["check", str(tmp_path / "new" / "scenario.toml")]) == 0
    assert "topology 'demo-metro'" in capsys.readouterr().out
