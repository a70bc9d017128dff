"""The progress bar: live on a terminal, one summary line elsewhere, nothing when quiet."""

from __future__ import annotations

import io

from sdmnet.sim.progress import ProgressBar


class Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_off_a_terminal_only_one_summary_line_is_written() -> None:
    log = io.StringIO()
    with ProgressBar("simulate", "tasks", 3, stream=log) as bar:
        bar.step()
        bar.step("latest: 0.01")
        assert log.getvalue() == "", "nothing while the run goes"
        bar.step()
    lines = log.getvalue().splitlines()
    assert len(lines) == 1 and lines[0].startswith("simulate: 3/3 tasks in ") and lines[0].endswith(" s")


def test_a_run_stopped_early_says_so_and_an_unknown_total_is_a_count() -> None:
    log = io.StringIO()
    bar = ProgressBar("simulate", "tasks", 5, stream=log)
    bar.start_at(2)  # resumed: two were on disk
    bar.step()
    bar.close()
    bar.close()  # a second close writes nothing more
    assert log.getvalue().startswith("simulate: 3/5 tasks in ") and log.getvalue().endswith("(stopped early)\n")
    log = io.StringIO()
    with ProgressBar("plan", "candidates", stream=log) as bar:
        bar.step("pairs [1, 2]")
    assert log.getvalue().startswith("plan: 1 candidates in ")


def test_quiet_writes_nothing_even_on_a_terminal() -> None:
    screen = Terminal()
    with ProgressBar("forecast", "years", 4, enabled=False, stream=screen) as bar:
        bar.step()
        bar.note("year 1")
    assert screen.getvalue() == ""


def test_on_a_terminal_the_bar_is_drawn_and_left_as_the_last_line() -> None:
    screen = Terminal()
    with ProgressBar("forecast", "years", 2, stream=screen) as bar:
        bar.step("year 0 planned")
        bar.step("year 1 planned")
    shown = screen.getvalue()
    last = shown.replace("\r", "\n").rstrip("\n").splitlines()[-1]
    assert last.startswith("forecast: 100%") and "2/2" in last and "year 1 planned" in last
    assert shown.endswith("\n")
