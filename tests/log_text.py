"""Numbers as a program printed them in its own output: the log itself is the reference of such checks."""

from __future__ import annotations

import re
from pathlib import Path


def last_printed(path: Path, pattern: str) -> float:
    """Group 1 of the last match of ``pattern`` in the log at ``path``, as a float."""
    return float(re.findall(pattern, path.read_text(errors="replace"))[-1])
