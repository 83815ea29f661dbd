"""When two computed numbers count as the same number: the tolerance `appendix diff` and
`appendix verify` (and the golden results) compare with.

Numbers computed by the same code on the same inputs agree to the last bit on one
machine; across CPUs and BLAS builds the last few bits of a double can move. 1e-9
relative (1e-12 absolute near zero) ignores that noise, keeps every printed digit and
shows every real change: a judgement (common practice, no source).

>>> Tolerance().agree(5.0, 5.0 + 1e-12), Tolerance().moved(5.0, 5.1)
(True, True)
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Tolerance:
    """Two numbers agree when |b - a| <= max(absolute, relative * max(|a|, |b|))."""

    relative: float = 1e-9
    absolute: float = 1e-12

    def agree(self, a: float, b: float) -> bool:
        return abs(b - a) <= max(self.absolute, self.relative * max(abs(a), abs(b)))

    def moved(self, a: float | None, b: float | None) -> bool:
        """Whether a number moved; one of two missing is a move, both missing is none."""
        if a is None or b is None:
            return (a is None) != (b is None)
        return not self.agree(a, b)

    def words(self) -> str:
        """``a relative tolerance of 1e-09 (absolute 1e-12 near zero)``."""
        return f"a relative tolerance of {self.relative:g} (absolute {self.absolute:g} near zero)"


#: The tolerance of `appendix diff` and `appendix verify`.
DEFAULT = Tolerance()
