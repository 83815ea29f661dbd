"""Numbers as the trade writes them (APA 7th edition, section 6.36 and table 6.5).

Pure functions shared by the conclusions and the template filters, so that a sentence and
a table cell never disagree about how a value is shown.
"""

from __future__ import annotations

import math
import re

from markupsafe import Markup, escape

MINUS = "\u2212"  # typographic minus, as journals print it
DASH = "\u2014"  # shown where a value is not available
NBSP = "\u00a0"  # no-break space: a number clause never breaks across lines in HTML


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


#: The kinds of number a conclusion holds, each written by one rule of this module.
NUMBER_KINDS = ("statistic", "df", "p", "proportion", "proportion-interval", "estimate",
                "lower-limit", "upper-limit", "percent", "alpha")


def write_number(kind: str, value: float | None, high: float | None = None, *,
                 statistic_decimals: int = 2, effect_decimals: int = 2,
                 estimate_decimals: int = 2) -> str:
    """One number of a sentence by the rule of its `kind` (`NUMBER_KINDS`), with the
    same decimals as the tables: a test statistic (F, t, H) to `statistic_decimals`; a
    proportion (eta squared) and its bracketed interval (`value` to `high`) to
    `effect_decimals`, without a leading zero; an estimate in the outcome's units to
    `estimate_decimals` (an open confidence limit is written −∞ or ∞); p as ``p = .041``;
    alpha as ``α = .05``; a confidence level as ``95%``.

    >>> write_number("statistic", 7.891, statistic_decimals=3), write_number("p", 0.0004)
    ('7.891', 'p < .001')
    """
    if kind == "statistic":
        return fixed(value, statistic_decimals)
    if kind == "df":
        return df_value(value)
    if kind == "p":
        return p_clause(value)
    if kind == "proportion":
        return proportion(value, effect_decimals)
    if kind == "proportion-interval":
        return interval(value, high, effect_decimals, bounded=True)
    if kind == "estimate":
        return fixed(value, estimate_decimals)
    if kind == "lower-limit":
        return f"{MINUS}\u221e" if value is None else fixed(value, estimate_decimals)
    if kind == "upper-limit":
        return "\u221e" if value is None else fixed(value, estimate_decimals)
    if kind == "percent":
        return percent(value)
    if kind == "alpha":
        return f"\u03b1 = {no_leading_zero(f'{value:g}')}"
    raise ValueError(f"unknown number kind {kind!r}")


def write_parts(parts, *, html: bool = False, **decimals: int) -> str:
    """A sentence from its parts: text as it stands, each number (a `Number` of
    `appendix.results`, or its plain mapping from results.json) by `write_number` with
    the given decimals. With `html`, the sentence is typeset for the appendix's HTML by
    `prose_html` (escaped, statistic symbols in italics, number clauses unbreakable)."""
    out = []
    for part in parts:
        if isinstance(part, str):
            out.append(part)
        elif isinstance(part, dict):
            out.append(write_number(part["kind"], part["value"], part.get("high"), **decimals))
        else:
            out.append(write_number(part.kind, part.value, part.high, **decimals))
    text = "".join(out)
    return prose_html(text) if html else text


#: Statistic symbols set in italics (APA 7, section 6.45, from memory: Latin letters used as
#: statistical symbols are italic; Greek letters, and abbreviations such as CI, are not).
ITALIC_SYMBOLS = ("SD", "SE", "df", "F", "H", "M", "N", "R\u00b2", "W", "g", "n", "p", "r",
                  "t", "z")

# A symbol as a whole word that opens a number clause: ``F(``, ``p =``, ``n = 12``.
_SYMBOL = re.compile(r"(?<![\w\u00b2'])(" + "|".join(sorted(
    (re.escape(s) for s in ITALIC_SYMBOLS), key=len, reverse=True)) + r")(?=\(|[ \u00a0][=<>≤≥][ \u00a0][\d.\u2212\u221e-])")
# The spaces a number clause holds: around a relation sign, after the comma between two
# numbers (``F(3, 39)``, ``[1.20, 3.40]``), between a level and ``CI`` and before its bracket.
_CLAUSE_SPACES = (
    (re.compile(r" ([=<>≤≥]) (?=[\d.\u2212\u221e-])"), NBSP + r"\1" + NBSP),
    (re.compile(r"(?<=[\d\u221e]), (?=[\d.\u2212\u221e-])"), "," + NBSP),
    (re.compile(r"(?<=%) (?=(?:simultaneous )?CI\b)"), NBSP),
    (re.compile(r"(?<=\bsimultaneous) (?=CI\b)"), NBSP),
    (re.compile(r"(?<=\bCI) (?=\[)"), NBSP),
)


# a decimal point that opens a number (".121", "[.05"): a line could break after it
_LEADING_POINT = re.compile(r"(?:^|(?<=[\u00a0(\[\u2212-]))\.(?=\d)")
# a word of running text: a number clause is one, its spaces being no-break spaces
_WORD = re.compile(r"[^ \t\r\n]+|[ \t\r\n]+")


def tie(text: str) -> str:
    """`text` with no-break spaces inside its number clauses, so that ``p < .001``,
    ``F(3, 39) = 4.21`` and ``95% CI [1.20, 3.40]`` never break across lines.

    >>> tie("F(3, 39) = 4.21, p < .001") == "F(3,\u00a039)\u00a0=\u00a04.21, p\u00a0<\u00a0.001"
    True
    """
    for pattern, replacement in _CLAUSE_SPACES:
        text = pattern.sub(replacement, text)
    return text


#: a label's word longer than this offers places to break (`breakable`)
LONGEST_WORD = 12
_WORD_END = re.compile(r"(?<=[_\-/.:])(?=[^\s])")


def breakable(label: str) -> Markup:
    """A label for a narrow column head (a level name such as
    ``coating_formulation_long``) as HTML whose long words offer places to break: a
    ``<wbr>`` after each ``_ - / . :`` inside a word longer than `LONGEST_WORD`
    characters, else every `LONGEST_WORD` characters. Shorter words are left whole, so
    that a table column is never narrower than its head's longest short word
    (``overflow-wrap: break-word`` in the appendix's CSS breaks a word only where it
    cannot fit), and the ``<wbr>`` adds no character to copied or searched text.

    >>> str(breakable("3 mg/kg"))
    '3 mg/kg'
    >>> str(breakable("coating_formulation_long"))
    'coating_<wbr>formulation_<wbr>long'
    """
    out = []
    for word in _WORD.finditer(str(label)):
        text = word.group()
        if len(text) <= LONGEST_WORD:
            out.append(escape(text))
            continue
        parts = _WORD_END.split(text)
        if max(len(part) for part in parts) > LONGEST_WORD:
            parts = [text[i:i + LONGEST_WORD] for i in range(0, len(text), LONGEST_WORD)]
        out.append(Markup("<wbr>").join(escape(part) for part in parts))
    return Markup("").join(out)


def prose_html(text: str) -> Markup:
    """Plain prose written by the pipeline (a conclusion, a diagnostic's detail) as HTML in
    the number style of the tables: escaped, each statistic symbol that opens a number
    clause in italics (`ITALIC_SYMBOLS`), the clause's spaces unbreakable (`tie`), and each
    tied clause in a ``nobreak`` span (``white-space: nowrap`` in the appendix's CSS), so
    that a line never breaks after a leading decimal point (". | 121"). The space before
    such a span is set in a span of its own: when the clause did not fit at the end of a
    line, the PDF renderer's line breaker (WeasyPrint 70) missed the break at a space
    ending the text before it and fell back to the line's first break, leaving one word
    alone on the line ("Mean"). Neither span adds a character to copied or searched
    text. Plain-text outputs (terminal, results.json) keep the text as it is.

    >>> str(prose_html("so p < .001 & more"))
    'so<span> </span><span class="nobreak"><i>p</i>\xa0&lt;\xa0.001</span> &amp; more'
    """
    tied = tie(text)
    symbols = [m.span(1) for m in _SYMBOL.finditer(tied)]
    out: list[Markup] = []
    for word in _WORD.finditer(tied):
        start, end = word.span()
        html, at = [], start
        for s, e in symbols:  # symbols hold no space: each lies within one word
            if start <= s and e <= end:
                html += [escape(tied[at:s]), Markup("<i>%s</i>") % tied[s:e]]
                at = e
        html.append(escape(tied[at:end]))
        piece = Markup("").join(html)
        if NBSP in word.group() or _LEADING_POINT.search(word.group()):
            if out and not out[-1].strip():
                out[-1] = Markup("<span>%s</span>") % out[-1]
            piece = Markup('<span class="nobreak">%s</span>') % piece
        out.append(piece)
    return Markup("").join(out)
