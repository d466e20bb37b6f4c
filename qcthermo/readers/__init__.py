"""Readers: ``read_log(path) -> Calculation`` for every log cclib 1.8.1 reads, with fallbacks.

See docs/readers.md for what is read from where in each program's output.
"""

from .core import read_log
from .scan import ScanLog, read_scan


def preload() -> None:
    """Import the parsing libraries now (cclib takes most of a second), so that worker processes forked
    afterwards share them instead of each importing its own copy."""
    import cclib.parser  # noqa: F401


__all__ = ["ScanLog", "preload", "read_log", "read_scan"]
