"""``qcthermo demo [--out DIR] [--force]``: the main job on the bundled sample scenario."""

from __future__ import annotations

import argparse
from pathlib import Path

from ..errors import QcthermoError
from .run import execute


def sample_dir() -> Path:
    """sample_outputs/ of the source tree (the repository root is two levels above the package)."""
    import qcthermo

    return Path(qcthermo.__file__).resolve().parents[1] / "sample_outputs"


def main(args: argparse.Namespace) -> int:
    samples = sample_dir()
    reactions = samples / "reactions.toml"
    if not reactions.is_file():
        raise QcthermoError(f"the sample scenario is not here ({reactions} is missing): the demo needs the "
                            "source tree, not an installed copy")
    print(f"qcthermo demo: running on {samples} with {reactions.name}")
    return execute(samples, reactions, args)
