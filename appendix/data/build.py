"""Plan + data file -> `Dataset`: the route from a file to the one builder.

A CSV/TSV file is first tried on a fast path, which reads only the named columns and
accepts the file when every check passes: the compiled scan of a large plain file
(`appendix.data.scan`, one factor), then array checks on the columns pyarrow reads
(`appendix.data.vectorised` for one factor, `appendix.data.design_vectorised` beyond
it). A fast path words nothing: at any problem, and for every other format, the file is
read into a `Table` (`appendix.data.readers`) and the one builder
(`appendix.data.build_rows`) checks it and words every problem found
(`appendix.data.problems`).
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace

import numpy as np

from appendix.data import problems as say
from appendix.data.build_rows import build_from_table
from appendix.data.checksums import study_inputs
from appendix.data.dataset import Dataset
from appendix.data.flow import with_shortfall
from appendix.data.readers import read_table
from appendix.data.source import require_data_file
from appendix.errors import DataError
from appendix.plan.load import LoadedPlan

#: Delimited text formats: their cells are decimal text, read exactly.
_DELIMITERS = {".csv": ",", ".tsv": "\t"}


def build_dataset(loaded: LoadedPlan) -> Dataset:
    """Read the plan's data source and turn it into the analysed `Dataset`; a source with
    no rows, or an outcome value beyond `problems.VALUE_LIMIT`, is a user error. Each
    outcome's flow carries its shortfall against ``data.planned_n`` (`with_shortfall`)."""
    dataset = _build_dataset(loaded)
    dataset = replace(dataset, unit_flow=with_shortfall(dataset.unit_flow,
                                                        loaded.plan.data.planned_n))
    require_units(loaded, dataset)
    require_finite_range(loaded, dataset)
    return dataset


def require_units(loaded: LoadedPlan, dataset: Dataset) -> None:
    """A header with no rows gives a sentence, not an empty appendix."""
    if sum(c.n for c in dataset.unit_flow.read) == 0:
        raise say.no_rows(loaded.data_path)


def require_finite_range(loaded: LoadedPlan, dataset: Dataset) -> None:
    """Every analysed value within +-`VALUE_LIMIT`, so no sum of squares overflows."""
    problems = []
    for outcome, item in zip(loaded.plan.outcomes, dataset.outcomes):
        values = item.values
        big = np.flatnonzero(np.abs(values) > say.VALUE_LIMIT) if values.size else ()
        if len(big):
            first = int(big[0])
            problems.append(say.too_large(str(loaded.data_path), outcome.data_column,
                                          float(values[first]), int(item.lines[first]), len(big)))
    if problems:
        raise DataError(problems)


def _build_dataset(loaded: LoadedPlan) -> Dataset:
    plan = loaded.plan
    require_data_file(loaded.data_path)  # before hashing or reading opens it
    # Hashing reads the whole file once more; it runs beside the reading (hashlib and
    # pyarrow release the interpreter lock for large buffers).
    with ThreadPoolExecutor(max_workers=1) as pool:
        hashing = pool.submit(study_inputs, loaded.path, loaded.data_path)
        delimiter = _DELIMITERS.get(loaded.data_path.suffix.lower())
        if delimiter is not None:
            built = _fast(loaded, delimiter)
            if built is not None:
                return replace(built, inputs=hashing.result())
        table = read_table(loaded.data_path, plan.data.sheet)
        return build_from_table(loaded, table, hashing.result(), delimiter is not None)


def _fast(loaded: LoadedPlan, delimiter: str) -> Dataset | None:
    """The `Dataset` of a clean CSV/TSV file from a fast path, or None."""
    from appendix.data.columnar import read_columns

    if loaded.plan.data_route == "design":  # several factors, covariates or a within factor
        from appendix.data.design_vectorised import build_design_vectorised, design_columns

        columns = read_columns(loaded.data_path, delimiter, design_columns(loaded))
        return build_design_vectorised(loaded, columns) if columns is not None else None
    from appendix.data.scan import SCAN_MIN_BYTES
    from appendix.data.vectorised import build_scanned, build_vectorised, needed_columns

    if loaded.data_path.stat().st_size >= SCAN_MIN_BYTES:
        built = build_scanned(loaded, loaded.data_path, delimiter)
        if built is not None:
            return built
    columns = read_columns(loaded.data_path, delimiter, needed_columns(loaded))
    return build_vectorised(loaded, columns) if columns is not None else None
