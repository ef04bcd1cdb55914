"""Habits of core-description spreadsheets as companies keep them: a core's name
written once for its block of rows (merged cells, or typed once)."""

from faciesseq.io import read_cores

BLOCKS = "core,top,base,facies\nW1,0,1,A\n,1,2,B\n,2,3,A\nW2,0,1,B\n,1,2,A\n"


def test_a_core_name_written_once_per_block_is_read_down_with_a_repair_per_block(tmp_path):
    f = tmp_path / "c.csv"
    f.write_text(BLOCKS)
    cores = read_cores(f)
    assert not [p for p in cores.problems if p.severity == "error"]
    assert [len(cores[name]) for name in cores.names] == [3, 2]
    repairs = [p for p in cores.problems if p.kind == "blank-core"]
    assert [(p.severity, p.row, p.core) for p in repairs] == [
        ("repair", 2, "W1"),
        ("repair", 5, "W2"),
    ]
    assert "data rows 2-3" in repairs[0].message


def test_a_blank_core_name_before_any_name_is_still_an_error(tmp_path):
    f = tmp_path / "c.csv"
    f.write_text("core,top,base,facies\n,0,1,A\nW1,1,2,B\n")
    errors = [p for p in read_cores(f).problems if p.severity == "error"]
    assert [(p.kind, p.row) for p in errors] == [("missing-core", 1)]


def test_merged_core_cells_of_a_workbook_are_read_as_the_block_they_span(tmp_path):
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    for row in [l.split(",") for l in BLOCKS.splitlines()]:
        sheet.append([float(c) if c[:1].isdigit() else (c or None) for c in row])
    sheet.merge_cells("A2:A4")
    sheet.merge_cells("A5:A6")
    book.save(tmp_path / "c.xlsx")
    cores = read_cores(tmp_path / "c.xlsx")
    assert cores.names == ["W1", "W2"] and cores.errors == []
    assert [len(cores[name]) for name in cores.names] == [3, 2]
