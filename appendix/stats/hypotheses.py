"""Planned contrasts expanded into hypotheses: one weight vector over the levels each.

A registered contrast (custom, pairwise, versus-control, trend or helmert) stands for one
or more hypotheses H0: sum_i w_i mu_i = 0, with the weights over the factor's levels in
plan order. Ids and labels follow the issue-3 contract, so that every later stage (the
runner, conclusions, the appendix) names a hypothesis the same way.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from appendix.errors import InternalError
from appendix.results import EstimateScale

MINUS = "\u2212"  # the minus sign of typeset mathematics, not a hyphen
KINDS = ("custom", "pairwise", "versus-control", "trend", "helmert")
_DEGREE_NAMES = {1: "linear", 2: "quadratic", 3: "cubic"}
# Latin-1 has superscript two and three only; the common text fonts stop there too.
_POWERS = {2: "\u00b2", 3: "\u00b3"}


@dataclass(frozen=True)
class Hypothesis:
    """H0: sum(weights * level means) = 0 for one registered contrast (or part of one).

    `id` is unique in the plan (``C3:seaweed-chitosan``); `contrast` the registered
    contrast's id; `kind` its kind; `weights` one number per level, in plan order;
    `scale` what the estimate measures when it is not a difference of means (trends).
    """

    id: str
    contrast: str
    kind: str
    label: str
    weights: tuple[float, ...]
    scale: EstimateScale | None = None


def degree_name(degree: int) -> str:
    """``linear``, ``quadratic``, ``cubic``, then ``degree-4``, ``degree-5``, ..."""
    return _DEGREE_NAMES.get(degree, f"degree-{degree}")


def orthogonal_polynomials(spacing: Sequence[float], degree: int) -> np.ndarray:
    """Orthogonal polynomial contrast weights for levels at `spacing`, degrees 1..`degree`.

    Row d - 1 holds the degree-d weights: the QR decomposition of the Vandermonde matrix
    [1, x, ..., x^degree] gives orthonormal columns, each orthogonal to the constant (so
    the weights sum to 0) and to every lower power (Fisher & Yates 1938, *Statistical
    Tables*, table XXIII, tabulate the equally spaced case). Each row has unit sum of
    squares and its sign makes the weight of the highest level positive.

    >>> np.round(orthogonal_polynomials([1, 2, 3, 4], 1) * np.sqrt(20), 12)
    array([[-3., -1.,  1.,  3.]])
    """
    x = np.asarray(spacing, dtype=np.float64)
    k = x.size
    if x.ndim != 1 or k < 2 or not np.all(np.isfinite(x)) or np.any(np.diff(x) <= 0):
        raise InternalError(f"spacing must be {k} strictly increasing finite numbers, got {spacing!r}")
    if not 1 <= degree <= k - 1:
        raise InternalError(f"degree must lie in 1..{k - 1}, got {degree!r}")
    # Centring and scaling the scores keeps the Vandermonde matrix well conditioned.
    z = (x - x.mean()) / (x.max() - x.min())
    q, _ = np.linalg.qr(np.vander(z, degree + 1, increasing=True))
    rows = q[:, 1:].T.copy()
    rows /= np.linalg.norm(rows, axis=1, keepdims=True)
    rows *= np.where(rows[:, -1] < 0, -1.0, 1.0)[:, None]
    return rows


def trend_weights(spacing: Sequence[float], degree: int) -> np.ndarray:
    """Trend contrast weights whose estimate is a polynomial coefficient in the scores.

    Row d - 1 is the degree-d orthogonal polynomial (`orthogonal_polynomials`) divided by
    its inner product with (x - mean x)^d, so that sum_i c_i m_i is the coefficient of x^d
    in the least-squares polynomial of degree d in x fitted to the level means m_i (each
    level weighted alike). For degree 1 that is the slope of the level means per unit of
    x: c_i = (x_i - mean x) / sum_j (x_j - mean x)^2, the linear contrast divided by the
    sum of its squared coefficients (Maxwell & Delaney 2004, *Designing Experiments and
    Analyzing Data*, 2nd ed., ch. 6; Kirk 2013, *Experimental Design*, 4th ed., on trend
    analysis; both from memory). Because only P_d of the orthogonal polynomials
    P_0..P_d has an x^d term, the degree-d coefficient is the same whatever lower terms
    the fit holds. The hypothesis, t and p are those of the orthonormal contrast; estimate
    and interval are the orthonormal ones times 1 / (q_d . (x - mean x)^d).

    >>> trend_weights([0, 1, 2, 3], 1).round(12).tolist()
    [[-0.3, -0.1, 0.1, 0.3]]
    """
    x = np.asarray(spacing, dtype=np.float64)
    rows = orthogonal_polynomials(spacing, degree)
    centred = x - x.mean()
    # q_d . (x - mean)^d = ||P_d|| > 0 for the monic orthogonal polynomial P_d, whose value
    # at the highest level is positive like the row's sign: the scale keeps the direction.
    leading = np.array([float(np.dot(rows[d - 1], centred**d)) for d in range(1, degree + 1)])
    return rows / leading[:, None]


def trend_scale(degree: int, factor: str | None = None,
                spacing: Sequence[float] | None = None) -> EstimateScale:
    """What the degree-`degree` estimate of `trend_weights` measures, in words.

    >>> trend_scale(1, "dose").meaning
    'least-squares slope per step between adjacent levels of dose'
    >>> trend_scale(2, "dose", [0, 1, 2, 4]).per
    'per dose unit\u00b2'
    """
    name = factor or "the factor"
    if spacing is None:
        one, many, word = (f"step between adjacent levels of {name}",
                           f"steps between adjacent levels of {name}", "step")
    else:
        scores = ", ".join(f"{float(v):g}" for v in spacing)
        one, many, word = (f"{name} unit of the registered spacing {scores}",
                           f"{name} units of the registered spacing {scores}", f"{name} unit")
    power = _POWERS.get(degree, f"^{degree}")
    component = f"{degree_name(degree)} trend"
    if degree == 1:
        return EstimateScale(component, f"least-squares slope per {one}", f"per {word}")
    fitted = _DEGREE_NAMES.get(degree, f"degree-{degree} polynomial")
    return EstimateScale(component, f"coefficient of x{power} in the least-squares {fitted} "
                         f"in x, x in {many}", f"per {word}{power}")


def _unit(k: int, i: int) -> np.ndarray:
    e = np.zeros(k)
    e[i] = 1.0
    return e


def _weights(vector: np.ndarray) -> tuple[float, ...]:
    return tuple(float(w) for w in vector)


def hypotheses_for(
    kind: str,
    levels: Sequence[str],
    *,
    control: str | None = None,
    weights: Mapping[str, float] | None = None,
    degree: int = 1,
    spacing: Sequence[float] | None = None,
    contrast_id: str,
    label: str,
    factor_label: str | None = None,
) -> tuple[Hypothesis, ...]:
    """The hypotheses one registered contrast stands for, in a fixed order.

    - custom: one hypothesis with the given weights (missing levels weigh 0).
    - pairwise: for every pair i < j (plan order) mean_j - mean_i, id ``C:level_j-level_i``.
    - versus-control: for each other level L, mean_L - mean_control, id ``C:L``.
    - trend: orthogonal polynomials of degree 1..`degree` for `spacing` (default
      equally spaced, one step between adjacent levels), scaled by `trend_weights` so
      that each estimate is the slope (linear) or leading coefficient of the fitted
      polynomial; ids ``C:linear``, ``C:quadratic``, ``C:cubic``, ``C:degree-4``; each
      carries its `trend_scale` (words naming `factor_label`).
    - helmert: for level i < k, mean_i - mean of levels i+1..k, id ``C:level_i``.

    The plan stage has validated the inputs; a violation here is a bug (InternalError).

    >>> [h.id for h in hypotheses_for("pairwise", ["a", "b", "c"], contrast_id="P", label="pairs")]
    ['P:b-a', 'P:c-a', 'P:c-b']
    """
    levels = tuple(levels)
    k = len(levels)
    if k < 2 or len(set(levels)) != k:
        raise InternalError(f"need at least two distinct levels, got {levels!r}")
    if kind not in KINDS:
        raise InternalError(f"unknown contrast kind {kind!r}; allowed: {', '.join(KINDS)}")
    if weights is not None and kind != "custom":
        raise InternalError(f"a {kind} contrast takes no weights")

    def make(suffix: str | None, text: str, vector: np.ndarray,
             scale: EstimateScale | None = None) -> Hypothesis:
        hid = contrast_id if suffix is None else f"{contrast_id}:{suffix}"
        return Hypothesis(hid, contrast_id, kind, text, _weights(vector), scale)

    if kind == "custom":
        return (make(None, label, _custom_weights(levels, weights)),)
    if kind == "pairwise":
        return tuple(make(f"{levels[j]}-{levels[i]}", f"{levels[j]} {MINUS} {levels[i]}",
                          _unit(k, j) - _unit(k, i))
                     for i in range(k) for j in range(i + 1, k))
    if kind == "versus-control":
        if control not in levels:
            raise InternalError(f"control {control!r} is not one of the levels {levels!r}")
        c = levels.index(control)
        return tuple(make(level, f"{level} {MINUS} {control}", _unit(k, i) - _unit(k, c))
                     for i, level in enumerate(levels) if i != c)
    if kind == "trend":
        scores = tuple(range(k)) if spacing is None else spacing
        if len(scores) != k:
            raise InternalError(f"spacing has {len(scores)} values for {k} levels")
        rows = trend_weights(scores, degree)
        return tuple(make(degree_name(d), f"{degree_name(d)} trend", rows[d - 1],
                          trend_scale(d, factor_label, spacing))
                     for d in range(1, degree + 1))
    hypotheses = []
    for i in range(k - 1):
        vector = _unit(k, i)
        vector[i + 1:] = -1.0 / (k - 1 - i)
        hypotheses.append(make(levels[i], f"{levels[i]} {MINUS} mean of later levels", vector))
    return tuple(hypotheses)


def _custom_weights(levels: tuple[str, ...], weights: Mapping[str, float] | None) -> np.ndarray:
    if not weights:
        raise InternalError("a custom contrast needs weights")
    unknown = sorted(set(weights) - set(levels))
    if unknown:
        raise InternalError(f"weights name unknown levels {unknown!r}; levels are {levels!r}")
    vector = np.array([float(weights.get(level, 0.0)) for level in levels])
    largest = float(np.max(np.abs(vector)))
    if largest == 0.0 or abs(float(vector.sum())) > 1e-9 * largest:
        raise InternalError(f"custom weights must sum to 0 and not all be 0, got {dict(weights)!r}")
    return vector
