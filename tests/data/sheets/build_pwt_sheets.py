"""Writes tests/data/world/gdp-wide-titled.csv (Penn World Table 7.1 figures, see
tests/data/world/README.md) as three spreadsheets, for levelfield's spreadsheet tests:

- pwt-gdp.xlsx  by openpyxl 3.1.5 (PyPI, MIT), its inline strings then moved into a
  shared-strings table (xl/sharedStrings.xml), as Excel itself writes them
- pwt-gdp.ods   by odfpy 1.4.1 (PyPI, Apache-2.0 / GPL / LGPL)
- pwt-gdp.xls   by xlwt 1.3.0 (PyPI, BSD): the BIFF8 format of Excel 97-2003

Each sheet holds the title line in row 1, the header in row 2 and the figures as numbers.
Run: python3 -m venv v && v/bin/pip install openpyxl==3.1.5 odfpy==1.4.1 xlwt==1.3.0 &&
     v/bin/python tests/data/sheets/build_pwt_sheets.py
"""
import csv
import os

HERE = os.path.dirname(os.path.abspath(__file__))
SOURCE = os.path.join(HERE, "..", "world", "gdp-wide-titled.csv")


def rows():
    with open(SOURCE, newline="", encoding="utf-8") as f:
        lines = list(csv.reader(f))
    title, header, body = ",".join(lines[0]), lines[1], [l for l in lines[2:] if l and l[0]]
    table = [[title], header]
    for line in body:
        if not line[1].strip() or not line[1].replace(".", "").isdigit():
            continue  # the source note below the table
        table.append([line[0]] + [int(v) if v else None for v in line[1:]])
    return table


def xlsx(table):
    import openpyxl
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "GDP"
    for row in table:
        sheet.append(row)
    path = os.path.join(HERE, "pwt-gdp.xlsx")
    book.save(path)
    share_strings(path)


def share_strings(path):
    """Rewrites inline-string cells as indexes into xl/sharedStrings.xml."""
    import re
    import zipfile
    with zipfile.ZipFile(path) as z:
        files = {name: z.read(name) for name in z.namelist()}
    strings = []

    def index(match):
        text = match.group(2)
        if text not in strings:
            strings.append(text)
        return f'<c r="{match.group(1)}" t="s"><v>{strings.index(text)}</v></c>'

    sheet = files["xl/worksheets/sheet1.xml"].decode()
    sheet = re.sub(r'<c r="([A-Z]+[0-9]+)" t="inlineStr"><is><t>(.*?)</t></is></c>', index, sheet)
    files["xl/worksheets/sheet1.xml"] = sheet.encode()
    items = "".join(f"<si><t>{t}</t></si>" for t in strings)
    files["xl/sharedStrings.xml"] = (
        '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
        f'<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
        f'count="{len(strings)}" uniqueCount="{len(strings)}">{items}</sst>'
    ).encode()
    types = files["[Content_Types].xml"].decode().replace(
        "</Types>",
        '<Override PartName="/xl/sharedStrings.xml" ContentType="application/'
        'vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/></Types>',
    )
    files["[Content_Types].xml"] = types.encode()
    rels = files["xl/_rels/workbook.xml.rels"].decode().replace(
        "</Relationships>",
        '<Relationship Id="rIdShared" Type="http://schemas.openxmlformats.org/'
        'officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.xml"/>'
        "</Relationships>",
    )
    files["xl/_rels/workbook.xml.rels"] = rels.encode()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in files.items():
            z.writestr(name, data)


def ods(table):
    from odf.opendocument import OpenDocumentSpreadsheet
    from odf.table import Table, TableRow, TableCell
    from odf.text import P
    doc = OpenDocumentSpreadsheet()
    sheet = Table(name="GDP")
    for row in table:
        tr = TableRow()
        for value in row:
            if value is None:
                cell = TableCell()
            elif isinstance(value, int):
                cell = TableCell(valuetype="float", value=str(value))
                cell.addElement(P(text=str(value)))
            else:
                cell = TableCell(valuetype="string")
                cell.addElement(P(text=value))
            tr.addElement(cell)
        sheet.addElement(tr)
    doc.spreadsheet.addElement(sheet)
    doc.save(os.path.join(HERE, "pwt-gdp.ods"))


def xls(table):
    import xlwt
    book = xlwt.Workbook()
    sheet = book.add_sheet("GDP")
    for r, row in enumerate(table):
        for c, value in enumerate(row):
            if value is not None:
                sheet.write(r, c, float(value) if isinstance(value, int) else value)
    book.save(os.path.join(HERE, "pwt-gdp.xls"))


if __name__ == "__main__":
    table = rows()
    xlsx(table)
    ods(table)
    xls(table)
    print(f"wrote {len(table) - 2} rows into pwt-gdp.xlsx, .ods and .xls")
