"""The HTML report: renders what a folder holds, regenerates byte for byte, and loads in a browser."""

from __future__ import annotations

import base64
import datetime as dt
import html
import json
import re
import shutil
import subprocess
import sys
from pathlib import Path

import builders
import matplotlib.image as mpimg
import pandas as pd
import pytest

from sdmnet import api
from sdmnet.errors import InputError
from sdmnet.inputs.model import Architecture, Cable, Site, Topology
from sdmnet.output.report import CAUTIONS, forecast_totals, write_report
from sdmnet.sim import engine

CHROMIUM = Path("/usr/bin/chromium")
FIGURES_OF_A_SIMULATION = {"blocking.png", "bandwidth_blocking.png", "resources.png", "topology.png"}


def tiny_topology() -> Topology:
    """Three datacenters around one hub, with coordinates, on a weakly coupled 2-core fiber."""
    fiber = builders.fiber_type("mcf2", cores=2, channels=4)
    sites = (
        Site("west", "datacenter", 1.0, 0.0, 0.0),
        Site("east", "datacenter", 1.0, 30.0, 0.0),
        Site("north", "datacenter", 1.0, 15.0, 25.0),
        Site("hub", "hub", 0.0, 15.0, 8.0),
    )
    cables = (
        Cable("west", "hub", 17.0, "mcf2", 1),
        Cable("east", "hub", 17.0, "mcf2", 1),
        Cable("north", "hub", 17.0, "mcf2", 1),
        Cable("west", "east", 30.0, "mcf2", 1),
    )
    return Topology("tiny", {"mcf2": fiber}, sites, cables)


@pytest.fixture(scope="module")
def simulated(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A results folder from a real (tiny, fast) simulation."""
    sc = builders.scenario(
        tiny_topology(),
        [Architecture("per-core", "independent"), Architecture("both-cores", "joint")],
        loads=(2.0, 5.0),
        sizes=((100.0, 0.7), (200.0, 0.3)),
        requests=300,
        warmup=50,
        replications=2,
        k_paths=2,
    )
    out = tmp_path_factory.mktemp("simulated")
    # The report does not depend on how routes were found; plain shortest routes keep this
    # test independent of the physical path checks.
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(engine, "_default_route_finder", builders.shortest_routes)
        api.simulate(sc, out, progress=False)
    return out


def copy_of(folder: Path, tmp_path: Path, name: str = "copy") -> Path:
    target = tmp_path / name
    shutil.copytree(folder, target, ignore=shutil.ignore_patterns("tasks"))
    return target


def snapshot(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir()) if p.suffix in (".html", ".png")}


def add_other_verbs(folder: Path) -> None:
    """Invented tables in the layout of the estimate, paths, plan and forecast verbs."""
    pd.DataFrame(
        [
            {
                "architecture": a,
                "switching": s,
                "load_erlang": load,
                "blocking": b,
                "bandwidth_blocking": 1.3 * b,
            }
            for a, s in (("per-core", "independent"), ("both-cores", "joint"))
            for load, b in ((2.0, 0.001), (5.0, 0.02))
        ]
    ).to_csv(folder / "estimate.csv", index=False)
    pd.DataFrame(
        [
            {
                "architecture": "per-core",
                "a": "west",
                "b": "east",
                "rank": 1,
                "path": "west-east",
                "hops": 1,
                "length_km": 30.0,
                "loss_db": 7.5,
                "gd_spread_ps": "",
                "mimo_taps": "",
                "crosstalk_db": -50.0,
                "mdl_db": "",
                "feasible": True,
                "reason": "",
            },
            {
                "architecture": "per-core",
                "a": "west",
                "b": "north",
                "rank": 1,
                "path": "west-hub-north",
                "hops": 2,
                "length_km": 34.0,
                "loss_db": 45.0,
                "gd_spread_ps": "",
                "mimo_taps": "",
                "crosstalk_db": -48.0,
                "mdl_db": "",
                "feasible": False,
                "reason": "loss over budget",
            },
        ]
    ).to_csv(folder / "paths.csv", index=False)
    pd.DataFrame(
        [
            {
                "architecture": a,
                "cable": c,
                "fiber_pairs": p,
                "blocking": 0.008,
                "blocking_ci_low": 0.005,
                "blocking_ci_high": 0.011,
            }
            for a, extra in (("per-core", 0), ("both-cores", 1))
            for c, p in (("west-hub", 2 + extra), ("east-hub", 1 + extra), ("north-hub", 1), ("west-east", 1))
        ]
    ).to_csv(folder / "plan.csv", index=False)
    pd.DataFrame(
        [{"architecture": "per-core", "fiber_pairs": 5}, {"architecture": "both-cores", "fiber_pairs": 7}]
    ).to_csv(folder / "plan_totals.csv", index=False)
    pd.DataFrame(
        [
            {
                "year": y,
                "architecture": a,
                "cable": c,
                "fiber_pairs": 1 + y,
                "transceivers_peak": 40 + 10 * y,
                "switch_ports": 8 + 2 * y,
                "load_factor": 1.3**y,
                "added_pairs": int(y > 0),
                "blocking": 0.009,
            }
            for a in ("per-core", "both-cores")
            for y in range(3)
            for c in ("west-hub", "east-hub")
        ]
    ).to_csv(folder / "forecast.csv", index=False)
    # A table the report has no section for: shown as it is, under "Other tables".
    pd.DataFrame([{"architecture": "per-core", "a": "west", "b": "east", "blocking": 0.002}]).to_csv(
        folder / "estimate_pairs.csv", index=False
    )


@pytest.fixture(scope="module")
def reported(simulated: Path, tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The simulated folder plus the other verbs' tables, with its report written once."""
    folder = copy_of(simulated, tmp_path_factory.mktemp("reported"))
    add_other_verbs(folder)
    write_report(folder)
    return folder


# --- byte-identical regeneration -----------------------------------------------------------------


@pytest.mark.slow
def test_report_regenerates_byte_identical_in_one_process(reported: Path) -> None:
    first = snapshot(reported)
    assert {"report.html", "estimate.png", "plan.png", "forecast.png"} | FIGURES_OF_A_SIMULATION == set(first)
    write_report(reported)
    assert snapshot(reported) == first


@pytest.mark.slow
def test_report_regenerates_byte_identical_in_another_process(
    simulated: Path, reported: Path, tmp_path: Path
) -> None:
    there = copy_of(simulated, tmp_path, "there")
    add_other_verbs(there)
    code = "import sys; from sdmnet.output.report import write_report; write_report(sys.argv[1])"
    subprocess.run([sys.executable, "-c", code, str(there)], check=True, timeout=300)
    mine, theirs = snapshot(reported), snapshot(there)
    assert mine.keys() == theirs.keys()
    differing = [name for name in mine if mine[name] != theirs[name]]
    assert not differing, f"differ between processes: {differing}"


def test_the_shipped_compiled_template_is_the_templates_own(tmp_path: Path) -> None:
    # template_code.py must be what Jinja2 makes of report.html.j2 today; else the report falls
    # back to compiling it at run time (the same page, slower).
    import jinja2

    from sdmnet.output import report
    from sdmnet.output.report import template_code

    if jinja2.__version__ != template_code.JINJA2_VERSION:
        pytest.skip(f"compiled by Jinja2 {template_code.JINJA2_VERSION}, {jinja2.__version__} installed")
    shipped = Path(template_code.__file__).read_text(encoding="utf-8")
    assert shipped == report.template_code_text(), "run: python tools/compile_report_template.py"
    assert report._template().render.__self__.root_render_func.__module__ == template_code.__name__


def test_the_compiled_template_and_the_template_give_the_same_page(reported: Path) -> None:
    from sdmnet.output import report
    from sdmnet.output.report.results import read_results
    from sdmnet.output.report.sections import build_sections

    res = read_results(reported)
    values = {
        "name": res.scenario().get("name") or res.path.name,
        "files_read": res.files_read(),
        "cautions": CAUTIONS,
        "sections": build_sections(res),
    }
    from_source = report._environment().from_string(report._template_source())
    assert report._template().render(**values) == from_source.render(**values)


def test_drawing_runs_without_the_cyclic_collector_which_is_then_restored(simulated: Path, tmp_path: Path,
                                                                           monkeypatch) -> None:  # fmt: skip
    import gc

    from sdmnet.output import report

    seen = []
    render = report.render
    monkeypatch.setattr(report, "render", lambda res: seen.append(gc.isenabled()) or render(res))
    assert gc.isenabled()
    write_report(copy_of(simulated, tmp_path))
    assert seen == [False] and gc.isenabled()
    gc.disable()
    try:
        with report._collector_paused():
            pass
        assert not gc.isenabled(), "a collector the caller had switched off stays off"
    finally:
        gc.enable()


# --- contents ------------------------------------------------------------------------------------


def test_report_is_self_contained_and_carries_inputs_seeds_versions_and_cautions(reported: Path) -> None:
    page = (reported / "report.html").read_text(encoding="utf-8")
    run = json.loads((reported / "run.json").read_text())
    assert "<script" not in page.lower()
    assert not re.search(r"""(src|href)=["'](https?:|//|file:)""", page), "no outside references"
    images = re.findall(r'<img src="data:image/png;base64,([A-Za-z0-9+/=]+)"', page)
    pngs = sorted(p.read_bytes() for p in reported.glob("*.png"))
    assert sorted(base64.b64decode(i) for i in images) == pngs, "every figure embedded, byte for byte"
    text = html.unescape(page)
    assert CAUTIONS in text
    for phrase in ("vendors' specifications", "laser-safety", "local codes", "licensed engineering practice"):
        assert phrase in text
    assert str(run["seeds"]["scenario_seed"]) in text
    assert run["seeds"]["rule"] in text
    for library, version in run["versions"].items():
        assert f"<th>{library}</th><td>{version}</td>" in page
    for site in ("west", "east", "north", "hub"):
        assert f"<td>{site}</td>" in page
    for arch in ("per-core", "both-cores"):
        assert arch in text
    assert dt.date.today().isoformat() not in text, "no date in the report"


def test_report_renders_only_what_exists(tmp_path: Path) -> None:
    folder = tmp_path / "estimate-only"
    folder.mkdir()
    add_other_verbs(folder)
    for name in ("paths.csv", "plan.csv", "plan_totals.csv", "forecast.csv"):
        (folder / name).unlink()
    page = write_report(folder).read_text(encoding="utf-8")
    assert sorted(p.name for p in folder.glob("*.png")) == ["estimate.png"]
    assert 'id="estimate"' in page
    for absent in ('id="simulation"', 'id="plan"', 'id="forecast"', 'id="paths"', 'id="inputs"'):
        assert absent not in page


def test_report_of_other_verbs_has_their_sections(reported: Path) -> None:
    page = html.unescape((reported / "report.html").read_text(encoding="utf-8"))
    words = re.sub(r"<[^>]+>", "", page)
    for anchor in (
        "simulation",
        "resources",
        "network",
        "estimate",
        "paths",
        "plan",
        "forecast",
        "other-tables",
        "inputs",
        "run",
    ):
        assert f'id="{anchor}"' in page
    assert "2 candidate paths, 1 physically feasible" in words
    assert "No feasible path for: per-core: west-north." in words


def test_forecast_totals_sum_pairs_over_cables_and_keep_network_figures() -> None:
    forecast = pd.DataFrame(
        [
            {
                "year": 0,
                "architecture": "x",
                "cable": "a-b",
                "fiber_pairs": 2,
                "transceivers_peak": 50,
                "switch_ports": 6,
            },
            {
                "year": 0,
                "architecture": "x",
                "cable": "b-c",
                "fiber_pairs": 3,
                "transceivers_peak": 50,
                "switch_ports": 6,
            },
            {
                "year": 1,
                "architecture": "x",
                "cable": "a-b",
                "fiber_pairs": 4,
                "transceivers_peak": 20,
                "switch_ports": 3,
            },
            {
                "year": 1,
                "architecture": "x",
                "cable": "b-c",
                "fiber_pairs": 1,
                "transceivers_peak": 30,
                "switch_ports": 5,
            },
        ]
    )
    totals = forecast_totals(forecast)
    # Worked by hand: year 0 repeats 50 and 6 on both cables (network figures); year 1 differs (per cable).
    assert totals[["year", "fiber_pairs", "transceivers_peak", "switch_ports"]].values.tolist() == [
        [0, 5, 50, 6],
        [1, 5, 50, 8],
    ]


def test_a_table_lacking_its_figure_columns_gets_a_note_instead_of_a_figure(tmp_path: Path) -> None:
    pd.DataFrame([{"architecture": "x", "load_erlang": 1.0}]).to_csv(tmp_path / "estimate.csv", index=False)
    page = html.unescape(write_report(tmp_path).read_text(encoding="utf-8"))
    assert "Figure skipped: estimate.csv lacks the column(s) blocking." in page
    assert not list(tmp_path.glob("*.png"))


def test_an_empty_or_missing_folder_is_an_input_error(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="no result files"):
        write_report(tmp_path)
    with pytest.raises(InputError, match="no such folder"):
        write_report(tmp_path / "absent")


def test_a_broken_run_record_is_an_input_error(tmp_path: Path) -> None:
    (tmp_path / "run.json").write_text("{not json")
    with pytest.raises(InputError) as info:
        write_report(tmp_path)
    assert "run.json" in str(info.value) and "JSON" in str(info.value)


# --- in a browser ---------------------------------------------------------------------------------

# Added to a test copy only: records every failed load and script error, then writes each image's
# decoded size into the page, where --dump-dom can read it back.
PROBE = """<script>
var probeErrors = [];
window.addEventListener('error', function (e) {
  var t = e.target;
  probeErrors.push(t && t.tagName ? t.tagName + ' failed to load' : 'script error: ' + e.message);
}, true);
window.addEventListener('load', function () {
  var images = Array.prototype.map.call(document.images, function (img) {
    return {alt: img.alt, complete: img.complete, width: img.naturalWidth, height: img.naturalHeight};
  });
  var out = document.createElement('pre');
  out.id = 'probe-result';
  out.textContent = JSON.stringify({images: images, errors: probeErrors});
  document.body.appendChild(out);
});
</script>
"""

CHROMIUM_FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-extensions",
    "--disable-dev-shm-usage",
    "--hide-scrollbars",
    "--enable-logging=stderr",
    "--v=0",
]


def run_chromium(page: Path, work: Path, *extra: str) -> subprocess.CompletedProcess:
    profile = work / f"profile-{len(list(work.glob('profile-*')))}"
    return subprocess.run(
        [str(CHROMIUM), *CHROMIUM_FLAGS, f"--user-data-dir={profile}", *extra, page.as_uri()],
        capture_output=True,
        text=True,
        timeout=120,
        check=True,
    )


def probe(page: Path, work: Path) -> tuple[dict, list[str]]:
    """Load ``page`` with the probe; return its findings and the page's console lines."""
    copy = work / "probed.html"
    copy.write_text(
        page.read_text(encoding="utf-8").replace("<head>\n", "<head>\n" + PROBE, 1), encoding="utf-8"
    )
    done = run_chromium(copy, work, "--dump-dom")
    found = re.search(r'<pre id="probe-result">(.*?)</pre>', done.stdout, re.S)
    assert found, "the probe did not run: " + done.stderr[-2000:]
    console = [line for line in done.stderr.splitlines() if ":CONSOLE" in line]
    return json.loads(html.unescape(found.group(1))), console


needs_chromium = pytest.mark.skipif(
    not CHROMIUM.exists(),
    reason="chromium is not installed at /usr/bin/chromium "
    "(Debian packages chromium and chromium-driver; .ci/run installs them)",
)


@needs_chromium
def test_every_figure_loads_in_chromium_without_console_errors(reported: Path, tmp_path: Path) -> None:
    page = reported / "report.html"
    findings, console = probe(page, tmp_path)
    expected = len(re.findall(r"<img ", page.read_text(encoding="utf-8")))
    assert len(findings["images"]) == expected == len(list(reported.glob("*.png")))
    for image in findings["images"]:
        assert image["complete"] and image["width"] > 300 and image["height"] > 200, image
    assert findings["errors"] == []
    assert console == [], console

    shot = tmp_path / "report-screenshot.png"
    run_chromium(page, tmp_path, f"--screenshot={shot}", "--window-size=1280,2400")
    pixels = mpimg.imread(shot)
    assert pixels.shape[:2] == (2400, 1280)
    assert pixels[..., :3].std() > 0.05, "the screenshot is (nearly) a single colour"


@needs_chromium
def test_the_browser_probe_notices_a_broken_image(simulated: Path, tmp_path: Path) -> None:
    # The check above must be able to fail: a truncated data URI decodes to nothing.
    page = tmp_path / "broken.html"
    page.write_text(
        "<!DOCTYPE html>\n<html>\n<head>\n<title>t</title></head><body>"
        '<img src="data:image/png;base64,iVBORw0KGgo=" alt="broken"></body></html>\n',
        encoding="utf-8",
    )
    findings, _ = probe(page, tmp_path)
    assert findings["images"][0]["width"] == 0
    assert findings["errors"] == ["IMG failed to load"]


def test_text_from_the_tables_is_escaped_not_interpreted(tmp_path: Path) -> None:
    # Autoescaping: markup in a table cell or a file name shows as text and opens no element.
    pd.DataFrame([{"architecture": "<b>bold</b> & co", "load_erlang": 1.0, "blocking": 0.1}]).to_csv(
        tmp_path / "estimate.csv", index=False
    )
    pd.DataFrame([{"note": '<img src="x">'}]).to_csv(tmp_path / "extra<i>.csv", index=False)
    page = write_report(tmp_path).read_text(encoding="utf-8")
    assert "<b>bold</b>" not in page and "&lt;b&gt;bold&lt;/b&gt; &amp; co" in page
    assert '<img src="x">' not in page and "extra&lt;i&gt;.csv" in page
