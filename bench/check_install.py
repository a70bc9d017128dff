"""A new user's install: a fresh venv, ``pip install .`` (not editable), ``sdmnet demo`` elsewhere.

Run: ``python3 bench/check_install.py`` (a few minutes: pip fetches every dependency).  Makes a
temporary folder outside the repository holding a new virtual environment, installs this
checkout into it the ordinary way, then runs ``sdmnet starter`` and ``sdmnet demo`` from another
temporary folder, so only what the wheel ships can be found.  Prints where ``sdmnet`` was
imported from and the wall time of each step; exits non-zero if a step fails.  Not part of
``make bench`` (its time is mostly downloads).  ``--keep`` leaves the folder for a look.
"""

from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def step(what: str, args: list[str], cwd: Path) -> str:
    started = time.perf_counter()
    done = subprocess.run(args, cwd=cwd, capture_output=True, text=True)
    seconds = time.perf_counter() - started
    print(f"{what:<44} {seconds:7.1f} s  exit {done.returncode}")
    if done.returncode != 0:
        sys.stderr.write(done.stdout[-3000:] + done.stderr[-3000:])
        raise SystemExit(1)
    return done.stdout


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--keep", action="store_true", help="keep the temporary folder")
    args = parser.parse_args()
    work = Path(tempfile.mkdtemp(prefix="sdmnet-install-"))
    try:
        env = work / "venv"
        step("python -m venv", [sys.executable, "-m", "venv", str(env)], work)
        python, sdmnet = str(env / "bin" / "python"), str(env / "bin" / "sdmnet")
        step("pip install . (not editable, with deps)", [python, "-m", "pip", "install", "--quiet", str(ROOT)], work)
        elsewhere = work / "elsewhere"
        elsewhere.mkdir()
        where = step("import sdmnet", [python, "-c", "import sdmnet; print(sdmnet.__file__)"], elsewhere).strip()
        print(f"  sdmnet imported from {where}")
        if ROOT in Path(where).parents:
            raise SystemExit("sdmnet was imported from the checkout, not from the install")
        step("sdmnet --help", [sdmnet, "--help"], elsewhere)
        step("sdmnet starter mine", [sdmnet, "starter", "mine"], elsewhere)
        step("sdmnet check mine/scenario.toml", [sdmnet, "check", "mine/scenario.toml"], elsewhere)
        step("sdmnet demo --quiet", [sdmnet, "demo", "--quiet"], elsewhere)
        report = elsewhere / "results" / "demo" / "report.html"
        print(f"  {report} ({report.stat().st_size:,} bytes)")
    finally:
        if args.keep:
            print(f"kept {work}")
        else:
            shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
