"""Invented test data (seeded, not from any real study) and writers for every input format."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

STUDY = """\
format: 1
study: {{id: invented-01, title: Invented data for tests}}
data:
  source: {source}
  unit: unit_id
  exclusions:
    - {{id: X1, column: violated, equals: yes, reason: Protocol violated}}
    - {{id: X2, column: dose, equals: 0, reason: Never dosed}}
  planned_n: {{per_group: {planned}}}
design:
  factors:
    - {{name: arm, levels: {arm}}}
outcomes:
  - {{name: pain, label: Pain score, role: primary}}
  - {{name: sleep, label: Sleep hours, role: secondary}}
"""


def invented_units(seed: int = 20260214, per_level: int = 8) -> pd.DataFrame:
    """An invented three-arm data set, all columns text as a CSV would hold them.

    Some units carry a protocol violation or a zero dose (excluded by the study's
    rules), and some outcome cells are empty or NA (missing).
    """
    rng = np.random.default_rng(seed)
    arms = np.repeat(["placebo", "low", "high"], per_level)
    n = arms.size
    pain = np.round(rng.normal(5.0, 1.5, n), 2)
    sleep = np.round(rng.normal(7.0, 1.0, n), 1)
    frame = pd.DataFrame({
        "unit_id": [f"U{i:03d}" for i in range(1, n + 1)],
        "arm": arms,
        "violated": np.where(rng.random(n) < 0.15, "yes", "no"),
        "dose": np.where(rng.random(n) < 0.1, "0", "5"),
        "pain": [f"{v:.2f}" for v in pain],
        "sleep": [f"{v:.1f}" for v in sleep],
    })
    frame.loc[rng.random(n) < 0.15, "pain"] = ""
    frame.loc[rng.random(n) < 0.1, "sleep"] = "NA"
    return frame.astype(object)


#: The arm's levels (and control) in the study file `write_study` writes, unless told.
ARM = "[placebo, low, high], control: placebo"


def write_study(folder: Path, source: str, planned: int = 8, arm: str = ARM) -> Path:
    path = folder / "study.yaml"
    path.write_text(STUDY.format(source=source, planned=planned, arm=arm), encoding="utf-8")
    return path


def write_delimited(frame: pd.DataFrame, path: Path, sep: str = ",") -> Path:
    text = sep.join(frame.columns) + "\n"
    text += "".join(sep.join(str(v) for v in row) + "\n" for row in frame.itertuples(index=False))
    path.write_text(text, encoding="utf-8")
    return path


def typed(frame: pd.DataFrame) -> pd.DataFrame:
    """The text frame with numeric columns as floats (NaN where missing), as typed formats hold them."""
    out = frame.copy()
    for column in ("dose", "pain", "sleep"):
        out[column] = pd.to_numeric(out[column].replace({"": None, "NA": None}), errors="raise")
    return out


def write_parquet(frame: pd.DataFrame, path: Path) -> Path:
    import pyarrow as pa
    import pyarrow.parquet as pq

    pq.write_table(pa.Table.from_pandas(typed(frame), preserve_index=False), path)
    return path


def write_xlsx(frame: pd.DataFrame, path: Path, sheet: str = "units", first: str | None = None) -> Path:
    import openpyxl

    book = openpyxl.Workbook()
    if first is not None:
        book.active.title = first
        book.active["A1"] = "not the data"
        worksheet = book.create_sheet(sheet)
    else:
        worksheet = book.active
        worksheet.title = sheet
    data = typed(frame)
    worksheet.append(list(data.columns))
    for row in data.itertuples(index=False):
        worksheet.append([None if isinstance(v, float) and np.isnan(v) else v for v in row])
    book.save(path)
    return path


def write_xpt(frame: pd.DataFrame, path: Path) -> Path:
    """SAS transport version 5 (SAS TS-140) written by pyreadstat, an independent writer."""
    import pyreadstat

    pyreadstat.write_xport(typed(frame), str(path), file_format_version=5, table_name="UNITS")
    return path


def write_dta(frame: pd.DataFrame, path: Path) -> Path:
    """A Stata file written by pyreadstat (independent of the pandas reader under test);
    the arm is stored as integer codes with value labels, as Stata users usually do."""
    import pyreadstat

    data = typed(frame)
    codes = {"placebo": 1, "low": 2, "high": 3}
    data["arm"] = data["arm"].map(codes).astype("int64")
    pyreadstat.write_dta(data, str(path),
                         variable_value_labels={"arm": {v: k for k, v in codes.items()}})
    return path


def write_sav(frame: pd.DataFrame, path: Path) -> Path:
    """An SPSS file written by pyreadstat; the arm as integer codes with value labels."""
    import pyreadstat

    data = typed(frame)
    codes = {"placebo": 1, "low": 2, "high": 3}
    data["arm"] = data["arm"].map(codes).astype("int64")
    pyreadstat.write_sav(data, str(path),
                         variable_value_labels={"arm": {v: k for k, v in codes.items()}})
    return path


def record_answers(monkeypatch, module, name: str) -> list[bool]:
    """Replace `module.name` (a builder that returns a Dataset or None) by a spy; the list
    it returns fills with whether each call answered (True) or declined (False)."""
    answers: list[bool] = []
    real = getattr(module, name)

    def recorded(*args):
        answer = real(*args)
        answers.append(answer is not None)
        return answer

    monkeypatch.setattr(module, name, recorded)
    return answers
