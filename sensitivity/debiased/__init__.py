"""Omitted-variable bounds for debiased (double) machine-learning estimates ("Long story short").

The arithmetic on arrays is in `sensitivity.debiased.core`; the cross-fitting with
scikit-learn in `sensitivity.debiased.fit`.
"""

from typing import Any

from .result import DebiasedFit, DebiasedResult


def debiased_fit(*args: Any, **kwargs: Any) -> DebiasedFit:
    """Cross-fit the nuisances (see `sensitivity.debiased.fit.debiased_fit`); the fit module,
    which imports pandas and scikit-learn, is loaded only when called."""
    from .fit import debiased_fit as fit

    return fit(*args, **kwargs)


__all__ = ["DebiasedFit", "DebiasedResult", "debiased_fit"]
