"""The standing cautions, as data: every result carries the ones that apply to it.

They are printed with text output and travel in `notes` in machine formats, so a
manuscript report can collect them without parsing prose.
"""

ONE_BIAS = (
    "A sensitivity analysis bounds one kind of bias (unmeasured confounding) under stated "
    "assumptions; it does not show that the association is causal, and it says nothing about "
    "selection bias, measurement error or model misspecification."
)
NOT_A_THRESHOLD = (
    "An E-value is not a pass/fail threshold: no value is 'large enough' in general. Judge it "
    "against the strength of known confounders of this treatment and outcome."
)
COMPARE_KNOWN = (
    "Compare the required confounder strength with the strength of measured covariates and "
    "of confounders known from the literature for this question."
)
BENCHMARKS_MEASURED = (
    "Benchmarks compare a hidden confounder with covariates that were measured; they cannot "
    "say how strong the confounders that were not measured actually are."
)
DEFER = (
    "Report alongside the main analysis as your field's reporting guideline asks (e.g. "
    "STROBE, RECORD), and have the analysis checked in statistical review."
)
EVALUE = (ONE_BIAS, NOT_A_THRESHOLD, DEFER)
PARTIAL_R2 = (ONE_BIAS, COMPARE_KNOWN, BENCHMARKS_MEASURED, DEFER)
TIPPING = (ONE_BIAS, COMPARE_KNOWN, DEFER)
