"""Safe output files: atomic writes, no overwrite without consent, CSV formula escaping.

The escaped leading characters are the ones spreadsheets evaluate as formulas (common practice
for CSV injection defence: '=', '+', '-', '@', tab, carriage return)."""

from __future__ import annotations

import csv
import io
from pathlib import Path

import pytest

from optimizer.safewrite import OutputError, escape_csv_cell, write_text


def test_new_file_is_written(tmp_path: Path) -> None:
    target = tmp_path / "bom.csv"
    write_text(target, "a,b\n")
    assert target.read_text(encoding="utf-8") == "a,b\n"
    assert [p.name for p in tmp_path.iterdir()] == ["bom.csv"]  # no temporary left behind


def test_existing_file_is_left_untouched_without_force(tmp_path: Path) -> None:
    target = tmp_path / "report.md"
    target.write_text("the user's own notes\n", encoding="utf-8")
    with pytest.raises(OutputError) as info:
        write_text(target, "new")
    assert str(info.value) == f"{target}: already exists; give --force to replace it"
    assert target.read_text(encoding="utf-8") == "the user's own notes\n"


def test_force_replaces(tmp_path: Path) -> None:
    target = tmp_path / "report.md"
    target.write_text("old", encoding="utf-8")
    write_text(target, "new", force=True)
    assert target.read_text(encoding="utf-8") == "new"


def test_missing_folder_is_a_located_error(tmp_path: Path) -> None:
    target = tmp_path / "nowhere" / "x.json"
    with pytest.raises(OutputError) as info:
        write_text(target, "{}")
    assert str(info.value) == f"{target}: folder {target.parent} does not exist"


@pytest.mark.parametrize(
    ("cell", "escaped"),
    [
        ("=1+2", "'=1+2"),
        ("+SUM(A1)", "'+SUM(A1)"),
        ("-2", "'-2"),
        ("@cmd", "'@cmd"),
        ("\tx", "'\tx"),
        ("Q-0603-T10-25-4K99", "Q-0603-T10-25-4K99"),
        ("4.99 kΩ", "4.99 kΩ"),
    ],
)
def test_csv_cells_that_start_a_formula_are_escaped(cell: str, escaped: str) -> None:
    assert escape_csv_cell(cell) == escaped
    # The escaped cell survives a CSV round trip as text.
    buffer = io.StringIO()
    csv.writer(buffer).writerow([escape_csv_cell(cell)])
    assert next(csv.reader(io.StringIO(buffer.getvalue()))) == [escaped]
