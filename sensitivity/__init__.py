"""How strong would an unmeasured confounder have to be to explain an estimate away?

Public API (imported lazily, so `import sensitivity` costs almost nothing):

- `evalue`, `evalue_of_rr`, `evalue_of_interval`, `bounding_factor`, `to_risk_ratio`: E-values
  on any scale, vectorised over rows (scales may differ per row); `evalue_from_text`: one
  result as published ("HR 0.72 (95% CI 0.60-0.86)").
- `partial_r2_summary`, `partial_r2_from_model`, `partial_r2_from_data`: omitted-variable
  bias in the partial R² parameterisation for an OLS coefficient; `published_benchmark`,
  `with_published_benchmarks`: benchmarks from a paper's published numbers.
- `binary_confounder_grid`, `bounding_grid`, `partial_r2_grid`: tipping-point grids.
- `screen_table`, `screen_batches`, `screen_frames`, `screen_summary`: many published
  results at once (a pandas, polars or Arrow table, or a stream of Arrow record batches or
  of polars DataFrames).
- `debiased_fit`: cross-fitted debiased machine learning (scikit-learn learners) whose
  `.bounds()` gives omitted-variable bounds for confounders of chosen strength.
- `from_model`: a fitted model into the right result; `report`: results or fitted models into
  the manuscript folder (report.md, report.html, tables.tex, report.json, figures).
- `weighted_sensitivity` (a table and a propensity formula or column) and `weighting_bounds`
  (arrays): a weighted (IPW) effect under the marginal sensitivity model.
- `InputError` (bad input, a ValueError) and `SensitivityWarning`.
"""

from importlib import import_module
from typing import Any

__version__ = "0.1.0"

_EXPORTS = {
    "evalue": "evalues",
    "evalue_from_text": "adapters.published",
    "evalue_of_rr": "evalues",
    "evalue_of_interval": "evalues",
    "evalue_rows": "evalues",
    "bounding_factor": "evalues",
    "to_risk_ratio": "evalues",
    "from_risk_ratio": "evalues",
    "EValueResult": "evalues",
    "partial_r2_summary": "partial_r2",
    "PartialR2Result": "partial_r2",
    "robustness_value_of_t": "partial_r2",
    "published_benchmark": "partial_r2",
    "with_published_benchmarks": "partial_r2",
    "partial_r2_from_model": "adapters.statsmodels",
    "partial_r2_from_data": "adapters.statsmodels",
    "binary_confounder_grid": "tipping",
    "bounding_grid": "tipping",
    "partial_r2_grid": "tipping",
    "TippingGrid": "tipping",
    "impact_threshold": "impact",
    "simulate": "simulate",
    "rosenbaum_bounds": "matched",
    "coefficient_stability": "stability",
    "coefficient_stability_from_data": "adapters.stability",
    "rosenbaum_bounds_from_data": "adapters.matched",
    "from_model": "adapters",
    "evalue_from_model": "adapters.models",
    "report": "reporting",
    "screen_table": "screen.stream",
    "screen_batches": "screen.stream",
    "screen_frames": "screen.stream",
    "screen_summary": "screen.stream",
    "weighting_bounds": "weighting",
    "weighted_sensitivity": "weighting",
    "WeightingResult": "weighting",
    "InputError": "common.errors",
    "SensitivityWarning": "common.errors",
}

#: Folders of the package that are not method families.
_NOT_FAMILIES = frozenset({"adapters", "commands", "common", "output", "screen"})


def _family_exports() -> dict[str, str]:
    """Each method family's public names (its ``__all__``), found from the folders, so a new
    family is exported without an edit here. Imported only when a name is not listed above."""
    from pathlib import Path

    found: dict[str, str] = {}
    for folder in sorted(Path(__file__).parent.iterdir()):
        if folder.name in _NOT_FAMILIES or not (folder / "__init__.py").is_file():
            continue
        module = import_module(f".{folder.name}", __name__)
        for name in getattr(module, "__all__", ()):
            found.setdefault(name, folder.name)
    return found


__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name in _EXPORTS:
        return getattr(import_module(f".{_EXPORTS[name]}", __name__), name)
    if not name.startswith("_"):
        family = _family_exports().get(name)
        if family is not None:
            return getattr(import_module(f".{family}", __name__), name)
    raise AttributeError(f"module 'sensitivity' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(__all__) | set(_family_exports())) + ["__version__"]
