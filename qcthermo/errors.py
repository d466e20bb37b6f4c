"""Exceptions raised for bad input. Each carries a one-line, user-facing reason."""

from __future__ import annotations


class QcthermoError(ValueError):
    """Base class: bad input the user can fix; ``str(err)`` is one line."""


class LogReadError(QcthermoError):
    """A file could not be read as a quantum-chemistry log."""

    def __init__(self, path: str, reason: str):
        self.path = str(path)
        self.reason = " ".join(str(reason).split())  # always one line
        super().__init__(f"{self.path}: {self.reason}")


class ReactionFileError(QcthermoError):
    """A reaction file is malformed; the message names the line and the item."""


class ThermoError(QcthermoError):
    """A molecule cannot be treated as asked (e.g. a large imaginary mode on a minimum)."""


class SimulationError(QcthermoError):
    """A microkinetic simulation cannot be set up or run as asked (bad initial state, times, network)."""
