"""The command line end to end: exit codes, the one-line error, interrupt and resume."""

from __future__ import annotations

import csv
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from sdmnet import api
from sdmnet.cli import main
from sdmnet.inputs.loaders import load_scenario
from sdmnet.output.manifest import LOCK_FILE
from sdmnet.sim.sweep import TaskStore

ROOT = Path(__file__).resolve().parent.parent
DEMO_TOPOLOGY = ROOT / "topologies" / "demo-metro.toml"


def _scenario(tmp_path: Path, requests: int = 3000, replications: int = 3, name: str = "s.toml") -> Path:
    text = f"""
name = "cli-test"
topology = "{DEMO_TOPOLOGY.as_posix()}"
seed = 5

[traffic]
pattern = "gravity"
load_erlang = [60.0, 90.0]
mean_holding = 1.0
sizes_gbps = {{ "400" = 0.5, "1600" = 0.5 }}

[transceiver]
lane_gbps = 400.0

[run]
requests = {requests}
warmup = 500
replications = {replications}
k_paths = 2

[[architectures]]
name = "core-wise"
switching = "independent"
fiber_type = "mcf7-weak"

[[architectures]]
name = "joint-rc4"
switching = "joint"
fiber_type = "mcf4-rc"
"""
    path = tmp_path / name
    path.write_text(text)
    return path


def _run(*args: str, **kw) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "sdmnet", *args], capture_output=True, text=True, **kw)


def test_check_prints_what_a_scenario_holds(tmp_path, capsys):
    assert main(["check", str(_scenario(tmp_path))]) == 0
    out = capsys.readouterr().out
    assert "core-wise" in out and "joint-rc4" in out and "dc_alpha" in out


def test_check_warns_of_weak_cores_beyond_a_standard_cladding(tmp_path, capsys):
    # A 7-core weakly coupled fiber with no cladding stated: more cores than a standard 125 um
    # cladding fits (about 4; common practice, no source): a warning, not an error.
    topo = tmp_path / "t.toml"
    text = DEMO_TOPOLOGY.read_text().replace("cladding_um = 150.0\n", "", 1)
    topo.write_text(text)
    assert main(["check", str(topo)]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1
    assert err[0].startswith(f"warning: {topo}: fiber_types.mcf7-weak: 7 weakly coupled cores with no cladding_um")
    assert main(["check", str(DEMO_TOPOLOGY)]) == 0  # the bundled demo states its large cladding
    assert capsys.readouterr().err == ""


def test_bad_input_gives_one_line_and_status_2(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('name = "x"\ntopology = "missing.toml"\nseed = 1\n')
    proc = _run("simulate", str(bad), "-o", str(tmp_path / "out"))
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {bad}: ")
    assert "Traceback" not in proc.stderr


@pytest.mark.parametrize(
    ("section", "line", "message"),
    [
        ("costs", "wss_port = 0.2", "costs: unknown key 'wss_port' (did you mean 'wss_port_core'?)"),
        ("power", "fiber_xc_port = -1.0", "power.fiber_xc_port: must be >= 0, got -1"),
    ],
)
def test_bad_cost_or_power_item_gives_one_line_and_status_2(tmp_path, section, line, message):
    scen = _scenario(tmp_path)
    scen.write_text(scen.read_text() + f"\n[{section}]\n{line}\n")
    proc = _run("simulate", str(scen), "-o", str(tmp_path / "out"))
    assert proc.returncode == 2
    assert proc.stderr.strip().splitlines() == [f"error: {scen}: {message}"]
    assert not (tmp_path / "out").exists()


def test_bad_option_gives_one_line_and_status_2(tmp_path):
    proc = _run("simulate", str(_scenario(tmp_path)), "--jobs", "zero")
    assert proc.returncode == 2
    assert proc.stderr.strip().startswith("error: <command line>:")
    assert len(proc.stderr.strip().splitlines()) == 1


def test_unwritable_output_folder_is_an_input_error(tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("")
    proc = _run("estimate", str(_scenario(tmp_path)), "-o", str(blocker / "sub"))
    assert proc.returncode == 2
    assert proc.stderr.startswith(f"error: {blocker / 'sub'}: --out: cannot write the output folder")


@pytest.mark.slow
def test_simulate_estimate_paths_write_their_files(tmp_path):
    scen = _scenario(tmp_path, requests=1000, replications=2)
    out = tmp_path / "sim"
    assert main(["simulate", str(scen), "-o", str(out), "--quiet"]) == 0
    for name in ("summary.csv", "classes.csv", "pairs.csv", "sites.csv", "cables.csv", "run.json", "blocking.png"):
        assert (out / name).exists(), name
    assert main(["estimate", str(scen), "-o", str(tmp_path / "est")]) == 0
    assert (tmp_path / "est" / "estimate.csv").exists()
    assert main(["paths", str(scen), "-o", str(tmp_path / "paths")]) == 0
    assert (tmp_path / "paths" / "paths.csv").exists()


@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM])
def test_interrupted_then_resumed_sweep_equals_uninterrupted(tmp_path, signum, monkeypatch, capsys, sigint_raises):
    # The signal is sent from inside the sweep, right after the third task file is saved, while
    # the two workers still have tasks: the same point of interruption on any machine.
    scen = _scenario(tmp_path, requests=2000, replications=6)
    whole, broken = tmp_path / "whole", tmp_path / "broken"
    api.simulate(load_scenario(scen), whole, jobs=2, progress=False, figures=False)

    saved: list[str] = []
    save = TaskStore.save

    def save_then_signal(self, task, record):
        save(self, task, record)
        saved.append(task.key)
        if len(saved) == 3:
            os.kill(os.getpid(), signum)

    monkeypatch.setattr(TaskStore, "save", save_then_signal)
    capsys.readouterr()
    assert main(["simulate", str(scen), "-o", str(broken), "--jobs", "2", "--quiet"]) == 130
    err = capsys.readouterr().err
    assert "Traceback" not in err and err.startswith("interrupted: ") and err.count("\n") == 1, err
    # Exactly the three saved tasks, whole, and nothing else (no temporary, no results).
    assert sorted(p.name for p in (broken / "tasks").iterdir()) == sorted(f"{key}.json" for key in saved)
    assert len(saved) == 3
    assert not (broken / "summary.csv").exists()

    monkeypatch.undo()
    api.simulate(load_scenario(scen), broken, jobs=2, resume=True, progress=False, figures=False)
    assert (broken / "summary.csv").read_bytes() == (whole / "summary.csv").read_bytes()


@pytest.mark.slow
def test_a_second_writer_into_the_same_folder_is_refused_and_a_crash_leaves_resume_working(tmp_path):
    # Two real runs into one folder: the second must not mix its results with the first's.
    scen = _scenario(tmp_path, requests=2_000_000, replications=3)
    out = tmp_path / "out"
    first = subprocess.Popen(
        [sys.executable, "-m", "sdmnet", "simulate", str(scen), "-o", str(out), "--quiet"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    lock = out / LOCK_FILE
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and first.poll() is None:
        if lock.exists() and lock.read_text().strip() == str(first.pid):
            break
        time.sleep(0.05)
    assert first.poll() is None, "the first run ended before the second could start"

    second = _run("simulate", str(scen), "-o", str(out), "--seed", "2", "--quiet")
    assert second.returncode == 2
    lines = second.stderr.strip().splitlines()
    assert lines == [
        f"error: {out}: --out: another sdmnet run (process {first.pid}) is writing into this folder; "
        "wait for it, or choose another --out"
    ]

    # A crash of the first run leaves its lock file behind; it must not block --resume.
    first.send_signal(signal.SIGKILL)
    first.communicate(timeout=60)
    assert lock.exists()
    resumed = _run("simulate", str(scen), "-o", str(out), "--resume", "--requests", "500", "--quiet")
    assert resumed.returncode == 0, resumed.stderr
    assert (out / "summary.csv").exists() and (out / "report.html").exists()


def test_one_replication_says_there_is_no_interval(tmp_path, capsys):
    scen = _scenario(tmp_path, requests=300, replications=1)
    out = tmp_path / "one"
    assert main(["simulate", str(scen), "-o", str(out), "--quiet"]) == 0
    err = capsys.readouterr().err
    assert "note: one replication per point, so no confidence interval can be made" in err
    html = (out / "report.html").read_text()
    assert "No confidence interval</strong> for 4 of the 4 rows of summary.csv" in html
    assert "nan %" not in html


def test_too_many_jobs_and_a_bad_memory_limit_are_refused(tmp_path):
    scen = str(_scenario(tmp_path))
    for option, value, what in (("--jobs", "100000", "must be at most 256"), ("--memory-limit", "lots", "not a size")):
        proc = _run("simulate", scen, option, value)
        assert proc.returncode == 2
        lines = proc.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("error: <command line>:") and what in lines[0], proc.stderr


def test_a_run_larger_than_the_memory_limit_is_refused_before_it_starts(tmp_path, capsys):
    scen = _scenario(tmp_path, requests=300, replications=2)
    out = tmp_path / "small"
    assert main(["simulate", str(scen), "-o", str(out), "--quiet", "--memory-limit", "100K"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith(f"error: {scen}: ")
    assert "more than the --memory-limit given (0.102 MB)" in err[0] and "--memory-limit SIZE (or none)" in err[0]
    assert not (out / "summary.csv").exists()
    assert main(["simulate", str(scen), "-o", str(out), "--quiet", "--memory-limit", "none"]) == 0


def test_simulate_takes_the_estimate_from_the_command_line(tmp_path, capsys):
    scen = _scenario(tmp_path, requests=300, replications=2)
    out = tmp_path / "sim"
    assert main(["simulate", str(scen), "-o", str(out), "--quiet", "--estimate", "fixed-point"]) == 0
    with open(out / "summary.csv", newline="") as fh:
        assert {row["estimate_method"] for row in csv.DictReader(fh)} == {"fixed-point"}
    capsys.readouterr()
    proc = _run("simulate", str(scen), "--estimate", "fast")
    assert proc.returncode == 2 and proc.stderr.startswith("error: <command line>:")


def test_an_unknown_estimate_in_the_scenario_names_the_choices(tmp_path):
    scen = _scenario(tmp_path)
    scen.write_text(scen.read_text().replace("k_paths = 2", 'k_paths = 2\nestimate = "rooted"'))
    proc = _run("check", str(scen))
    assert proc.returncode == 2
    line = proc.stderr.strip()
    assert line.startswith(f"error: {scen}: run.estimate:") and "'routed'" in line


def _command(tmp_path: Path, before: str, *args: str) -> subprocess.CompletedProcess:
    """The installed command's entry point (:func:`sdmnet.cli.run`) in a fresh process, after ``before``."""
    code = f"import sys\nsys.argv = ['sdmnet', *{list(args)!r}]\n{before}\nfrom sdmnet.cli import run\nrun()\n"
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=tmp_path)


def test_the_command_ends_with_mains_status_its_output_and_exit_handlers(tmp_path, capsys):
    # run() ends the process without tearing the interpreter down: nothing printed may be lost,
    # the status must be main's, and exit handlers registered by anyone must still run.
    scenario = _scenario(tmp_path)
    assert main(["check", str(scenario)]) == 0
    expected = capsys.readouterr().out
    handler = "import atexit\natexit.register(lambda: open('handler-ran', 'w').close())"
    done = _command(tmp_path, handler, "check", str(scenario))
    assert done.returncode == 0
    assert done.stdout == expected
    assert (tmp_path / "handler-ran").exists()
    bad = _command(tmp_path, "", "check", str(tmp_path / "missing.toml"))
    assert bad.returncode == 2
    assert bad.stderr.startswith(f"error: {tmp_path / 'missing.toml'}")


def test_the_command_waits_for_a_thread_still_running(tmp_path):
    # A thread that is not a daemon still has work to do: the normal exit waits for it.
    thread = (
        "import threading, time\n"
        "threading.Thread(target=lambda: (time.sleep(0.3), print('thread done', flush=True))).start()"
    )
    done = _command(tmp_path, thread, "check", str(_scenario(tmp_path)))
    assert done.returncode == 0
    assert done.stdout.splitlines()[-1] == "thread done"


def _modules_after(code: str) -> set[str]:
    """Top-level packages a fresh interpreter holds after running ``code``."""
    probe = code + "\nimport json, sys\nprint(json.dumps(sorted(sys.modules)))"
    done = subprocess.run([sys.executable, "-c", probe], check=True, capture_output=True, text=True)
    return set(json.loads(done.stdout.splitlines()[-1]))


def test_light_commands_and_simulate_import_only_what_they_use() -> None:
    # Issue 16: heavy libraries are imported where they are used.  The command line alone
    # (help, check) needs none of them; simulate and its report need neither scipy (a
    # link-pair chain or a binomial tail imports it when it is solved) nor pyplot.
    light = _modules_after("import sdmnet.cli")
    assert not {"numpy", "pandas", "matplotlib", "scipy"} & {m.split(".")[0] for m in light}
    full = _modules_after("import sdmnet.api, sdmnet.output.report")
    assert "scipy" not in {m.split(".")[0] for m in full}
    assert "matplotlib.pyplot" not in full
