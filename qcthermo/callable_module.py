"""Modules named like their main function: ``qcthermo.survey`` and ``qcthermo.simulate``.

Importing a submodule sets the package's attribute of the same name to the module, which would hide the
function the design names (``qcthermo.survey(directory)``, ``qcthermo.simulate(results, ...)``). Such a module
calls :func:`make_callable` last, so that calling it calls the function, whichever of the two the name holds.
"""

from __future__ import annotations

import sys
import types
from collections.abc import Callable
from typing import Any


def make_callable(module_name: str, function: Callable[..., Any]) -> None:
    """Make the module ``module_name`` callable: ``module(*args, **kwargs)`` returns ``function(*args, **kwargs)``."""

    class _CallableModule(types.ModuleType):
        def __call__(self, *args: Any, **kwargs: Any) -> Any:
            return function(*args, **kwargs)

    sys.modules[module_name].__class__ = _CallableModule
