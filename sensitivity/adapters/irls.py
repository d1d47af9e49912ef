"""One piece's part of an IRLS step for logistic and Poisson fits, and the scratch file the
pieces are read back from (`glm.py` drives the passes).

`piece_step(x, y, beta, model)` is a pure function of a piece and the coefficients: the R
factor of sqrt(w) [x, z] at those coefficients and, if asked, the sandwich's sums. A
distributed engine can map it over partitions, fold the R factors (`rfactor.fold`) and add
the sums; `glm.py` does the same over two threads.
"""

from __future__ import annotations

import os
import tempfile
from dataclasses import dataclass

import numpy as np


# --------------------------------------------------------------------------- one piece
def _means(eta: np.ndarray, model: str) -> np.ndarray:
    from scipy.special import expit

    return expit(eta) if model == "logit" else np.exp(eta)


def working(x: np.ndarray, y: np.ndarray, beta: np.ndarray | None,
            model: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:  # fmt: skip
    """The working response z, the root of the weights and the means of a piece at `beta`
    (None: from the starting means); a row whose weight is 0 counts for nothing."""
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        if beta is None:
            mu = (y + 0.5) / 2 if model == "logit" else y + 0.5
            eta = np.log(mu / (1 - mu)) if model == "logit" else np.log(mu)
        else:
            eta = x @ beta
            mu = _means(eta, model)
        w = mu * (1.0 - mu) if model == "logit" else mu
        good = (w > 0) & np.isfinite(w)
        z = np.where(good, eta + (y - mu) / np.where(good, w, 1.0), 0.0)
        root = np.sqrt(np.where(good, w, 0.0))
    return z, root, mu


def weighted_rows(x: np.ndarray, y: np.ndarray, beta: np.ndarray | None,
                  model: str) -> tuple[np.ndarray, np.ndarray]:  # fmt: skip
    """sqrt(w) [x, z] of a piece at `beta` (None: from the starting means), and the means."""
    z, root, mu = working(x, y, beta, model)
    rows = np.empty((x.shape[0], x.shape[1] + 1), order="F")
    np.multiply(x, root[:, None], out=rows[:, :-1])
    np.multiply(z, root, out=rows[:, -1])
    return rows, mu


@dataclass
class Step:
    """What one piece gives at one b: the R factor of sqrt(w) [x, z]; with `sums`, the
    sandwich's middle sum x x' (y - mu)² and each cluster's score sum (clusters x columns)."""

    r: np.ndarray
    meat: np.ndarray | None = None
    scores: np.ndarray | None = None


def piece_step(x: np.ndarray, y: np.ndarray, beta: np.ndarray | None, model: str,
               sums: bool = False, codes: np.ndarray | None = None,
               clusters: int = 0) -> Step:  # fmt: skip
    """One piece's part of one IRLS step at `beta`: a pure function of its inputs."""
    from .rfactor import fold

    rows, mu = weighted_rows(x, y, beta, model)
    step = Step(fold(np.zeros((0, rows.shape[1])), rows, overwrite=True))
    if sums:
        scored = x * (y - mu)[:, None]
        step.meat = scored.T @ scored
        if codes is not None:
            step.scores = np.stack([np.bincount(codes, weights=scored[:, j], minlength=clusters)
                                    for j in range(x.shape[1])], axis=1)  # fmt: skip
    return step


# --------------------------------------------------------------------------- the pieces
class Scratch:
    """Pieces of numbers (the design as read: outcome, then the factor's slots) in a
    temporary file that goes when closed: each pass reads them back, one piece at a time."""

    def __init__(self) -> None:
        self.file = tempfile.TemporaryFile()
        self.pieces: list[tuple[int, int, int]] = []  # offset, rows, width
        self.end = 0

    def add(self, rows: np.ndarray) -> None:
        data = np.asfortranarray(rows, dtype=float).T  # column after column, as it is held
        self.file.write(data.data)  # C-contiguous: written without a copy
        self.pieces.append((self.end, data.shape[1], data.shape[0]))
        self.end += data.nbytes

    def read(self, k: int, width: int) -> np.ndarray:
        """Piece k, widened with zeros to `width` columns (levels met after it)."""
        offset, rows, have = self.pieces[k]
        raw = os.pread(self.file.fileno(), rows * have * 8, offset)
        piece = np.frombuffer(raw, float).reshape(have, rows).T
        if have >= width:
            return piece
        out = np.zeros((rows, width))
        out[:, :have] = piece
        return out

    def done(self) -> None:
        """The writing is over: what was written is there for `read` (from any thread)."""
        self.file.flush()

    def close(self) -> None:
        self.file.close()
