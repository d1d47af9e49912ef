"""Regenerate demo/harbourside_bp.csv: INVENTED data for the demo, not from any study.

An imaginary cohort of port workers: systolic blood pressure (mmHg) against daily commute
minutes, with age, sex, smoking, shift pattern and BMI as measured covariates. The numbers
are simulated with a fixed seed; they only make the demo realistic to look at.
"""

from pathlib import Path

import numpy as np
import pandas as pd

rng = np.random.default_rng(20261201)
n = 1200
age = rng.uniform(22, 64, n).round()
female = rng.binomial(1, 0.38, n)
smoker = rng.binomial(1, 0.22 + 0.004 * (age - 40).clip(0), n)
shift = rng.choice(["day", "rotating", "night"], n, p=[0.55, 0.3, 0.15])
bmi = (26 + 0.06 * (age - 40) - 0.8 * female + rng.normal(0, 3.8, n)).round(1)
commute = (
    (
        38
        + 0.25 * (age - 40)
        + 6 * (shift == "rotating")
        + 9 * (shift == "night")
        + 2.5 * smoker
        + rng.gamma(2.0, 9.0, n)
        - 18
    )
    .clip(5)
    .round()
)
sbp = (
    118
    + 0.16 * commute
    + 0.42 * (age - 40)
    - 5.5 * female
    + 3.2 * smoker
    + 2.4 * (shift == "night")
    + 0.9 * (bmi - 26)
    + rng.normal(0, 12.5, n)
).round(1)
frame = pd.DataFrame(
    {
        "sbp": sbp,
        "commute_min": commute,
        "age": age,
        "female": female,
        "smoker": smoker,
        "shift": shift,
        "bmi": bmi,
    }
)
frame.to_csv(Path(__file__).with_name("harbourside_bp.csv"), index=False)
