"""Writes rates.ods beside this script: invented rates (not measured data)
for a fictional enzyme, one sheet 'Rates' with a header row, six rows of
[S] and v, and a last row whose v is a formula dividing by zero (cached
as an error). Run with odfpy installed: python3 make_rates_ods.py"""

import os
from odf.opendocument import OpenDocumentSpreadsheet
from odf.table import Table, TableRow, TableCell
from odf.text import P

ROWS = [(1, 0.99), (2, 1.66), (5, 2.86), (10, 3.33), (20, 3.64), (50, 3.85)]


def text_cell(value):
    cell = TableCell(valuetype="string")
    cell.addElement(P(text=value))
    return cell


def number_cell(value):
    cell = TableCell(valuetype="float", value=value)
    cell.addElement(P(text=str(value)))
    return cell


doc = OpenDocumentSpreadsheet()
table = Table(name="Rates")
header = TableRow()
header.addElement(text_cell("[S] (µM)"))
header.addElement(text_cell("v (µM/min)"))
table.addElement(header)
for s, v in ROWS:
    row = TableRow()
    row.addElement(number_cell(s))
    row.addElement(number_cell(v))
    table.addElement(row)
row = TableRow()
row.addElement(number_cell(100))
error = TableCell(formula="of:=1/0", valuetype="string", stringvalue="#DIV/0!")
error.addElement(P(text="#DIV/0!"))
row.addElement(error)
table.addElement(row)
doc.spreadsheet.addElement(table)
doc.save(os.path.join(os.path.dirname(os.path.abspath(__file__)), "rates.ods"))
