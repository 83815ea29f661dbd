"""What a run would compute, for `appendix check`: read and validated, nothing computed
or written."""

from __future__ import annotations

from appendix.data.dataset import Dataset
from appendix.data.exclusions import exclusion_lines
from appendix.data.readers import read_table
from appendix.plan.lints import lint
from appendix.plan.load import LoadedPlan
from appendix.plan.model import Contrast, Plan


def _counts(items) -> str:
    return ", ".join(f"{c.level} {c.n}" for c in items)


def _hypotheses(n: int) -> str:
    return f"{n} hypothes{'is' if n == 1 else 'es'}"


def _contrast(word: str, contrast: Contrast, plan: Plan) -> str:
    outcomes = ", ".join(contrast.outcomes) if contrast.outcomes else "every outcome"
    where = "" if plan.robust_absent is None else (f" of {plan.factor_of(contrast).name}"
                                        + (f" within each level of {contrast.by}" if contrast.by else ""))
    return (f"{word} {contrast.id} ({contrast.kind}{where}): {contrast.label}; "
            f"{_hypotheses(plan.hypotheses_of(contrast))}, {contrast.alternative}; "
            f"outcomes: {outcomes}")


def describe_contrasts(plan: Plan) -> list[str]:
    """The registered analysis, fallbacks, contrasts with their hypothesis counts, the
    multiplicity control and the exploratory analyses, one line each."""
    lines = [f"registered analysis: {plan.analysis.method}"] if plan.robust_absent is None else []
    lines += [f"registered fallback {i}: if {rule.test} gives p < {rule.threshold:g} "
              f"({rule.when}), use {rule.use}"
              for i, rule in enumerate(plan.assumptions.fallbacks, start=1)]
    lines += [_contrast("contrast", c, plan) for c in plan.contrasts]
    if plan.contrasts and plan.multiplicity.families is not None:
        lines += _family_lines(plan)
    elif plan.contrasts:
        settings = plan.multiplicity
        order = f" in the order {', '.join(settings.order)}" if settings.order else ""
        counts = ", ".join(f"{o.name} {plan.hypothesis_count(o.name)}" for o in plan.outcomes)
        primary = sum(plan.hypothesis_count(o.name) for o in plan.outcomes if o.role == "primary")
        family = f"; primary family {primary}" if settings.scope == "primary-family" else ""
        lines.append(f"multiplicity: {settings.method}{order}, {settings.scope}; "
                     f"hypotheses per outcome: {counts}{family}")
        if settings.method == "graphical":
            lines.append(_graph_line(settings))
    lines += [_contrast("exploratory", c, plan) + f"; not adjusted; reason: {c.reason}"
              for c in plan.exploratory]
    return lines


def _family_lines(plan: Plan) -> list[str]:
    """One line per declared family (method, members, hypotheses, gate), and its graph."""
    lines = []
    for family in plan.families:
        count = sum(plan.hypotheses_of(next(c for c in plan.contrasts if c.id == n.contrast))
                    for n in family.members)
        order = (f" in the order {', '.join(family.node_name(n) for n in family.order)}"
                 if family.order else "")
        gate = f"; tested only if every hypothesis of family {family.gate} is rejected" if family.gate else ""
        lines.append(f"family {family.id}: {family.method}{order} over "
                     f"{', '.join(family.node_name(n) for n in family.members)}; {count} "
                     f"hypothes{'is' if count == 1 else 'es'}{gate}")
        if family.method == "graphical":
            weights = ", ".join(f"{family.node_name(n)} {w:g}" for n, w in (family.weights or {}).items())
            edges = [f"{family.node_name(s)} -> {family.node_name(t)} {v:g}"
                     for s, row in (family.transitions or {}).items() for t, v in row.items()]
            lines.append(f"graph of family {family.id}: weights {weights or 'none'}; "
                         f"transitions {', '.join(edges) or 'none'}")
    if plan.multiplicity.sequence:
        lines.append(f"serial gatekeeping: {' -> '.join(plan.multiplicity.sequence)}")
    return lines


def _graph_line(settings) -> str:
    """The registered graph in one line: weights, then each transition with its share."""
    weights = ", ".join(f"{cid} {w:g}" for cid, w in (settings.weights or {}).items())
    edges = [f"{source} -> {target} {share:g}"
             for source, row in (settings.transitions or {}).items() for target, share in row.items()]
    return f"graph: weights {weights or 'none'}; transitions {', '.join(edges) or 'none'}"


def _exclusion_detail(loaded: LoadedPlan, dataset: Dataset) -> list[str]:
    """The units each exclusion rule set aside and rules that match only near spellings;
    the data file is read once more (not for sources aggregated out of core)."""
    rules = loaded.plan.data.exclusions
    if not rules or any(o.summary is not None for o in dataset.outcomes):
        return []
    table = read_table(loaded.data_path, loaded.plan.data.sheet)
    return exclusion_lines(table, rules, loaded.plan.data.unit)


def _analysis_lines(plan: Plan) -> list[str]:
    """What is computed per outcome: one line when every outcome has the same covariates,
    else one line per outcome, each for the plan as that outcome sees it."""
    seen = [plan.for_outcome(o.name) for o in plan.outcomes]
    if all(p.design.covariates == plan.design.covariates for p in seen):
        return [_analysis_line(plan, "per outcome")]
    return [_analysis_line(p, f"outcome {o.name}") for o, p in zip(plan.outcomes, seen)]


def _analysis_line(plan: Plan, scope: str) -> str:
    settings = plan.assumptions
    checks = [settings.normality] if settings.normality != "none" else []
    checks += list(settings.equal_variance)
    checks.append(f"studentized residuals beyond {settings.outliers.threshold:g}")
    if plan.robust_absent is None:  # the one-factor layout, with its robust block
        return (
            f"{scope}, at alpha {plan.alpha:g}: descriptives; one-way variance table (F test); "
            f"Welch's ANOVA; Kruskal–Wallis; eta squared, omega squared and Cohen's f with CIs; "
            f"diagnostics: {', '.join(checks)}")
    terms = ", ".join(" x ".join(t) for t in plan.model_terms)
    within = (f"; within units over {' x '.join(f.name for f in plan.within_factors)} "
              "(complete units): "
              + "; ".join(f"stratum units x {' x '.join(stratum)}: "
                          + ", ".join(" x ".join(t) for t in plan.stratum_terms(stratum))
                          for stratum in plan.within_strata)
              + ", with Mauchly's test and Greenhouse–Geisser / Huynh–Feldt corrections per stratum"
              if plan.within_factors else "")
    spread = ("" if not plan.within_factors else
              " (no equal-variance test on repeated observations; outliers on unit means)")
    return (
        f"{scope}, at alpha {plan.alpha:g}: descriptives by cell; variance table with "
        f"type {plan.ss_type} sums of squares of {terms}{within}; "
        "partial eta and omega squared and Cohen's f with CIs; estimated marginal means"
        + ("; homogeneity of slopes" if plan.design.covariates else "")
        + f"; diagnostics: {', '.join(checks)}{spread}")


def describe_run(loaded: LoadedPlan, dataset: Dataset) -> list[str]:
    """Lines of text: the plan, the data and its unit flow, every analysis a run makes, and
    notes on plan choices the literature warns against."""
    plan = loaded.plan
    flow = dataset.unit_flow
    lines = [
        f"study {plan.study.id}: {plan.study.title}",
        f"plan SHA-256 {loaded.sha256}",
    ]
    lines += [f"{item.role} {item.path}  SHA-256 {item.sha256}" for item in dataset.inputs]
    for factor in plan.design.factors:
        role = "" if plan.robust_absent is None else f" ({factor.role})"
        lines.append(f"factor {factor.name}{role}: {len(factor.levels)} levels "
                     f"({', '.join(factor.levels)})"
                     + (f", control {factor.control}" if factor.control else ""))
    for covariate in plan.design.covariates:
        lines.append(f"covariate {covariate.name}: column {covariate.data_column}"
                     + (f"; adjusts {', '.join(covariate.outcomes)} only" if covariate.outcomes else ""))
    lines.append(f"units read: {_counts(flow.read)}")
    for rule in flow.exclusions:
        lines.append(f"excluded by {rule.rule} ({rule.reason}): {rule.total}")
    lines += _exclusion_detail(loaded, dataset)
    lines.append(f"eligible: {_counts(flow.eligible)}")
    for item in flow.outcomes:
        outcome = next(o for o in plan.outcomes if o.name == item.outcome)
        missing = sum(c.n for c in item.missing)
        lines.append(f"outcome {outcome.name} ({outcome.role}): analysed {_counts(item.analysed)}"
                     f"; missing {missing}")
    lines += _analysis_lines(plan)
    lines += describe_contrasts(plan)
    lines += [f"finding: {finding.message}" for finding in dataset.findings]
    lines += [f"note: {note}" for note in lint(plan)]
    lines.append("nothing was written")
    return lines
