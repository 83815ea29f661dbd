"""What a run would compute, for `appendix check`: read and validated, nothing computed
or written."""

from __future__ import annotations

from appendix.data.dataset import Dataset
from appendix.plan.load import LoadedPlan


def _counts(items) -> str:
    return ", ".join(f"{c.level} {c.n}" for c in items)


def describe_run(loaded: LoadedPlan, dataset: Dataset) -> list[str]:
    """Lines of text: the plan, the data and its unit flow, and every analysis a run makes."""
    plan = loaded.plan
    factor = plan.factor
    flow = dataset.unit_flow
    lines = [
        f"study {plan.study.id}: {plan.study.title}",
        f"plan SHA-256 {loaded.sha256}",
    ]
    lines += [f"{item.role} {item.path}  SHA-256 {item.sha256}" for item in dataset.inputs]
    lines.append(f"factor {factor.name}: {len(factor.levels)} levels "
                 f"({', '.join(factor.levels)})"
                 + (f", control {factor.control}" if factor.control else ""))
    lines.append(f"units read: {_counts(flow.read)}")
    for rule in flow.exclusions:
        lines.append(f"excluded by {rule.rule} ({rule.reason}): {rule.total}")
    lines.append(f"eligible: {_counts(flow.eligible)}")
    for item in flow.outcomes:
        outcome = next(o for o in plan.outcomes if o.name == item.outcome)
        missing = sum(c.n for c in item.missing)
        lines.append(f"outcome {outcome.name} ({outcome.role}): analysed {_counts(item.analysed)}"
                     f"; missing {missing}")
    settings = plan.assumptions
    checks = [settings.normality] if settings.normality != "none" else []
    checks += list(settings.equal_variance)
    checks.append(f"studentized residuals beyond {settings.outliers.threshold:g}")
    lines.append(
        f"per outcome, at alpha {plan.alpha:g}: descriptives; one-way variance table (F test); "
        f"Welch's ANOVA; Kruskal-Wallis; eta squared, omega squared and Cohen's f with CIs; "
        f"diagnostics: {', '.join(checks)}")
    lines += [f"finding: {finding.message}" for finding in dataset.findings]
    lines.append("nothing was written")
    return lines
