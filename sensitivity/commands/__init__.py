"""One click command per file; `cli.py` registers them lazily by name."""

#: command name -> module (in this package) whose `command` object it is, with its short help.
COMMANDS = {
    "evalue": ("evalue", "E-value of an estimate and its CI (rr, or, hr, smd, md, rd)."),
    "partial-r2": ("partial_r2", "Partial-R² bounds for an OLS coefficient, with benchmarks."),
    "tipping": ("tipping", "Tipping-point grids for a hidden confounder of chosen strength."),
    "screen": ("screen", "Screen a table of published results: E-values for every row."),
    "simulate": ("simulate", "Probabilistic bias analysis for a hidden binary confounder."),
    "matched": ("matched", "Rosenbaum bounds for matched pairs (sign and signed-rank tests)."),
    "stability": ("stability", "Coefficient stability under proportional selection (Oster)."),
    "impact": ("impact", "Impact threshold of a confounding variable (Frank)."),
    "weighting": ("weighting", "Weighted (IPW) estimates under the marginal sensitivity model."),
    "pool": ("pool", "Confounding in a random-effects meta-analysis: the share of strong effects."),
    "debiased": ("debiased", "Omitted-variable bounds for debiased machine-learning estimates."),
    "report": ("report", "Write the robustness section of a manuscript to a folder."),
}
