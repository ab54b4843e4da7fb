"""Reading an edited workbook back: by key (blank and moved rows are fine, a missing key is an
error), an edited hidden sheet and non-finite numbers refused, archive members size-limited
before they are inflated. Regressions of issue 12 (items 2, 3 and 7)."""

from __future__ import annotations

import math
import time
import zipfile

import openpyxl
import pytest
from conftest import INPUTS

from lcoe.case import readback
from lcoe.case.errors import InputError
from lcoe.case.readback import CASE_SHEET, case_from_workbook
from lcoe.cli import main
from lcoe.export.workbook.book import write_workbook
from lcoe.model import evaluate
from lcoe.study.run import run_case

SENTINEL = 123456.789


@pytest.fixture(scope="module")
def lender(tmp_path_factory):
    """The lender's demo (revenue, tax and debt below many rows) and its workbook."""
    result = run_case(INPUTS / "lender_single_axis.toml", samples=0)
    path = tmp_path_factory.mktemp("rb") / "lender.xlsx"
    write_workbook(result, path)
    return result, path


def _edited(src, dst, edit):
    wb = openpyxl.load_workbook(src)
    edit(wb)
    wb.save(dst)
    return dst


def _row_of(ws, key):
    return next(c.row for (c,) in ws.iter_rows(min_col=1, max_col=1) if c.value == key)


def _rewrite_member(src, dst, member_suffix, old: bytes, new: bytes):
    """Copy an archive, replacing bytes inside one member (what another program might write)."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info)
            if info.filename.endswith(member_suffix) and old in data:
                data = data.replace(old, new)
            zout.writestr(info, data)
    return dst


def _sheet_member(path, title):
    wb = openpyxl.load_workbook(path, read_only=True)
    index = wb.sheetnames.index(title) + 1
    wb.close()
    return f"worksheets/sheet{index}.xml"


def test_blank_rows_inserted_change_nothing(lender, tmp_path):
    # Regression: a blank row dropped every key below it (revenue, tax and debt vanished and
    # the LCOE moved with exit 0).
    result, path = lender
    bad = _edited(path, tmp_path / "blank.xlsx", lambda wb: (
        wb["Inputs"].insert_rows(8), wb["Inputs"].insert_rows(20, amount=3)))
    case = case_from_workbook(bad)
    assert dict(case.values) == dict(result.case.values)
    assert case.sections == result.case.sections
    again = evaluate(case, result.site)
    assert again.cashflow.lcoe_real[0] == result.base.cashflow.lcoe_real[0]


def test_moved_rows_are_read_by_key(lender, tmp_path):
    result, path = lender

    def reverse(wb):
        ws = wb["Inputs"]
        rows = [[c.value for c in r] for r in ws.iter_rows(min_row=2, max_col=2)]
        for i, (key, value) in enumerate(reversed(rows), start=2):
            ws.cell(row=i, column=1).value = key
            ws.cell(row=i, column=2).value = value

    case = case_from_workbook(_edited(path, tmp_path / "moved.xlsx", reverse))
    assert dict(case.values) == dict(result.case.values)


def test_deleted_key_is_an_error_naming_it(lender, tmp_path):
    _, path = lender
    bad = _edited(path, tmp_path / "deleted.xlsx", lambda wb: wb["Inputs"].delete_rows(
        _row_of(wb["Inputs"], "debt.tenor_years")))
    with pytest.raises(InputError, match=r"no row with key 'debt.tenor_years'"):
        case_from_workbook(bad)


@pytest.mark.parametrize("text", [b"NaN", b"inf", b"-INF", b"1E999"])
def test_non_finite_number_cell_is_refused_with_its_cell(lender, tmp_path, capsys, text):
    # Regression: a NaN number cell gave a traceback.
    _, path = lender
    marked = _edited(path, tmp_path / "marked.xlsx", lambda wb: wb["Inputs"].cell(
        row=_row_of(wb["Inputs"], "costs.capex_per_kw"), column=2, value=SENTINEL))
    bad = _rewrite_member(marked, tmp_path / "nan.xlsx", _sheet_member(marked, "Inputs"),
                          f"<v>{SENTINEL}</v>".encode(), b"<v>" + text + b"</v>")
    # openpyxl cannot parse NaN/inf itself; 1E999 parses to infinity and is refused by its cell
    where = r"Inputs!B\d+ \(costs.capex_per_kw\)" if text == b"1E999" else "cannot be read"
    with pytest.raises(InputError, match=where + ".*finite"):
        case_from_workbook(bad)
    assert main(["run", str(bad), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "finite" in err
    assert not (tmp_path / "o").exists()


def test_edited_hidden_sheet_is_detected(lender, tmp_path, capsys):
    # Regression: an edited hidden sheet gave a traceback or a silently different case.
    _, path = lender

    def tamper(wb):
        ws = wb[CASE_SHEET]
        ws["A2"].value = ws["A2"].value.replace('"P50"', '"P90"', 1).replace("1.3", "1.1", 1)

    bad = _edited(path, tmp_path / "tampered.xlsx", tamper)
    with pytest.raises(InputError, match="hidden sheet '_case' was edited.*checksum"):
        case_from_workbook(bad)
    no_stamp = _edited(path, tmp_path / "nostamp.xlsx",
                       lambda wb: setattr(wb[CASE_SHEET]["B1"], "value", None))
    with pytest.raises(InputError, match="no checksum"):
        case_from_workbook(no_stamp)
    assert main(["run", str(bad), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    assert capsys.readouterr().err.count("\n") == 1


def _with_member(src, dst, name, n_bytes):
    """Copy of a workbook with an extra member of ``n_bytes`` zeros (packs about 1000:1)."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            zout.writestr(info, zin.read(info))
        with zout.open(name, "w") as fh:
            block = bytes(2**20)
            for _ in range(n_bytes // 2**20):
                fh.write(block)
    return dst


@pytest.mark.parametrize("n_mb,why", [(80, "a member"), (3, "ratio")])
def test_zip_bomb_is_refused_before_inflating(lender, tmp_path, capsys, n_mb, why):
    # Regression: a 187 KB workbook inflated to 605 MB while being read.
    _, path = lender
    bomb = _with_member(path, tmp_path / "bomb.xlsx", "xl/sharedStrings2.xml", n_mb * 2**20)
    assert bomb.stat().st_size < path.stat().st_size + 200_000
    t0 = time.perf_counter()
    with pytest.raises(InputError, match=f"would inflate.*{why}"):
        case_from_workbook(bomb)
    assert time.perf_counter() - t0 < 5.0  # only the zip directory was read (loaded machine)
    assert main(["run", str(bomb), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    assert capsys.readouterr().err.count("\n") == 1


def test_too_many_members_and_total_size(lender, tmp_path, monkeypatch):
    _, path = lender
    monkeypatch.setattr(readback, "MAX_MEMBERS", 5)
    with pytest.raises(InputError, match="archive members"):
        case_from_workbook(path)
    monkeypatch.setattr(readback, "MAX_MEMBERS", 1000)
    monkeypatch.setattr(readback, "MAX_TOTAL_BYTES", 10_000)
    with pytest.raises(InputError, match="would inflate"):
        case_from_workbook(path)


def test_our_own_large_workbook_is_within_the_limits(tmp_path):
    # A 10,000-trial workbook must read back: its members stay far inside the limits.
    result = run_case(INPUTS / "demo_fixed_tilt.toml", samples=10_000, sobol_base=0)
    path = tmp_path / "big.xlsx"
    write_workbook(result, path)
    with zipfile.ZipFile(path) as zf:
        infos = zf.infolist()
    biggest = max(i.file_size for i in infos)
    worst = max(i.file_size / max(i.compress_size, 1) for i in infos if i.file_size > 2**20)
    assert biggest < readback.MAX_MEMBER_BYTES / 4 and worst < readback.MAX_RATIO / 4
    assert math.isfinite(case_from_workbook(path)["costs.capex_per_kw"])
