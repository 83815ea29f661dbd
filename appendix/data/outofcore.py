"""Plan + a data file too large to load -> `Dataset`, aggregated by DuckDB where the rows are.

The in-memory stage (`appendix.data.build`) holds every cell as text; for a source of
10^8 rows that is tens of GiB. Here an embedded DuckDB engine (one in-process
connection per call, `memory_limit` set, spilling to a folder under the system temp dir)
scans the file several times and only counts and per-level sums reach Python:

1. the columns the plan names exist;
2. unit identifiers are present and unique (repeated ids listed with their lines, 20 at most);
3. every level is one of the plan's levels, by text or, for number-like levels, by value
   (`appendix.data.levels`: the distinct texts that are no level's text are read in
   Python; else `DataError` naming them, with a level equal or close in value, or a
   did-you-mean);
4. exclusion rules in plan order, counted per rule and level (a unit under its first rule);
5. per outcome, missing cells counted per level, non-numeric cells reported (20 at most),
   values beyond +-`problems.VALUE_LIMIT` refused, a header without rows refused;
6. per outcome and level, n and mean (first pass), then the sum of squared deviations
   from that mean, handed back to a second scan: the two-pass algorithm (Chan, Golub &
   LeVeque 1983, Am. Stat. 37:242-247), in DOUBLE, each sum taken with DuckDB's ``fsum``
   (Kahan compensated summation, Kahan 1965, Comm. ACM 8:40; DuckDB's docs name it so,
   from memory, and a check agrees: 1e16 plus a thousand 1.0 gives 1e16 + 1000 with
   ``fsum``, 1e16 with ``sum``), never sum(y^2) - (sum y)^2/n;
7. a deterministic subsample of at most `sample_size` analysed units per outcome for
   figures and row-level diagnostics (see `_sample`).

Unit flow and findings come from the in-memory stage's own functions, fed with counts, and
every problem is worded by `appendix.data.problems`, as in memory.

Differences from the in-memory stage, by design or by what SQL can do cheaply:

- Row numbers: Parquet rows are numbered by DuckDB's ``file_row_number`` (row i is line
  i + 2, as in memory). CSV/TSV rows are numbered in scan order, which DuckDB keeps as
  file order (``preserve_insertion_order``; tested on 1 and 2 threads): line = data
  row + 1, the physical line when the file has no blank line and no quoted cell
  spanning lines.
- Text is trimmed of spaces, tabs and line breaks (Python's ``str.strip`` also trims
  other Unicode white space).
- Exclusion values that are numbers are compared as DOUBLE, not as exact decimals, so
  two decimals equal to 17 significant digits match here and not in memory.
- Typed floats become text with DuckDB's shortest round-trip spelling, which agrees with
  Python's ``repr`` for level names and unit ids (``0.1``, ``1e-05``, ``1e+22``).
- The sums are float64 (the engine's float path), also for decimal text.
- A CSV/TSV file whose layout DuckDB cannot parse (e.g. more cells than the header) is a
  `UserError` carrying DuckDB's message, where the in-memory reader lists ragged lines;
  a repeated CSV column name is renamed by DuckDB (``a_1``) rather than reported.
- Results are reproducible bit for bit because the scan runs on one thread (`threads`);
  more threads are faster but may change the last bits of a sum between runs.
"""

from __future__ import annotations

import math
import tempfile
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from appendix.data import problems as say
from appendix.data.checksums import study_inputs
from appendix.data.dataset import CellSummary, Dataset, OutcomeData, frozen_array
from appendix.data.flow import flow_findings, with_shortfall
from appendix.data.levels import LevelReading, reading_findings
from appendix.data.values import MISSING_TEXTS, match_key
from appendix.errors import DataError, Problem, UserError
from appendix.plan.load import LoadedPlan
from appendix.results import ExclusionCount, LevelCount, OutcomeFlow, UnitFlow

#: The decimal-number pattern of `appendix.data.values.parse_number`, for RE2.
_DECIMAL = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"
_SPACE = "' \t\r\n'"
_DELIMITERS = {".csv": ",", ".tsv": "\t"}
_INTEGERS = ("TINYINT", "SMALLINT", "INTEGER", "BIGINT", "HUGEINT", "UTINYINT", "USMALLINT",
             "UINTEGER", "UBIGINT", "UHUGEINT")
_NUMERIC = (*_INTEGERS, "FLOAT", "DOUBLE")
#: Bytes of a CSV read to estimate its bytes per row (`should_go_out_of_core`).
_PROBE = 1 << 20


def should_go_out_of_core(path: Path, *, row_limit: int = 20_000_000) -> bool:
    """Whether a data file has more than `row_limit` rows (then aggregate it out of core).

    Parquet: the row count in the file's metadata (exact, reads only the footer).
    CSV/TSV: an estimate, file size divided by the mean bytes per line of its first MiB
    (a whole file under 1 MiB is far below any sensible limit). Other formats: False
    (they are read in memory only).

    >>> should_go_out_of_core(Path("units.csv"), row_limit=10**9)  # doctest: +SKIP
    False
    """
    from appendix.data.source import require_data_file

    suffix = path.suffix.lower()
    if suffix != ".parquet" and suffix not in _DELIMITERS:
        return False
    require_data_file(path)  # before opening: a named pipe would block here
    if suffix == ".parquet":
        import pyarrow as pa
        import pyarrow.parquet as pq

        try:
            return pq.ParquetFile(path).metadata.num_rows > row_limit
        except (pa.ArrowException, OSError) as error:
            raise UserError(f"cannot read {path} as a Parquet file (broken or cut short): "
                            f"{error}") from None
    if suffix not in _DELIMITERS:
        return False
    size = path.stat().st_size
    with path.open("rb") as handle:
        head = handle.read(_PROBE)
    if not head:  # an empty file: the readers say so
        return False
    lines = max(head.count(b"\n"), 1)
    return size / (len(head) / lines) > row_limit + 1


@dataclass(frozen=True)
class _Source:
    """The data file as a DuckDB relation: SQL of its scan, column types, row-number column."""

    path: Path
    scan: str
    types: dict[str, str]

    def text(self, column: str) -> str:
        """SQL for a cell as the in-memory stage sees it: trimmed text, NULL for no value,
        typed values spelled as `appendix.plan.scalars.scalar_text` spells them."""
        name = _ident(column)
        kind = self.types[column]
        if kind == "VARCHAR":
            return f"nullif(trim({name}, {_SPACE}), '')"
        if kind == "BOOLEAN":
            return f"CASE WHEN {name} THEN 'true' WHEN NOT {name} THEN 'false' END"
        if kind in ("FLOAT", "DOUBLE"):
            return (f"CASE WHEN isnan({name}) THEN NULL "
                    f"WHEN isfinite({name}) AND {name} = trunc({name}) AND abs({name}) < 2^53 "
                    f"THEN CAST(CAST({name} AS HUGEINT) AS VARCHAR) "
                    f"ELSE CAST({name} AS VARCHAR) END")
        return f"CAST({name} AS VARCHAR)"

    def is_number_typed(self, column: str) -> bool:
        return self.types[column] in _NUMERIC


def _ident(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


def _literal(text: str) -> str:
    return "'" + text.replace("'", "''") + "'"


def _open(connection, path: Path) -> _Source:
    suffix = path.suffix.lower()
    quoted = _literal(str(path))
    if suffix == ".parquet":
        scan = (f"(SELECT *, file_row_number + 2 AS __line "
                f"FROM read_parquet({quoted}, file_row_number = true))")
    elif suffix in _DELIMITERS:
        delimiter = _literal(_DELIMITERS[suffix])
        scan = (f"(SELECT *, row_number() OVER () + 1 AS __line FROM read_csv({quoted}, "
                f"header = true, all_varchar = true, delim = {delimiter}, quote = '\"', "
                f"escape = '\"', encoding = 'utf-8', null_padding = true))")
    else:
        allowed = one_of(sorted([*_DELIMITERS, ".parquet"]))
        raise UserError(f"cannot aggregate {path} out of core: unknown file type "
                        f"{show(path.suffix or path.name)}; allowed: {allowed}")
    if not path.is_file():
        raise UserError(f"data file not found: {path.resolve()}")
    described = connection.execute(f"DESCRIBE SELECT * FROM {scan}").fetchall()
    added = ("__line", "file_row_number")
    types = {row[0]: str(row[1]) for row in described if row[0] not in added}
    return _Source(path=path, scan=scan, types=types)


def _grouped_lines(connection, source: _Source, key: str, where: str):
    """(key, count, first lines) of the rows matching `where`, by first appearance."""
    return connection.execute(f"""
        SELECT k, any_value(n), list(__line ORDER BY __line) FROM (
            SELECT k, __line, count(*) OVER (PARTITION BY k) AS n,
                   row_number() OVER (PARTITION BY k ORDER BY __line) AS rank
            FROM (SELECT {key} AS k, __line FROM {source.scan} WHERE {where}))
        WHERE rank <= {say.LISTED} GROUP BY k ORDER BY min(__line)""").fetchall()


def _unit_problems(connection, source: _Source, column: str) -> list[Problem]:
    where = str(source.path)
    unit = source.text(column)
    problems: list[Problem] = []
    for _, total, lines in _grouped_lines(connection, source, "0", _missing(unit)):
        problems.append(say.no_unit(where, column, lines, total))
    # Grouping 10^8 distinct texts does not fit a small memory limit; 64-bit keys do.
    # Equal texts have equal hashes, so only rows whose key repeats need the exact check.
    key = (_ident(column) if source.types[column] in _INTEGERS else f"hash({unit})")
    present = f"NOT {_missing(unit)}"
    clash = (f"SELECT k FROM (SELECT {key} AS k FROM {source.scan} WHERE {present}) "
             "GROUP BY k HAVING count(*) > 1")
    repeated = 0
    if connection.execute(f"SELECT count(*) FROM ({clash})").fetchone()[0]:
        suspects = f"{present} AND {key} IN ({clash})"
        repeated = connection.execute(
            f"SELECT count(*) FROM (SELECT {unit} AS u FROM {source.scan} WHERE {suspects} "
            "GROUP BY u HAVING count(*) > 1)").fetchone()[0]
    if repeated:
        twice = (f"{suspects} AND {unit} IN (SELECT u FROM (SELECT {unit} AS u FROM "
                 f"{source.scan} WHERE {suspects} GROUP BY u HAVING count(*) > 1))")
        groups = _grouped_lines(connection, source, unit, twice)
        for value, total, lines in groups[:say.LISTED]:
            problems.append(say.repeated_unit(where, column, value, lines, total))
    problems.sort(key=lambda p: p.line or 0)
    if repeated > say.LISTED:
        problems.append(say.more(where, column, repeated - say.LISTED, "repeated units",
                                 groups[say.LISTED][2][1]))
    return problems


def _missing(text_sql: str) -> str:
    listed = ", ".join(_literal(t) for t in sorted(MISSING_TEXTS) if t)
    return f"({text_sql} IS NULL OR {text_sql} IN ({listed}))"


def _level_reading(connection, source: _Source, column: str, levels: Sequence[str]
                   ) -> tuple[list[Problem], dict[tuple[str, int], int]]:
    """Problems of cells read as no level, and the cells read as a level by value per
    (spelling, code) (`appendix.data.levels`): each distinct text that is no level's
    text is read in Python, in order of first appearance."""
    where = str(source.path)
    reading = LevelReading.of(levels)
    text = f"coalesce({source.text(column)}, '')"
    listed = ", ".join(_literal(level) for level in levels)
    problems, respelled, rest = [], {}, []
    for value, total, lines in _grouped_lines(connection, source, text,
                                              f"{text} NOT IN ({listed})"):
        code = reading.code(value)
        if code >= 0:
            respelled[(value, code)] = int(total)
        elif len(problems) < say.LISTED:
            problems.append(say.not_a_level(where, column, value, lines, levels, total))
        else:
            rest.append((int(total), lines[0]))
    if rest:
        problems.append(say.more_not_levels(where, column, len(rest), sum(n for n, _ in rest),
                                            min(line for _, line in rest)))
    return problems, respelled


def _code_sql(source: _Source, column: str, levels: Sequence[str],
              respelled: dict[tuple[str, int], int]) -> str:
    """SQL of a row's level code: its text's position among the levels, then among the
    spellings read by value."""
    texts = [*levels, *(t for t, _ in respelled)]
    codes = [*range(len(levels)), *(c for _, c in respelled)]
    position = f"list_position([{', '.join(_literal(t) for t in texts)}], {source.text(column)})"
    if not respelled:
        return f"({position} - 1)"
    return f"list_extract([{', '.join(map(str, codes))}], {position})"


def _rule_match(source: _Source, column: str, equals: str) -> str:
    """SQL that is true where a cell matches an exclusion value as `match_key` decides."""
    target = match_key(equals)
    if target.startswith("number:"):
        value = f"CAST('{float(equals.strip())!r}' AS DOUBLE)"
        if source.is_number_typed(column):
            return f"(CAST({_ident(column)} AS DOUBLE) = {value})"
        text = source.text(column)
        return (f"(regexp_full_match({text}, '{_DECIMAL}') "
                f"AND TRY_CAST({text} AS DOUBLE) = {value})")
    text = f"coalesce({source.text(column)}, '')"
    if target in ("true", "false"):
        return f"(lower({text}) = '{target}')"
    return f"({text} = {_literal(target)})"


def _outcome_sql(source: _Source, column: str) -> tuple[str, str, str]:
    """SQL for (missing, value, not-a-number) of an outcome cell."""
    name = _ident(column)
    if source.is_number_typed(column):
        value = f"CAST({name} AS DOUBLE)"
        missing = f"({name} IS NULL OR isnan({value}))"
        return missing, value, f"(NOT isfinite({value}))"
    text = source.text(column)
    value = (f"(CASE WHEN regexp_full_match({text}, '{_DECIMAL}') "
             f"THEN TRY_CAST({text} AS DOUBLE) END)")
    return _missing(text), value, f"({value} IS NULL OR NOT isfinite({value}))"


def _connect(memory_limit: str, threads: int):
    import duckdb

    connection = duckdb.connect()
    spill = Path(tempfile.gettempdir()) / "appendix-duckdb"
    connection.execute(f"SET memory_limit = {_literal(memory_limit)}")
    connection.execute(f"SET threads = {int(threads)}")
    connection.execute(f"SET temp_directory = {_literal(str(spill))}")
    connection.execute("SET preserve_insertion_order = true")
    # Parquet min/max statistics leave NaN out, and DuckDB's statistics propagation then
    # folds isnan() on such a column to false (seen with DuckDB 2.0.1 on a column holding
    # NaN, NaN, 0.0), so NaN cells would count as values. Off until `_allow_statistics`
    # has shown that no numeric outcome column holds a NaN.
    connection.execute("SET disabled_optimizers = 'statistics_propagation'")
    return connection


def _allow_statistics(connection, source: _Source, columns: Sequence[str]) -> None:
    """Turn DuckDB's statistics propagation back on (it halves the time of the scans)
    when a probe, made with it off, finds no NaN in the numeric outcome columns: then
    folding isnan() to false is right."""
    typed = [c for c in dict.fromkeys(columns) if source.is_number_typed(c)]
    if typed:
        probes = ", ".join(f"count(*) FILTER (WHERE isnan(CAST({_ident(c)} AS DOUBLE)))"
                           for c in typed)
        if any(connection.execute(f"SELECT {probes} FROM {source.scan}").fetchone()):
            return
    connection.execute("SET disabled_optimizers = ''")


def build_dataset_out_of_core(loaded: LoadedPlan, *, sample_size: int = 5000,
                              memory_limit: str = "512MB", threads: int = 1) -> Dataset:
    """The analysed `Dataset` of a Parquet or CSV/TSV source, without loading its rows.

    Same checks, unit flow and findings as `appendix.data.build.build_dataset`; each
    outcome carries a `CellSummary` of all analysed units (two-pass n, mean, SSD per
    level) and a deterministic subsample of at most `sample_size` of them
    (`OutcomeData.sample_of` = number analysed). See the module notes for the few
    differences from the in-memory stage.

    >>> dataset = build_dataset_out_of_core(load_plan(Path("study.yaml")))  # doctest: +SKIP
    >>> dataset.outcome("pain").sample_of, dataset.outcome("pain").values.size  # doctest: +SKIP
    (120000000, 5000)
    """
    import duckdb

    from appendix.data.source import require_data_file

    require_data_file(loaded.data_path)
    connection = _connect(memory_limit, threads)
    try:
        return _build(connection, loaded, sample_size)
    except duckdb.Error as error:
        raise UserError(f"cannot read {loaded.data_path}: {error}") from None
    finally:
        connection.close()


def _build(connection, loaded: LoadedPlan, sample_size: int) -> Dataset:
    plan = loaded.plan
    source = _open(connection, loaded.data_path)
    columns = tuple(source.types)
    say.require_columns(loaded, source.path, columns)
    _allow_statistics(connection, source, [o.data_column for o in plan.outcomes])
    levels = plan.factor.levels
    problems = _unit_problems(connection, source, plan.data.unit)
    level_problems, respelled = _level_reading(connection, source, plan.factor.name, levels)
    problems += level_problems
    if problems:
        raise DataError(problems)
    code = _code_sql(source, plan.factor.name, levels, respelled)
    rules = plan.data.exclusions
    rule_sql = " ".join(f"WHEN {_rule_match(source, r.column, r.equals)} THEN {i}"
                        for i, r in enumerate(rules))
    rule = f"(CASE {rule_sql} END)" if rules else "CAST(NULL AS INTEGER)"
    outcome_sql = [_outcome_sql(source, o.data_column) for o in plan.outcomes]
    prepared = (f"(SELECT *, {code} AS __code, {rule} AS __rule FROM {source.scan})")
    counts = _first_pass(connection, prepared, outcome_sql, len(levels), len(rules))
    read, excluded = counts["read"], counts["excluded"]
    if not read.any():
        raise say.no_rows(loaded.data_path)
    problems = []
    for j, (outcome, (missing, value, bad)) in enumerate(zip(plan.outcomes, outcome_sql)):
        if counts["bad"][j].any():
            problems += _number_problems(connection, prepared, source, outcome.data_column,
                                         f"__rule IS NULL AND NOT {missing} AND {bad}")
        elif counts["large"][j].any():
            line, big = connection.execute(
                f"SELECT __line, {value} FROM {prepared} WHERE __rule IS NULL AND NOT {missing} "
                f"AND abs({value}) > {say.VALUE_LIMIT!r} ORDER BY __line LIMIT 1").fetchone()
            problems.append(say.too_large(str(source.path), outcome.data_column, big, int(line),
                                          int(counts["large"][j].sum())))
    if problems:
        raise DataError(problems)
    exclusions = tuple(
        ExclusionCount(rule=r.id, column=r.column, equals=r.equals, reason=r.reason,
                       by_level=_level_tuple(excluded[i], levels), total=int(excluded[i].sum()))
        for i, r in enumerate(rules))
    eligible = read - excluded.sum(axis=0)
    outcomes, flows = [], []
    for j, (outcome, (missing, value, _)) in enumerate(zip(plan.outcomes, outcome_sql)):
        analysed = f"__rule IS NULL AND NOT {missing}"
        summary = _summary(connection, prepared, analysed, value, counts["analysed"][j],
                           counts["sums"][j])
        outcomes.append(_sample(connection, prepared, source, plan.data.unit, outcome.name,
                                analysed, value, summary, sample_size))
        flows.append(OutcomeFlow(outcome=outcome.name,
                                 missing=_level_tuple(counts["missing"][j], levels),
                                 analysed=_level_tuple(summary.n, levels)))
    flow = with_shortfall(UnitFlow(read=_level_tuple(read, levels), exclusions=exclusions,
                                   eligible=_level_tuple(eligible, levels), outcomes=tuple(flows)),
                          plan.data.planned_n)
    return Dataset(levels=levels, inputs=study_inputs(loaded.path, loaded.data_path),
                   unit_flow=flow, outcomes=tuple(outcomes),
                   findings=reading_findings(plan.factor.name, levels, respelled)
                   + flow_findings(plan, flow))


def _level_tuple(counts: np.ndarray, levels: Sequence[str]) -> tuple[LevelCount, ...]:
    return tuple(LevelCount(level=level, n=int(n)) for level, n in zip(levels, counts))


#: What the first pass counts (or sums) per outcome and level, in its column order.
_FIRST_PASS = ("missing", "bad", "analysed", "sums", "large")


def _first_pass(connection, prepared: str, outcome_sql, k: int,
                rules: int) -> dict[str, np.ndarray]:
    """One scan: rows per level, per rule and level; per outcome and eligible level the
    missing, non-numeric and analysed cells, the (Kahan) sum of the analysed values and
    how many of them lie beyond +-`problems.VALUE_LIMIT`."""
    per_outcome = "".join(
        f", count(*) FILTER (WHERE __rule IS NULL AND {m})"
        f", count(*) FILTER (WHERE __rule IS NULL AND NOT {m} AND {bad})"
        f", count({value}) FILTER (WHERE __rule IS NULL AND NOT {m} AND NOT {bad})"
        f", fsum({value}) FILTER (WHERE __rule IS NULL AND NOT {m} AND NOT {bad})"
        f", count(*) FILTER (WHERE __rule IS NULL AND NOT {m} AND NOT {bad} "
        f"AND abs({value}) > {say.VALUE_LIMIT!r})"
        for m, value, bad in outcome_sql)
    rows = connection.execute(
        f"SELECT __code, __rule, count(*){per_outcome} FROM {prepared} GROUP BY ALL").fetchall()
    read = np.zeros(k, dtype=np.int64)
    excluded = np.zeros((rules, k), dtype=np.int64)
    found = {name: np.zeros((len(outcome_sql), k), dtype=np.float64 if name == "sums" else np.int64)
             for name in _FIRST_PASS}
    for code, rule, n, *per in rows:
        read[code] += n
        if rule is not None:
            excluded[rule, code] += n
        for i, name in enumerate(_FIRST_PASS):
            found[name][:, code] += [value or 0 for value in per[i::len(_FIRST_PASS)]]
    return {"read": read, "excluded": excluded, **found}


def _number_problems(connection, prepared: str, source: _Source, column: str,
                     where_sql: str) -> list[Problem]:
    """One problem per eligible non-numeric cell, the first `problems.LISTED` by line, then a count."""
    where = str(source.path)
    total = connection.execute(f"SELECT count(*) FROM {prepared} WHERE {where_sql}").fetchone()[0]
    cells = connection.execute(f"SELECT __line, {source.text(column)} FROM {prepared} "
                               f"WHERE {where_sql} ORDER BY __line LIMIT {say.LISTED + 1}").fetchall()
    problems = [say.not_a_number(where, column, cell, line) for line, cell in cells[:say.LISTED]]
    if total > say.LISTED:
        problems.append(say.more(where, column, total - say.LISTED, "cells that are not numbers",
                                 cells[say.LISTED][0]))
    return problems


def _summary(connection, prepared: str, analysed: str, value: str, n: np.ndarray,
             sums: np.ndarray) -> CellSummary:
    """Per-level n and mean (from the first pass), then the sum of squared deviations from
    that mean (a second scan, the means handed in as exact DOUBLE parameters): the
    two-pass algorithm, never sum(y^2) - (sum y)^2 / n."""
    occupied = n > 0
    mean = np.full(n.size, np.nan)
    mean[occupied] = sums[occupied] / n[occupied]
    means = np.where(occupied, mean, 0.0).tolist()
    second = connection.execute(
        f"SELECT __code, fsum(({value} - list_extract(?::DOUBLE[], __code + 1)) ** 2) "
        f"FROM {prepared} WHERE {analysed} GROUP BY __code", [means]).fetchall()
    ssd = np.zeros(n.size)
    for code, total in second:
        ssd[code] = total
    return CellSummary(n=frozen_array(n, dtype=np.int64), mean=frozen_array(mean),
                       ssd=frozen_array(ssd))


def quotas(n: Sequence[int], size: int) -> list[int]:
    """Proportional allocation of `size` sample places to levels with `n` units each,
    rounded by largest remainder (ties to the earlier level); everyone when sum(n) <= size.

    >>> quotas([50, 30, 20], 10), quotas([1, 2], 10)
    ([5, 3, 2], [1, 2])
    """
    total = sum(n)
    if total <= size:
        return list(n)
    exact = [size * count / total for count in n]
    given = [math.floor(share) for share in exact]
    order = sorted(range(len(n)), key=lambda i: (-(exact[i] - given[i]), i))
    for i in order[:size - sum(given)]:
        given[i] += 1
    return given


def _sample(connection, prepared: str, source: _Source, unit_column: str, name: str,
            analysed: str, value: str, summary: CellSummary, size: int) -> OutcomeData:
    """A deterministic subsample stratified by level, for figures and row diagnostics.

    Each level gets places in proportion to its analysed units (`quotas`), so group
    sizes in the plots keep their proportions; within a level the units with the
    smallest DuckDB ``hash`` of their identifier text are taken (ties by line). The hash
    depends only on the unit id, so the same units are drawn on every run and whatever
    the row order or file format, and it is unrelated to level or value. Only rows whose
    hash falls under a threshold (about twice the needed share) reach Python; the
    threshold grows until every level has its quota. (DuckDB's hash is fixed within a
    DuckDB version; the run records library versions, and another version may draw
    other units.)
    """
    counts = [int(c) for c in summary.n]
    wanted = quotas(counts, size)
    fraction = min(1.0, 2.0 * size / max(sum(counts), 1))
    unit = source.text(unit_column)
    top = 2**64 - 1
    while True:
        limit = top if fraction >= 1.0 else int(fraction * top)
        rows = connection.execute(
            f"SELECT __code, hash({unit}) AS h, __line, {unit}, {value} FROM {prepared} "
            f"WHERE {analysed} AND hash({unit}) <= {limit}::UBIGINT").fetchall()
        by_level: list[list[tuple]] = [[] for _ in counts]
        for row in rows:
            by_level[row[0]].append(row)
        if all(len(got) >= need for got, need in zip(by_level, wanted)) or limit == top:
            break
        fraction *= 4.0
    chosen = sorted((row for got, need in zip(by_level, wanted)
                     for row in sorted(got, key=lambda r: (r[1], r[2]))[:need]),
                    key=lambda r: r[2])
    codes = frozen_array([r[0] for r in chosen], dtype=np.int64)
    return OutcomeData(
        name=name,
        values=frozen_array([r[4] for r in chosen], dtype=np.float64),
        codes=codes,
        factors=(codes,),
        units=tuple(r[3] for r in chosen),
        lines=tuple(int(r[2]) for r in chosen),
        summary=summary,
        sample_of=sum(counts),
    )
