"""One piece's part of an IRLS step for logistic and Poisson fits, and the scratch file the
pieces are read back from (`glm.py` drives the passes).

`piece_step(x, y, beta, model)` is a pure function of a piece and the coefficients: the R
factor of sqrt(w) [x, z] at those coefficients and, if asked, the sandwich's sums; with
`gram`, the cheaper Newton step's parts instead (the information x' W x and the score
x' (y - mu)). A distributed engine can map it over partitions, fold the R factors
(`rfactor.fold`) or add the Gram matrices and scores, and add the sums; `glm.py` does the
same over two threads.
"""

from __future__ import annotations

import os
import tempfile
import threading
from dataclasses import dataclass

import numpy as np

from ..common.numeric import expit


# --------------------------------------------------------------------------- one piece
def _means(eta: np.ndarray, model: str) -> np.ndarray:
    return expit(eta) if model == "logit" else np.exp(eta)


def working(x: np.ndarray, y: np.ndarray, beta: np.ndarray | None, model: str,
            eta: np.ndarray | None = None
            ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:  # fmt: skip
    """The working response z, the root of the weights and the means of a piece at `beta`
    (None: from the starting means; `eta`, if given, is x'beta already); a row whose weight
    is 0 counts for nothing."""
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        if beta is None:
            mu = (y + 0.5) / 2 if model == "logit" else y + 0.5
            eta = np.log(mu / (1 - mu)) if model == "logit" else np.log(mu)
        else:
            eta = x @ beta if eta is None else eta
            mu = _means(eta, model)
        w = mu * (1.0 - mu) if model == "logit" else mu
        good = (w > 0) & np.isfinite(w)
        z = np.where(good, eta + (y - mu) / np.where(good, w, 1.0), 0.0)
        root = np.sqrt(np.where(good, w, 0.0))
    return z, root, mu


@dataclass
class Step:
    """What one piece gives at one b: the R factor of sqrt(w) [x, z] (or, for a Newton step
    from the Gram matrix, `gram` the upper triangle of x' W x and `score` x' (y - mu)); with
    `sums`, the sandwich's middle sum x x' (y - mu)² and each cluster's score sum (clusters x
    columns)."""

    r: np.ndarray | None = None
    meat: np.ndarray | None = None
    scores: np.ndarray | None = None
    gram: np.ndarray | None = None
    score: np.ndarray | None = None


class Workspace(threading.local):
    """Arrays a thread reuses from piece to piece (allocating afresh for every piece let the
    allocator's heaps grow from pass to pass: a peak that moved with thread timing)."""

    def array(self, name: str, rows: int, width: int) -> np.ndarray:
        """A (rows, width) float array in Fortran order, its contents left as they were."""
        have = getattr(self, name, None)
        if have is None or have.size < rows * width:
            have = np.empty(rows * width)
            setattr(self, name, have)
        return have[: rows * width].reshape(width, rows).T


def piece_step(x: np.ndarray, y: np.ndarray, beta: np.ndarray | None, model: str,
               sums: bool = False, codes: np.ndarray | None = None, clusters: int = 0, *,
               gram: bool = False, columns: list[int] | None = None,
               work: Workspace | None = None) -> Step:  # fmt: skip
    """One piece's part of one IRLS step at `beta`: a pure function of its inputs. `columns`
    are x's columns in the model (all of them if None; `beta` in their order, x's other
    columns finite); `work` lends arrays to reuse."""
    from .rfactor import fold

    used = list(range(x.shape[1])) if columns is None else columns
    k = len(used)
    rows = np.empty((x.shape[0], k + 1), order="F") if work is None else \
        work.array("rows", x.shape[0], k + 1)  # fmt: skip
    if gram:
        return _gram_step(x, y, beta, model, used, rows[:, :k], columns is not None)
    if columns is not None and beta is not None:  # x'b over x whole: no copy of the columns
        full = np.zeros(x.shape[1])
        full[columns] = beta
        z, root, mu = working(x, y, beta, model, eta=x @ full)
    else:
        z, root, mu = working(x if columns is None else x[:, columns], y, beta, model)
    for i, col in enumerate(used):
        np.multiply(x[:, col], root, out=rows[:, i])
    np.multiply(z, root, out=rows[:, k])
    step = Step(fold(np.zeros((0, k + 1)), rows, overwrite=True))
    if sums:
        scored = (x if columns is None else x[:, columns]) * (y - mu)[:, None]
        step.meat = scored.T @ scored
        if codes is not None:
            step.scores = np.stack([np.bincount(codes, weights=scored[:, j], minlength=clusters)
                                    for j in range(k)], axis=1)  # fmt: skip
    return step


def _gram_step(x: np.ndarray, y: np.ndarray, beta: np.ndarray | None, model: str,
               used: list[int], rows: np.ndarray, some: bool) -> Step:  # fmt: skip
    """x' W x (upper triangle, from sqrt(w) x built in `rows`) and the score x' (y - mu) over
    the rows whose weight is positive (those a QR step counts), at `beta`; `some`: only the
    `used` columns of x are the model's."""
    from scipy.linalg import blas

    if beta is None:
        raise ValueError("a Gram step starts from coefficients")
    if some:  # x'b over x whole: no copy of the model's columns
        full = np.zeros(x.shape[1])
        full[used] = beta
        eta = x @ full
    else:
        eta = x @ beta
    with np.errstate(over="ignore", invalid="ignore"):
        mu = _means(eta, model)
        w = mu * (1.0 - mu) if model == "logit" else mu
        good = (w > 0) & np.isfinite(w)
        root = np.sqrt(np.where(good, w, 0.0))
        residual = np.where(good, y - mu, 0.0)
    for i, col in enumerate(used):
        np.multiply(x[:, col], root, out=rows[:, i])
    score = residual @ x
    k = len(used)  # (BLAS refuses a piece of no rows: its sum is zero)
    gram = blas.dsyrk(1.0, rows, trans=1) if rows.shape[0] else np.zeros((k, k))
    return Step(gram=gram, score=score[used] if some else score)


# --------------------------------------------------------------------------- the pieces
def _pread_into(fd: int, out: np.ndarray, offset: int) -> None:
    """Fill the contiguous array `out` with the file's bytes from `offset`."""
    view = out.reshape(-1).data.cast("B")
    done = 0
    while done < view.nbytes:
        got = os.preadv(fd, [view[done:]], offset + done)
        if got <= 0:
            raise OSError("the scratch file ended early")
        done += got


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

    def read(self, k: int, width: int, work: Workspace | None = None,
             name: str = "piece") -> np.ndarray:  # fmt: skip
        """Piece k, widened with zeros to `width` columns (levels met after it); into
        `work`'s array `name` if given (valid until that thread reads another piece)."""
        offset, rows, have = self.pieces[k]
        if work is not None:
            piece = work.array(name, rows, max(width, have))
            _pread_into(self.file.fileno(), piece[:, :have].T, offset)
            piece[:, have:] = 0.0
            return piece
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


class PieceColumn:
    """One number a row for the pieces of a `Scratch`, in a temporary file of its own:
    written and read a piece at a time, from any thread, in any order."""

    def __init__(self, scratch: Scratch) -> None:
        self.file = tempfile.TemporaryFile()
        self.at = np.cumsum([0] + [rows * 8 for _, rows, _ in scratch.pieces]).tolist()

    def write(self, k: int, values: np.ndarray) -> None:
        data = np.ascontiguousarray(values, dtype=float)
        if os.pwrite(self.file.fileno(), data.data, self.at[k]) != data.nbytes:
            raise OSError("the scratch file was not written whole")

    def read(self, k: int) -> np.ndarray:
        out = np.empty((self.at[k + 1] - self.at[k]) // 8)
        _pread_into(self.file.fileno(), out, self.at[k])
        return out

    def close(self) -> None:
        self.file.close()
