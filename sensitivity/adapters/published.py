"""E-values of a result as published: one piece of text, read by the screen's parser.

`evalue_from_text("HR 0.72 (95% CI 0.60-0.86)", outcome="common")` reads the scale, the
estimate, the interval and its level from the text, and the result carries what was read
(`as_read`), so the output can show it beside the numbers.
"""

from __future__ import annotations

from dataclasses import replace

from ..common.errors import InputError
from ..common.levels import level_text
from ..evalues.result import EValueResult


def read_summary(
    text: object,
    *,
    scale: str | None = None,
    ci_level: float | None = None,
    argument: str = "text",
) -> dict[str, object]:
    """What a published text gives, settled against a scale and level given beside it.

    Returns the read fields (`text`, `scale`, `estimate`, `lower`, `upper`, `level` as the
    text names them) plus the settled ``use_scale`` and ``use_level``. A scale or level given
    beside the text must agree with what the text names.
    """
    from ..screen.text import read_result

    read = read_result(text, argument)
    named = read["scale"]
    if scale is not None and named is not None and scale != named:
        raise InputError(
            f"`scale` {scale!r} differs from the scale the text names ({named!r}); give one",
            "scale",
        )
    use_scale = scale or named
    if use_scale is None:
        raise InputError(
            f"`{argument}` names no scale (write e.g. 'HR 0.72 (95% CI 0.60-0.86)'), or give "
            "the scale beside it",
            argument,
        )
    if use_scale == "rd":
        raise InputError(
            f"`{argument}` is a risk difference: its E-value needs the 2 x 2 counts (scale rd "
            "with counts)",
            argument,
        )
    level = read["level"]
    if ci_level is not None and level is not None and abs(float(ci_level) - float(level)) > 1e-12:  # type: ignore[arg-type]
        raise InputError(
            f"`ci_level` {ci_level:g} differs from the level the text names ({level:g}); give one",
            "ci_level",
        )
    use_level = float(level if level is not None else ci_level if ci_level is not None else 0.95)  # type: ignore[arg-type]
    return {**read, "use_scale": use_scale, "use_level": use_level}


def evalue_from_text(
    text: object,
    *,
    scale: str | None = None,
    ci_level: float | None = None,
    se: object = None,
    sd: object = None,
    contrast: object = 1.0,
    outcome: object = None,
    prevalence: object = None,
    target: object = None,
    argument: str = "text",
) -> EValueResult:
    """E-values of one result as published, e.g. ``"OR=2.1, 95%CI 1.2-3.6"``.

    The text gives the estimate, its interval where it has one, and the scale and the
    interval's level where it names them; `scale` and `ci_level` fill in what it does not
    name (and must agree with what it does). The other arguments are those of `evalue`.
    The result's `as_read` holds what was read.

    >>> r = evalue_from_text("HR 0.72 (95% CI 0.60-0.86)", outcome="rare")
    >>> r.as_read["scale"], round(float(r.evalue), 2), round(float(r.evalue_ci), 2)
    ('hr', 2.12, 1.6)
    """
    from ..common.errors import InputError
    from ..evalues.core import evalue

    read = read_summary(text, scale=scale, ci_level=ci_level, argument=argument)
    ci = None if read["lower"] is None else (read["lower"], read["upper"])
    try:
        result = evalue(
            str(read["use_scale"]),
            read["estimate"],
            ci,
            se=se,
            sd=sd,
            contrast=contrast,
            outcome=outcome,
            prevalence=prevalence,
            target=target,
            ci_level=float(read["use_level"]),  # type: ignore[arg-type]
        )
    except InputError as err:
        raise _of_the_text(err, argument) from None
    return attach_reading(result, read)


def _of_the_text(err: Exception, argument: str) -> Exception:
    """An error about the estimate or interval read from the text names the text, not the
    `estimate` or `ci` the user never gave ("RR 0 (0-1)" said "`--estimate` must be
    positive" on the command line)."""
    from ..common.errors import InputError

    if not isinstance(err, InputError):
        return err
    read = {"estimate": f"the estimate in `{argument}`", "ci": f"the interval in `{argument}`"}
    if not set(err.arguments) & set(read):
        return err
    message = err.render(lambda a: read.get(a, f"`{a}`"))
    names = [argument if a in read else a for a in err.arguments]
    return type(err)(message, tuple(dict.fromkeys(names)))


def attach_reading(result: EValueResult, read: dict[str, object]) -> EValueResult:
    """`result` carrying what was read from the text (and a note where the level was
    not named but an interval was)."""
    as_read = {k: read[k] for k in ("text", "scale", "estimate", "lower", "upper", "level")}
    notes = result.notes
    if read["lower"] is not None and read["level"] is None:
        notes += (
            "The text names no level for its interval: read as "
            f"{level_text(float(read['use_level']))} (give the level to change it).",  # type: ignore[arg-type]
        )
    return replace(result, as_read=as_read, notes=notes)
