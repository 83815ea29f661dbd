"""Cross-field checks of a graphical multiplicity plan (Bretz et al. 2009).

``multiplicity: {method: graphical, weights: {...}, transitions: {...}}`` names each node
of the graph by a registered contrast id: `weights` the initial share of alpha of each
(left out: 0), `transitions` for a contrast the share of its level passed to each other
contrast once it is rejected. Run on the raw parsed file from `contrast_checks`; values
of the wrong shape are field errors and are skipped here.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

from appendix.plan.raw import Found, mapping, number
from appendix.plan.wording import Loc, did_you_mean, one_of, show

#: How far a sum of weights may exceed 1 and still count as 1 (decimals written for thirds).
SUM_TOLERANCE = 1e-9

_KEYS = ("weights", "transitions")


def graphical_problems(settings: Mapping, method: object, contrasts: Sequence[tuple[int, Mapping]],
                       counts: Mapping[int, int | None], exploratory: Sequence[object],
                       outcomes: Sequence[str]) -> list[Found]:
    """Every problem of `weights` and `transitions` under `method`.

    `contrasts` are the (index, entry) pairs of ``contrasts``; `counts` the number of
    hypotheses each expands into per outcome (None where it cannot be told).
    """
    if method != "graphical":
        return [(("multiplicity", key), f"got {show(settings[key])} with method {show(method)}; "
                                        f"allowed: {show(key)} only with method 'graphical' (remove "
                                        "it, or choose that method)")
                for key in _KEYS if settings.get(key) is not None]
    ids = [entry["id"] for _, entry in contrasts if isinstance(entry.get("id"), str)]
    found: list[Found] = []
    if settings.get("scope") == "primary-family":
        found.append((("multiplicity", "scope"),
                      "got 'primary-family' with method 'graphical'; allowed: 'per-outcome' (each "
                      "contrast id is one node of the graph, tested on each outcome apart)"))
    weights = settings.get("weights")
    if weights is None and contrasts:
        found.append((("multiplicity", "weights"),
                      "required key is missing for method 'graphical' (each contrast's initial "
                      "share of alpha, summing to at most 1)"))
    if isinstance(weights, Mapping):
        found += _node_keys(("multiplicity", "weights"), weights, ids, exploratory)
        found += share_problems(("multiplicity", "weights"), weights, "weights", "a sum of more than 0 "
                         "and at most 1", empty_allowed=False)
    transitions = settings.get("transitions")
    for source, row in mapping(transitions).items():
        loc: Loc = ("multiplicity", "transitions", source)
        found += _node_keys(("multiplicity", "transitions"), {source: row}, ids, exploratory)
        if not isinstance(row, Mapping):
            continue
        found += _node_keys(loc, row, ids, exploratory, own=source)
        found += share_problems(loc, row, "shares", "at most 1 in all (a rejected contrast passes on "
                         "at most its own level)", empty_allowed=True)
    for i, entry in contrasts:
        found += _one_node(("contrasts", i), entry, counts.get(i), outcomes)
    return found


def _node_keys(loc: Loc, values: Mapping, ids: Sequence[str], exploratory: Sequence[object],
               own: object = None) -> list[Found]:
    """Each key names a registered contrast (and not `own`, the row's contrast)."""
    found: list[Found] = []
    for key in values:
        if key == own:
            found.append(((*loc, key), f"got {show(key)}, the contrast itself; allowed: another "
                                       "contrast (a rejected contrast passes its level on to others)"))
        elif key in exploratory:
            found.append(((*loc, key), f"got {show(key)}, an exploratory analysis; allowed: registered "
                                       "contrast ids only (exploratory analyses are never adjusted "
                                       "with the plan)"))
        elif key not in ids:
            allowed = (f"one of the contrast ids {one_of(ids)}{did_you_mean(key, ids)}" if ids
                       else "ids of entries under 'contrasts' (there are none)")
            found.append(((*loc, key), f"got {show(key)}; allowed: {allowed}"))
    return found


def share_problems(loc: Loc, values: Mapping, what: str, allowed: str, empty_allowed: bool) -> list[Found]:
    """Shares of alpha: each from 0 to 1, their sum at most 1 (and above 0 unless allowed)."""
    found: list[Found] = []
    shares = {key: number(value) for key, value in values.items()}
    finite = {key: s for key, s in shares.items() if s is not None and math.isfinite(s)}
    for key, share in finite.items():
        if not 0 <= share <= 1 + SUM_TOLERANCE:
            found.append(((*loc, key), f"got {show(values[key])}; allowed: a number from 0 to 1"))
    if len(finite) < len(shares) or found:
        return found  # each non-number is a field error; a sum of them says nothing
    total = math.fsum(finite.values())
    if total > 1 + SUM_TOLERANCE:
        found.append((loc, f"got {what} summing to {total:.10g}; allowed: {allowed}"))
    elif total == 0 and not empty_allowed:
        found.append((loc, f"got no weight other than 0; allowed: {allowed} (with none, no "
                           "hypothesis could ever be rejected)"))
    return found


def _one_node(loc: Loc, entry: Mapping, count: int | None, outcomes: Sequence[str]) -> list[Found]:
    """A node of the graph is one hypothesis, tested on every outcome."""
    found: list[Found] = []
    if count is not None and count != 1:
        where = "by" if entry.get("by") is not None else "kind"
        found.append(((*loc, where),
                      f"got {show(entry.get(where))}, a contrast of {count} hypotheses, under "
                      "multiplicity method 'graphical'; allowed: a contrast of one hypothesis (custom, "
                      "a trend of degree 1, or a comparison of two levels, without 'by'): each "
                      "contrast is one node of the graph"))
    listed = entry.get("outcomes")
    if isinstance(listed, (list, tuple)) and outcomes and not set(outcomes) <= set(listed):
        missing = [name for name in outcomes if name not in listed]
        found.append(((*loc, "outcomes"),
                      f"got a list without {one_of(missing, 'and')} under multiplicity method "
                      "'graphical'; allowed: every outcome (or no 'outcomes'): each outcome is "
                      "tested with the whole graph"))
    return found
