"""`appendix diff RUN_A RUN_B`: what changed between two run folders, most important first.

1. conclusions whose decision changed at alpha (each tested term of an outcome's model,
   for a one-factor outcome its factor under the analysis in force, and each registered
   hypothesis);
2. numbers that moved beyond a stated tolerance (F and p of every term, Welch and
   Kruskal–Wallis where computed, effect sizes with their intervals, estimates, marginal
   means, counts), with the size of the move, absolute and relative;
3. data: units added and removed, and changed cells by unit, outcome and column, read
   from each run's records (`appendix.records`);
4. the plan: its hash, and key by key when both runs hold the canonical plan;
5. checksums of the inputs (and of the output files, from the manifests).

Only the run folders' results.json (read once into `appendix.results.StudyResults`;
one that is truncated, of another format than `appendix.results.FORMAT_VERSION` or not of
the declared types is refused with a sentence), records.json and manifest.json are read. Output:
text for people (`report_lines`), canonical JSON for machines (`to_json`, stable keys)
and an HTML page in the appendix's look (`render_page`).

>>> diff = compare_runs(Path("out/before"), Path("out/after"))  # doctest: +SKIP
>>> [c.id for c in diff.conclusions]                            # doctest: +SKIP
['C2:humic']
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from appendix import numbers
from appendix.errors import UserError
from appendix.jsonread import checked, read_json, read_results
from appendix.names import MANIFEST_FILE, RESULTS_FILE
from appendix.publish import RunManifest
from appendix.records import Records, RowRecord, read_records
from appendix.results import (
    FORMAT_VERSION,
    Conclusion,
    ContrastFamily,
    Descriptives,
    HypothesisResult,
    ModelRow,
    OutcomeResult,
    StudyResults,
)
from appendix.tolerance import DEFAULT, Tolerance

#: 2: quantities are named after the results of format 2 (``units/coating.statistic``, ``n_units``);
#: 3: each conclusion and moved number carries its outcome's label, each moved number its kind.
DIFF_FORMAT = 3

#: Joins the factors of an interaction in a term's id, as the appendix writes it.
CROSS = " × "


@dataclass(frozen=True)
class Decision:
    """One run's decision on a conclusion; `p` is the p that decided it (adjusted for
    multiplicity where the plan adjusts)."""

    decision: str
    p: float | None
    sentence: str
    adjusted: bool = False  # `p` is adjusted for multiplicity


@dataclass(frozen=True)
class ConclusionChange:
    """A conclusion whose decision differs, or that exists in one run only (None).
    `kind` is ``term`` (a tested term of the outcome's model; `id` the term, e.g.
    ``coating × irrigation``) or ``hypothesis`` (`id` the hypothesis id). `label` is what a
    reader is shown (``Dry shoot mass: humic versus uncoated``); `outcome` and `id` are the
    plan's identifiers, for machines and to tell apart conclusions of the same label."""

    outcome: str
    outcome_label: str
    role: str
    kind: str
    id: str
    label: str
    a: Decision | None
    b: Decision | None


#: What a reported number is, which says how it is written (`number_text`): a p-value, a
#: share of variance (bounded by 1), a count of units, a test statistic or an estimate.
NUMBER_KINDS = ("p", "share", "count", "statistic", "estimate")


@dataclass(frozen=True)
class Reported:
    """A number a run reports: the words a reader is shown, its kind (`NUMBER_KINDS`), its value."""

    label: str
    kind: str
    value: float | None


@dataclass(frozen=True)
class NumberMove:
    """A number that moved: `change` = b - a, `relative_change` = change / |a|; `kind`
    (`NUMBER_KINDS`) says how it is written, `outcome_label` names its outcome for readers."""

    outcome: str
    outcome_label: str
    quantity: str
    label: str
    kind: str
    a: float | None
    b: float | None
    change: float | None
    relative_change: float | None


@dataclass(frozen=True)
class RowIdentity:
    """A data row present in one run only: its unit (and within level), line, levels."""

    unit: str
    within: str | None
    line: int
    levels: Mapping[str, str | None]


@dataclass(frozen=True)
class CellChange:
    """A changed cell of one row. `role` is ``outcome``, ``covariate``, ``exclusion``,
    ``factor`` or ``exclusion-rule`` (which rule set the unit aside); `name` is the
    outcome or covariate name, the rule id or the factor; `status_*` the row's status in
    that outcome (outcome columns only)."""

    unit: str
    within: str | None
    column: str
    role: str
    name: str
    text_a: str | None
    text_b: str | None
    value_a: float | None
    value_b: float | None
    status_a: str | None
    status_b: str | None
    label: str | None = None  # the plan's label of the outcome, covariate or factor `name`


@dataclass(frozen=True)
class DataDiff:
    """`compared` is False when either run has no rows recorded (`note` says why)."""

    compared: bool
    note: str | None
    rows_a: int | None
    rows_b: int | None
    added: tuple[RowIdentity, ...]
    removed: tuple[RowIdentity, ...]
    changed: tuple[CellChange, ...]


@dataclass(frozen=True)
class PlanKeyChange:
    key: str
    a: Any
    b: Any


@dataclass(frozen=True)
class PlanDiff:
    """`keys` is empty unless both runs hold the canonical plan (`compared`);
    `role_switches` names outcomes that moved between primary and secondary."""

    sha256_a: str
    sha256_b: str
    changed: bool
    compared: bool
    keys: tuple[PlanKeyChange, ...]
    role_switches: tuple[str, ...]


@dataclass(frozen=True)
class Checksum:
    """An input or output file's SHA-256 in each run (None: absent from that run)."""

    kind: str
    role: str
    path: str
    sha256_a: str | None
    sha256_b: str | None
    changed: bool


@dataclass(frozen=True)
class RunInfo:
    folder: str
    study: str
    plan_sha256: str
    alpha: float


@dataclass(frozen=True)
class RunDiff:
    """Everything `appendix diff` reports, in order of importance."""

    a: RunInfo
    b: RunInfo
    tolerance: Tolerance
    conclusions: tuple[ConclusionChange, ...]
    numbers: tuple[NumberMove, ...]
    data: DataDiff
    plan: PlanDiff
    checksums: tuple[Checksum, ...]
    format_version: int = DIFF_FORMAT

    @property
    def conclusions_changed(self) -> bool:
        return bool(self.conclusions)


# --- reading a run folder -------------------------------------------------------------


@dataclass(frozen=True)
class _Run:
    folder: Path
    results: StudyResults
    manifest: RunManifest | None
    records: Records | None


#: What a file of a run folder should be, for the messages.
_RUN_FILES = "a run folder holds the files `appendix run` writes"

#: Ends the sentence that refuses a results file of another format.
_OTHER_FORMAT = (f"compares results of format {FORMAT_VERSION} only: rerun both studies with it, "
                 "then compare the new run folders")


def _load_run(folder: Path) -> _Run:
    folder = Path(folder)
    if not (folder / RESULTS_FILE).is_file():
        raise UserError(f"not a run folder: {folder} has no results.json "
                        "(give the folders that `appendix run` wrote)")
    results = read_results(folder / RESULTS_FILE, _RUN_FILES, other_format=_OTHER_FORMAT)
    manifest = None
    if (folder / MANIFEST_FILE).is_file():
        manifest = checked(read_json(folder / MANIFEST_FILE, _RUN_FILES), RunManifest,
                           folder / MANIFEST_FILE, "a run manifest of this version")
    return _Run(folder, results, manifest, read_records(folder))


# --- 1. conclusions -------------------------------------------------------------------


def _ordered(outcomes: Iterable[OutcomeResult]) -> list[OutcomeResult]:
    """Primary outcomes first, otherwise in results order (as the appendix shows them)."""
    return sorted(outcomes, key=lambda o: o.role != "primary")


def _hypotheses(outcome: OutcomeResult) -> Iterator[tuple[HypothesisResult, str]]:
    """Registered hypotheses with their sentence (the results list the sentences in the
    same order as the registered families' hypotheses)."""
    hypotheses = [h for f in outcome.contrasts if f.registered for h in f.hypotheses]
    sentences = [c.sentence for c in outcome.hypothesis_conclusions]
    if len(sentences) != len(hypotheses):
        sentences = [""] * len(hypotheses)
    yield from zip(hypotheses, sentences)


def _tested_terms(results: StudyResults, outcome: OutcomeResult) -> list[ModelRow]:
    """The table rows an outcome concludes on: terms of treatment and within factors only
    (blocks and covariates adjust the model), tables in order."""
    tested = {f.name for f in results.factors if f.role in ("treatment", "within")}
    return [row for table in outcome.tables for row in table.rows if set(row.term) <= tested]


#: The test a one-factor outcome's conclusion is decided by, per `selected_method`.
_METHOD_WORDS = {"classical": "F test", "welch": "Welch's test", "rank-based": "Kruskal–Wallis test"}


def _decision(conclusion: Conclusion) -> Decision:
    return Decision(conclusion.decision, conclusion.p, conclusion.sentence)


def term_conclusions(results: StudyResults, o: OutcomeResult) -> Iterator[tuple[str, str, Decision]]:
    """(term id, label, decision) of each tested term of an outcome, the label
    ``outcome label: term label``. Where the robust tests are computed (one factor), the
    label names the test used."""
    rows = _tested_terms(results, o)
    method = o.selected_method
    test = f" ({_METHOD_WORDS.get(method, method)})" if o.robust is not None else ""
    if len(rows) == len(o.conclusions):
        for row, c in zip(rows, o.conclusions):
            yield CROSS.join(row.term), f"{o.label}: {row.label}{test}", _decision(c)
    else:  # a results file whose conclusions do not pair with its rows: by position
        for i, c in enumerate(o.conclusions, start=1):
            yield f"term {i}", f"{o.label}: term {i}", _decision(c)


@dataclass(frozen=True)
class _Concluded:
    """One conclusion of a run, as `conclusions_of` finds it."""

    outcome_label: str
    role: str
    label: str
    decision: Decision


def conclusions_of(results: StudyResults) -> dict[tuple[str, str, str], _Concluded]:
    """Every conclusion of a run: (outcome, kind, id) -> its outcome's label and role, the
    conclusion's label (``outcome label: term or hypothesis label``) and its decision;
    primary outcomes first, each with its tested terms (a one-factor outcome: its factor),
    then its hypotheses."""
    found: dict[tuple[str, str, str], _Concluded] = {}
    for o in _ordered(results.outcomes):
        for term, label, decision in term_conclusions(results, o):
            found[(o.name, "term", term)] = _Concluded(o.label, o.role, label, decision)
        for h, sentence in _hypotheses(o):
            p = h.p_adjusted if h.p_adjusted is not None else h.p
            found[(o.name, "hypothesis", h.id)] = _Concluded(
                o.label, o.role, f"{o.label}: {h.label}",
                Decision(h.decision, p, sentence, adjusted=h.p_adjusted is not None))
    return found


def _union(a: Mapping, b: Mapping) -> list:
    """Keys of `a` in order, then those only in `b`."""
    return [*a, *(k for k in b if k not in a)]


def compare_conclusions(a: StudyResults, b: StudyResults) -> tuple[ConclusionChange, ...]:
    ca, cb = conclusions_of(a), conclusions_of(b)
    changes = []
    for key in _union(ca, cb):
        da, db = ca.get(key), cb.get(key)
        if da and db and da.decision.decision == db.decision.decision:
            continue
        shown = da or db
        changes.append(ConclusionChange(
            outcome=key[0], outcome_label=shown.outcome_label, role=shown.role, kind=key[1],
            id=key[2], label=shown.label, a=da.decision if da else None,
            b=db.decision if db else None))
    return tuple(changes)


# --- 2. numbers -----------------------------------------------------------------------

#: (outcome, quantity) -> what the run reports there: the numbers of a run.
Numbers = dict[tuple[str, str], Reported]


def _interval(found: Numbers, outcome: str, quantity: str, label: str, estimate: float | None,
              ci_low: float | None, ci_high: float | None, kind: str = "estimate") -> None:
    found[(outcome, f"{quantity}.estimate")] = Reported(label, kind, estimate)
    found[(outcome, f"{quantity}.ci_low")] = Reported(f"{label}, CI low", kind, ci_low)
    found[(outcome, f"{quantity}.ci_high")] = Reported(f"{label}, CI high", kind, ci_high)


def _hypothesis_numbers(found: Numbers, outcome: str, families: Iterable[ContrastFamily],
                        note: str = "") -> None:
    for family in families:
        for h in family.hypotheses:
            name = f"{h.label}{note}"
            _interval(found, outcome, h.id, f"{name} estimate", h.estimate, h.ci_low, h.ci_high)
            found[(outcome, f"{h.id}.p")] = Reported(f"{name} p (unadjusted)", "p", h.p)
            found[(outcome, f"{h.id}.p_adjusted")] = Reported(f"{name} p (adjusted)", "p", h.p_adjusted)
            found[(outcome, f"{h.id}.standardized")] = Reported(
                f"{name} standardized (Hedges)", "estimate", h.standardized)


def _group_numbers(found: Numbers, outcome: str, descriptives: Descriptives) -> None:
    for g in descriptives.groups:
        _interval(found, outcome, f"mean[{g.level}]", f"mean, {g.level}", g.mean, g.ci_low, g.ci_high)
        found[(outcome, f"n[{g.level}]")] = Reported(f"n, {g.level}", "count", g.n)


def _rows(o: OutcomeResult) -> Iterator[tuple[str, str, ModelRow]]:
    """(quantity prefix, label, row) of every row of every table of an outcome: the prefix
    ``stratum/term`` (``units/coating``), the label the term's, with the stratum unless it
    is ``units`` (a design without a within factor: one stratum)."""
    for table in o.tables:
        where = "" if table.stratum == "units" else f" ({table.stratum})"
        for row in table.rows:
            yield f"{table.stratum}/{CROSS.join(row.term)}", f"{row.label}{where}", row


def _effects(row: ModelRow) -> tuple[tuple[str, str, str, float | None, float | None, float | None], ...]:
    """A row's effect sizes: (quantity, words, kind, estimate, CI low, CI high)."""
    return (("partial_eta_squared", "eta squared", "share", row.partial_eta_squared,
             row.partial_eta_ci_low, row.partial_eta_ci_high),
            ("partial_omega_squared", "omega squared", "share", row.partial_omega_squared,
             row.partial_omega_ci_low, row.partial_omega_ci_high),
            ("cohens_f", "Cohen's f", "estimate", row.cohens_f, row.cohens_f_ci_low,
             row.cohens_f_ci_high))


def _term_numbers(found: Numbers, name: str, o: OutcomeResult) -> None:
    """Each term's F and p (corrected p of within-unit terms), then Welch and Kruskal–Wallis
    where they are computed, then each term's effect sizes with their intervals. With one
    term in one table a partial share is the share itself (the error is all that is left)."""
    for term, label, row in _rows(o):
        found[(name, f"{term}.statistic")] = Reported(f"F, {label}", "statistic", row.statistic)
        found[(name, f"{term}.p")] = Reported(f"p, {label}", "p", row.p)
        if row.kind == "within":
            found[(name, f"{term}.gg_p")] = Reported(f"p Greenhouse–Geisser, {label}", "p", row.gg_p)
            found[(name, f"{term}.hf_p")] = Reported(f"p Huynh–Feldt, {label}", "p", row.hf_p)
    if o.robust is not None:
        found[(name, "welch.statistic")] = Reported("F (Welch)", "statistic", o.robust.welch.statistic)
        found[(name, "welch.p")] = Reported("p (Welch)", "p", o.robust.welch.p)
        found[(name, "kruskal.statistic")] = Reported("H (Kruskal–Wallis)", "statistic",
                                                      o.robust.kruskal.statistic)
        found[(name, "kruskal.p")] = Reported("p (Kruskal–Wallis)", "p", o.robust.kruskal.p)
    one_term = len(o.tables) == 1 and len(o.tables[0].rows) == 1
    for term, label, row in _rows(o):
        for quantity, words, kind, estimate, low, high in _effects(row):
            words = words if one_term or quantity == "cohens_f" else f"partial {words}"
            _interval(found, name, f"{term}.{quantity}", f"{words}, {label}", estimate, low, high, kind)


def numbers_of(results: StudyResults) -> Numbers:
    """The run's reported numbers: (outcome, quantity) -> label, kind and value, most
    telling first within an outcome (tests, effect sizes, hypotheses, then means and
    counts). Labels use the plan's labels of factors and covariates, not their names."""
    found: Numbers = {}
    exploratory: dict[str, list[ContrastFamily]] = {}
    for entry in results.exploratory:
        for family in entry.families:
            exploratory.setdefault(family.outcome, []).append(family)
    factor_labels = {f.name: f.label or f.name for f in results.factors}
    for o in _ordered(results.outcomes):
        name = o.name
        _term_numbers(found, name, o)
        _hypothesis_numbers(found, name, [f for f in o.contrasts if f.registered])
        _hypothesis_numbers(found, name, exploratory.get(name, []), " (exploratory)")
        for means in o.marginal_means:
            for mean in means.means:
                at = ", ".join(f"{f}={v}" for f, v in zip(means.factors, mean.levels))
                words = ", ".join(f"{factor_labels.get(f, f)} {v}"
                                  for f, v in zip(means.factors, mean.levels))
                _interval(found, name, f"marginal[{at}]", f"marginal mean, {words}",
                          mean.estimate, mean.ci_low, mean.ci_high)
        for slope in o.covariate_slopes:
            _interval(found, name, f"slope[{slope.covariate}]", f"slope on {slope.label}",
                      slope.estimate, slope.ci_low, slope.ci_high)
        found[(name, "n_units")] = Reported("units analysed", "count", o.n_units)
        if any(table.within for table in o.tables):
            found[(name, "n_observations")] = Reported("observations analysed", "count",
                                                       o.n_observations)
        _group_numbers(found, name, o.descriptives)
    return found


def compare_numbers(a: StudyResults, b: StudyResults, tolerance: Tolerance) -> tuple[NumberMove, ...]:
    na, nb = numbers_of(a), numbers_of(b)
    outcome_labels = {o.name: o.label for o in (*b.outcomes, *a.outcomes)}  # A's label first
    moves = []
    for key in _union(na, nb):
        ra, rb = na.get(key), nb.get(key)
        va, vb = ra.value if ra else None, rb.value if rb else None
        if not tolerance.moved(va, vb):
            continue
        shown = ra or rb
        change = vb - va if va is not None and vb is not None else None
        relative = change / abs(va) if change is not None and va != 0 else None
        moves.append(NumberMove(outcome=key[0], outcome_label=outcome_labels[key[0]],
                                quantity=key[1], label=shown.label, kind=shown.kind,
                                a=va, b=vb, change=change, relative_change=relative))
    return tuple(moves)


# --- 3. data --------------------------------------------------------------------------


def _identity(row: RowRecord) -> RowIdentity:
    return RowIdentity(unit=row.unit, within=row.within, line=row.line, levels=dict(row.levels))


#: (role, name) -> the plan's label: what the data section calls a column's outcome,
#: covariate or factor.
Labels = Mapping[tuple[str, str], str]


def data_labels(*runs: StudyResults) -> dict[tuple[str, str], str]:
    """The labels of the outcomes, factors and covariates of `runs` (the first run's win)."""
    labels: dict[tuple[str, str], str] = {}
    for results in reversed(runs):
        labels.update({("factor", f.name): f.label or f.name for f in results.factors})
        for o in results.outcomes:
            labels[("outcome", o.name)] = o.label
            labels.update({("covariate", c.covariate): c.label for c in o.covariate_slopes})
    return labels


def _row_changes(ra: RowRecord, rb: RowRecord, roles: Mapping[str, tuple[str, str]],
                 labels: Labels) -> list[CellChange]:
    out = []

    def add(column: str, role: str, name: str, text_a, text_b, value_a=None, value_b=None,
            status_a=None, status_b=None) -> None:
        out.append(CellChange(ra.unit, ra.within, column, role, name, text_a, text_b,
                              value_a, value_b, status_a, status_b, labels.get((role, name))))

    for factor in _union(ra.levels, rb.levels):
        if ra.levels.get(factor) != rb.levels.get(factor):
            add(factor, "factor", factor, ra.levels.get(factor), rb.levels.get(factor))
    for column in _union(ra.cells, rb.cells):
        role, name = roles.get(column, ("column", column))
        text_a, text_b = ra.cells.get(column), rb.cells.get(column)
        value_a, value_b = ra.values.get(column), rb.values.get(column)
        status_a = ra.outcomes.get(name) if role == "outcome" else None
        status_b = rb.outcomes.get(name) if role == "outcome" else None
        if (text_a, value_a, status_a) != (text_b, value_b, status_b):
            add(column, role, name, text_a, text_b, value_a, value_b, status_a, status_b)
    if ra.excluded_by != rb.excluded_by:
        add("", "exclusion-rule", "excluded by", ra.excluded_by, rb.excluded_by)
    return out


def compare_data(a: Records | None, b: Records | None, labels: Labels | None = None) -> DataDiff:
    if a is None or b is None or a.rows is None or b.rows is None:
        missing = [side for side, r in (("A", a), ("B", b)) if r is None]
        skipped = [f"run {side}: {r.skipped}" for side, r in (("A", a), ("B", b))
                   if r is not None and r.rows is None]
        note = "; ".join([*(f"run {side} holds no records.json" for side in missing), *skipped])
        return DataDiff(False, note + "; the data are compared by their checksums only",
                        None if a is None or a.rows is None else len(a.rows),
                        None if b is None or b.rows is None else len(b.rows), (), (), ())
    rows_a = {r.key: r for r in a.rows}
    rows_b = {r.key: r for r in b.rows}
    roles = {c.column: (c.role, c.name) for c in (*a.columns, *b.columns)}
    changed = [change for key in rows_a if key in rows_b
               for change in _row_changes(rows_a[key], rows_b[key], roles, labels or {})]
    return DataDiff(
        compared=True, note=None, rows_a=len(a.rows), rows_b=len(b.rows),
        added=tuple(_identity(r) for k, r in rows_b.items() if k not in rows_a),
        removed=tuple(_identity(r) for k, r in rows_a.items() if k not in rows_b),
        changed=tuple(changed))


# --- 4. plan --------------------------------------------------------------------------


def _identified(items: list) -> list[str] | None:
    """The ids (or names) of a list of mappings, when every item has a distinct one."""
    for field in ("id", "name"):
        ids = [item.get(field) if isinstance(item, dict) else None for item in items]
        if all(isinstance(i, str) for i in ids) and len(set(ids)) == len(ids):
            return ids
    return None


def flatten_plan(value: Any, prefix: str = "") -> dict[str, Any]:
    """Key path -> leaf value. Lists of mappings are keyed by their items' id or name
    (``outcomes[dry_mass].role``), else by position; lists of plain values are leaves."""
    if isinstance(value, dict):
        out: dict[str, Any] = {}
        for key in sorted(value):
            out.update(flatten_plan(value[key], f"{prefix}.{key}" if prefix else key))
        return out
    if isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
        ids = _identified(value) or [str(i) for i in range(len(value))]
        out = {}
        for ident, item in zip(ids, value):
            out.update(flatten_plan(item, f"{prefix}[{ident}]"))
        return out
    return {prefix: value}


def compare_plans(a: _Run, b: _Run) -> PlanDiff:
    sha_a, sha_b = a.results.plan_sha256, b.results.plan_sha256
    if a.records is None or b.records is None:
        return PlanDiff(sha_a, sha_b, sha_a != sha_b, False, (), ())
    fa, fb = flatten_plan(dict(a.records.plan)), flatten_plan(dict(b.records.plan))
    keys = tuple(PlanKeyChange(k, fa.get(k), fb.get(k)) for k in sorted(set(fa) | set(fb))
                 if fa.get(k) != fb.get(k))
    switches = tuple(
        f"outcome {k[len('outcomes['):-len('].role')]} switched from {c.a} to {c.b}"
        for c in keys for k in [c.key]
        if k.startswith("outcomes[") and k.endswith("].role") and c.a and c.b)
    return PlanDiff(sha_a, sha_b, sha_a != sha_b, True, keys, switches)


# --- 5. checksums ---------------------------------------------------------------------


#: A file as the checksums compare it: (what matches it across runs, path, SHA-256, role).
_File = tuple[str, str, str, str]


def _inputs(results: StudyResults) -> list[_File]:
    """Inputs are matched by role (a renamed data file is still the data)."""
    return [(i.role, i.path, i.sha256, i.role) for i in results.inputs]


def _outputs(manifest: RunManifest) -> list[_File]:
    """Outputs are matched by path."""
    return [(o["path"], o["path"], o["sha256"], "output") for o in manifest["outputs"]]


def _checksums(kind: str, a: list[_File], b: list[_File]) -> list[Checksum]:
    ia, ib = {f[0]: f for f in a}, {f[0]: f for f in b}
    rows = []
    for key in _union(ia, ib):
        x, y = ia.get(key), ib.get(key)
        path = (y or x)[1]
        if x and y and x[1] != y[1]:
            path = f"{x[1]} -> {y[1]}"
        sa, sb = x[2] if x else None, y[2] if y else None
        rows.append(Checksum(kind, (y or x)[3], path, sa, sb, sa != sb))
    return rows


def compare_checksums(a: _Run, b: _Run) -> tuple[Checksum, ...]:
    rows = _checksums("input", _inputs(a.results), _inputs(b.results))
    if a.manifest and b.manifest:
        rows += _checksums("output", _outputs(a.manifest), _outputs(b.manifest))
    return tuple(rows)


# --- the whole diff -------------------------------------------------------------------


def _info(run: _Run) -> RunInfo:
    r = run.results
    return RunInfo(folder=str(run.folder), study=r.study.id, plan_sha256=r.plan_sha256, alpha=r.alpha)


def compare_runs(run_a: Path, run_b: Path, tolerance: Tolerance = DEFAULT) -> RunDiff:
    """Compare two run folders; raises `UserError` when either is not a run folder."""
    a, b = _load_run(run_a), _load_run(run_b)
    return RunDiff(a=_info(a), b=_info(b), tolerance=tolerance,
                   conclusions=compare_conclusions(a.results, b.results),
                   numbers=compare_numbers(a.results, b.results, tolerance),
                   data=compare_data(a.records, b.records, data_labels(a.results, b.results)),
                   plan=compare_plans(a, b),
                   checksums=compare_checksums(a, b))


def to_plain(diff: RunDiff) -> dict[str, Any]:
    plain = dataclasses.asdict(diff)
    plain["conclusions_changed"] = diff.conclusions_changed
    return plain


def to_json(diff: RunDiff) -> str:
    """Canonical JSON of the diff: sorted keys, two-space indent, no NaN."""
    return json.dumps(to_plain(diff), sort_keys=True, indent=2, ensure_ascii=False,
                      allow_nan=False) + "\n"


# --- text for people ------------------------------------------------------------------

#: Moved numbers listed in the terminal report; the JSON and HTML list them all.
LISTED_NUMBERS = 40

DECISION_WORDS = {"reject": "rejected", "retain": "not rejected", "not-tested": "not tested",
                  "unavailable": "unavailable"}
STATUS_WORDS = {"analysed": "analysed", "excluded": "excluded by rule", "missing": "missing",
                "left-out": "left out"}


def number_text(value: float | None, kind: str = "estimate", decimals: int = 4) -> str:
    """A number for the diff in the appendix's number style (`appendix.numbers`), by its
    kind (`NUMBER_KINDS`): a p-value as ``.041`` or ``< .001``, a share of variance without
    its leading zero, a count as a whole number, anything else to `decimals` decimals with
    a true minus; "none" for no value.

    >>> number_text(0.120608, "p"), number_text(-1.77e-05, decimals=6)
    ('.121', '−0.000018')
    """
    if value is None:
        return "none"
    if kind == "p":
        return numbers.p_value(value)
    if kind == "count":
        return str(int(value))
    if kind == "share":
        return numbers.proportion(value, 3)
    return numbers.fixed(value, decimals)


def _decimals(move: NumberMove) -> int:
    """Enough decimals that a move shows in both values and in the change itself."""
    return numbers.decimals_for([move.a, move.b, move.change], minimum=2, maximum=6)


def value_text(move: NumberMove, which: str) -> str:
    """Run A's or run B's value of a moved number (`which` is ``a`` or ``b``)."""
    return number_text(getattr(move, which), move.kind, _decimals(move))


def move_text(move: NumberMove) -> str:
    """The change from A to B, signed, with the relative change: ``+0.0123 (+4.1%)``."""
    if move.change is None:
        return "appeared" if move.a is None else "disappeared" if move.b is None else ""
    change = (numbers.fixed(move.change, 0) if move.kind == "count"
              else numbers.fixed(move.change, _decimals(move)))
    sign = "+" if not change.startswith(numbers.MINUS) else ""
    relative = ""
    if move.relative_change is not None:
        percent = numbers.fixed(move.relative_change * 100, 1)
        relative = f" ({'+' if not percent.startswith(numbers.MINUS) else ''}{percent}%)"
    return f"{sign}{change}{relative}"


def decision_text(d: Decision | None) -> str:
    """``rejected (adjusted p = .003)``, ``not rejected (p = .120)``."""
    if d is None:
        return "absent"
    p = f" ({'adjusted ' if d.adjusted else ''}{numbers.p_clause(d.p)})" if d.p is not None else ""
    return f"{DECISION_WORDS.get(d.decision, d.decision)}{p}"


def row_name(unit: str, within: str | None, within_factor: str | None = None) -> str:
    if within is None:
        return unit
    return f"{unit} at {within_factor + ' ' if within_factor else ''}{within}"


def row_identity_text(row: RowIdentity) -> str:
    """``P049 (line 50; coating humic)``."""
    levels = ", ".join(f"{k} {v}" for k, v in row.levels.items())
    return f"{row_name(row.unit, row.within)} (line {row.line}; {levels})"


def cell_text(text: str | None, value: float | None, status: str | None) -> str:
    shown = "no cell" if text is None else repr(text) if text != "" else "empty"
    extra = [] if status is None else [STATUS_WORDS.get(status, status)]
    return shown + (f" ({', '.join(extra)})" if extra else "")


def report_lines(diff: RunDiff, listed: int = LISTED_NUMBERS) -> list[str]:
    """The diff as text for a terminal, most important first; at most `listed` moved
    numbers are shown (every conclusion and data change is)."""
    lines = [f"appendix diff: A = {diff.a.folder}", f"               B = {diff.b.folder}"]
    if diff.a.study != diff.b.study:
        lines.append(f"note: different studies: {diff.a.study} and {diff.b.study}")
    def alpha(value: float) -> str:
        return numbers.no_leading_zero(f"{value:g}")

    alpha = (f"alpha {alpha(diff.a.alpha)} in both runs" if diff.a.alpha == diff.b.alpha
             else f"alpha {alpha(diff.a.alpha)} in A, {alpha(diff.b.alpha)} in B")
    lines += [f"study {diff.a.study}; {alpha}", ""]
    lines.append(f"1. Conclusions that changed: {len(diff.conclusions) or 'none'}")
    for c in diff.conclusions:
        lines.append(f"   {c.label} ({c.role} outcome): {decision_text(c.a)} -> {decision_text(c.b)}")
        lines.append(f"      {c.kind} {c.id} of outcome {c.outcome}")
    tol = diff.tolerance
    lines += ["", (f"2. Numbers that moved: {len(diff.numbers) or 'none'} (tolerance: relative "
                   f"{tol.relative:g}, absolute {tol.absolute:g})")]
    for m in diff.numbers[:listed]:
        lines.append(f"   {m.outcome_label}, {m.label}: {value_text(m, 'a')} -> {value_text(m, 'b')}  "
                     f"({move_text(m)})")
    if len(diff.numbers) > listed:
        lines.append(f"   and {len(diff.numbers) - listed} more (all of them in --json and the HTML page)")
    lines += ["", "3. Data"]
    data = diff.data
    if not data.compared:
        lines.append(f"   {data.note}")
    else:
        lines.append(f"   rows: {data.rows_a} in A, {data.rows_b} in B")
        for word, rows in (("added", data.added), ("removed", data.removed)):
            names = ", ".join(row_identity_text(r) for r in rows)
            lines.append(f"   units {word}: {names or 'none'}")
        lines.append(f"   changed cells: {len(data.changed) or 'none'}")
        for c in data.changed:
            about = f"{c.column} ({c.role} {c.label or c.name})" if c.column else c.name
            lines.append(f"   {row_name(c.unit, c.within)}  {about}: "
                         f"{cell_text(c.text_a, c.value_a, c.status_a)} -> "
                         f"{cell_text(c.text_b, c.value_b, c.status_b)}")
    lines += ["", "4. Plan"]
    plan = diff.plan
    if not plan.changed:
        lines.append(f"   unchanged (SHA-256 {plan.sha256_a[:12]})")
    else:
        lines.append(f"   changed: SHA-256 {plan.sha256_a[:12]} -> {plan.sha256_b[:12]}")
        lines += [f"   {s}" for s in plan.role_switches]
        for k in plan.keys:
            lines.append(f"   {k.key}: {json.dumps(k.a, ensure_ascii=False)} -> "
                         f"{json.dumps(k.b, ensure_ascii=False)}")
        if not plan.compared:
            lines.append("   (key by key needs the canonical plan, records.json, in both run folders)")
    lines += ["", "5. Checksums"]
    for c in diff.checksums:
        if c.kind == "input" or c.changed:
            lines.append(f"   {c.kind} {c.path}: {(c.sha256_a or 'absent')[:12]} -> "
                         f"{(c.sha256_b or 'absent')[:12]} {'changed' if c.changed else 'same'}")
    same = sum(c.kind == "output" and not c.changed for c in diff.checksums)
    if same:
        lines.append(f"   {same} output file{'s' if same != 1 else ''} the same in both runs")
    return lines


# --- the HTML page --------------------------------------------------------------------


def render_page(diff: RunDiff) -> str:
    """The diff as one self-contained HTML page in the appendix's look (no scripts)."""
    import jinja2

    from appendix.render import _upper_first, template_root, visible_controls

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(template_root())), autoescape=True,
                             undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True,
                             keep_trailing_newline=True, finalize=visible_controls)
    env.filters.update({"num": number_text, "tol": lambda v: f"{v:g}", "upper_first": _upper_first,
                        "alpha": lambda v: numbers.no_leading_zero(f"{v:g}"), "short_hash": lambda d: (d or "absent")[:12],
                        "plan_value": lambda v: json.dumps(v, ensure_ascii=False)})
    return env.get_template("diff.html.j2").render(
        d=diff, decision_text=decision_text, move_text=move_text, value_text=value_text,
        cell_text=cell_text,
        row_name=row_name, row_identity_text=row_identity_text)

