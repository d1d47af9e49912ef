"""Probabilistic bias analysis for a hidden binary confounder.

Priors on the confounder's prevalence among the treated (p1) and the controls (p0) and on
its effect on the outcome are drawn (optionally with correlated prevalences, through a
Gaussian copula); each draw gives a bias factor and a bias-adjusted estimate. The systematic-
error interval is the 2.5th to 97.5th percentile of those; the total-error (simulation)
interval adds the random error of the estimate, drawn from a normal with the standard error
its interval implies. Draws that make no sense (a prevalence outside [0, 1], a ratio effect
not positive) are discarded and counted.

Ratio scales: adjusted = observed / [(1 + (G - 1) p1) / (1 + (G - 1) p0)] on the risk-ratio
scale (a common outcome's OR or HR converted first and back, as in `evalue`); difference
scales: adjusted = observed - gamma (p1 - p0).

References
----------
Lash TL, Fox MP, Fink AK (2009). Applying Quantitative Bias Analysis to Epidemiologic Data.
Springer, chapters 5 and 8. Greenland S (2005). Multiple-bias modelling for analysis of
observational data. JRSS-A 168:267-306.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..common.checks import POSITIVE, require_scalar
from ..common.errors import InputError
from ..common.levels import check_level, z_critical
from ..common.scales import RATIO_SCALES, convert_from_rr, convert_to_rr
from .result import SimulationResult

#: The fewest draws that give each tail of a 95% percentile interval a draw beyond it
#: (0.025 x 40 = 1); the default is 100,000.
LEAST_DRAWS = 40
KINDS = {"fixed": 1, "uniform": 2, "triangular": 3, "trapezoidal": 4, "beta": 2, "lognormal": 2}


@dataclass(frozen=True)
class Prior:
    """A prior distribution, as written: KIND:PARAMETERS."""

    kind: str
    values: tuple[float, ...]

    @property
    def text(self) -> str:
        return ":".join([self.kind, *(f"{v:g}" for v in self.values)])

    def quantile(self, u: np.ndarray) -> np.ndarray:
        """The prior's inverse CDF at u in (0, 1)."""
        v = self.values
        if self.kind == "fixed":
            return np.full(u.shape, v[0])
        if self.kind == "uniform":
            return v[0] + (v[1] - v[0]) * u
        if self.kind == "triangular":
            a, c, b = v
            cut = (c - a) / (b - a) if b > a else 0.5
            left = a + np.sqrt(u * (b - a) * (c - a))
            right = b - np.sqrt((1 - u) * (b - a) * (b - c))
            return np.where(u < cut, left, right)
        if self.kind == "trapezoidal":
            a, b, c, d = v
            h = 2 / (d + c - a - b)  # the height of the flat top
            f1 = h * (b - a) / 2
            f2 = f1 + h * (c - b)
            x1 = a + np.sqrt(np.maximum(u, 0) * 2 * (b - a) / h)
            x2 = b + (u - f1) / h
            x3 = d - np.sqrt(np.maximum(1 - u, 0) * 2 * (d - c) / h)
            return np.where(u < f1, x1, np.where(u < f2, x2, x3))
        if self.kind == "beta":
            from scipy.special import betaincinv

            return betaincinv(v[0], v[1], u)
        from scipy.special import ndtri

        return np.exp(v[0] + v[1] * ndtri(u))  # lognormal


def draw(prior: Prior, rng: np.random.Generator, n: int) -> np.ndarray:
    """n independent draws from `prior` with numpy's own samplers (fast)."""
    v = prior.values
    if prior.kind == "fixed":
        return np.full(n, v[0])
    if prior.kind == "uniform":
        return rng.uniform(v[0], v[1], n)
    if prior.kind == "triangular":
        return rng.triangular(v[0], v[1], v[2], n)
    if prior.kind == "beta":
        return rng.beta(v[0], v[1], n)
    if prior.kind == "lognormal":
        return rng.lognormal(v[0], v[1], n)
    return prior.quantile(rng.uniform(size=n))  # trapezoidal


def parse_prior(text: str, name: str) -> Prior:
    """KIND:PARAMETERS (fixed:V, uniform:LOW:HIGH, triangular:LOW:MODE:HIGH,
    trapezoidal:MIN:MODE_LOW:MODE_HIGH:MAX, beta:A:B, lognormal:MEANLOG:SDLOG)."""
    parts = str(text).split(":")
    kind = parts[0].strip().lower()
    if kind not in KINDS:
        raise InputError(
            f"`{name}` must be KIND:PARAMETERS with KIND one of {', '.join(KINDS)}; got {text!r}",
            name,
        )
    try:
        values = tuple(float(p) for p in parts[1:])
    except ValueError:
        raise InputError(f"`{name}`: the parameters of {text!r} must be numbers", name) from None
    if len(values) != KINDS[kind]:
        raise InputError(f"`{name}`: {kind} takes {KINDS[kind]} numbers; got {len(values)}", name)
    if not all(np.isfinite(values)):
        raise InputError(f"`{name}`: the parameters of {text!r} must be finite", name)
    bad = {
        "uniform": lambda v: v[0] > v[1],
        "triangular": lambda v: not v[0] <= v[1] <= v[2] or v[0] == v[2],
        "trapezoidal": lambda v: not v[0] <= v[1] <= v[2] <= v[3] or v[0] == v[3],
        "beta": lambda v: v[0] <= 0 or v[1] <= 0,
        "lognormal": lambda v: v[1] < 0,
    }.get(kind)
    if bad is not None and bad(values):
        raise InputError(
            f"`{name}`: {text!r} is not a valid {kind} distribution: {RULES[kind]}", name
        )
    return Prior(kind, values)


#: What each kind's parameters must satisfy, as a refusal says it.
RULES = {
    "uniform": "uniform:LOW:HIGH needs LOW at most HIGH",
    "triangular": "triangular:LOW:MODE:HIGH needs LOW <= MODE <= HIGH and LOW below HIGH",
    "trapezoidal": "trapezoidal:MIN:MODE_LOW:MODE_HIGH:MAX needs MIN <= MODE_LOW <= MODE_HIGH "
    "<= MAX and MIN below MAX",
    "beta": "beta:A:B needs A and B positive",
    "lognormal": "lognormal:MEANLOG:SDLOG needs SDLOG at least 0",
}


def _support(prior: Prior, low: float, high: float, name: str) -> None:
    """Refuse a prior that lies wholly outside the parameter's support."""
    u = np.linspace(0.001, 0.999, 999)
    x = prior.quantile(u)
    if np.all((x < low) | (x > high)):
        where = "positive values" if high == np.inf else f"[{low:g}, {high:g}]"
        raise InputError(
            f"`{name}`: the prior {prior.text} must put some weight on {where}; it has none",
            name,
        )


def simulate(
    scale: str,
    estimate: float,
    ci: tuple[float, float],
    *,
    prevalence_treated: str | Prior,
    prevalence_control: str | Prior,
    outcome_effect: str | Prior,
    draws: int = 100_000,
    seed: int | None = None,
    correlation: float = 0.0,
    outcome: str | None = None,
    target: float | None = None,
    ci_level: float = 0.95,
) -> SimulationResult:
    """Probabilistic bias analysis for a hidden binary confounder (see the module).

    Examples
    --------
    Point-mass priors reproduce the deterministic formula: 1.8 x 1.4 / 2 = 1.26.

    >>> res = simulate("rr", 1.8, (1.2, 2.7), prevalence_treated="fixed:0.5",
    ...                prevalence_control="fixed:0.2", outcome_effect="fixed:3", draws=1000,
    ...                seed=1)
    >>> round(res.median, 4)
    1.26
    """
    from scipy.special import ndtr

    from ..tipping.grid import SCALES, check_effect, check_frequency

    if scale not in SCALES:
        raise InputError(f"`scale` must be one of {', '.join(SCALES)}; got {scale!r}", "scale")
    scale, est, pair, tgt = check_effect(scale, estimate, ci, target)
    if pair is None:
        raise InputError("`ci` is needed: the total-error interval draws from it", "ci")
    freq = check_frequency(scale, outcome)
    level = check_level(ci_level)
    given = require_scalar(draws, "draws", POSITIVE)
    if given != int(given):
        raise InputError(f"`draws` must be a whole number; got {given:g}", "draws")
    n = int(given)
    if n > 20_000_000:
        raise InputError(f"`draws` must be at most 20,000,000; got {n:,}", "draws")
    if n < LEAST_DRAWS:
        raise InputError(
            f"`draws` must be at least {LEAST_DRAWS}: the 95% intervals are the 2.5th and "
            f"97.5th percentiles, and each tail needs a draw beyond it; got {n:,}",
            "draws",
        )
    rho = float(require_scalar(correlation, "correlation"))
    if not -1 < rho < 1:
        raise InputError(
            f"`correlation` must lie strictly between -1 and 1; got {rho:g}", "correlation"
        )
    priors = {}
    for name, value in (("prevalence_treated", prevalence_treated),
                        ("prevalence_control", prevalence_control),
                        ("outcome_effect", outcome_effect)):  # fmt: skip
        priors[name] = value if isinstance(value, Prior) else parse_prior(value, name)
    ratio = scale in RATIO_SCALES
    _support(priors["prevalence_treated"], 0, 1, "prevalence_treated")
    _support(priors["prevalence_control"], 0, 1, "prevalence_control")
    if ratio:
        _support(priors["outcome_effect"], 1e-300, np.inf, "outcome_effect")
    drawn_seed = seed is None
    if seed is not None:
        chosen = require_scalar(seed, "seed")
        if chosen < 0 or chosen != int(chosen) or chosen >= 2**63:
            raise InputError(
                f"`seed` must be a whole number from 0 to 2^63 - 1; got {chosen:g}", "seed"
            )
        seed = int(chosen)
    if seed is None:
        seed = int(np.random.SeedSequence().generate_state(1)[0])
    rng = np.random.default_rng(int(seed))
    if rho == 0:
        p1 = draw(priors["prevalence_treated"], rng, n)
        p0 = draw(priors["prevalence_control"], rng, n)
    else:  # correlated prevalences through a Gaussian copula
        z = rng.standard_normal((2, n))
        u = np.clip(ndtr(np.stack([z[0], rho * z[0] + np.sqrt(1 - rho**2) * z[1]])),
                    1e-12, 1 - 1e-12)  # fmt: skip
        p1 = priors["prevalence_treated"].quantile(u[0])
        p0 = priors["prevalence_control"].quantile(u[1])
    g = draw(priors["outcome_effect"], rng, n)
    ok = (p1 >= 0) & (p1 <= 1) & (p0 >= 0) & (p0 <= 1)
    if ratio:
        ok &= g > 0
    discarded = int(n - ok.sum())
    p1, p0, g = p1[ok], p0[ok], g[ok]
    z_random = rng.standard_normal(p1.size)
    crit = float(z_critical(1 - level))
    with np.errstate(over="ignore", under="ignore", divide="ignore", invalid="ignore"):
        if ratio:
            conv = {"outcome": freq}
            obs = float(convert_to_rr(scale, est, **conv))
            lo, up = (float(convert_to_rr(scale, v, **conv)) for v in pair)
            se = (np.log(up) - np.log(lo)) / (2 * crit)
            bias = (1 + (g - 1) * p1) / (1 + (g - 1) * p0)
            systematic_rr = np.exp(np.log(obs) - np.log(bias))
            total_rr = np.exp(np.log(systematic_rr) - z_random * se)
            systematic = convert_from_rr(scale, systematic_rr, **conv)
            total = convert_from_rr(scale, total_rr, **conv)
        else:
            se = (pair[1] - pair[0]) / (2 * crit)
            systematic = est - g * (p1 - p0)
            total = systematic - z_random * se
    if np.all(np.isfinite(systematic)) and not np.all(np.isfinite(total)):
        # the random error alone leaves double precision: its SD is what `ci` and its level
        # imply, and a level near 0 (a critical value near 0) makes it huge
        wide = f"a standard error of {float(se):.3g}" + (" on the log scale" if ratio else "")
        if level < 0.5:  # the level, not the interval, is the likely slip
            raise InputError(
                f"the total-error draws leave double precision: at `ci_level` {level:g}, `ci` "
                f"implies {wide}, too wide for this scale; give the interval's own level",
                ("ci_level", "ci"),
            )
        raise InputError(
            f"the total-error draws leave double precision: `ci` at level {level:g} implies "
            f"{wide}, too wide for this scale",
            "ci",
        )
    for name, drawn in (("systematic", systematic), ("total", total)):
        if not np.all(np.isfinite(drawn)):
            raise InputError(
                f"the {name}-error draws leave double precision: the estimate, `ci` or "
                "`outcome_effect` prior is too extreme for this scale",
                ("ci", "outcome_effect"),
            )
    if systematic.size < LEAST_DRAWS:
        raise InputError(
            f"{discarded:,} of {n:,} draws were impossible (a prevalence outside [0, 1]): "
            f"fewer than {LEAST_DRAWS} are left for the 95% intervals; check the priors"
        )
    side = 1 if est >= tgt else -1
    beyond = float(np.mean(side * (systematic - tgt) <= 0))
    beyond_total = float(np.mean(side * (total - tgt) <= 0))
    notes = [f"Seed {seed}{' (drawn; give --seed to repeat this run)' if drawn_seed else ''}."]
    if discarded:
        notes.append(f"{discarded:,} of {n:,} draws were impossible and discarded.")
    if freq == "common":
        notes.append(f"The {scale.upper()} of a common outcome was converted to the risk-ratio "
                     "scale for the bias, and back.")  # fmt: skip
    return SimulationResult(
        scale=scale, estimate=est, ci=pair, target=tgt, draws=n, seed=int(seed),
        discarded=discarded, median=float(np.median(systematic)),
        interval=tuple(float(x) for x in np.percentile(systematic, [2.5, 97.5])),  # type: ignore[arg-type]
        median_total=float(np.median(total)),
        interval_total=tuple(float(x) for x in np.percentile(total, [2.5, 97.5])),  # type: ignore[arg-type]
        share_beyond_target=beyond, priors={k: v.text for k, v in priors.items()},
        correlation=rho, ci_level=level, notes=tuple(notes),
        share_beyond_target_total=beyond_total,
        sample=systematic[: min(200_000, systematic.size)].copy(),
        sample_total=total[: min(200_000, total.size)].copy(),
    )  # fmt: skip
