"""A self-contained HTML report of whatever results a folder holds.

:func:`write_report` reads the tables that simulate, estimate, paths, plan and forecast write
(any subset, :mod:`.results`), lets each section of :mod:`.sections` draw its figures and gather
its data, and renders the page from the one template ``report.html.j2`` (Jinja2, autoescaping
on).  Figures are embedded as data URIs; the page holds no script, no timestamp and no outside
reference, and its parts come in a fixed order, so the same folder always gives the same bytes.

The template is shipped compiled too (``template_code.py``, written by
:func:`template_code_text`; ``python tools/compile_report_template.py`` after editing the
template): Jinja2 takes about 30 ms to compile it, a noticeable part of a small run.  The
compiled code is used only while it matches the template and the installed Jinja2.
"""

from __future__ import annotations

import gc
import hashlib
from collections.abc import Iterator
from contextlib import contextmanager
from functools import cache
from importlib import import_module, resources
from pathlib import Path

import jinja2

from ..tables import write_text
from .results import RESULT_TABLES, ResultFolder, forecast_totals, read_results
from .sections import build_sections

__all__ = ["RESULT_TABLES", "CAUTIONS", "ResultFolder", "read_results", "forecast_totals", "render", "write_report"]

CAUTIONS = (
    "The figures in this report are planning estimates from a statistical model of the network: "
    "blocking comes from a finite number of simulated requests (see the confidence intervals), "
    "and equipment counts follow from the model's simplifications.  They are not a design for "
    "construction.  Deployment follows the equipment vendors' specifications, laser-safety rules "
    "for optical transmitters, local codes and permits, and licensed engineering practice."
)


def _environment() -> jinja2.Environment:
    return jinja2.Environment(
        autoescape=True,
        undefined=jinja2.StrictUndefined,  # a section whose data lacks a key fails loudly
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )


def _template_source() -> str:
    return resources.files(__package__).joinpath("report.html.j2").read_text(encoding="utf-8")


def template_code_text() -> str:
    """``template_code.py``: the template compiled by the installed Jinja2, with the template's
    SHA-256 and Jinja2's version at the end (the code's line numbers stay Jinja2's own)."""
    source = _template_source()
    code = _environment().compile(source, raw=True, defer_init=True)
    digest = hashlib.sha256(source.encode("utf-8")).hexdigest()
    return (
        f"{code.rstrip()}\n\n"
        "# Written by sdmnet.output.report.template_code_text() from report.html.j2; do not edit\n"
        "# (python tools/compile_report_template.py).  Used while these match:\n"
        f"SOURCE_SHA256 = {digest!r}\n"
        f"JINJA2_VERSION = {jinja2.__version__!r}\n"
    )


@cache
def _template() -> jinja2.Template:
    env, source = _environment(), _template_source()
    try:
        compiled = import_module(f"{__package__}.template_code")
    except ImportError:  # not shipped: compile the template
        compiled = None
    if (
        compiled is not None
        and getattr(compiled, "SOURCE_SHA256", None) == hashlib.sha256(source.encode("utf-8")).hexdigest()
        and getattr(compiled, "JINJA2_VERSION", None) == jinja2.__version__
    ):
        return env.template_class.from_module_dict(env, vars(compiled), env.make_globals(None))
    return env.from_string(source)


def render(res: ResultFolder) -> str:
    """The page for ``res`` (draws the figures into its folder on the way)."""
    return _template().render(
        name=res.scenario().get("name") or res.path.name,
        files_read=res.files_read(),
        cautions=CAUTIONS,
        sections=build_sections(res),
    )


def write_report(folder: Path | str) -> Path:
    """Draw the figures and write a self-contained ``report.html`` for the results in ``folder``.

    Reads whichever of ``summary.csv``, ``classes.csv``, ``pairs.csv``, ``sites.csv``,
    ``cables.csv``, ``estimate.csv``, ``paths.csv``, ``plan.csv``, ``plan_totals.csv``,
    ``forecast.csv`` and ``run.json`` exist, and skips the rest.  Figures are written as PNG into
    the folder (``blocking.png``, ``bandwidth_blocking.png``, ``resources.png``, ``topology.png``,
    ``estimate.png``, ``plan.png``, ``forecast.png``, each only when its tables exist) and embedded
    in the page as data URIs.  The same folder always gives byte-identical files.

    Parameters
    ----------
    folder : path
        An output folder of ``sdmnet simulate``, ``estimate``, ``paths``, ``plan`` or ``forecast``.

    Returns
    -------
    Path
        The ``report.html`` written.

    Raises
    ------
    InputError
        No such folder, no result file in it, or a file that cannot be read.
    """
    with _collector_paused():
        res = read_results(folder)
        return write_text(render(res), res.path / "report.html")


@contextmanager
def _collector_paused() -> Iterator[None]:
    """No cyclic garbage collection while the block runs (if it was on, it is on again after).

    Drawing makes tens of thousands of objects that live as long as their figure, and the
    collector would walk them again and again while they do: 20-40 ms of a small report.  A
    report makes a handful of figures, so what they leave is collected once, afterwards.
    """
    was_on = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_on:
            gc.enable()
