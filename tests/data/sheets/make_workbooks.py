"""Writes the workbooks beside this script for the cross-check of
Turnover's spreadsheet reader against calamine (tests/sheets.rs): the
same cells in different shapes, written by general-purpose writers
(openpyxl for .xlsx, odfpy for .ods). All values are invented for the
test; none is a measurement.

    python3 -m venv /tmp/venv && /tmp/venv/bin/pip install -r requirements.txt
    /tmp/venv/bin/python make_workbooks.py
"""

import datetime
import os

import openpyxl
from odf.opendocument import OpenDocumentSpreadsheet
from odf.table import CoveredTableCell, Table, TableCell, TableRow
from odf.text import P, S, Span
from odf.office import Annotation

HERE = os.path.dirname(os.path.abspath(__file__))

# Numbers whose shortest round-trip decimal is long, tiny, huge or exact.
NUMBERS = [0.1, 1e-300, 1e300, 123456789012345678, -2.5, 0, 5e-324, 1 / 3, 2.0**53 + 2, -0.000123, 6.02214076e23, 1.7976931348623157e308]
TEXTS = ["plain", "tab\there", 'say "hi"', "µM · é · 漢字 · 🧪", "a < b & c > d 'q'", "  padded  ", "two\nlines", "_x000D_ literal", "#N/A as text?"]


def xlsx():
    book = openpyxl.Workbook()
    numbers = book.active
    numbers.title = "Numbers"
    numbers.append(["value", "negated", "half"])
    for n in NUMBERS:
        numbers.append([n, -n, n / 2])

    text = book.create_sheet("Text & 'quotes'")
    for k, t in enumerate(TEXTS, start=1):
        text.cell(row=k, column=1, value=t)
        text.cell(row=k, column=2, value=len(t))

    # Data from C3, with an empty row and an empty column inside.
    gaps = book.create_sheet("Gaps")
    gaps["C3"] = "[S] (µM)"
    gaps["E3"] = "v (µM/min)"
    gaps["C4"] = 1
    gaps["E4"] = 0.99
    gaps["C6"] = 5
    gaps["E6"] = 2.86
    gaps["H9"] = "far"

    mixed = book.create_sheet("Mixed")
    mixed.append(["bool", True, False])
    mixed.append(["errors", "#N/A", "#DIV/0!", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#NULL!"])
    mixed.append(["merged over three"])
    mixed.merge_cells("A3:C3")
    mixed.append(["formula without a cached value", "=1+1"])
    mixed.append(["empty string", ""])

    dates = book.create_sheet("Dates")
    dates["A1"] = datetime.datetime(2024, 3, 1, 12, 30)
    dates["A2"] = datetime.time(6, 15, 30)
    dates["A3"] = datetime.timedelta(hours=30, minutes=5)
    dates["A3"].number_format = "[h]:mm:ss"
    dates["A4"] = 0.25
    dates["A4"].number_format = "h:mm"
    dates["A5"] = 12.5
    dates["A5"].number_format = '0.0 "min"'
    dates["A6"] = 45000
    dates["A6"].number_format = "yyyy-mm-dd"
    dates["A7"] = 0.75
    dates["A7"].number_format = "0.00%"

    hidden = book.create_sheet("Hidden")
    hidden["B2"] = "kept though hidden"
    hidden.sheet_state = "hidden"

    book.create_sheet("Empty")
    book.save(os.path.join(HERE, "varied.xlsx"))


def text_cell(value, repeated=None):
    cell = TableCell(valuetype="string", numbercolumnsrepeated=repeated) if repeated else TableCell(valuetype="string")
    cell.addElement(P(text=value))
    return cell


def number_cell(value, kind="float", repeated=None):
    attributes = {"valuetype": kind, "value": repr(value) if isinstance(value, float) else str(value)}
    if repeated:
        attributes["numbercolumnsrepeated"] = repeated
    cell = TableCell(**attributes)
    cell.addElement(P(text=str(value)))
    return cell


def empty_cells(count):
    return TableCell(numbercolumnsrepeated=count)


def ods():
    doc = OpenDocumentSpreadsheet()

    numbers = Table(name="Numbers")
    row = TableRow()
    for heading in ["value", "negated"]:
        row.addElement(text_cell(heading))
    numbers.addElement(row)
    for n in NUMBERS:
        row = TableRow()
        row.addElement(number_cell(float(n)))
        row.addElement(number_cell(float(-n)))
        numbers.addElement(row)
    row = TableRow()
    row.addElement(number_cell(0.125, "percentage"))
    row.addElement(number_cell(19.99, "currency"))
    numbers.addElement(row)
    doc.spreadsheet.addElement(numbers)

    text = Table(name="Text & 'quotes'")
    for t in TEXTS:
        row = TableRow()
        row.addElement(text_cell(t))
        row.addElement(number_cell(len(t)))
        text.addElement(row)
    # Paragraphs, a span, runs of spaces and a comment in one cell.
    row = TableRow()
    cell = TableCell(valuetype="string")
    note = Annotation()
    note.addElement(P(text="a comment, not the value"))
    cell.addElement(note)
    first = P(text="first")
    first.addElement(S(c=3))
    first.addElement(Span(text="spanned"))
    cell.addElement(first)
    cell.addElement(P(text="second"))
    row.addElement(cell)
    stated = TableCell(valuetype="string", stringvalue="from the attribute")
    stated.addElement(P(text="shown text"))
    row.addElement(stated)
    text.addElement(row)
    doc.spreadsheet.addElement(text)

    # Repeats: leading empty rows, a repeated filled row, repeated filled
    # cells, empty columns, a merged area with covered cells.
    repeats = Table(name="Repeats")
    repeats.addElement(TableRow(numberrowsrepeated=3))
    row = TableRow()
    row.addElement(empty_cells(2))
    row.addElement(text_cell("[S]"))
    row.addElement(text_cell("v"))
    repeats.addElement(row)
    row = TableRow(numberrowsrepeated=3)
    row.addElement(empty_cells(2))
    row.addElement(number_cell(2.5))
    row.addElement(number_cell(0.75, repeated=3))
    repeats.addElement(row)
    row = TableRow(numberrowsrepeated=2)
    row.addElement(empty_cells(1024))
    repeats.addElement(row)
    row = TableRow()
    row.addElement(empty_cells(2))
    merged = TableCell(valuetype="string", numbercolumnsspanned=3, numberrowsspanned=1)
    merged.addElement(P(text="merged"))
    row.addElement(merged)
    row.addElement(CoveredTableCell(numbercolumnsrepeated=2))
    row.addElement(text_cell("after", repeated=2))
    repeats.addElement(row)
    repeats.addElement(TableRow(numberrowsrepeated=1000))
    doc.spreadsheet.addElement(repeats)

    mixed = Table(name="Mixed")
    row = TableRow()
    for value in ["true", "false"]:
        cell = TableCell(valuetype="boolean", booleanvalue=value)
        cell.addElement(P(text=value.upper()))
        row.addElement(cell)
    mixed.addElement(row)
    row = TableRow()
    for error in ["#N/A", "#DIV/0!"]:
        cell = TableCell(formula="of:=1/0", valuetype="string", stringvalue=error)
        cell.addElement(P(text=error))
        row.addElement(cell)
    mixed.addElement(row)
    row = TableRow()
    cell = TableCell(valuetype="date", datevalue="2024-03-01T12:30:00")
    cell.addElement(P(text="01.03.24 12:30"))
    row.addElement(cell)
    cell = TableCell(valuetype="time", timevalue="PT06H15M30S")
    cell.addElement(P(text="06:15:30"))
    row.addElement(cell)
    cell = TableCell(formula="of:=2*3", valuetype="float", value="6")
    cell.addElement(P(text="6"))
    row.addElement(cell)
    mixed.addElement(row)
    doc.spreadsheet.addElement(mixed)

    doc.spreadsheet.addElement(Table(name="Empty"))
    doc.save(os.path.join(HERE, "varied.ods"))


xlsx()
ods()
