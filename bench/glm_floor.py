"""The floor for `make bench`'s E-value-from-data section: polars reads the whole file, the
design is built in numpy, and Newton's method (IRLS) runs with one X'WX per step until the
step is below 1e-11 of the coefficients, BLAS held to one thread as the route holds it (on a
shared two-core machine two threads were slower). Usage: glm_floor.py FILE OUTCOME logit|poisson
"""

import sys

import numpy as np
import polars as pl
from scipy.special import expit
from threadpoolctl import threadpool_limits

threadpool_limits(1, user_api="blas")

path, outcome, model = sys.argv[1], sys.argv[2], sys.argv[3]
frame = pl.read_csv(path)
cats = ["g0", "g1", "g2", "g3"]
dummies = frame.select(pl.col(*cats)).to_dummies(drop_first=True)
numeric = ["t"] + [f"x{i}" for i in range(1, 27)]
x = np.hstack([np.ones((frame.height, 1)), frame.select(numeric).to_numpy().astype(float),
               dummies.to_numpy().astype(float)])  # fmt: skip
y = frame[outcome].to_numpy().astype(float)
beta = np.zeros(x.shape[1])
for _ in range(60):
    eta = x @ beta
    mu = expit(eta) if model == "logit" else np.exp(eta)
    w = mu * (1 - mu) if model == "logit" else mu
    step = np.linalg.solve((x * w[:, None]).T @ x, x.T @ (y - mu))
    beta += step
    if np.max(np.abs(step)) <= 1e-11 * max(1.0, np.max(np.abs(beta))):
        break
se = np.sqrt(np.diag(np.linalg.inv((x * w[:, None]).T @ x)))
print(beta[1], se[1])
