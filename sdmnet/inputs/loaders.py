"""Read topologies (TOML or GraphML) and scenarios (TOML plus an optional CSV matrix).

Every problem with a file raises :class:`~sdmnet.errors.InputError` whose text is
``FILE: WHERE: what``.  ``WHERE`` is a key path into the file:

- ``cables[3].length_km``: a value (array indices count from 0, in file order);
- ``cables[3]``: a table, for unknown or missing keys (``top level`` for the root);
- ``node[A].role`` / ``edge[A,B].length_km``: GraphML nodes and edges, by site id;
- ``line 4, column 7`` for TOML syntax, ``line 4`` for a CSV row.

Choices this module makes (the file contract is in docs/model.md, section 5):

- ``coupled_group`` defaults to 1 for weak coupling (and must be 1 there: weakly coupled
  cores are isolated) and to ``cores`` for random coupling (the whole fiber is one coupled
  group); it must divide ``cores``.
- ``fiber_pairs`` must be >= 1: a cable without fiber is left out of the file instead.
- Site ids must not contain ``-``, which joins ids in cable keys (``a-b``) and path labels.
- ``name`` defaults to the file stem; ``seed`` defaults to 1.
- An integer is accepted where a number is expected; a boolean is never a number.
- GraphML attribute values declared as strings are converted when a number or boolean is
  expected (graph editors often write every attribute as a string); TOML is taken as typed.
- ``group`` is refused on an architecture whose switching is not ``fractional-joint``.
- Integers must fit in 64 bits (the engine counts in numpy int64).
- Sizes and counts have upper bounds far above any real network (:data:`MAX`, listed with the
  reason for each in docs/model.md, section 7), so that no file can make a run exhaust the
  machine; a file is read only up to :data:`MAX_FILE_BYTES`.
- Columns in positions count from 1 (TOML and XML alike); control characters in keys and
  values are escaped so that every error stays on one line.
- A missing or unreadable file named by a scenario (``topology``, ``traffic.matrix``) is
  blamed on the scenario's key; a problem inside that file is blamed on that file.

Keys of fiber types, the transceiver, run, plan, forecast and architectures are driven by
:func:`dataclasses.fields` of the model classes, so a field added to the model is read with no
change here (type from its annotation, required when it has no default).
"""

from __future__ import annotations

import csv
import difflib
import io
import math
import re
import types
import typing
import warnings
from collections.abc import Callable, Iterable, Mapping
from dataclasses import MISSING, dataclass, fields
from pathlib import Path
from typing import Any, Literal, NoReturn, get_args, get_origin, get_type_hints

from ..equipment.catalogue import ITEM_NAMES
from ..errors import ConfigurationError, InputError
from ..network.architectures import why_not_allowed
from ..network.routing import datacenter_pairs
from .model import (
    Architecture,
    Cable,
    FiberType,
    ForecastSpec,
    LineSpec,
    PlanSpec,
    RunSpec,
    Scenario,
    Site,
    Topology,
    TrafficSpec,
    TransceiverClass,
    TransceiverSpec,
)

try:  # Python 3.11+
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10 with the tomli backport
    import tomli as tomllib  # type: ignore[no-redef]

__all__ = ["load_topology", "load_scenario", "load_any", "overridable_keys", "COMMAND_LINE"]

#: The ``file`` of an error caused by an override (a command-line option).
COMMAND_LINE = "<command line>"

GRAPHML_SUFFIXES = (".graphml", ".xml")
TOP = "top level"

TOPOLOGY_KEYS = ("name", "fiber_types", "sites", "cables")
SCENARIO_KEYS = (
    "name",
    "topology",
    "seed",
    "traffic",
    "transceiver",
    "run",
    "architectures",
    "plan",
    "forecast",
    "line",
    "transceivers",
    "costs",
    "power",
)
TRAFFIC_KEYS = ("pattern", "load_erlang", "mean_holding", "sizes_gbps", "matrix")
UNIT_COST_KEYS = ("fiber_pair_km", "transceiver_lane", "switch_port")
SIZE_PROBABILITY_TOLERANCE = 1e-6

#: Upper bounds of what a file may ask for, with the reason each gives in its error message.
#: Each lies far above any real network, and low enough that no single value can exhaust the
#: machine (combinations are left to the memory estimate of :mod:`sdmnet.sim.memory`).  Figures
#: recalled without a source say so.  docs/model.md, section 7, lists them.
MAX: dict[str, tuple[float, str]] = {
    "fiber_pairs": (10_000, "the largest cables hold a few thousand fibers (from memory)"),
    "cores": (256, "multicore fibers hold tens of cores (from memory)"),
    "channels": (4_096, "a C+L grid holds a few hundred channels (from memory)"),
    "group": (256, "no fiber has more cores"),
    "sites": (1_000, "far more sites than any real network plans at once"),
    "cables": (5_000, "far more cables than any real network plans at once"),
    "fiber_types": (100, "far more fiber types than any study compares"),
    "architectures": (100, "far more architectures than any study compares"),
    "transceivers": (100, "far more transceiver classes than any study compares"),
    "load_points": (1_000, "far more load points than a curve needs"),
    "size_classes": (100, "far more demand sizes than any traffic model uses"),
    "size_gbps": (1e6, "1 Pb/s, far above any single demand"),
    "load_erlang": (1e7, "ten million demands in progress at once, far above any network"),
    "lane_gbps": (1e5, "100 Tb/s, far above any transceiver lane"),
    "requests": (10**9, "an hour of simulation per replication or more"),
    "warmup": (10**9, "an hour of simulation per replication or more"),
    "replications": (10_000, "intervals narrow with the square root: more replications add little"),
    "k_paths": (100, "far more candidate routes than any demand needs"),
    "years": (100, "every forecast year is a full dimensioning run"),
    "text": (4_096, "no file path needs more characters"),
    "name": (64, "names label every table and figure"),
}
#: Smallest lane rate (Gb/s): with it, a demand needs at most size_gbps / 1 units.
MIN_LANE_GBPS = 1.0
#: Smallest load (Erlang).
MIN_LOAD_ERLANG = 1e-6
#: Range of the mean holding time (it sets the time unit): with loads in range, the arrival
#: rate stays within 1e-12..1e13 per time unit, and arrival times stay finite.
HOLDING_RANGE = (1e-6, 1e6)
#: Largest magnitude of any number read (the fields below have tighter bounds): sums and
#: products of a few such numbers stay finite.
MAX_MAGNITUDE = 1e12
MAGNITUDE_WHY = "no figure of a network needs more"
# Physical bounds: far outside any real component, tight enough that lengths over spacings,
# spreads times symbol rates and dB sums stay finite numbers.
_EARTH = "twice around the Earth"
_DB = "no component comes near"
_XT = "crosstalk below -200 dB is no crosstalk"
_AREA = "cores have tens to a hundred and fifty square micrometres (from memory)"
#: Largest file read (bytes): a topology of the largest allowed size takes a few MB.
MAX_FILE_BYTES = 64 * 2**20
# Kept for callers of the old name.
MAX_FORECAST_YEARS = int(MAX["years"][0])


# ----------------------------------------------------------------------------------------------
# Where the errors go


@dataclass(frozen=True)
class _Doc:
    """The file being read: names it in errors, and says how strictly values are typed."""

    file: str
    strings_convert: bool = False  # GraphML: "12.5" may stand for a number

    def fail(self, where: str, what: str, *, kind: type[InputError] = InputError) -> NoReturn:
        raise _error(kind, self.file, where, what)


def _one_line(text: str) -> str:
    """``text`` with control characters escaped: the CLI prints each error on one line."""
    return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)


def _error(kind: type[InputError], file: str, where: str, what: str) -> InputError:
    """An error of class ``kind`` whose key path and message are single lines."""
    return kind(file, _one_line(where), _one_line(what))


def _at(where: str, key: str) -> str:
    """Key path ``where.key`` (``key`` alone at the top level)."""
    return key if where in ("", TOP) else f"{where}.{key}"


def _did_you_mean(word: str, known: Iterable[str]) -> str:
    """`` (did you mean 'x'?)`` for the nearest known word, or ``""`` if none is near."""
    close = difflib.get_close_matches(word, list(known), n=1)
    return f" (did you mean '{close[0]}'?)" if close else ""


def _suggest(word: str, known: Iterable[str]) -> str:
    """:func:`_did_you_mean`, or `` (known: ...)`` if no known word is near."""
    known = list(known)
    hint = _did_you_mean(word, known)
    if hint or not known:
        return hint
    return f" (known: {', '.join(known)})"


def _shorten(text: str, limit: int = 40) -> str:
    """``text`` cut to ``limit`` characters with ``...``, so a huge value cannot flood a message."""
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _number(value: float) -> str:
    """A number as a user would write it: ``0`` for 0.0, ``2.5``, ``inf``, ``1e-09``."""
    if isinstance(value, float) and value.is_integer() and abs(value) < 1e16:
        return str(int(value))
    return _shorten(repr(value))


def _show(value: Any) -> str:
    """A value as a user wrote it, with its kind, for 'got ...' messages."""
    if isinstance(value, bool):
        return f"boolean {str(value).lower()}"
    if isinstance(value, str):
        return f"string '{_shorten(value)}'"
    if isinstance(value, int):
        return f"integer {_shorten(str(value))}"
    if isinstance(value, float):
        return f"number {_shorten(repr(value))}"
    if isinstance(value, Mapping):
        return "a table"
    if isinstance(value, list | tuple):
        return "a list"
    return f"{type(value).__name__} {value}"


def _check_keys(doc: _Doc, where: str, table: Mapping[str, Any], known: Iterable[str]) -> None:
    """Refuse keys of ``table`` that are not in ``known``, suggesting the nearest one."""
    known = list(known)
    for key in table:
        if key not in known:
            doc.fail(where, f"unknown key '{key}'{_suggest(key, known)}")


def _table(doc: _Doc, where: str, value: Any) -> Mapping[str, Any]:
    if not isinstance(value, Mapping):
        doc.fail(where, f"expected a table, got {_show(value)}")
    return value


def _list_of_tables(doc: _Doc, where: str, value: Any) -> list[Mapping[str, Any]]:
    if not isinstance(value, list):
        doc.fail(where, f"expected an array of tables ([[{where}]]), got {_show(value)}")
    for i, item in enumerate(value):
        _table(doc, f"{where}[{i}]", item)
    return value


# ----------------------------------------------------------------------------------------------
# Values: conversion by type annotation, then limits by field


def _as_bool(doc: _Doc, where: str, value: Any) -> bool:
    if isinstance(value, bool):
        return value
    if doc.strings_convert and isinstance(value, str) and value.strip().lower() in ("true", "false"):
        return value.strip().lower() == "true"
    doc.fail(where, f"expected true or false, got {_show(value)}")


# Integers must fit in 64 bits: the engine keeps counts and seeds in numpy int64 arrays.
INT_LIMIT = 2**63 - 1


def _as_int(doc: _Doc, where: str, value: Any) -> int:
    raw = value
    if doc.strings_convert and isinstance(value, str) and re.fullmatch(r"\s*[+-]?[0-9]+\s*", value):
        if len(value.strip().lstrip("+-")) > 19:
            doc.fail(where, f"integer too large, got {_show(raw)}")
        value = int(value)
    if isinstance(value, int) and not isinstance(value, bool):
        if abs(value) > INT_LIMIT:
            doc.fail(where, f"integer too large, got {_show(raw)}")
        return value
    if isinstance(value, float) and value.is_integer():
        doc.fail(where, f"expected an integer, got {_show(value)} (write it without a decimal point)")
    doc.fail(where, f"expected an integer, got {_show(value)}")


def _as_float(doc: _Doc, where: str, value: Any) -> float:
    raw = value
    if doc.strings_convert and isinstance(value, str):
        try:
            value = float(value)
        except ValueError:
            doc.fail(where, f"expected a number, got {_show(raw)}")
    if isinstance(value, bool) or not isinstance(value, int | float):
        doc.fail(where, f"expected a number, got {_show(raw)}")
    try:
        number = float(value)
    except OverflowError:
        doc.fail(where, f"number too large, got {_show(raw)}")
    if not math.isfinite(number):
        doc.fail(where, f"expected a finite number, got {_show(raw)}")
    if abs(number) > MAX_MAGNITUDE:
        doc.fail(where, f"must be between -{MAX_MAGNITUDE:g} and {MAX_MAGNITUDE:g}, got {_show(raw)}: {MAGNITUDE_WHY}")
    return number


def _as_str(doc: _Doc, where: str, value: Any) -> str:
    if not isinstance(value, str):
        doc.fail(where, f"expected a string, got {_show(value)}")
    _count_within(doc, where, len(value), "text", "characters")
    return value


def _as_choice(doc: _Doc, where: str, value: Any, choices: tuple[str, ...]) -> str:
    text = _as_str(doc, where, value)
    if text not in choices:
        options = ", ".join(f"'{c}'" for c in choices)
        doc.fail(where, f"must be one of {options}, got '{text}'{_did_you_mean(text, choices)}")
    return text


def _int_or_word(doc: _Doc, where: str, value: Any, words: tuple[str, ...]) -> int | str:
    """A whole number, or one of ``words`` (``warmup = 2000`` or ``warmup = "auto"``)."""
    if isinstance(value, str) and value.strip() in words:
        return value.strip()
    numeric = isinstance(value, int) and not isinstance(value, bool)
    if doc.strings_convert and isinstance(value, str) and re.fullmatch(r"\s*[+-]?[0-9]+\s*", value):
        numeric = True
    if numeric:
        return _as_int(doc, where, value)
    choices = " or ".join(f"'{w}'" for w in words)
    hint = _did_you_mean(value, words) if isinstance(value, str) else ""
    doc.fail(where, f"expected a whole number or {choices}, got {_show(value)}{hint}")


def _convert(doc: _Doc, where: str, value: Any, hint: Any) -> Any:
    """Check ``value`` against the type annotation ``hint`` and return it in that type."""
    origin = get_origin(hint)
    if origin in (typing.Union, types.UnionType):
        # TOML has no null, so "X | None" reads as X (None is only the default).
        options = [a for a in get_args(hint) if a is not type(None)]
        if len(options) == 1:
            return _convert(doc, where, value, options[0])
        words = tuple(str(w) for a in options if get_origin(a) is Literal for w in get_args(a))
        if options == [int, *[a for a in options if get_origin(a) is Literal]] and words:
            return _int_or_word(doc, where, value, words)
        doc.fail(where, "unsupported value type")  # pragma: no cover - no such field in the model
    if origin is Literal:
        return _as_choice(doc, where, value, tuple(str(a) for a in get_args(hint)))
    if origin is tuple:
        args = get_args(hint)
        if len(args) == 2 and args[1] is Ellipsis:
            if not isinstance(value, list):
                doc.fail(where, f"expected a list, got {_show(value)}")
            return tuple(_convert(doc, f"{where}[{i}]", v, args[0]) for i, v in enumerate(value))
    if origin is dict:
        key_type, value_type = get_args(hint)
        table = _table(doc, where, value)
        return {str(k): _convert(doc, _at(where, str(k)), v, value_type) for k, v in table.items()}
    if hint is bool:
        return _as_bool(doc, where, value)
    if hint is int:
        return _as_int(doc, where, value)
    if hint is float:
        return _as_float(doc, where, value)
    if hint is str:
        return _as_str(doc, where, value)
    doc.fail(where, "unsupported value type")  # pragma: no cover - no such field in the model


Limit = Callable[[Any], "str | None"]


def _greater(bound: float) -> Limit:
    return lambda v: None if v > bound else f"must be > {bound:g}, got {_number(v)}"


def _at_least(bound: float, why: str = "") -> Limit:
    reason = f": {why}" if why else ""
    return lambda v: None if v >= bound else f"must be >= {bound:g}, got {_number(v)}{reason}"


def _at_most(bound: float, why: str = "") -> Limit:
    reason = f": {why}" if why else ""
    return lambda v: None if v <= bound else f"must be <= {bound:g}, got {_number(v)}{reason}"


def _below(bound: float) -> Limit:
    return lambda v: None if v < bound else f"must be < {bound:g}, got {_number(v)}"


def _up_to(what: str) -> Limit:
    """At most ``MAX[what]``, saying why in the message."""
    bound, why = MAX[what]
    return lambda v: None if v <= bound else f"must be <= {_number(bound)}, got {_number(v)}: {why}"


def _all_of(*limits: Limit) -> Limit:
    def check(value: Any) -> str | None:
        for limit in limits:
            problem = limit(value)
            if problem:
                return problem
        return None

    return check


def _count_within(doc: _Doc, where: str, count: int, what: str, unit: str) -> None:
    """Refuse ``count`` items (of ``MAX[what]``) beyond the bound."""
    bound, why = MAX[what]
    if count > bound:
        doc.fail(where, f"{count} {unit}, more than the {_number(bound)} allowed: {why}")


def _name_length(v: str) -> str | None:
    bound, why = MAX["name"]
    return None if len(v) <= bound else f"{len(v)} characters, more than the {bound} allowed: {why}"


def _inside_unit(v: float) -> str | None:
    return None if 0 < v < 1 else f"must be between 0 and 1 (exclusive), got {_number(v)}"


def _each(limit: Limit) -> Limit:
    def check(values: Any) -> str | None:
        items = values.values() if isinstance(values, Mapping) else values
        for item in items:
            problem = limit(item)
            if problem:
                return problem
        return None

    return check


# Limits per (class, field).  A field not listed here (say one added to TransceiverSpec later)
# is checked for its type and, for numbers, finiteness only.
LIMITS: dict[tuple[type, str], Limit] = {
    (FiberType, "cores"): _all_of(_at_least(1), _up_to("cores")),
    (FiberType, "coupled_group"): _all_of(_at_least(1), _up_to("cores")),
    (FiberType, "channels"): _all_of(_at_least(1), _up_to("channels")),
    (FiberType, "attenuation_db_per_km"): _all_of(
        _at_least(0), _at_least(0.01, "no fiber is lossless: the best lose about 0.15 dB/km (from memory)"),
        _at_most(100, _DB),
    ),
    (FiberType, "gd_spread_ps_per_sqrt_km"): _all_of(_at_least(0), _at_most(1e4, "no fiber comes near")),
    (FiberType, "dgd_ps_per_km"): _all_of(_at_least(0), _at_most(1e4, "no fiber comes near")),
    (FiberType, "crosstalk_db_per_km"): _all_of(_below(0), _at_least(-200, _XT)),
    (FiberType, "mdl_db_per_sqrt_km"): _all_of(_at_least(0), _at_most(100, _DB)),
    (FiberType, "effective_area_um2"): _all_of(
        _greater(0), _at_least(1, _AREA), _at_most(1e4, _AREA)
    ),
    (FiberType, "dispersion_ps_per_nm_km"): _all_of(
        _at_least(0),
        _at_least(0.1, "the closed-form nonlinear model needs dispersion (dispersion-shifted fiber is outside it)"),
        _at_most(1e3, "no fiber comes near"),
    ),
    (FiberType, "cladding_um"): _greater(0),
    (FiberType, "group_crosstalk_db_per_km"): _all_of(_below(0), _at_least(-200, _XT)),
    (Site, "id"): _name_length,
    (Cable, "risk_group"): _name_length,
    (Architecture, "name"): _name_length,
    (TransceiverClass, "name"): _name_length,
    (Site, "traffic_weight"): _at_least(0),
    (Site, "x_km"): _all_of(_at_least(-1e5, _EARTH), _at_most(1e5, _EARTH)),
    (Site, "y_km"): _all_of(_at_least(-1e5, _EARTH), _at_most(1e5, _EARTH)),
    (Cable, "length_km"): _all_of(
        _greater(0), _at_least(1e-3, "a cable is at least a metre long"), _at_most(1e5, _EARTH)
    ),
    (Cable, "fiber_pairs"): _all_of(_at_least(1), _up_to("fiber_pairs")),
    (TransceiverSpec, "lane_gbps"): _all_of(_greater(0), _at_least(MIN_LANE_GBPS), _up_to("lane_gbps")),
    (TransceiverSpec, "symbol_rate_gbaud"): _all_of(
        _greater(0), _at_least(1, "no coherent transceiver is that slow"), _at_most(1e4, "no transceiver comes near")
    ),
    (TransceiverSpec, "samples_per_symbol"): _all_of(_greater(0), _at_most(100, "DSPs take one or two")),
    (TransceiverSpec, "reach_km"): _greater(0),
    (TransceiverSpec, "power_budget_db"): _greater(0),
    (TransceiverSpec, "max_mimo_taps"): _at_least(1),
    (TransceiverSpec, "crosstalk_limit_db"): _all_of(_below(0), _at_least(-200, _XT)),
    (TransceiverSpec, "mdl_limit_db"): _at_least(0),
    (TransceiverSpec, "module_power_w"): _at_least(0),
    (TransceiverSpec, "mimo_pj_per_cmul"): _at_least(0),
    (TransceiverSpec, "switch_insertion_loss_db"): _at_least(0),
    (TransceiverSpec, "connector_loss_db"): _at_least(0),
    (TransceiverSpec, "splice_loss_db"): _at_least(0),
    (TransceiverSpec, "splice_spacing_km"): _all_of(_greater(0), _at_least(0.1, "cable sections are kilometres long")),
    (TransceiverSpec, "mimo_base_taps"): _at_least(0),
    (TransceiverSpec, "tap_margin"): _all_of(_greater(0), _at_most(100, "a few spreads is the practice")),
    (TransceiverSpec, "overflow"): _inside_unit,
    (RunSpec, "requests"): _all_of(_at_least(1), _up_to("requests")),
    (RunSpec, "warmup"): lambda v: None if isinstance(v, str) else _all_of(_at_least(0), _up_to("warmup"))(v),
    (RunSpec, "precision"): _inside_unit,
    (RunSpec, "max_replications"): _all_of(_at_least(2), _up_to("replications")),
    (RunSpec, "replications"): _all_of(_at_least(1), _up_to("replications")),
    (RunSpec, "k_paths"): _all_of(_at_least(1), _up_to("k_paths")),
    (RunSpec, "confidence"): _inside_unit,
    (Architecture, "group"): _all_of(_at_least(1), _up_to("group")),
    (PlanSpec, "target_blocking"): _inside_unit,
    (PlanSpec, "max_fiber_pairs"): _all_of(_at_least(1), _up_to("fiber_pairs")),
    (PlanSpec, "unit_costs"): _each(_at_least(0)),
    (PlanSpec, "confidence"): _inside_unit,
    (PlanSpec, "pair_target"): _inside_unit,
    (PlanSpec, "cut_target"): _inside_unit,
    (LineSpec, "span_km"): _all_of(
        _greater(0), _at_least(1, "amplifier spans are tens of kilometres"), _at_most(1e5, _EARTH)
    ),
    (LineSpec, "amplifier_nf_db"): _all_of(_at_least(0), _at_most(100, _DB)),
    (LineSpec, "margin_db"): _at_least(0),
    (LineSpec, "fifo_loss_db"): _at_least(0),
    (LineSpec, "fifo_crosstalk_db"): _all_of(_below(0), _at_least(-200, _XT)),
    (LineSpec, "wss_pass_db"): _at_least(0),
    (LineSpec, "fiber_xc_db"): _at_least(0),
    (LineSpec, "band_ghz"): _greater(0),
    (TransceiverClass, "lane_gbps"): _all_of(_greater(0), _at_least(MIN_LANE_GBPS), _up_to("lane_gbps")),
    (TransceiverClass, "symbol_rate_gbaud"): _all_of(
        _greater(0), _at_least(1, "no coherent transceiver is that slow"), _at_most(1e4, "no transceiver comes near")
    ),
    (TransceiverClass, "reach_km"): _greater(0),
    (TransceiverClass, "power_w"): _at_least(0),
    (TransceiverClass, "cost"): _at_least(0),
    (ForecastSpec, "years"): _all_of(_at_least(1), _up_to("years")),
    (ForecastSpec, "growth_per_year"): _greater(-1),
    (ForecastSpec, "factors"): _each(_greater(0)),
    (ForecastSpec, "lane_gbps_by_year"): _each(_all_of(_greater(0), _at_least(MIN_LANE_GBPS), _up_to("lane_gbps"))),
    (ForecastSpec, "site_growth"): _each(_greater(-1)),
    (ForecastSpec, "growth_band"): _each(_greater(-1)),
}


def _within(doc: _Doc, where: str, value: Any, limit: Limit | None) -> Any:
    """``value`` once it passes ``limit`` (no limit: any value passes)."""
    problem = limit(value) if limit else None
    if problem:
        doc.fail(where, problem)
    return value


def _read_fields(
    doc: _Doc,
    where: str,
    table: Mapping[str, Any],
    cls: type,
    *,
    exclude: Iterable[str] = (),
    optional: Iterable[str] = (),
    also_known: Iterable[str] = (),
) -> dict[str, Any]:
    """Read the keys of ``table`` as fields of the dataclass ``cls``.

    Unknown keys are refused; each present key is converted by its annotation and checked
    against :data:`LIMITS`; a field with no default that is absent is an error unless it is
    in ``optional``.  Returns only the keys present (the dataclass fills in its defaults).
    ``also_known`` keys are accepted and ignored.
    """
    exclude = set(exclude)
    optional = set(optional)
    specs = [f for f in fields(cls) if f.name not in exclude]
    _check_keys(doc, where, table, [f.name for f in specs] + list(also_known))
    hints = get_type_hints(cls)
    values: dict[str, Any] = {}
    for spec in specs:
        key_where = _at(where, spec.name)
        if spec.name in table:
            value = _convert(doc, key_where, table[spec.name], hints[spec.name])
            values[spec.name] = _within(doc, key_where, value, LIMITS.get((cls, spec.name)))
        elif spec.default is MISSING and spec.default_factory is MISSING and spec.name not in optional:
            doc.fail(where, f"missing required key '{spec.name}'")
    return values


# ----------------------------------------------------------------------------------------------
# Files


def _read_bytes(path: Path, owner: _Doc | None = None, key: str = "file") -> bytes:
    """The bytes of ``path``; a missing file is blamed on ``owner``'s ``key`` when given."""
    doc = owner or _Doc(str(path))
    # Naming the path again only helps when the error is blamed on another file.
    named = f": {path}" if owner else ""
    try:
        if path.is_dir():
            doc.fail(key, f"is a directory, not a file{named}")
        with path.open("rb") as handle:
            data = handle.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        doc.fail(key, f"file not found{named}")
    except OSError as err:
        doc.fail(key, f"cannot read the file{named}: {err.strerror or err}")
    except ValueError:  # a NUL character in the name
        doc.fail(key, f"invalid file name{named}")
    if len(data) > MAX_FILE_BYTES:
        doc.fail(key, f"file larger than {MAX_FILE_BYTES // 2**20} MiB{named}: no input of sdmnet needs that much")
    return data


def _decode(doc: _Doc, data: bytes) -> str:
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        line = data.count(b"\n", 0, err.start) + 1
        doc.fail(f"line {line}", f"not UTF-8 text (byte 0x{data[err.start]:02x}); save the file as UTF-8")


_TOML_POSITION = re.compile(r"^(?P<what>.*) \(at (?:line (?P<line>\d+), column (?P<col>\d+)|end of document)\)$")


def _parse_toml(path: Path, data: bytes) -> dict[str, Any]:
    doc = _Doc(str(path))
    text = _decode(doc, data)
    try:
        return tomllib.loads(text)
    except RecursionError:
        doc.fail("file", "invalid TOML: arrays or tables nested too deeply")
    except tomllib.TOMLDecodeError as err:
        message = str(err)
        match = _TOML_POSITION.match(message)
        if match is None:
            doc.fail("TOML", message)
        what = match["what"]
        what = what[:1].lower() + what[1:]
        where = f"line {match['line']}, column {match['col']}" if match["line"] else "end of file"
        doc.fail(where, f"invalid TOML: {what}")
    except ValueError:  # tomllib lets int()'s refusal of integers over 4300 digits through
        doc.fail("file", "invalid TOML: an integer has too many digits")


def _resolve(doc: _Doc, key: str, base_file: Path, value: str) -> Path:
    """``value`` as a path relative to the directory of ``base_file`` (absolute paths stay)."""
    if not value.strip():
        doc.fail(key, "empty file name")
    try:
        path = Path(value).expanduser()
    except RuntimeError:  # "~user" of an unknown user
        doc.fail(key, f"cannot expand '~' in '{value}'")
    return path if path.is_absolute() else base_file.parent / path


# ----------------------------------------------------------------------------------------------
# Topology


@dataclass
class _RawTopology:
    """A topology file before validation, the same for TOML and GraphML.

    Each entry pairs the key path used in messages with the table read from the file.
    """

    name: Any
    fiber_types: list[tuple[str, str, Mapping[str, Any]]]  # (type name, where, table)
    sites: list[tuple[str, Mapping[str, Any]]]
    cables: list[tuple[str, Mapping[str, Any]]]


def _fiber_type(doc: _Doc, name: str, where: str, table: Mapping[str, Any]) -> FiberType:
    _within(doc, where, name, _name_length)
    values = _read_fields(doc, where, table, FiberType, exclude=("name",), optional=("coupled_group",))
    cores = values["cores"]
    if values["coupling"] == "weak":
        group = values.setdefault("coupled_group", 1)
        if group != 1:
            doc.fail(
                _at(where, "coupled_group"),
                f"must be 1 for weak coupling (weakly coupled cores are isolated), got {group}",
            )
    else:
        group = values.setdefault("coupled_group", cores)
        if cores % group:
            doc.fail(_at(where, "coupled_group"), f"must divide cores ({cores}), got {group}")
    return FiberType(name=name, **values)


def _site(doc: _Doc, where: str, table: Mapping[str, Any]) -> Site:
    values = _read_fields(doc, where, table, Site)
    site_id = values["id"]
    if not site_id.strip():
        doc.fail(_at(where, "id"), "site id is empty")
    if "-" in site_id:
        doc.fail(_at(where, "id"), f"site id '{site_id}' contains '-', which joins site ids in cable and path names")
    if ("x_km" in values) != ("y_km" in values):
        given, absent = ("x_km", "y_km") if "x_km" in values else ("y_km", "x_km")
        doc.fail(where, f"{given} is given without {absent}")
    return Site(**values)


def _build_topology(doc: _Doc, raw: _RawTopology, source: Path) -> Topology:
    name = source.stem if raw.name is None else _within(doc, "name", _as_str(doc, "name", raw.name), _name_length)

    if not raw.fiber_types:
        doc.fail("fiber_types", "no fiber types: define at least one [fiber_types.NAME]")
    _count_within(doc, "fiber_types", len(raw.fiber_types), "fiber_types", "fiber types")
    _count_within(doc, "sites", len(raw.sites), "sites", "sites")
    _count_within(doc, "cables", len(raw.cables), "cables", "cables")
    fiber_types = {n: _fiber_type(doc, n, w, t) for n, w, t in raw.fiber_types}

    sites: list[Site] = []
    first_where: dict[str, str] = {}
    for where, table in raw.sites:
        site = _site(doc, where, table)
        if site.id in first_where:
            doc.fail(_at(where, "id"), f"duplicate site id '{site.id}' (also {first_where[site.id]})")
        first_where[site.id] = where
        sites.append(site)

    cables: list[Cable] = []
    seen: dict[frozenset[str], str] = {}
    for where, table in raw.cables:
        values = _read_fields(doc, where, table, Cable)
        for end in ("a", "b"):
            if values[end] not in first_where:
                doc.fail(_at(where, end), f"unknown site '{values[end]}'{_suggest(values[end], first_where)}")
        if values["a"] == values["b"]:
            doc.fail(_at(where, "b"), f"cable joins site '{values['a']}' to itself")
        if values["fiber_type"] not in fiber_types:
            doc.fail(
                _at(where, "fiber_type"),
                f"unknown fiber type '{values['fiber_type']}'{_suggest(values['fiber_type'], fiber_types)}",
            )
        pair = frozenset((values["a"], values["b"]))
        if pair in seen:
            doc.fail(
                where,
                f"second cable between '{values['a']}' and '{values['b']}' (first is {seen[pair]}); "
                "give one cable more fiber_pairs instead",
            )
        seen[pair] = where
        cables.append(Cable(**values))

    topology = Topology(name=name, fiber_types=fiber_types, sites=tuple(sites), cables=tuple(cables), source=source)
    _check_datacenters_connected(doc, topology)
    return topology


def _check_datacenters_connected(doc: _Doc, topology: Topology) -> None:
    datacenters = topology.datacenters
    if len(datacenters) < 2:
        doc.fail("sites", f"a topology needs at least two datacenter sites, found {len(datacenters)}")
    component = _components(topology)
    for a, b in datacenter_pairs(topology):
        if component[a] != component[b]:
            doc.fail("cables", f"no path between datacenters '{a}' and '{b}'")


def _components(topology: Topology) -> dict[str, int]:
    """The connected component of every site, numbered (a plain search: no networkx import)."""
    neighbours: dict[str, list[str]] = {s.id: [] for s in topology.sites}
    for c in topology.cables:
        neighbours[c.a].append(c.b)
        neighbours[c.b].append(c.a)
    component: dict[str, int] = {}
    for number, start in enumerate(s for s in neighbours if s not in component):
        component[start] = number
        todo = [start]
        while todo:
            for other in neighbours[todo.pop()]:
                if other not in component:
                    component[other] = number
                    todo.append(other)
    return component


def _raw_topology_from_toml(doc: _Doc, data: Mapping[str, Any]) -> _RawTopology:
    _check_keys(doc, TOP, data, TOPOLOGY_KEYS)
    for key in ("fiber_types", "sites", "cables"):
        if key not in data:
            doc.fail(TOP, f"missing required key '{key}'")
    types_table = _table(doc, "fiber_types", data["fiber_types"])
    fiber_types = [
        (n, f"fiber_types.{_shorten(n, 70)}", _table(doc, f"fiber_types.{_shorten(n, 70)}", t))
        for n, t in types_table.items()
    ]
    sites = _list_of_tables(doc, "sites", data["sites"])
    cables = _list_of_tables(doc, "cables", data["cables"])
    return _RawTopology(
        name=data.get("name"),
        fiber_types=fiber_types,
        sites=[(f"sites[{i}]", t) for i, t in enumerate(sites)],
        cables=[(f"cables[{i}]", t) for i, t in enumerate(cables)],
    )


def _local_name(tag: Any) -> str:
    """``edge`` of ``{namespace}edge`` (comments and processing instructions have no str tag)."""
    return tag.rpartition("}")[2] if isinstance(tag, str) else ""


def _raw_topology_from_graphml(doc: _Doc, data: bytes) -> _RawTopology:
    # Parse once ourselves: for the position of XML errors, and for the edge order and
    # orientation of the document (networkx reports edges grouped by node, and cable order and
    # the a/b orientation show in every report).
    import xml.etree.ElementTree as ET  # only GraphML needs an XML parser

    try:
        root = ET.fromstring(data)
    except ET.ParseError as err:
        line, column = err.position
        what = re.sub(r":? line \d+, column \d+$", "", str(err))
        # expat counts columns from 0; TOML and editors count from 1.
        doc.fail(f"line {line}, column {column + 1}", f"invalid XML: {what}")
    except (LookupError, ValueError) as err:  # an unknown or unsupported encoding declaration
        doc.fail("line 1", f"invalid XML: {err}")
    document_edges: list[tuple[str, str]] = []
    for element in root.iter():
        if _local_name(element.tag) == "edge":
            source, target = element.get("source"), element.get("target")
            if source is None or target is None:
                doc.fail(f"edge[{source},{target}]", "an edge lacks its source or target")
            document_edges.append((source, target))
    import networkx as nx  # only GraphML needs it; it is slow to import

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # unsupported yFiles ports and untyped keys
            graph = nx.read_graphml(io.BytesIO(data), force_multigraph=True)
    except Exception as err:  # noqa: BLE001 - networkx raises many kinds on bad GraphML
        # networkx raises KeyError for a key type or domain it does not know.
        detail = f"unsupported value {err}" if isinstance(err, KeyError) else str(err) or type(err).__name__
        doc.fail("graphml", f"not readable as GraphML: {_shorten(detail, 200)}")

    graph_data = dict(graph.graph)
    node_default = graph_data.pop("node_default", {}) or {}
    edge_default = graph_data.pop("edge_default", {}) or {}
    name = graph_data.pop("name", None)
    tables: dict[str, dict[str, Any]] = {}
    for key, value in graph_data.items():
        prefix, _, rest = str(key).partition(".")
        type_name, _, field_name = rest.rpartition(".")
        if prefix != "fiber_types" or not type_name or not field_name:
            doc.fail(
                "graph",
                f"unknown key '{key}'"
                + _suggest(str(key), ["name", "fiber_types.NAME.FIELD"])
                + "; graph data holds 'name' and 'fiber_types.NAME.FIELD'",
            )
        tables.setdefault(type_name, {})[field_name] = value
    fiber_types = [(n, f"fiber_types.{n}", t) for n, t in tables.items()]

    sites = []
    for node, attrs in graph.nodes(data=True):
        table = {**node_default, **attrs}
        if "id" in table:
            doc.fail(f"node[{node}]", "attribute 'id' clashes with the node id (the site id)")
        sites.append((f"node[{node}]", {"id": str(node), **table}))

    # Edges in document order, each oriented as written (source = a, target = b): each edge of
    # networkx takes the first unused document edge between the same two sites.
    unused: dict[frozenset[str], list[tuple[int, str, str]]] = {}
    for index, (source, target) in enumerate(document_edges):
        unused.setdefault(frozenset((source, target)), []).append((index, source, target))
    edges = []
    for u, v, attrs in graph.edges(data=True):
        waiting = unused.get(frozenset((str(u), str(v))))
        index, source, target = waiting.pop(0) if waiting else (len(document_edges), str(u), str(v))
        edges.append((index, source, target, attrs))
    edges.sort(key=lambda edge: edge[0])

    cables = []
    for _, source, target, attrs in edges:
        where = f"edge[{source},{target}]"
        table = {k: v for k, v in {**edge_default, **attrs}.items() if k != "id"}
        for end, role in (("a", "source"), ("b", "target")):
            if end in table:
                doc.fail(where, f"attribute '{end}' clashes with the edge's {role} (the site at end {end})")
        cables.append((where, {"a": source, "b": target, **table}))
    return _RawTopology(name=name, fiber_types=fiber_types, sites=sites, cables=cables)


def load_topology(path: str | Path) -> Topology:
    """Read and validate a topology file.

    Parameters
    ----------
    path : str or Path
        A ``.toml`` file, or a ``.graphml`` / ``.xml`` GraphML file (same attribute names;
        fiber types as graph data keys ``fiber_types.NAME.FIELD``).

    Returns
    -------
    Topology
        With ``source`` set to ``path``.

    Raises
    ------
    InputError
        For anything wrong in the file, as ``FILE: WHERE: what``.
    """
    path = Path(path)
    return _topology_from_bytes(path, _read_bytes(path))


def _topology_from_bytes(path: Path, data: bytes) -> Topology:
    """The topology in ``data``, the bytes of ``path`` (whose suffix tells GraphML from TOML)."""
    if path.suffix.lower() in GRAPHML_SUFFIXES:
        doc = _Doc(str(path), strings_convert=True)
        return _build_topology(doc, _raw_topology_from_graphml(doc, data), path)
    _require_suffix(path, TOPOLOGY_SUFFIXES)
    toml_data = _parse_toml(path, data)
    if "topology" in toml_data and "sites" not in toml_data:
        _Doc(str(path)).fail(TOP, "this is a scenario file (it has a 'topology' key), not a topology")
    return _topology_from_toml_data(toml_data, path)


def _topology_from_toml_data(data: Mapping[str, Any], path: Path) -> Topology:
    doc = _Doc(str(path))
    return _build_topology(doc, _raw_topology_from_toml(doc, data), path)


TOPOLOGY_SUFFIXES = (".toml", *GRAPHML_SUFFIXES)


def _require_suffix(path: Path, suffixes: tuple[str, ...], owner: _Doc | None = None, key: str = "file") -> None:
    """Refuse a ``path`` without one of ``suffixes``; blamed on ``owner``'s ``key`` when given."""
    if path.suffix.lower() not in suffixes:
        shown = f"'{path.suffix}'" if path.suffix else "(none)"
        (owner or _Doc(str(path))).fail(key, f"unknown file type {shown}: expected {' or '.join(suffixes)}")


# ----------------------------------------------------------------------------------------------
# Scenario


def _traffic(doc: _Doc, table: Mapping[str, Any], scenario_file: Path, topology: Topology) -> TrafficSpec:
    where = "traffic"
    _check_keys(doc, where, table, TRAFFIC_KEYS)
    for key in ("pattern", "load_erlang"):
        if key not in table:
            doc.fail(where, f"missing required key '{key}'")
    pattern = _convert(doc, "traffic.pattern", table["pattern"], get_type_hints(TrafficSpec)["pattern"])

    raw_loads = table["load_erlang"]
    if isinstance(raw_loads, list):
        if not raw_loads:
            doc.fail("traffic.load_erlang", "empty list: give at least one load")
        _count_within(doc, "traffic.load_erlang", len(raw_loads), "load_points", "load points")
        given = [(f"traffic.load_erlang[{i}]", v) for i, v in enumerate(raw_loads)]
    else:
        given = [("traffic.load_erlang", raw_loads)]
    load_range = _all_of(
        _greater(0), _at_least(MIN_LOAD_ERLANG, "a load that small offers no demand"), _up_to("load_erlang")
    )
    loads = tuple(_within(doc, w, _as_float(doc, w, v), load_range) for w, v in given)

    values: dict[str, Any] = {"pattern": pattern, "loads_erlang": loads}
    if "mean_holding" in table:
        holding = _as_float(doc, "traffic.mean_holding", table["mean_holding"])
        low, high = HOLDING_RANGE
        in_range = _all_of(
            _greater(0), _at_least(low, "the time unit is too small"), _at_most(high, "the time unit is too large")
        )
        values["mean_holding"] = _within(doc, "traffic.mean_holding", holding, in_range)
    if "sizes_gbps" in table:
        values["sizes_gbps"] = _sizes(doc, table["sizes_gbps"])

    if pattern == "matrix":
        if "matrix" not in table:
            doc.fail(where, "missing required key 'matrix' (the CSV file of pattern 'matrix')")
        matrix_name = _as_str(doc, "traffic.matrix", table["matrix"])
        matrix_file = _resolve(doc, "traffic.matrix", scenario_file, matrix_name)
        values["matrix"] = _read_matrix(matrix_file, _read_bytes(matrix_file, doc, "traffic.matrix"), topology)
        values["matrix_file"] = matrix_file
    elif "matrix" in table:
        doc.fail("traffic.matrix", f"only used with pattern = 'matrix', but pattern is '{pattern}'")
    elif pattern == "gravity":
        weights = [s.traffic_weight for s in topology.datacenters]
        if sum(w > 0 for w in weights) < 2:
            doc.fail(
                "traffic.pattern",
                "gravity pattern gives no traffic: fewer than two datacenters have traffic_weight > 0",
            )
        first, second = sorted(weights)[-2:][::-1]
        if first * second == 0:  # the product of two tiny weights underflows
            doc.fail("traffic.pattern", "gravity pattern gives no traffic: the traffic weights are too small to "
                     "multiply (scale them up: only their ratios matter)")
    return TrafficSpec(**values)


def _sizes(doc: _Doc, value: Any) -> tuple[tuple[float, float], ...]:
    where = "traffic.sizes_gbps"
    table = _table(doc, where, value)
    if not table:
        doc.fail(where, "empty table: give at least one size = probability")
    _count_within(doc, where, len(table), "size_classes", "sizes")
    largest, why = MAX["size_gbps"]
    by_size: dict[float, str] = {}
    pairs = []
    for key, prob_value in table.items():
        key_where = f"{where}.{_shorten(key)}"
        try:
            size = float(key)
        except ValueError:
            doc.fail(key_where, f"size '{_shorten(key)}' is not a number of Gb/s")
        if not math.isfinite(size) or size <= 0:
            doc.fail(key_where, f"size must be a finite number > 0, got '{_shorten(key)}'")
        if size > largest:
            doc.fail(key_where, f"size must be <= {_number(largest)} Gb/s, got '{_shorten(key)}': {why}")
        if size in by_size:
            doc.fail(key_where, f'size {size:g} Gb/s is given twice (also "{by_size[size]}")')
        by_size[size] = key
        prob = _as_float(doc, key_where, prob_value)
        if not 0 < prob <= 1:
            doc.fail(key_where, f"probability must be > 0 and <= 1, got {_number(prob)}")
        pairs.append((size, prob))
    total = math.fsum(p for _, p in pairs)
    if abs(total - 1.0) > SIZE_PROBABILITY_TOLERANCE:
        doc.fail(where, f"probabilities sum to {total:.9g}, not 1")
    return tuple(sorted(pairs))


def _read_matrix(path: Path, data: bytes, topology: Topology) -> tuple[tuple[str, str, float], ...]:
    """Rows ``a,b,weight`` of a traffic-matrix CSV, validated against ``topology``."""
    doc = _Doc(str(path))
    text = _decode(doc, data)
    reader = csv.reader(io.StringIO(text, newline=""))
    roles = {s.id: s.role for s in topology.sites}
    rows: list[tuple[str, str, float]] = []
    first_line: dict[frozenset[str], int] = {}
    header_seen = False
    try:
        for fields_ in reader:
            line = reader.line_num
            if not any(f.strip() for f in fields_):
                continue
            cells = [f.strip() for f in fields_]
            if not header_seen:
                if cells != ["a", "b", "weight"]:
                    doc.fail(f"line {line}", f"header must be 'a,b,weight', got '{','.join(cells)}'")
                header_seen = True
                continue
            rows.append(_matrix_row(doc, line, cells, roles, first_line))
    except csv.Error as err:
        doc.fail(f"line {reader.line_num}", f"invalid CSV: {err}")
    if not header_seen:
        doc.fail("line 1", "empty file: expected the header 'a,b,weight' and one row per datacenter pair")
    if not rows:
        doc.fail("rows", "no rows after the header")
    if not any(w > 0 for _, _, w in rows):
        doc.fail("rows", "every weight is zero: no datacenter pair would get traffic")
    return tuple(rows)


def _matrix_row(
    doc: _Doc, line: int, cells: list[str], roles: Mapping[str, str], first_line: dict[frozenset[str], int]
) -> tuple[str, str, float]:
    """Row ``a,b,weight`` on ``line``; ``roles`` maps site ids to roles, ``first_line`` pairs to lines."""
    where = f"line {line}"
    if len(cells) != 3:
        doc.fail(where, f"expected 3 fields (a,b,weight), got {len(cells)}")
    a, b, weight_text = cells
    for site_id in (a, b):
        if site_id not in roles:
            doc.fail(where, f"unknown site '{site_id}'{_suggest(site_id, roles)}")
        if roles[site_id] != "datacenter":
            doc.fail(where, f"site '{site_id}' is a {roles[site_id]}, not a datacenter")
    if a == b:
        doc.fail(where, f"a and b are the same site '{a}'")
    try:
        weight = float(weight_text)
    except ValueError:
        doc.fail(where, f"weight must be a number, got '{_shorten(weight_text)}'")
    if not math.isfinite(weight):
        doc.fail(where, f"weight must be a finite number, got '{_shorten(weight_text)}'")
    if weight < 0:
        doc.fail(where, f"weight must be >= 0, got {_shorten(weight_text)}")
    if weight > MAX_MAGNITUDE:
        doc.fail(where, f"weight must be <= {MAX_MAGNITUDE:g}, got {_shorten(weight_text)}: {MAGNITUDE_WHY}")
    pair = frozenset((a, b))
    if pair in first_line:
        doc.fail(where, f"pair {a},{b} is already given on line {first_line[pair]}")
    first_line[pair] = line
    return a, b, weight


def _architectures(doc: _Doc, value: Any, topology: Topology) -> tuple[Architecture, ...]:
    tables = _list_of_tables(doc, "architectures", value)
    if not tables:
        doc.fail("architectures", "no architectures: add at least one [[architectures]]")
    _count_within(doc, "architectures", len(tables), "architectures", "architectures")
    result = []
    first_where: dict[str, str] = {}
    for i, table in enumerate(tables):
        where = f"architectures[{i}]"
        values = _read_fields(doc, where, table, Architecture)
        arch = Architecture(**values)
        if not arch.name.strip():
            doc.fail(_at(where, "name"), "architecture name is empty")
        if arch.name in first_where:
            doc.fail(_at(where, "name"), f"duplicate architecture name '{arch.name}' (also {first_where[arch.name]})")
        first_where[arch.name] = where
        if arch.switching == "fractional-joint" and arch.group is None:
            doc.fail(where, "missing required key 'group' (cores per unit of fractional-joint switching)")
        if arch.switching != "fractional-joint" and arch.group is not None:
            doc.fail(_at(where, "group"), f"only used with switching = 'fractional-joint', not '{arch.switching}'")
        _check_allowed(doc, where, arch, topology)
        result.append(arch)
    return tuple(result)


def _check_allowed(doc: _Doc, where: str, arch: Architecture, topology: Topology) -> None:
    """Refuse an architecture that cannot run on the fiber of some cable (ConfigurationError)."""
    if arch.fiber_type is not None:
        if arch.fiber_type not in topology.fiber_types:
            doc.fail(
                _at(where, "fiber_type"),
                f"unknown fiber type '{arch.fiber_type}'{_suggest(arch.fiber_type, topology.fiber_types)}",
            )
        used = [arch.fiber_type]
    else:
        used = list(dict.fromkeys(c.fiber_type for c in topology.cables))
    key = "group" if arch.switching == "fractional-joint" else "switching"
    for type_name in used:
        reason = why_not_allowed(arch, topology.fiber_types[type_name])
        if reason is not None:
            doc.fail(_at(where, key), reason, kind=ConfigurationError)


def _section(doc: _Doc, data: Mapping[str, Any], key: str, cls: type) -> Any:
    if key not in data:
        return cls()
    return cls(**_read_fields(doc, key, _table(doc, key, data[key]), cls))


def _scenario_from_data(data: Mapping[str, Any], path: Path) -> Scenario:
    doc = _Doc(str(path))
    if "topology" not in data and "sites" in data:
        doc.fail(TOP, "this is a topology file (it has no 'topology' key), not a scenario")
    _check_keys(doc, TOP, data, SCENARIO_KEYS)
    for key in ("topology", "traffic", "architectures"):
        if key not in data:
            doc.fail(TOP, f"missing required key '{key}'")
    name = _within(doc, "name", _as_str(doc, "name", data["name"]), _name_length) if "name" in data else path.stem
    seed = _within(doc, "seed", _as_int(doc, "seed", data["seed"]), _at_least(0)) if "seed" in data else 1

    topology_path = _resolve(doc, "topology", path, _as_str(doc, "topology", data["topology"]))
    # A missing file or a wrong file type is the scenario's fault; what is inside, the topology's.
    topology_bytes = _read_bytes(topology_path, doc, "topology")
    _require_suffix(topology_path, TOPOLOGY_SUFFIXES, doc, "topology")
    topology = _topology_from_bytes(topology_path, topology_bytes)

    traffic = _traffic(doc, _table(doc, "traffic", data["traffic"]), path, topology)
    transceiver = _section(doc, data, "transceiver", TransceiverSpec)
    run = _section(doc, data, "run", RunSpec)
    architectures = _architectures(doc, data["architectures"], topology)
    plan = _plan(doc, data["plan"]) if "plan" in data else None
    forecast = _forecast(doc, data["forecast"]) if "forecast" in data else None
    if forecast is not None:
        datacenters = {s.id for s in topology.datacenters}
        for site in forecast.site_growth:
            if site not in datacenters:
                doc.fail(f"forecast.site_growth.{site}", f"no datacenter '{site}' in the topology"
                         f"{_did_you_mean(site, datacenters)}")  # fmt: skip
        _check_forecast_loads(doc, forecast, traffic)
    line = _section(doc, data, "line", LineSpec)
    transceivers = _transceiver_classes(doc, data["transceivers"]) if "transceivers" in data else ()
    _check_channel_slots(doc, topology, architectures, line, transceiver, transceivers)
    costs = _item_table(doc, data, "costs")
    power = _item_table(doc, data, "power")
    return Scenario(
        name=name,
        topology=topology,
        seed=seed,
        traffic=traffic,
        transceiver=transceiver,
        run=run,
        architectures=architectures,
        plan=plan,
        forecast=forecast,
        source=path,
        line=line,
        transceivers=transceivers,
        costs=costs,
        power=power,
    )


def _check_channel_slots(
    doc: _Doc,
    topology: Topology,
    architectures: tuple[Architecture, ...],
    line: LineSpec,
    transceiver: TransceiverSpec,
    classes: tuple[TransceiverClass, ...],
) -> None:
    """Every fiber type in use fits its channels in the band, and every class's symbol rate fits
    the channel slot (``LineSpec.channel_slot_ghz``)."""
    used = list(dict.fromkeys(a.fiber_type for a in architectures if a.fiber_type is not None))
    if any(a.fiber_type is None for a in architectures):
        used += [c.fiber_type for c in topology.cables if c.fiber_type not in used]
    rates = [(f"transceivers[{i}].symbol_rate_gbaud", c.symbol_rate_gbaud) for i, c in enumerate(classes)]
    rates = rates or [("transceiver.symbol_rate_gbaud", transceiver.symbol_rate_gbaud)]
    for name in dict.fromkeys(used):
        fiber = topology.fiber_types[name]
        slot = line.channel_slot_ghz(fiber.channels)
        if slot <= 0:
            doc.fail(
                "line.band_ghz",
                f"fiber type '{name}' has {fiber.channels} channels per core, more than the "
                f"{line.band_ghz:g} GHz band holds on the 12.5 GHz grid",
            )
        for where, rate in rates:
            if rate > slot:
                doc.fail(
                    where,
                    f"{_number(rate)} GBd does not fit the {slot:g} GHz channel slot of fiber type '{name}' "
                    f"({line.band_ghz:g} GHz band / {fiber.channels} channels)",
                )


def _transceiver_classes(doc: _Doc, value: Any) -> tuple[TransceiverClass, ...]:
    tables = _list_of_tables(doc, "transceivers", value)
    if not tables:
        doc.fail("transceivers", "empty: define at least one [[transceivers]] class, or leave the key out")
    _count_within(doc, "transceivers", len(tables), "transceivers", "transceiver classes")
    classes: list[TransceiverClass] = []
    first_where: dict[str, str] = {}
    for i, table in enumerate(tables):
        where = f"transceivers[{i}]"
        spec = TransceiverClass(**_read_fields(doc, where, table, TransceiverClass))
        if not spec.name.strip():
            doc.fail(_at(where, "name"), "transceiver class name is empty")
        if spec.name in first_where:
            doc.fail(_at(where, "name"), f"duplicate transceiver class '{spec.name}' (also {first_where[spec.name]})")
        first_where[spec.name] = where
        classes.append(spec)
    return tuple(classes)


def _item_table(doc: _Doc, data: Mapping[str, Any], key: str) -> dict[str, float]:
    """``[costs]`` or ``[power]``: item name -> a finite number >= 0, items from the cost model's
    catalogue (:mod:`sdmnet.equipment.catalogue`)."""
    if key not in data:
        return {}
    table = _table(doc, key, data[key])
    _check_keys(doc, key, table, ITEM_NAMES)
    at_least_zero = _at_least(0)
    return {str(k): _within(doc, _at(key, str(k)), _as_float(doc, _at(key, str(k)), v), at_least_zero)
            for k, v in table.items()}


def _plan(doc: _Doc, value: Any) -> PlanSpec:
    table = _table(doc, "plan", value)
    if "unit_costs" in table:
        _check_keys(doc, "plan.unit_costs", _table(doc, "plan.unit_costs", table["unit_costs"]), UNIT_COST_KEYS)
    return PlanSpec(**_read_fields(doc, "plan", table, PlanSpec))


def _forecast_growth_fits(doc: _Doc, where: str, rate: float, years: int) -> None:
    try:
        (1.0 + rate) ** years
    except OverflowError:
        doc.fail(where, f"growth {rate:g} per year over {years} years is too large to compute")


def _forecast(doc: _Doc, value: Any) -> ForecastSpec:
    values = _read_fields(doc, "forecast", _table(doc, "forecast", value), ForecastSpec)
    forecast = ForecastSpec(**values)
    if forecast.factors and len(forecast.factors) != forecast.years:
        doc.fail(
            "forecast.factors",
            f"has {len(forecast.factors)} values for {forecast.years} years: give one per year "
            f"(1..{forecast.years}), or leave it out to use growth_per_year",
        )
    try:
        forecast.factor(forecast.years)
    except OverflowError:
        doc.fail(
            "forecast.growth_per_year",
            f"growth {forecast.growth_per_year:g} per year over {forecast.years} years is too large to compute",
        )
    if forecast.lane_gbps_by_year and len(forecast.lane_gbps_by_year) != forecast.years:
        doc.fail(
            "forecast.lane_gbps_by_year",
            f"has {len(forecast.lane_gbps_by_year)} values for {forecast.years} years: give one per year "
            f"(1..{forecast.years})",
        )
    if forecast.growth_band:
        low_high = forecast.growth_band
        if len(low_high) != 2 or not low_high[0] <= forecast.growth_per_year <= low_high[1]:
            doc.fail("forecast.growth_band", "give [low, high] yearly growth rates around growth_per_year")
        if forecast.factors:
            doc.fail("forecast.growth_band", "needs growth_per_year, not explicit factors")
        for rate in low_high:
            _forecast_growth_fits(doc, "forecast.growth_band", rate, forecast.years)
    for site, rate in forecast.site_growth.items():
        _forecast_growth_fits(doc, f"forecast.site_growth.{site}", rate, forecast.years)
    return forecast


def _check_forecast_loads(doc: _Doc, forecast: ForecastSpec, traffic: TrafficSpec) -> None:
    """Refuse growth that takes a load point beyond the largest load allowed."""
    largest, why = MAX["load_erlang"]
    for year in range(1, forecast.years + 1):
        load = max(traffic.loads_erlang) * forecast.peak_factor(year)
        if load > largest:
            key = f"forecast.factors[{year - 1}]" if forecast.factors else "forecast.growth_per_year"
            if forecast.growth_band or forecast.site_growth:
                key = "forecast"
            doc.fail(key, f"year {year} would offer {_number(load)} Erlang, more than the {_number(largest)} "
                          f"allowed: {why}")


def overridable_keys() -> list[str]:
    """Keys :func:`load_scenario` accepts in ``overrides``: ``name``, ``seed`` and ``section.key``."""
    keys = ["name", "seed"]
    keys += [f"traffic.{k}" for k in ("pattern", "load_erlang", "mean_holding")]
    for section, cls in (
        ("transceiver", TransceiverSpec),
        ("run", RunSpec),
        ("plan", PlanSpec),
        ("forecast", ForecastSpec),
    ):
        keys += [f"{section}.{f.name}" for f in fields(cls) if f.name != "unit_costs"]
    return keys


def _apply_overrides(data: dict[str, Any], overrides: Mapping[str, Any]) -> dict[str, Any]:
    """A copy of the scenario ``data`` with ``overrides`` (``"key"`` or ``"section.key"``) set."""
    known = overridable_keys()
    merged = {k: (dict(v) if isinstance(v, Mapping) else v) for k, v in data.items()}
    for key, value in overrides.items():
        if key not in known:
            raise _error(InputError, COMMAND_LINE, str(key), f"unknown setting{_suggest(str(key), known)}")
        section, _, name = key.rpartition(".")
        if not section:
            merged[name] = value
            continue
        target = merged.setdefault(section, {})
        if not isinstance(target, dict):
            continue  # the file's own error about the section is reported when loading
        target[name] = value
    return merged


def load_scenario(path: str | Path, *, overrides: Mapping[str, Any] | None = None) -> Scenario:
    """Read and validate a scenario file and the files it names.

    Parameters
    ----------
    path : str or Path
        The scenario ``.toml``.  Its ``topology`` and ``traffic.matrix`` paths are relative to it.
    overrides : mapping, optional
        Settings that replace the file's, as ``{"seed": 3, "run.requests": 1000}``; validated
        like the file, and an error in one names ``<command line>`` as its file.

    Returns
    -------
    Scenario
        With ``source`` set to ``path``.

    Raises
    ------
    InputError
        For anything wrong in the scenario or the files it names.
    ConfigurationError
        For an architecture that cannot run on the topology's fiber.
    """
    path = Path(path)
    raw = _read_bytes(path)
    _require_suffix(path, (".toml",))
    data = _parse_toml(path, raw)
    return _scenario_with_overrides(data, path, overrides or {})


def _scenario_with_overrides(data: dict[str, Any], path: Path, overrides: Mapping[str, Any]) -> Scenario:
    if not overrides:
        return _scenario_from_data(data, path)
    merged = _apply_overrides(data, overrides)
    try:
        return _scenario_from_data(merged, path)
    except InputError as err:
        if err.file == str(path) and any(err.where == k or err.where.startswith(f"{k}[") for k in overrides):
            raise type(err)(COMMAND_LINE, err.where, err.what) from None
        raise


def load_any(path: str | Path) -> Topology | Scenario:
    """A topology or a scenario, whichever ``path`` holds (for ``sdmnet check``).

    A TOML file with a ``topology`` key is a scenario; any other TOML file, and every GraphML
    file, is a topology.
    """
    path = Path(path)
    raw = _read_bytes(path)
    if path.suffix.lower() in GRAPHML_SUFFIXES:
        return _topology_from_bytes(path, raw)
    _require_suffix(path, TOPOLOGY_SUFFIXES)
    data = _parse_toml(path, raw)
    if "topology" in data:
        return _scenario_from_data(data, path)
    return _topology_from_toml_data(data, path)
