"""The standing cautions and the references, as data.

Every result carries the cautions that apply to it; text output prints them and JSON lists
them under `notes`, so a manuscript report can collect them without parsing prose.
"""

from __future__ import annotations

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

# References, keyed for results to cite (volume and pages from the project's methods notes).
REFERENCES = {
    "vanderweele-ding-2017": (
        "VanderWeele TJ, Ding P (2017). Sensitivity analysis in observational research: "
        "introducing the E-value. Annals of Internal Medicine 167:268-274."
    ),
    "ding-vanderweele-2016": (
        "Ding P, VanderWeele TJ (2016). Sensitivity analysis without assumptions. "
        "Epidemiology 27:368-377."
    ),
    "vanderweele-2017": (
        "VanderWeele TJ (2017). On a square-root transformation of the odds ratio for a common "
        "outcome. Epidemiology 28:e58-e60."
    ),
    "vanderweele-2020": (
        "VanderWeele TJ (2020). Optimal approximate conversions of odds ratios and hazard "
        "ratios to risk ratios. Biometrics 76:746-752."
    ),
    "cinelli-hazlett-2020": (
        "Cinelli C, Hazlett C (2020). Making sense of sensitivity: extending omitted variable "
        "bias. Journal of the Royal Statistical Society, Series B 82:39-67."
    ),
    "lin-psaty-kronmal-1998": (
        "Lin DY, Psaty BM, Kronmal RA (1998). Assessing the sensitivity of regression results "
        "to unmeasured confounders in observational studies. Biometrics 54:948-963."
    ),
    "vanderweele-arah-2011": (
        "VanderWeele TJ, Arah OA (2011). Bias formulas for sensitivity analysis of unmeasured "
        "confounding for general outcomes, treatments, and confounders. Epidemiology 22:42-52."
    ),
    "rosenbaum-2002": (
        "Rosenbaum PR (2002). Observational Studies, 2nd edition. New York: Springer "
        "(chapter 4, sensitivity to hidden bias)."
    ),
    "oster-2019": (
        "Oster E (2019). Unobservable selection and coefficient stability: theory and "
        "evidence. Journal of Business & Economic Statistics 37:187-204."
    ),
    "frank-2000": (
        "Frank KA (2000). Impact of a confounding variable on a regression coefficient. "
        "Sociological Methods & Research 29:147-194."
    ),
    "greenland-2005": (
        "Greenland S (2005). Multiple-bias modelling for analysis of observational data. "
        "Journal of the Royal Statistical Society, Series A 168:267-306."
    ),
    "lash-fox-fink-2009": (
        "Lash TL, Fox MP, Fink AK (2009). Applying Quantitative Bias Analysis to "
        "Epidemiologic Data. New York: Springer."
    ),
    "mathur-vanderweele-2020": (
        "Mathur MB, VanderWeele TJ (2020). Sensitivity analysis for unmeasured confounding in "
        "meta-analyses. Journal of the American Statistical Association 115:163-172."
    ),
    "dersimonian-laird-1986": (
        "DerSimonian R, Laird N (1986). Meta-analysis in clinical trials. Controlled Clinical "
        "Trials 7:177-188."
    ),
    "paule-mandel-1982": (
        "Paule RC, Mandel J (1982). Consensus values and weighting factors. Journal of Research "
        "of the National Bureau of Standards 87:377-385."
    ),
    "biggerstaff-tweedie-1997": (
        "Biggerstaff BJ, Tweedie RL (1997). Incorporating variability in estimates of "
        "heterogeneity in the random effects model in meta-analysis. Statistics in Medicine "
        "16:753-768."
    ),
    "chernozhukov-cinelli-2022": (
        "Chernozhukov V, Cinelli C, Newey W, Sharma A, Syrgkanis V (2022). Long story short: "
        "omitted variable bias in causal machine learning. NBER Working Paper 30302; "
        "arXiv:2112.13398."
    ),
    "tan-2006": (
        "Tan Z (2006). A distributional approach for causal inference using propensity scores. "
        "Journal of the American Statistical Association 101:1619-1637."
    ),
    "zhao-small-bhattacharya-2019": (
        "Zhao Q, Small DS, Bhattacharya BB (2019). Sensitivity analysis for inverse probability "
        "weighting estimators via the percentile bootstrap. Journal of the Royal Statistical "
        "Society, Series B 81:735-761."
    ),
    "dorn-guo-2023": (
        "Dorn J, Guo K (2023). Sharp sensitivity analysis for inverse propensity weighting via "
        "quantile balancing. Journal of the American Statistical Association 118:2645-2657."
    ),
}
