"""Probabilistic bias analysis for a hidden binary confounder."""

import sys
import types
from typing import Any

from .core import Prior, parse_prior, simulate
from .result import SimulationResult

__all__ = ["Prior", "SimulationResult", "parse_prior", "simulate"]


class _CallableFamily(types.ModuleType):
    """`sensitivity.simulate` is both this folder and the public function: once the folder is
    imported (the command line, a report), Python binds the name on the package to the
    module, so `sensitivity.simulate(...)` raised "'module' object is not callable" (issue
    19). Calling the module calls the function."""

    def __call__(self, *args: Any, **kwargs: Any) -> SimulationResult:
        return simulate(*args, **kwargs)


sys.modules[__name__].__class__ = _CallableFamily
__wrapped__ = simulate  # inspect.signature(sensitivity.simulate) shows the function's
