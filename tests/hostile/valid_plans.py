"""Valid study files and data that fit them, as a hypothesis strategy.

`cases()` draws a plan that the study-file schema accepts (every choice of the plan model:
factor roles and levels, blocks, covariates (for every outcome or some), one or two within
factors, interactions, outcome roles,
every contrast kind with `by`, `outcomes` and one-sided alternatives, every multiplicity
method and scope, declared families (each with a method its members allow, graphs and
orders over nodes across outcomes, a serial gatekeeping sequence), exploratory entries, exclusions, fallbacks, outlier thresholds, planned
numbers, acknowledgements) together with a small CSV of invented values laid out as the
plan says (one row per unit, or per unit and cell of the within grid). Some data are awkward on
purpose: missing cells, a level or a whole cell without units, excluded units, constant
outcomes or covariates, a single unit per cell, levels spelled by value.

The plan is valid by construction: `tests/hostile/test_check_run_parity.py` asserts that
the loader accepts every drawn plan, so a strategy that drifts from the schema fails loudly.
"""

from __future__ import annotations

import io
import itertools
from dataclasses import dataclass

import numpy as np
from hypothesis import strategies as st

from appendix.plan.choices import METHODS
from appendix.plan.scalars import scalar_text

UNIT = "unit_id"
FLAG = "flag"

#: Awkward features of the data; a case draws any subset of them.
DATA_QUIRKS = ("missing", "empty-level", "empty-cell", "excluded", "constant-outcome",
               "constant-within-cells", "constant-covariate", "single-unit", "by-value",
               "ties", "within-gap")


@dataclass(frozen=True)
class Case:
    """A study file (as a plain mapping for YAML) and its data file's text."""

    plan: dict
    csv: str
    quirks: tuple[str, ...]

    @property
    def shape(self) -> str:
        """The kind of design: one factor, between-unit factors only, a within factor, or two."""
        roles = [_role(f) for f in self.plan["design"]["factors"]]
        if roles == ["treatment"] and not self.plan["design"].get("covariates"):
            return "one factor"
        return {0: "between-unit factors", 1: "with a within factor"}.get(roles.count("within"),
                                                                          "with two within factors")


def _subset(draw, items, least: int, most: int | None = None) -> list:
    """Some of `items` (from `least` to `most` of them, all by default), each at most once."""
    most = len(items) if most is None else min(most, len(items))
    return list(draw(st.permutations(list(items))))[:draw(st.integers(least, most))]


def _levels(draw, name: str, count: int) -> list:
    style = draw(st.sampled_from(["text", "text", "numbers", "decimals", "words"]))
    if style in ("numbers", "decimals"):  # YAML numbers name the data text "1", "2.5" ...
        steps = draw(st.lists(st.integers(1, 9), min_size=count - 1, max_size=count - 1))
        values = np.cumsum([draw(st.integers(0, 20)), *steps])
        return [int(x) for x in values] if style == "numbers" else [float(x) / 2 + 0.25 for x in values]
    if style == "words":  # spaces and letters beyond ASCII, as people name levels
        return [f"dose {name} n\u00b0{j}" if j % 2 else f"h\u00f8j {name}{j}" for j in range(count)]
    return [f"{name}{j}" for j in range(count)]


@st.composite
def _factor(draw, name: str, role: str, count: int) -> dict:
    factor: dict = {"name": name, "levels": _levels(draw, name, count)}
    if role != "treatment" or draw(st.booleans()):
        factor["role"] = role
    if draw(st.booleans()):
        factor["label"] = f"factor {name}"
    if role != "block":
        if draw(st.booleans()):
            factor["control"] = draw(st.sampled_from(factor["levels"]))
        if draw(st.integers(0, 2)):
            factor["ordered"] = draw(st.booleans())
    return factor


def _roles(draw) -> list[str]:
    """One treatment factor, several between-unit factors, or one or two within factors with
    others."""
    shape = draw(st.sampled_from(["one factor", "between", "within", "one factor", "two within"]))
    if shape == "one factor":
        return ["treatment"]
    first = {"within": ["within"], "two within": ["within", "within"]}.get(shape, ["treatment"])
    extra = draw(st.lists(st.sampled_from(["treatment", "block"]), min_size=shape == "between",
                          max_size=2 if shape != "two within" else 1))
    return list(draw(st.permutations([*first, *extra])))


def _closed(terms: list[frozenset]) -> list[list[str]]:
    """Interactions with every lower-order one they contain added (the hierarchy rule)."""
    closed: list[frozenset] = []
    for term in sorted(terms, key=len):
        for size in range(2, len(term) + 1):
            for sub in itertools.combinations(sorted(term), size):
                if frozenset(sub) not in closed:
                    closed.append(frozenset(sub))
    return [sorted(t) for t in closed]


def _role(factor: dict) -> str:
    return factor.get("role", "treatment")


@st.composite
def _contrast(draw, factors: list[dict], outcomes: list[str], kind: str | None = None) -> dict:
    eligible = [f for f in factors if _role(f) != "block"]
    if kind == "versus-control":
        eligible = [f for f in eligible if "control" in f]
    factor = draw(st.sampled_from(eligible))
    levels = factor["levels"]
    if kind is None:
        kinds = ["custom", "pairwise", "helmert"]
        kinds += ["versus-control"] if "control" in factor else []
        kinds += ["trend"] if factor.get("ordered") else []
        kind = draw(st.sampled_from(kinds))
    entry: dict = {"kind": kind, "label": f"invented {kind} contrast"}
    if len(eligible) > 1 or len([f for f in factors if _role(f) != "block"]) > 1 or draw(st.booleans()):
        entry["factor"] = factor["name"]
    if kind == "custom":
        chosen = _subset(draw, levels, 2)
        shape = draw(st.sampled_from(["unit", "whole", "fractions"]))
        rest = len(chosen) - 1
        if shape == "unit":
            weights = [-1.0] + [1.0 / rest] * rest if rest > 1 else [-1, 1]
        elif shape == "whole":
            weights = [-rest] + [1] * rest
        else:
            weights = [0.5, -0.25, -0.25][:len(chosen)] if len(chosen) == 3 else [0.5, -0.5]
        entry["weights"] = dict(zip(chosen, weights))
        if abs(sum(entry["weights"].values())) > 1e-12:  # 1/3 three times need not sum to 0
            entry["weights"] = dict(zip(chosen, [-rest] + [1] * rest))
    elif kind == "trend":
        if draw(st.booleans()):
            entry["degree"] = draw(st.integers(1, len(levels) - 1))
        if draw(st.booleans()):
            steps = draw(st.lists(st.sampled_from([0.5, 1, 2, 3]), min_size=len(levels) - 1,
                                  max_size=len(levels) - 1))
            entry["spacing"] = [float(x) for x in np.cumsum([0, *steps])]
    others = [f["name"] for f in factors if _role(f) != "block" and f is not factor]
    if others and draw(st.integers(0, 2)) == 0:
        entry["by"] = draw(st.sampled_from(others))
    alternative = draw(st.sampled_from(["two-sided", "two-sided", "greater", "less", None]))
    if alternative is not None:
        entry["alternative"] = alternative
        if alternative != "two-sided":
            entry["justification"] = "only one direction matters (invented)"
    if len(outcomes) > 1 and draw(st.booleans()):
        entry["outcomes"] = _subset(draw, outcomes, 1)
    return entry


@st.composite
def _contrasts(draw, factors: list[dict], outcomes: list[str], method: str) -> list[dict]:
    if method in ("tukey", "dunnett"):
        kind = "pairwise" if method == "tukey" else "versus-control"
        # one contrast of the kind per outcome: all outcomes, or each its own
        if draw(st.booleans()):
            entries = [draw(_contrast(factors, outcomes, kind))]
            entries[0].pop("outcomes", None)
        else:
            chosen = _subset(draw, outcomes, 1)
            entries = [{**draw(_contrast(factors, outcomes, kind)), "outcomes": [o]} for o in chosen]
    elif method == "graphical":
        # each node of the graph is one hypothesis tested on every outcome: custom contrasts
        entries = draw(st.lists(_contrast(factors, outcomes, "custom"), max_size=3))
        for entry in entries:
            entry.pop("by", None)
            entry.pop("outcomes", None)
    else:
        entries = draw(st.lists(_contrast(factors, outcomes), max_size=3))
    for i, entry in enumerate(entries):
        entry["id"] = f"C{i + 1}"
    return entries


def _applies(contrast: dict, outcome: str) -> bool:
    return outcome in contrast.get("outcomes", [outcome])


def _family_method(draw, contrasts: list[dict], outcomes: list[str]) -> str:
    """A method the family's members allow: Tukey or Dunnett over one contrast of their kind
    on one outcome, graphical over contrasts of one hypothesis, any p-value method."""
    # the methods particular to the members first: the simplest draws come first
    methods = []
    if len(outcomes) == 1 and len(contrasts) == 1:
        methods += {"pairwise": ["tukey"], "versus-control": ["dunnett"]}.get(contrasts[0]["kind"], [])
    if all(c["kind"] == "custom" and "by" not in c for c in contrasts):
        methods += ["graphical"]
    methods += ["holm", "fixed-sequence", "bonferroni", "hochberg", "sidak", "benjamini-hochberg",
                "none"]
    return draw(st.sampled_from(methods))


@st.composite
def _families(draw, contrasts: list[dict], outcomes: list[str]) -> dict:
    """Declared families: the outcomes in groups, each group's contrasts in groups; each
    (contrast group, outcome group) that holds a member is a family with a method its
    members allow, and a serial gatekeeping sequence over some of them."""
    outcome_groups: dict[int, list[str]] = {}
    for name in outcomes:
        outcome_groups.setdefault(draw(st.integers(0, len(outcomes) - 1)), []).append(name)
    families = []
    for group in outcome_groups.values():
        contrast_groups: dict[int, list[dict]] = {}
        for i, c in enumerate(contrasts):
            if any(_applies(c, o) for o in group):  # simplest draw: a family per contrast
                shift = draw(st.integers(0, len(contrasts) - 1))
                contrast_groups.setdefault((i + shift) % len(contrasts), []).append(c)
        for members in contrast_groups.values():
            on = [o for o in group if any(_applies(c, o) for c in members)]
            method = _family_method(draw, members, on)
            family: dict = {"id": f"F{len(families) + 1}", "contrasts": [c["id"] for c in members],
                            "outcomes": on, "method": method}
            if draw(st.booleans()):
                family["label"] = f"invented family {len(families) + 1}"
            nodes = [(c["id"], o) for o in on for c in members if _applies(c, o)]
            bare = len(on) == 1 and draw(st.booleans())  # one outcome: the id alone may name a node
            names = [c if bare else f"{c}@{o}" for c, o in nodes]
            if method == "fixed-sequence":
                family["order"] = list(draw(st.permutations(names)))
            elif method == "graphical":
                share = draw(st.sampled_from([1.0, 0.5]))
                family["weights"] = {n: share / len(names) for n in names}
                if len(names) > 1 and draw(st.booleans()):  # Holm's graph over the nodes
                    family["transitions"] = {n: {k: 1.0 / (len(names) - 1) for k in names if k != n}
                                             for n in names}
            families.append(family)
    settings: dict = {"families": families}
    gateable = [f["id"] for f in families if f["method"] not in ("none", "benjamini-hochberg")]
    if len(gateable) > 1 and draw(st.sampled_from([True, False])):
        settings["sequence"] = _subset(draw, gateable, 2)
    return settings


def _assumptions(draw, one_way_classical: bool) -> dict:
    assumptions: dict = {}
    normality = draw(st.sampled_from(["shapiro-wilk", "none", None]))
    if normality is not None:
        assumptions["normality"] = normality
    variance = draw(st.sampled_from([None, [], ["brown-forsythe"], ["bartlett"],
                                     ["brown-forsythe", "bartlett"]]))
    if variance is not None:
        assumptions["equal_variance"] = variance
    if draw(st.booleans()):
        assumptions["outliers"] = {"threshold": draw(st.sampled_from([0.5, 2.0, 2.5, 3.0, 10.0]))}
    if draw(st.booleans()):
        assumptions["attested"] = {"random_allocation": "a seeded permutation list (invented)"}
    if one_way_classical:
        registered_variance = ["brown-forsythe", "bartlett"] if variance is None else variance
        tests = [("unequal-variance", t, "welch") for t in registered_variance]
        tests += [("non-normal", "shapiro-wilk", "rank-based")] if normality != "none" else []
        rules = draw(st.lists(st.sampled_from(tests), max_size=2)) if tests else []
        if rules:
            assumptions["fallbacks"] = [
                {"when": when, "test": test, "use": use,
                 **({"threshold": draw(st.sampled_from([0.05, 0.2, 0.5]))} if draw(st.booleans()) else {})}
                for when, test, use in rules]
    return assumptions


@st.composite
def plans(draw, method: str | None = None) -> dict:
    """A study file that the plan model accepts (see the module docstring); `method` fixes
    the multiplicity method (``families``: declared families), else it is drawn."""
    roles = _roles(draw)
    counts = [draw(st.integers(2, 4 if len(roles) == 1 else 3)) for _ in roles]
    factors = [draw(_factor(f"f{i}", role, k)) for i, (role, k) in enumerate(zip(roles, counts))]
    names = [f["name"] for f in factors]
    pairs = [frozenset(t) for size in (2, 3) for t in itertools.combinations(names, size)]
    interactions = _closed(_subset(draw, pairs, 0, 2))
    covariates = [{"name": f"c{i}", "label": f"covariate {i}",
                   **({"column": f"cov_{i}"} if draw(st.booleans()) else {})}
                  for i in range(draw(st.integers(0, 1)) if len(roles) > 1 else 0)]
    design: dict = {"factors": factors}
    if interactions:
        design["interactions"] = interactions
    if covariates:
        design["covariates"] = covariates
    one_way = len(factors) == 1 and _role(factors[0]) == "treatment" and not covariates
    if not one_way or draw(st.booleans()):
        design["sums_of_squares"] = draw(st.sampled_from([1, 2, 3]))
    outcomes = [{"name": f"y{i}", "label": f"outcome {i}",
                 "role": draw(st.sampled_from(["primary", "secondary"])),
                 **({"column": f"resp_{i}"} if draw(st.booleans()) else {}),
                 **({"unit": "mg"} if draw(st.booleans()) else {})}
                for i in range(draw(st.integers(1, 2)))]
    if len(outcomes) > 1 and draw(st.integers(0, 3)) == 0:  # two outcomes may read one column
        outcomes[1]["column"] = outcomes[0].get("column", outcomes[0]["name"])
    outcome_names = [o["name"] for o in outcomes]
    for covariate in covariates:  # a baseline of one outcome is no covariate of the other
        if draw(st.integers(0, 2)) == 0:
            covariate["outcomes"] = _subset(draw, outcome_names, 1)
    method = method or draw(st.sampled_from((*METHODS, "fixed-sequence", "families")))
    if method == "dunnett" and not any("control" in f for f in factors if _role(f) != "block"):
        method = "holm"
    if method == "families":  # declared families over any contrasts, each with its own method
        # any kind, with single-hypothesis custom contrasts (graph nodes) and comparisons
        # with a control (a Dunnett family beside others) drawn often
        kinds = [None, "custom"] + (["versus-control"] if any(
            "control" in f for f in factors if _role(f) != "block") else [])
        contrasts = [draw(_contrast(factors, outcome_names, draw(st.sampled_from(kinds))))
                     for _ in range(draw(st.integers(1, 4)))]
        for i, entry in enumerate(contrasts):
            entry["id"] = f"C{i + 1}"
            if entry["kind"] == "custom" and draw(st.booleans()):
                entry.pop("by", None)
    else:
        contrasts = draw(_contrasts(factors, outcome_names, method))
    data: dict = {"source": "units.csv", "unit": UNIT}
    if draw(st.booleans()):
        data["exclusions"] = [{"id": "X1", "column": FLAG, "equals": draw(st.sampled_from(["yes", 1, True])),
                               "reason": "protocol violated (invented)"}]
    if draw(st.booleans()):
        data["planned_n"] = draw(st.sampled_from([{"per_group": 2}, {"per_group": 50}, {"total": 10},
                                                    {"per_group": 4, "minimum": 3},
                                                    {"total": 10, "minimum_total": 8},
                                                    {"per_group": 4, "minimum_total": 5}]))
    if draw(st.booleans()):
        data["missing_limit"] = draw(st.sampled_from([0.0, 0.1, 0.5]))
    study = {"id": "generated-plan", "title": "Generated plan with invented data"}
    if draw(st.booleans()):
        study.update(registered="2026-01-15", population="all units allocated (invented)")
    plan: dict = {"format": 1, "study": study,
                  "data": data, "design": design, "outcomes": outcomes}
    if draw(st.booleans()):
        plan["alpha"] = draw(st.sampled_from([0.01, 0.05, 0.1, 0.25, 0.45]))
    analysis = draw(st.sampled_from(["classical", "welch", "rank-based"])) if one_way else "classical"
    if analysis != "classical" or draw(st.booleans()):
        plan["analysis"] = {"method": analysis}
    assumptions = _assumptions(draw, one_way and analysis == "classical")
    if assumptions:
        plan["assumptions"] = assumptions
    if contrasts:
        plan["contrasts"] = contrasts
    multiplicity: dict = {"method": method}
    if method == "families":
        multiplicity = draw(_families(contrasts, outcome_names))
    elif method not in ("tukey", "dunnett", "graphical") and draw(st.booleans()):
        multiplicity["scope"] = draw(st.sampled_from(["per-outcome", "primary-family"]))
    if method == "fixed-sequence" and contrasts:
        multiplicity["order"] = list(draw(st.permutations([c["id"] for c in contrasts])))
    if method == "graphical" and contrasts:
        ids = [c["id"] for c in contrasts]
        share = draw(st.sampled_from([1.0, 0.5]))  # all of alpha, or half of it left unspent
        multiplicity["weights"] = {i: share / len(ids) for i in ids}
        if len(ids) > 1 and draw(st.booleans()):  # Holm's graph: pass the level on evenly
            multiplicity["transitions"] = {i: {j: 1.0 / (len(ids) - 1) for j in ids if j != i}
                                           for i in ids}
    if method != "holm" or len(multiplicity) > 1 or draw(st.booleans()):
        plan["multiplicity"] = multiplicity
    if draw(st.integers(0, 2)) == 0:
        entry = draw(_contrast(factors, outcome_names))
        plan["exploratory"] = [{**entry, "id": "E1", "reason": "asked after unblinding (invented)"}]
    if "within" in roles and draw(st.booleans()):
        plan["repeated"] = {"missing": "complete-units"}
    if draw(st.integers(0, 3)) == 0:
        plan["deviations"] = [{"kind": draw(st.sampled_from(["plan-not-registered", "level-without-units"])),
                               "subject": "plan", "justification": "invented acknowledgement"}]
    return plan


def _cells(plan: dict) -> tuple[list[dict], list[dict]]:
    factors = plan["design"]["factors"]
    within = [f for f in factors if _role(f) == "within"]
    return [f for f in factors if _role(f) != "within"], within


def data_for(plan: dict, quirks: tuple[str, ...], seed: int) -> str:
    """A CSV that fits `plan`: every cell of the between-unit factors crossed, 1 to 4 units
    in each, each unit on one row per cell of the within grid, values drawn from a seeded
    generator, with the awkward `quirks`."""
    rng = np.random.default_rng(seed)
    between, within = _cells(plan)
    outcomes = list(dict.fromkeys(o.get("column", o["name"]) for o in plan["outcomes"]))
    covariates = plan["design"].get("covariates", [])
    cells = list(itertools.product(*(f["levels"] for f in between)))
    if "empty-level" in quirks and between:
        factor = int(rng.integers(len(between)))
        gone = between[factor]["levels"][int(rng.integers(len(between[factor]["levels"])))]
        cells = [c for c in cells if c[factor] != gone]
    if "empty-cell" in quirks and len(cells) > 1:
        del cells[int(rng.integers(len(cells)))]
    occasions = list(itertools.product(*(f["levels"] for f in within))) if within else [None]
    columns = [UNIT, *(f["name"] for f in between), *(f["name"] for f in within),
               *(c.get("column", c["name"]) for c in covariates),
               *outcomes, FLAG]
    rows = []
    unit = 0

    def level_text(value) -> str:  # "by-value": some numbers spelled otherwise ("3.0", "2.50")
        if "by-value" in quirks and isinstance(value, (int, float)) and rng.random() < 0.3:
            return f"{value}.0" if isinstance(value, int) else f"{value}0"
        return str(value)

    exclusions = plan["data"].get("exclusions", [])
    excluding = scalar_text(exclusions[0]["equals"]) if exclusions else "yes"
    for cell in cells:
        size = 1 if "single-unit" in quirks else int(rng.integers(1, 5))
        cell_mean = rng.normal(10, 2)
        for _ in range(size):
            unit += 1
            flag = excluding if "excluded" in quirks and rng.random() < 0.25 else "no"
            covariate_texts = ["5.0" if "constant-covariate" in quirks else f"{rng.normal(5, 1):.1f}"
                               for _ in covariates]
            if "missing" in quirks and rng.random() < 0.1:  # the same on each of the unit's rows
                covariate_texts = ["NA" for _ in covariates]
            for o, occasion in enumerate(occasions):
                if "within-gap" in quirks and occasion is not None and rng.random() < 0.2:
                    continue  # no row for this unit at this level: the unit is incomplete
                row = [f"u{unit}", *(level_text(v) for v in cell),
                       *(level_text(v) for v in (occasion or ())), *covariate_texts]
                for j in range(len(outcomes)):
                    if "constant-outcome" in quirks and j == 0:
                        value = 7.0
                    elif "constant-within-cells" in quirks:
                        value = cell_mean + 0.5 * o
                    else:
                        value = cell_mean + 0.5 * o + rng.normal(0, 1.5)
                    if "ties" in quirks:
                        value = float(np.round(value / 2) * 2)
                    missing = "missing" in quirks and rng.random() < 0.15
                    row.append(str(rng.choice(["", "NA", "."])) if missing else f"{value:.2f}")
                rows.append([*row, flag])
    out = io.StringIO()
    out.write(",".join(columns) + "\n")
    for row in rows:
        out.write(",".join(row) + "\n")
    return out.getvalue()


@st.composite
def cases(draw, method: str | None = None) -> Case:
    """A valid plan and data that fit it (see the module docstring); `method` as in `plans`."""
    plan = draw(plans(method))
    quirks = tuple(_subset(draw, DATA_QUIRKS, 0, 2))
    seed = draw(st.integers(0, 2**32 - 1))
    return Case(plan=plan, csv=data_for(plan, quirks, seed), quirks=quirks)
