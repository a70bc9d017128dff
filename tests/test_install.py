"""A plain (not editable) install of the wheel works outside the repository.

The wheel is built from a copy of the sources and installed, without its dependencies, into a
new virtual environment that borrows the test environment's libraries through a ``.pth`` line
(the borrowed folder's own ``.pth`` files, among them the editable install of this checkout,
are not read that way).  Everything then runs from a folder outside the repository, so only
what the wheel ships can be found.  ``bench/check_install.py`` does the full thing: a fresh
venv, ``pip install .`` with every dependency, ``sdmnet demo``.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
import sysconfig
import venv
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
_NOT_SOURCES = shutil.ignore_patterns(".*", "build", "dist", "*.egg-info", "__pycache__", "results", "tests", "bench")


def _run(*args: str | Path, cwd: Path) -> str:
    done = subprocess.run([str(a) for a in args], cwd=cwd, capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, f"{args}: {done.stdout[-2000:]}{done.stderr[-2000:]}"
    return done.stdout


@pytest.mark.slow
def test_the_wheel_runs_from_any_folder(tmp_path: Path) -> None:
    sources = tmp_path / "sources"
    shutil.copytree(ROOT, sources, symlinks=True, ignore=_NOT_SOURCES)
    _run(sys.executable, "-m", "pip", "wheel", "--quiet", "--no-deps", "-w", tmp_path / "wheels", sources, cwd=tmp_path)
    (wheel,) = (tmp_path / "wheels").glob("sdmnet-*.whl")

    env = tmp_path / "env"
    venv.create(env, with_pip=False)
    bin_dir = env / ("Scripts" if sys.platform == "win32" else "bin")
    purelib = "import sysconfig; print(sysconfig.get_paths()['purelib'])"
    site = Path(_run(bin_dir / "python", "-c", purelib, cwd=tmp_path).strip())
    (site / "borrowed.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    pip = (sys.executable, "-m", "pip", "--python", bin_dir / "python")
    _run(*pip, "install", "--quiet", "--no-deps", "--no-index", wheel, cwd=tmp_path)

    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    where = _run(bin_dir / "python", "-c", "import sdmnet; print(sdmnet.__file__)", cwd=elsewhere)
    assert Path(where.strip()).is_relative_to(site), where
    sdmnet = bin_dir / "sdmnet"
    _run(sdmnet, "starter", "mine", cwd=elsewhere)
    assert "topology 'demo-metro'" in _run(sdmnet, "check", "mine/scenario.toml", cwd=elsewhere)
    _run(sdmnet, "estimate", "mine/scenario.toml", "-o", "out", cwd=elsewhere)
    _run(sdmnet, "report", "out", cwd=elsewhere)  # the page template is package data too
    assert "Network plan: demo" in (elsewhere / "out" / "report.html").read_text(encoding="utf-8")
