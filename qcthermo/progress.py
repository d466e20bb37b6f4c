"""A progress bar on stderr for any command that reads files.

Drawn with rich only when asked for and stderr is a terminal (never in a pipe, a log file or under
``--quiet``). It refreshes from the calling thread, at most ten times a second: no background thread,
so worker processes forked while it is shown inherit no half-held lock.
"""

from __future__ import annotations

import sys
import time
from typing import Any

#: seconds between two redraws
REFRESH_INTERVAL_S = 0.1


class ProgressBar:
    """``with ProgressBar(total, "reading", enabled) as bar: ... bar.advance()``; a no-op when disabled."""

    def __init__(self, total: int, description: str = "reading", enabled: bool = True):
        self.total = total
        self.description = description
        self.enabled = bool(enabled) and total > 0 and sys.stderr.isatty()
        self._progress: Any = None
        self._task: Any = None
        self._last_draw = 0.0

    def __enter__(self) -> ProgressBar:
        if self.enabled:
            from rich.console import Console
            from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

            self._progress = Progress(
                TextColumn("{task.description}"),
                BarColumn(),
                MofNCompleteColumn(),
                TimeRemainingColumn(),
                console=Console(stderr=True),
                auto_refresh=False,
                transient=True,
            )
            self._progress.start()
            self._task = self._progress.add_task(self.description, total=self.total)
        return self

    def advance(self, n: int = 1) -> None:
        if self._progress is None:
            return
        self._progress.advance(self._task, n)
        now = time.monotonic()
        if now - self._last_draw >= REFRESH_INTERVAL_S:
            self._last_draw = now
            self._progress.refresh()

    def __exit__(self, *exc) -> None:
        if self._progress is not None:
            self._progress.stop()
            self._progress = None
