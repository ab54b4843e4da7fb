"""Number tables written as sheet XML text read back exactly as openpyxl's own cells.

The reference is the same table written cell by cell through openpyxl (the way the
Distribution sheet was written before). LibreOffice recalculating formulas over a streamed
table is checked in ``tests/test_workbook.py`` (percentiles of the listed trials, 1e-9).
"""

from __future__ import annotations

import zipfile

import numpy as np
import openpyxl
import pytest
from openpyxl import Workbook

from lcoe.export.workbook.layout import put, put_formula, put_text
from lcoe.export.workbook.stream import add_number_table, save_workbook

N = 500
FORMATS = ("0", "0.00000", "#,##0", "General")


def _columns():
    rng = np.random.default_rng(7)
    floats = rng.normal(size=N) * 1e6
    floats[[5, 77, N - 3]] = [np.nan, np.inf, -np.inf]  # no value: empty cells
    return [np.arange(1, N + 1), rng.random(N), floats, -rng.random(N) * 1e-12]


def _sheet(ws, mark_rows) -> None:
    """Other content of the sheet: text, numbers and formulas left of the table."""
    put_text(ws, 1, 1, "=looks like a formula")
    put_text(ws, 1, 5, "Trial")
    for r in mark_rows:
        put(ws, r, 1, float(r), "0.0")
        put_formula(ws, r, 2, f"=A{r}*2")


def _write(path, streamed: bool, mark_rows) -> None:
    wb = Workbook()
    ws = wb.active
    ws.title = "T"
    cols = _columns()
    if streamed:
        add_number_table(ws, 2, 5, cols, FORMATS)
    _sheet(ws, mark_rows)
    if streamed:
        save_workbook(wb, path)
        return
    for j, (values, fmt) in enumerate(zip(cols, FORMATS)):
        for i, v in enumerate(values.tolist()):
            if np.isfinite(v):
                cell = ws.cell(row=2 + i, column=5 + j, value=v)
                cell.number_format = fmt
    wb.save(path)


@pytest.mark.parametrize("mark_rows", [(), (2, 3, 4), (3, 40, 41, 250), (N + 1, N + 10)])
@pytest.mark.parametrize("read_only", [False, True])
def test_streamed_table_reads_back_like_cells(tmp_path, mark_rows, read_only):
    ref, new = tmp_path / "ref.xlsx", tmp_path / "new.xlsx"
    _write(ref, False, mark_rows)
    _write(new, True, mark_rows)
    a = openpyxl.load_workbook(ref, read_only=read_only)["T"]
    b = openpyxl.load_workbook(new, read_only=read_only)["T"]
    rows_a, rows_b = list(a.iter_rows()), list(b.iter_rows())
    assert len(rows_a) == len(rows_b) == max((N + 1, *mark_rows))
    for ra, rb in zip(rows_a, rows_b):
        va = {c.column: (c.value, c.number_format) for c in ra if c.value is not None}
        vb = {c.column: (c.value, c.number_format) for c in rb if c.value is not None}
        assert va.keys() == vb.keys()
        for k in va:
            if isinstance(va[k][0], float):  # openpyxl writes 16 digits, the table 17
                assert vb[k][0] == pytest.approx(va[k][0], rel=1e-15, abs=0)
                assert vb[k][1] == va[k][1]
            else:
                assert vb[k] == va[k]
    if not read_only:
        assert b.dimensions == a.dimensions


def test_streamed_values_are_bit_exact(tmp_path):
    """Rows written as text keep every digit (openpyxl's own cells keep 16 significant)."""
    path = tmp_path / "t.xlsx"
    _write(path, True, (3,))
    ws = openpyxl.load_workbook(path, read_only=True)["T"]
    got = np.array([r for r in ws.iter_rows(min_row=4, max_row=N, min_col=6, max_col=7,
                                            values_only=True)], dtype=float)
    ref = np.column_stack(_columns()[1:3])[2:N - 1]
    ref[~np.isfinite(ref)] = np.nan  # empty cells
    assert np.array_equal(got, ref, equal_nan=True)


def test_rows_in_order_and_written_once(tmp_path):
    path = tmp_path / "t.xlsx"
    _write(path, True, (3, 40, 41, 250))
    with zipfile.ZipFile(path) as z:
        xml = z.read("xl/worksheets/sheet1.xml").decode()
    import re

    rows = [int(r) for r in re.findall(r'<row r="(\d+)"', xml)]
    assert rows == sorted(set(rows)) == list(range(1, N + 2))


def test_bad_tables_are_refused():
    ws = Workbook().active
    with pytest.raises(ValueError, match="same length"):
        add_number_table(ws, 1, 1, [np.arange(3), np.arange(4)], ("0", "0"))
    with pytest.raises(ValueError, match="formats"):
        add_number_table(ws, 1, 1, [np.arange(3)], ("0", "0"))
    add_number_table(ws, 1, 1, [np.arange(3)], ("0",))
    with pytest.raises(ValueError, match="already has a table"):
        add_number_table(ws, 1, 3, [np.arange(3)], ("0",))


def test_empty_table_writes_nothing(tmp_path):
    wb = Workbook()
    add_number_table(wb.active, 2, 2, [np.arange(0)], ("0",))
    save_workbook(wb, tmp_path / "e.xlsx")
    assert openpyxl.load_workbook(tmp_path / "e.xlsx").active.max_row == 1
