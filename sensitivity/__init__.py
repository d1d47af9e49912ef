"""How strong would an unmeasured confounder have to be to explain an estimate away?

Public API (imported lazily, so `import sensitivity` costs almost nothing):

- `evalue`, `evalue_of_rr`, `evalue_of_interval`, `bounding_factor`: E-values (any scale).
- `partial_r2_summary`, `partial_r2_from_model`, `partial_r2_from_data`: omitted-variable
  bias in the partial R² parameterisation for an OLS coefficient.
- `binary_confounder_grid`, `bounding_grid`, `partial_r2_grid`: tipping-point grids.
"""

from importlib import import_module

__version__ = "0.1.0"

_EXPORTS = {
    "evalue": "evalues",
    "evalue_of_rr": "evalues",
    "evalue_of_interval": "evalues",
    "bounding_factor": "evalues",
    "to_risk_ratio": "evalues",
    "EValueResult": "evalues",
    "partial_r2_summary": "partial_r2",
    "PartialR2Result": "partial_r2",
    "robustness_value": "partial_r2",
    "partial_r2_from_model": "regression",
    "partial_r2_from_data": "regression",
    "binary_confounder_grid": "tipping",
    "bounding_grid": "tipping",
    "partial_r2_grid": "tipping",
    "SensitivityWarning": "_warnings",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name):
    if name in _EXPORTS:
        return getattr(import_module(f".{_EXPORTS[name]}", __name__), name)
    raise AttributeError(f"module 'sensitivity' has no attribute {name!r}")


def __dir__():
    return __all__ + ["__version__"]
