"""Write a TOML topology as GraphML with the same attribute names.

Usage::

    python tools/make_graphml.py                       # topologies/nsfnet.toml -> .graphml
    python tools/make_graphml.py IN.toml [OUT.graphml]

The GraphML holds the graph attribute ``name``, one graph attribute ``fiber_types.NAME.FIELD``
per fiber-type figure, node data ``role``, ``traffic_weight``, ``x_km``, ``y_km`` (the node id
is the site id) and edge data ``length_km``, ``fiber_type``, ``fiber_pairs``.  Edges keep the
order and the ``a``/``b`` orientation of the TOML cables, because cable order and the cable
name ``a-b`` show in every report.

Standalone on purpose: it reads the TOML with :mod:`tomllib` and writes with networkx, and
does not import sdmnet.
"""

from __future__ import annotations

import io
import sys
import xml.etree.ElementTree as ET
from pathlib import Path
from typing import Any

import networkx as nx
import tomllib

GRAPHML_NS = "http://graphml.graphdrawing.org/xmlns"
SITE_FIELDS = ("role", "traffic_weight", "x_km", "y_km")
CABLE_FIELDS = ("length_km", "fiber_type", "fiber_pairs")


def graph_from_toml(data: dict[str, Any]) -> nx.Graph:
    """A networkx graph holding a parsed TOML topology under the GraphML attribute names.

    Parameters
    ----------
    data : dict
        The topology file as :func:`tomllib.load` returns it.

    Returns
    -------
    networkx.Graph
        Graph data ``name`` and ``fiber_types.NAME.FIELD``; a node per site, an edge per cable.
    """
    graph = nx.Graph()
    graph.graph["name"] = data["name"]
    for type_name, figures in data["fiber_types"].items():
        for field, value in figures.items():
            graph.graph[f"fiber_types.{type_name}.{field}"] = value
    for site in data["sites"]:
        graph.add_node(site["id"], **{k: site[k] for k in SITE_FIELDS if k in site})
    for cable in data["cables"]:
        graph.add_edge(cable["a"], cable["b"], **{k: cable[k] for k in CABLE_FIELDS})
    return graph


def graphml_text(data: dict[str, Any]) -> str:
    """GraphML text of a parsed TOML topology, edges in TOML cable order and orientation."""
    buffer = io.BytesIO()
    nx.write_graphml(graph_from_toml(data), buffer, named_key_ids=True)
    ET.register_namespace("", GRAPHML_NS)
    root = ET.fromstring(buffer.getvalue())
    graph_element = root.find(f"{{{GRAPHML_NS}}}graph")
    assert graph_element is not None
    edges = {frozenset((e.get("source"), e.get("target"))): e for e in graph_element.findall(f"{{{GRAPHML_NS}}}edge")}
    # networkx writes edges grouped by node; put them back in file order, with a as source.
    for edge in edges.values():
        graph_element.remove(edge)
    for cable in data["cables"]:
        edge = edges[frozenset((cable["a"], cable["b"]))]
        edge.set("source", cable["a"])
        edge.set("target", cable["b"])
        graph_element.append(edge)
    ET.indent(root)
    return '<?xml version="1.0" encoding="utf-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"


def main(argv: list[str]) -> int:
    """Convert ``argv[0]`` (default: the bundled nsfnet.toml) to ``argv[1]``."""
    here = Path(__file__).resolve().parent.parent / "sdmnet" / "data" / "topologies"
    source = Path(argv[0]) if argv else here / "nsfnet.toml"
    target = Path(argv[1]) if len(argv) > 1 else source.with_suffix(".graphml")
    with source.open("rb") as handle:
        data = tomllib.load(handle)
    target.write_text(graphml_text(data), encoding="utf-8")
    print(f"wrote {target}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
