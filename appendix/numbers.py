"""Numbers as the trade writes them (APA 7th edition, section 6.36 and table 6.5).

Pure functions shared by the conclusions and the template filters, so that a sentence and
a table cell never disagree about how a value is shown.
"""

from __future__ import annotations

import math

MINUS = "\u2212"  # typographic minus, as journals print it
DASH = "\u2014"  # shown where a value is not available


def _missing(value: float | None) -> bool:
    return value is None or (isinstance(value, float) and not math.isfinite(value))


def fixed(value: float | None, decimals: int = 2) -> str:
    """`value` with a fixed number of decimals and a true minus sign; a dash when missing.

    >>> fixed(-1.2345, 2)
    '−1.23'
    """
    if _missing(value):
        return DASH
    text = f"{value:.{decimals}f}"
    if text.startswith("-"):
        # -0.00 reads as a sign error; show zero unsigned
        text = text[1:] if float(text) == 0 else MINUS + text[1:]
    return text


def no_leading_zero(text: str) -> str:
    """APA drops the leading zero of values that cannot exceed 1 (p, r, eta squared)."""
    if text.startswith("0."):
        return text[1:]
    if text.startswith(MINUS + "0."):
        return MINUS + text[2:]
    return text


def p_value(p: float | None) -> str:
    """An exact p to three decimals without a leading zero; ``< .001`` below that.

    >>> p_value(0.0412), p_value(0.00002), p_value(0.9999)
    ('.041', '< .001', '> .999')
    """
    if _missing(p):
        return DASH
    if p < 0.001:
        return "< .001"
    if p > 0.999:
        return "> .999"
    return no_leading_zero(f"{p:.3f}")


def p_clause(p: float | None) -> str:
    """``p = .041`` or ``p < .001``, as it stands in running text."""
    text = p_value(p)
    if text[0] in "<>":
        return f"p {text}"
    return f"p = {text}"


def proportion(value: float | None, decimals: int = 2) -> str:
    """A bounded quantity such as eta squared: fixed decimals, no leading zero."""
    return no_leading_zero(fixed(value, decimals))


def df_value(df: float | None) -> str:
    """Degrees of freedom: whole numbers as integers, fractional (Welch) to two decimals."""
    if _missing(df):
        return DASH
    if float(df).is_integer():
        return str(int(df))
    return f"{df:.2f}"


def interval(low: float | None, high: float | None, decimals: int = 2,
             bounded: bool = False) -> str:
    """A confidence interval in brackets: ``[1.20, 5.04]``."""
    show = proportion if bounded else fixed
    return f"[{show(low, decimals)}, {show(high, decimals)}]"


def percent(level: float) -> str:
    """A confidence level as a percentage: 0.95 -> ``95%``, 0.9 -> ``90%``."""
    value = round(level * 100, 6)
    return f"{value:g}%"


def decimals_for(values: list[float | None], minimum: int = 1, maximum: int = 4,
                 significant: int = 3) -> int:
    """One number of decimals for a whole table column: enough for `significant`
    digits of the smallest nonzero magnitude, within [minimum, maximum].

    >>> decimals_for([120.5, 98.25]), decimals_for([0.0123, 0.5])
    (1, 4)
    """
    magnitudes = [abs(v) for v in values if not _missing(v) and v != 0]
    if not magnitudes:
        return minimum
    exponent = math.floor(math.log10(min(magnitudes)))
    wanted = significant - 1 - exponent
    return max(minimum, min(maximum, wanted))
