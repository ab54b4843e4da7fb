"""``hourly.parquet`` (or ``hourly.csv`` without pyarrow): every hour of the deterministic case.

Reads :func:`lcoe.hourly.hourly_table` and writes it; computes nothing. Parquet keeps each
column's unit and meaning in the schema's field metadata; the CSV fallback puts the unit in
brackets in the header.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

from ..hourly import hourly_table
from .cells import neutral_text

PARQUET_NAME = "hourly.parquet"
CSV_NAME = "hourly.csv"


def have_pyarrow() -> bool:
    """True when pyarrow can be imported (the ``hourly`` extra)."""
    try:
        import pyarrow  # noqa: F401
        import pyarrow.parquet  # noqa: F401
    except ImportError:
        return False
    return True


def hourly_file_name() -> str:
    """The file :func:`write_hourly` will produce: Parquet with pyarrow, CSV otherwise."""
    return PARQUET_NAME if have_pyarrow() else CSV_NAME


def _frame(result) -> tuple[pd.DataFrame, dict, dict]:
    t = hourly_table(result)
    index = t["index"]
    frame = pd.DataFrame(t["columns"], index=pd.RangeIndex(len(index)))
    frame.insert(0, "time_start", index.strftime("%Y-%m-%dT%H:%M:%S%z").str.replace(
        r"(\d\d)(\d\d)$", r"\1:\2", regex=True))
    return frame, t["units"], t["meanings"]


def write_hourly(result, path: Path) -> None:
    """Write the hourly table to ``path`` (Parquet when its suffix is .parquet, else CSV).

    Parameters
    ----------
    result : lcoe.results.RunResult
        Base case evaluated with ``keep_hourly=True``.
    path : pathlib.Path
        Target file (inside the staging folder of :func:`lcoe.output.publish`).
    """
    frame, units, meanings = _frame(result)
    if Path(path).suffix == ".parquet":
        import pyarrow as pa
        import pyarrow.parquet as pq

        table = pa.Table.from_pandas(frame, preserve_index=False)
        fields = []
        for field in table.schema:
            if field.name == "time_start":
                meta = {"unit": "ISO 8601 with UTC offset",
                        "meaning": "start of the hour-long interval, local standard time"}
            else:
                meta = {"unit": units[field.name], "meaning": meanings[field.name]}
            fields.append(field.with_metadata({k: v.encode() for k, v in meta.items()}))
        pq.write_table(table.cast(pa.schema(fields, metadata=table.schema.metadata)), path)
        return
    header = ["time_start"] + [f"{c} [{units[c]}]" if units[c] else c for c in frame.columns[1:]]
    # text cells (header, timestamps) through the one CSV rule; the numbers stay numbers
    frame["time_start"] = frame["time_start"].map(neutral_text)
    frame.to_csv(path, index=False, header=[neutral_text(h) for h in header],
                 float_format="%.6g", lineterminator="\n")
