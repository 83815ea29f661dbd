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

MINUS = "\u2212"  # the minus sign of typeset mathematics, not a hyphen
KINDS = ("custom", "pairwise", "versus-control", "trend", "helmert")
_DEGREE_NAMES = {1: "linear", 2: "quadratic", 3: "cubic"}


@dataclass(frozen=True)
class Hypothesis:
    """H0: sum(weights * level means) = 0 for one registered contrast (or part of one).

    `id` is unique in the plan (``C3:seaweed-chitosan``); `contrast` the registered
    contrast's id; `kind` its kind; `weights` one number per level, in plan order.
    """

    id: str
    contrast: str
    kind: str
    label: str
    weights: tuple[float, ...]


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
) -> tuple[Hypothesis, ...]:
    """The hypotheses one registered contrast stands for, in a fixed order.

    - custom: one hypothesis with the given weights (missing levels weigh 0).
    - pairwise: for every pair i < j (plan order) mean_j - mean_i, id ``C:level_j-level_i``.
    - versus-control: for each other level L, mean_L - mean_control, id ``C:L``.
    - trend: orthogonal polynomials of degree 1..`degree` for `spacing` (default
      equally spaced), ids ``C:linear``, ``C:quadratic``, ``C:cubic``, ``C:degree-4``.
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

    def make(suffix: str | None, text: str, vector: np.ndarray) -> Hypothesis:
        hid = contrast_id if suffix is None else f"{contrast_id}:{suffix}"
        return Hypothesis(hid, contrast_id, kind, text, _weights(vector))

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
        rows = orthogonal_polynomials(scores, degree)
        return tuple(make(degree_name(d), f"{degree_name(d)} trend", rows[d - 1])
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
