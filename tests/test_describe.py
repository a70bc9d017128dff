"""Tests of sdmnet.inputs.describe: the summary names everything the fixture files hold.

Expected units are worked out by hand from the switching table of docs/model.md, section 2
(unit = g cores x 1 channel, capacity g x lane rate, ports per fiber = cores / g; fiber
switching moves the whole fiber: cores x channels lanes).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from sdmnet.inputs.describe import describe, fiber_pair_km
from sdmnet.inputs.loaders import load_scenario, load_topology

FIXTURES = Path(__file__).resolve().parent / "fixtures"


def line_with(text: str, *words: str) -> str:
    """The one line of ``text`` holding every word of ``words``."""
    found = [line for line in text.splitlines() if all(word in line for word in words)]
    assert len(found) == 1, f"{len(found)} lines hold {words}:\n{text}"
    return found[0]


@pytest.mark.parametrize("name", ["small.toml", "small.graphml"])
def test_topology_summary_names_every_site_cable_and_fiber_type(name: str) -> None:
    topology = load_topology(FIXTURES / name)
    text = describe(topology)
    assert text.startswith("topology 'small'")
    assert "sites: 4 (3 datacenters, 1 hub)" in text
    for site_id, role in (("A", "datacenter"), ("B", "datacenter"), ("C", "datacenter"), ("H", "hub")):
        line_with(text, f"{role} ", f" {site_id} ")
    assert "traffic weight 2" in line_with(text, "datacenter", " A ")
    assert "traffic weight 0.5" in line_with(text, "datacenter", " C ")
    # Cables as written in small.toml: key, length, fiber type, fiber pairs.
    for key, length, fiber_type, pairs in (
        ("A-H", "22.5 km", "mcf4", "2 fiber pairs"),
        ("H-B", "22.5 km", "mcf4", "1 fiber pair"),
        ("H-C", "25 km", "ccf4", "1 fiber pair"),
        ("A-B", "41 km", "mcf4", "1 fiber pair"),
    ):
        line_with(text, f"{key} ", length, fiber_type, pairs)
    assert "4 cores weakly coupled" in line_with(text, "mcf4:")
    assert "crosstalk -50 dB" in line_with(text, "mcf4:")
    assert "randomly coupled in groups of 4" in line_with(text, "ccf4:")
    # 22.5 + 22.5 + 25 + 41 = 111 km of route; 2 x 22.5 + 22.5 + 25 + 41 = 133.5 fiber-pair-km.
    assert "cables: 4, 111 km of route" in text
    assert "133.5 fiber-pair-km = 267 fiber-km" in text


def test_fiber_pair_km_by_hand() -> None:
    # 2 x 22.5 + 22.5 + 25 + 41 = 133.5
    assert fiber_pair_km(load_topology(FIXTURES / "small.toml")) == pytest.approx(133.5)


def test_scenario_summary_names_each_architecture_and_its_unit() -> None:
    scenario = load_scenario(FIXTURES / "scenario.toml")
    text = describe(scenario)
    assert text.startswith("scenario 'small-scenario'")
    assert "seed 7" in text.splitlines()[0]
    for site_id in ("A", "B", "C", "H"):
        line_with(text, f" {site_id} ", "at (")
    for key in ("A-H", "H-B", "H-C", "A-B"):
        line_with(text, f"{key} ", " km ")
    for fiber_type in ("mcf4", "ccf4"):
        line_with(text, f"{fiber_type}:", "channels per core")

    for name, switching in (
        ("per-core", "fractional-joint"),
        ("joint", "joint"),
        ("per-core-weak", "independent"),
        ("fiber", "fiber"),
    ):
        line_with(text, f"{name}: switching {switching}")

    # Lane rate 400 Gb/s, 4 cores x 80 channels on both fiber types (scenario.toml, small.toml).
    lines = text.splitlines()

    def units_of(arch: str) -> list[str]:
        start = next(i for i, line in enumerate(lines) if line.strip().startswith(f"{arch}: switching"))
        following = []
        for line in lines[start + 1 :]:
            if not line.strip().startswith("on "):
                break
            following.append(line.strip())
        return following

    # fractional-joint, group 4 of 4 cores: 4 x 400 = 1600 Gb/s, 80 units, 4 / 4 = 1 port per fiber.
    assert units_of("per-core") == [
        f"on {t}: unit = 4 cores x 1 channel, 1600 Gb/s, 80 units per fiber, 1 switch port per fiber"
        for t in ("mcf4", "ccf4")
    ]
    # joint: all 4 cores x 1 channel, one port per fiber.
    assert units_of("joint") == [
        f"on {t}: unit = 4 cores x 1 channel, 1600 Gb/s, 80 units per fiber, 1 switch port per fiber"
        for t in ("mcf4", "ccf4")
    ]
    # independent, every cable as mcf4: 1 core x 1 channel = 400 Gb/s, 4 x 80 = 320 units, 4 ports.
    assert units_of("per-core-weak") == [
        "on mcf4: unit = 1 core x 1 channel, 400 Gb/s, 320 units per fiber, 4 switch ports per fiber"
    ]
    # fiber: the whole fiber, 4 x 80 x 400 = 128000 Gb/s, one port (a fiber cross-connect).
    assert units_of("fiber") == [
        f"on {t}: unit = whole fiber, 128000 Gb/s, 1 unit per fiber, 1 switch port per fiber" for t in ("mcf4", "ccf4")
    ]


def test_scenario_summary_shows_traffic_plan_and_forecast() -> None:
    text = describe(load_scenario(FIXTURES / "scenario.toml"))
    assert "load points (2): 10, 20.5 Erlang" in text
    # Mean size 0.5 x 100 + 0.25 x 400 + 0.25 x 1600 = 550 Gb/s.
    assert "(mean 550 Gb/s)" in text
    for pair, weight in (("A-B", "3"), ("A-C", "1"), ("B-C", "0.5")):
        assert f"{pair}: weight {weight}" in text
    assert "plan: target blocking 0.01" in text
    assert "forecast: 3 years, given factors; load factors 1.2, 1.5, 2" in text


def test_describe_refuses_other_objects() -> None:
    with pytest.raises(TypeError):
        describe("small.toml")  # type: ignore[arg-type]
