"""How far a long run has got: one progress bar on stderr (tqdm).

On a terminal the bar is live and stays as the run's last line.  When stderr is not a terminal
(a log file, a pipe, CI) nothing is drawn while the run goes, and one summary line is written
at the end.  With ``enabled=False`` (``--quiet``) nothing is written at all.
"""

from __future__ import annotations

import sys
import time
from types import TracebackType
from typing import TextIO

__all__ = ["ProgressBar"]


class ProgressBar:
    """One bar: ``label`` and a count of ``unit`` out of ``total`` (None: not known in advance).

    Parameters
    ----------
    label : str
        What runs (``"simulate"``, ``"plan"``...): the bar's and the summary's first word.
    unit : str
        What is counted (``"tasks"``, ``"candidates"``, ``"years"``).
    total : int, optional
        How many there will be.
    enabled : bool
        False writes nothing (``--quiet``).
    stream : file, optional
        Where to write (default: stderr at the time of writing).
    """

    def __init__(
        self, label: str, unit: str, total: int | None = None, *, enabled: bool = True, stream: TextIO | None = None
    ) -> None:
        self.label, self.unit, self.total = label, unit, total
        self.done = 0
        self.enabled = enabled
        self.stream = stream if stream is not None else sys.stderr
        self.started = time.monotonic()
        self._closed = False
        self._bar = None
        if enabled and _is_terminal(self.stream):
            from tqdm import tqdm  # here: a run without a terminal never needs it

            self._bar = tqdm(total=total, desc=label, unit=f" {unit}", file=self.stream, leave=True, dynamic_ncols=True)

    def start_at(self, done: int) -> None:
        """Count ``done`` already finished (resumed work) without counting them as progress made now."""
        self.done = done
        if self._bar is not None:
            self._bar.n = done
            self._bar.refresh()

    def step(self, note: str | None = None, n: int = 1) -> None:
        """``n`` more done; ``note`` (the latest result, say) is shown beside the bar."""
        self.done += n
        if self._bar is not None:
            if note is not None:
                self._bar.set_postfix_str(note, refresh=False)
            self._bar.update(n)

    def note(self, text: str) -> None:
        """Show ``text`` beside the bar without counting a step."""
        if self._bar is not None:
            self._bar.set_postfix_str(text)

    def close(self) -> None:
        """End the bar; off a terminal, write the one-line summary."""
        if self._closed:
            return
        self._closed = True
        if self._bar is not None:
            self._bar.close()
            return
        if not self.enabled:
            return
        elapsed = time.monotonic() - self.started
        count = f"{self.done}/{self.total}" if self.total is not None else f"{self.done}"
        stopped = " (stopped early)" if self.total is not None and self.done < self.total else ""
        self.stream.write(f"{self.label}: {count} {self.unit} in {elapsed:.1f} s{stopped}\n")
        self.stream.flush()

    def __enter__(self) -> ProgressBar:
        return self

    def __exit__(
        self, kind: type[BaseException] | None, value: BaseException | None, traceback: TracebackType | None
    ) -> None:
        self.close()


def _is_terminal(stream: TextIO) -> bool:
    try:
        return stream.isatty()
    except (AttributeError, ValueError):  # no isatty, or a closed stream
        return False
