"""Readers: ``read_log(path) -> Calculation`` for every log cclib 1.8.1 reads, with fallbacks.

See docs/readers.md for what is read from where in each program's output.
"""

from .core import read_log

__all__ = ["read_log"]
