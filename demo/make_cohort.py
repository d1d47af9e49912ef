"""Regenerate demo/harbourside_cohort.csv: INVENTED data for the demo, not from any study.

An imaginary cohort of 4,000 port workers: night-shift work (the exposure) and three outcomes
(poor sleep, yes/no; years to type 2 diabetes, censored; systolic blood pressure, mmHg), with
age, sex, smoking and BMI measured. A HIDDEN confounder, sleep apnoea, raises both the chance
of night-shift work and every outcome; it is generated here (seed below) and left out of the
CSV, so the demo can show where its true strength sits against what the report says.
"""

from pathlib import Path

import numpy as np
import pandas as pd

SEED = 20261202
N = 4000

#: The generating model's true effects (log scale for the binary and time-to-event outcomes).
NIGHT_ON_SLEEP, APNOEA_ON_SLEEP = 0.35, 0.6  # log risk ratios
NIGHT_ON_DIABETES, APNOEA_ON_DIABETES = 0.25, 0.5  # log hazard ratios
NIGHT_ON_SBP, APNOEA_ON_SBP = 2.0, 4.0  # mmHg


def expit(x):
    return 1 / (1 + np.exp(-x))


def generate() -> pd.DataFrame:
    """The whole cohort, the hidden `apnoea` column included."""
    rng = np.random.default_rng(SEED)
    age = rng.uniform(25, 64, N).round()
    female = rng.binomial(1, 0.4, N)
    smoker = rng.binomial(1, 0.25, N)
    bmi = (27 + rng.normal(0, 4, N)).round(1)
    apnoea = rng.binomial(1, expit(-1.9 + 0.12 * (bmi - 27) - 0.6 * female + 0.02 * (age - 45)))
    night = rng.binomial(1, expit(-0.9 - 0.015 * (age - 45) + 0.3 * smoker + 0.9 * apnoea))
    risk = 0.12 * np.exp(NIGHT_ON_SLEEP * night + APNOEA_ON_SLEEP * apnoea
                         + 0.01 * (age - 45) + 0.2 * smoker)  # fmt: skip
    poor_sleep = rng.binomial(1, risk.clip(0, 0.95))
    hazard = 0.012 * np.exp(NIGHT_ON_DIABETES * night + APNOEA_ON_DIABETES * apnoea
                            + 0.04 * (age - 45) + 0.08 * (bmi - 27))  # fmt: skip
    onset, censor = rng.exponential(1 / hazard), rng.uniform(4, 12, N)
    sbp = (120 + NIGHT_ON_SBP * night + APNOEA_ON_SBP * apnoea + 0.4 * (age - 45) - 4 * female
           + 0.9 * (bmi - 27) + 3 * smoker + rng.normal(0, 12, N))  # fmt: skip
    return pd.DataFrame({
        "night_shift": night, "age": age, "female": female, "smoker": smoker, "bmi": bmi,
        "poor_sleep": poor_sleep, "years": np.minimum(onset, censor).round(2),
        "diabetes": (onset <= censor).astype(int), "sbp": sbp.round(1), "apnoea": apnoea,
    })  # fmt: skip


if __name__ == "__main__":
    frame = generate().drop(columns="apnoea")  # the hidden confounder stays hidden
    frame.to_csv(Path(__file__).with_name("harbourside_cohort.csv"), index=False)
