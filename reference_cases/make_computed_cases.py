"""Regenerate the 'computed' reference cases from the published formulas, in plain `math`.

Deliberately independent of the `sensitivity` package (no numpy, no shared code): each value
below is the formula as printed in the cited paper, evaluated by hand-written Python.
Run: python reference_cases/make_computed_cases.py > reference_cases/evalue_computed.csv
"""

import csv
import math
import sys


def e_of(rr):  # VanderWeele & Ding (2017), Ann Intern Med 167:268
    rr = 1 / rr if rr < 1 else rr
    return rr + math.sqrt(rr * (rr - 1))


def e_ci(lo, up, t=1.0):
    if lo <= t <= up:
        return 1.0
    return e_of((lo if lo > t else up) / t)


def hr_common(h):  # VanderWeele (2020), Biometrics 76:746
    return (1 - 0.5 ** math.sqrt(h)) / (1 - 0.5 ** math.sqrt(1 / h))


SRC_VD = "VanderWeele & Ding 2017, Ann Intern Med 167:268 (formula; computed)"
cases = []


def add(
    case_id,
    source,
    scale,
    est,
    lo=None,
    up=None,
    se=None,
    sd=None,
    contrast=None,
    outcome=None,
    target=None,
    e=None,
    eci=None,
):
    cases.append(
        dict(
            id=case_id,
            kind="computed",
            source=source,
            scale=scale,
            estimate=est,
            lower=lo,
            upper=up,
            se=se,
            sd=sd,
            contrast=contrast,
            outcome=outcome,
            target=target,
            evalue=e,
            evalue_ci=eci,
            tolerance=1e-12,
        )
    )


add("rr-protective", SRC_VD, "rr", 0.5, 0.3, 0.8, e=e_of(0.5), eci=e_ci(0.3, 0.8))
add("rr-ci-covers-null", SRC_VD, "rr", 1.3, 0.9, 1.9, e=e_of(1.3), eci=1.0)
add(
    "rr-target",
    SRC_VD + "; non-null target",
    "rr",
    3.9,
    1.8,
    8.7,
    target=1.5,
    e=e_of(3.9 / 1.5),
    eci=e_ci(1.8, 8.7, 1.5),
)
add("or-rare", SRC_VD, "or", 1.7, 1.2, 2.4, outcome="rare", e=e_of(1.7), eci=e_ci(1.2, 2.4))
add(
    "or-common",
    "VanderWeele 2017, Epidemiology 28:e58 (sqrt OR; computed)",
    "or",
    2.1,
    1.4,
    3.15,
    outcome="common",
    e=e_of(math.sqrt(2.1)),
    eci=e_ci(math.sqrt(1.4), math.sqrt(3.15)),
)
add("hr-rare", SRC_VD, "hr", 0.8, 0.7, 0.95, outcome="rare", e=e_of(0.8), eci=e_ci(0.7, 0.95))
add(
    "hr-common",
    "VanderWeele 2020, Biometrics 76:746 (HR conversion; computed)",
    "hr",
    0.72,
    0.6,
    0.86,
    outcome="common",
    e=e_of(hr_common(0.72)),
    eci=e_ci(hr_common(0.6), hr_common(0.86)),
)
add(
    "smd-se",
    SRC_VD + " (exp(0.91 d), 1.78 se)",
    "smd",
    0.5,
    se=0.1,
    e=e_of(math.exp(0.91 * 0.5)),
    eci=e_ci(math.exp(0.91 * 0.5 - 1.78 * 0.1), math.exp(0.91 * 0.5 + 1.78 * 0.1)),
)
add(
    "smd-negative-ci",
    SRC_VD + " (limits mapped by exp(0.91 d))",
    "smd",
    -0.3,
    -0.5,
    -0.1,
    e=e_of(math.exp(0.91 * -0.3)),
    eci=e_ci(math.exp(0.91 * -0.5), math.exp(0.91 * -0.1)),
)
d, sd_ = 4.2 * 10 / 12, 1.1 * 10 / 12
add(
    "md-contrast",
    SRC_VD + " (d = b * contrast / sd)",
    "md",
    4.2,
    se=1.1,
    sd=12,
    contrast=10,
    e=e_of(math.exp(0.91 * d)),
    eci=e_ci(math.exp(0.91 * d - 1.78 * sd_), math.exp(0.91 * d + 1.78 * sd_)),
)

writer = csv.DictWriter(sys.stdout, fieldnames=list(cases[0]), lineterminator="\n")
writer.writeheader()
for c in cases:
    writer.writerow(
        {k: ("" if v is None else (repr(v) if isinstance(v, float) else v)) for k, v in c.items()}
    )
