"""Writes tests/data/world/gdp-wide-titled.csv (Penn World Table 7.1 figures, see
tests/data/world/README.md) as four spreadsheets, for levelfield's spreadsheet tests:

- pwt-gdp.xlsx  by openpyxl 3.1.5 (PyPI, MIT), its inline strings then moved into a
  shared-strings table (xl/sharedStrings.xml), as Excel itself writes them
- pwt-gdp.ods   by odfpy 1.4.1 (PyPI, Apache-2.0 / GPL / LGPL)
- pwt-gdp.xls   by xlwt 1.3.0 (PyPI, BSD): the BIFF8 format of Excel 97-2003
- pwt-gdp.xlsb  by `xlsb()` below, with the standard library only (zipfile, struct): the
  Excel Binary Workbook (BIFF12) format, its records laid out as Microsoft's open
  specification [MS-XLSB] "Excel (.xlsb) Binary File Format" gives them

Each sheet holds the title line in row 1, the header in row 2 and the figures as numbers.
Run: python3 -m venv v && v/bin/pip install openpyxl==3.1.5 odfpy==1.4.1 xlwt==1.3.0 &&
     v/bin/python tests/data/sheets/build_pwt_sheets.py
Name formats to build only those: `python3 tests/data/sheets/build_pwt_sheets.py xlsb` needs
no package at all (xlsx, ods and xls need theirs, above).
"""
import csv
import os
import struct
import sys
import zipfile

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


# Excel Binary Workbook (.xlsb, BIFF12), after [MS-XLSB] "Excel (.xlsb) Binary File Format"
# (Microsoft Open Specifications). A part is a run of records; each record is its type and
# its size, both written 7 bits a byte (low bits first, the high bit set while more bytes
# follow), then its body. The names below are the specification's record names, their
# numbers the record types it gives them.
BRT = {
    "RowHdr": 0, "CellRk": 2, "CellReal": 5, "CellIsst": 7, "SSTItem": 19,
    "Font": 43, "Fill": 45, "Border": 46, "XF": 47, "Style": 48,
    "BeginSheet": 129, "EndSheet": 130, "BeginBook": 131, "EndBook": 132,
    "BeginBundleShs": 143, "EndBundleShs": 144, "BeginSheetData": 145, "EndSheetData": 146,
    "WsDim": 148, "WbProp": 153, "BundleSh": 156, "BeginSst": 159, "EndSst": 160,
    "BeginStyleSheet": 278, "EndStyleSheet": 279, "BeginDXFs": 505, "EndDXFs": 506,
    "BeginTableStyles": 508, "EndTableStyles": 509, "BeginFills": 603, "EndFills": 604,
    "BeginFonts": 611, "EndFonts": 612, "BeginBorders": 613, "EndBorders": 614,
    "BeginCellXFs": 617, "EndCellXFs": 618, "BeginStyles": 619, "EndStyles": 620,
    "BeginCellStyleXFs": 626, "EndCellStyleXFs": 627,
}


def _varint(value, most):
    out = bytearray()
    while True:
        byte, value = value & 0x7F, value >> 7
        out.append(byte | (0x80 if value else 0))
        if not value:
            break
    assert len(out) <= most, "record type or size too large"
    return bytes(out)


def _record(name, body=b""):
    """One record: type in at most 2 bytes, size in at most 4, then the body."""
    return _varint(BRT[name], 2) + _varint(len(body), 4) + body


def _wide(text):
    """XLWideString: a 4-byte count of UTF-16 code units, then UTF-16LE text."""
    data = text.encode("utf-16-le")
    return struct.pack("<I", len(data) // 2) + data


def _color(kind, index=0):
    """BrtColor (2.4.334) as a field: fValidRGB 0 and xColorType (0 automatic, 1 indexed),
    the index, no tint or shade, and RGBA left 0 (ignored while fValidRGB is 0)."""
    return struct.pack("<BBhBBBB", kind << 1, index, 0, 0, 0, 0, 0)


def _rk(value):
    """RkNumber for an integer that it holds exactly, else None: a 30-bit signed
    integer (fInt), or a double whose low 34 bits are zero (its upper 30 bits kept)."""
    if -(1 << 29) <= value < (1 << 29):
        return struct.pack("<i", (value << 2) | 2)
    bits = struct.unpack("<Q", struct.pack("<d", float(value)))[0]
    if float(value) == value and bits & 0x3_FFFF_FFFF == 0:
        return struct.pack("<I", bits >> 32)
    return None


def _cell(column, tail):
    """A Cell: column (4 bytes), iStyleRef 0 (24 bits) and fPhShow 0, then the value."""
    return struct.pack("<II", column, 0) + tail


def _xf(parent):
    """BrtXF (2.4.862) with the General format (iFmt 0) and font, fill and border 0; the
    alignment word holds alcv 2 (bottom) and fLocked 1, xfGrbitAtr 0. A cell style XF has
    parent 0xFFFF, a cell XF the index of its cell style XF."""
    return _record("XF", struct.pack("<HHHHHBBHH", parent, 0, 0, 0, 0, 0, 0, 0x1010, 0))


def _styles():
    """The Styles part (2.1.7.50): one font (Calibri 11, automatic colour), the two fills
    every workbook starts with (none, gray125), one empty border, the cell style XF of the
    built-in Normal style and one cell XF under it, no DXFs and no table styles."""
    indexed = 1
    font = struct.pack("<HHHHBBBB", 220, 0, 400, 0, 0, 2, 0, 0) + _color(0) + b"\x00"
    fill_rest = struct.pack("<I5dI", 0, 0, 0, 0, 0, 0, 0)  # no gradient, no stops

    def fill(pattern):  # fls 0 none, 0x11 gray125; system fore (64) and back (65) colours
        return _record("Fill", struct.pack("<I", pattern) + _color(indexed, 64)
                       + _color(indexed, 65) + fill_rest)

    side = struct.pack("<BB", 0, 0) + _color(0)  # Blxf (2.5.5): no line

    def count(n):  # the 4-byte count that opens each collection
        return struct.pack("<I", n)

    return b"".join([
        _record("BeginStyleSheet"),
        _record("BeginFonts", count(1)), _record("Font", font + _wide("Calibri")),
        _record("EndFonts"),
        _record("BeginFills", count(2)), fill(0x00), fill(0x11), _record("EndFills"),
        _record("BeginBorders", count(1)),
        _record("Border", b"\x00" + side * 5),  # BrtBorder (2.4.311): no diagonals
        _record("EndBorders"),
        _record("BeginCellStyleXFs", count(1)), _xf(0xFFFF), _record("EndCellStyleXFs"),
        _record("BeginCellXFs", count(1)), _xf(0), _record("EndCellXFs"),
        _record("BeginStyles", count(1)),
        _record("Style", struct.pack("<IHBB", 0, 1, 0, 0xFF) + _wide("Normal")),
        _record("EndStyles"),
        _record("BeginDXFs", count(0)), _record("EndDXFs"),
        _record("BeginTableStyles", count(0) + _wide("TableStyleMedium9")
                + _wide("PivotStyleLight16")),
        _record("EndTableStyles"),
        _record("EndStyleSheet"),
    ])


def xlsb(table):
    """Writes pwt-gdp.xlsb: an Excel Binary Workbook as [MS-XLSB] (Microsoft's open
    specification of the .xlsb format) lays it out, with the standard library only. The
    package holds the workbook part (2.1.7.61: the sheet "GDP", 1900 dates), the
    worksheet (2.1.7.62: BrtWsDim, then one BrtRowHdr per row and its cells), the shared
    strings (2.1.7.45) that every text cell points into with BrtCellIsst, and a minimal
    styles part (2.1.7.50). Numbers are BrtCellRk where an RkNumber holds them exactly,
    BrtCellReal (an 8-byte double) otherwise. The zip entries carry a fixed date, so the
    same table always gives the same bytes."""
    strings, index = [], {}
    sheet = [_record("BeginSheet"),
             _record("WsDim", struct.pack("<IIII", 0, len(table) - 1, 0,
                                          max(len(r) for r in table) - 1)),
             _record("BeginSheetData")]
    text_cells = 0
    for r, row in enumerate(table):
        used = [c for c, v in enumerate(row) if v is not None]
        # BrtRowHdr (2.4.761): rw, ixfe 0, miyRw 300 twips (15 pt), no flags, and one
        # BrtColSpan over the row's cells.
        sheet.append(_record("RowHdr", struct.pack("<IIHHBI", r, 0, 300, 0, 0, 1)
                             + struct.pack("<II", used[0], used[-1])))
        for c in used:
            value = row[c]
            if isinstance(value, str):
                if value not in index:
                    index[value] = len(strings)
                    strings.append(value)
                text_cells += 1
                sheet.append(_record("CellIsst", _cell(c, struct.pack("<I", index[value]))))
            elif _rk(value) is not None:
                sheet.append(_record("CellRk", _cell(c, _rk(value))))
            else:
                assert float(value) == value, f"{value} is not exact as a double"
                sheet.append(_record("CellReal", _cell(c, struct.pack("<d", value))))
    sheet += [_record("EndSheetData"), _record("EndSheet")]
    # BrtSSTItem is a RichStr: a flags byte (no runs, no phonetics), then the text.
    sst = ([_record("BeginSst", struct.pack("<II", text_cells, len(strings)))]
           + [_record("SSTItem", b"\x00" + _wide(t)) for t in strings] + [_record("EndSst")])
    book = [
        _record("BeginBook"),
        # BrtWbProp (2.4.853): no flags (so f1904 0, the 1900 date system), theme version
        # 0, no code name.
        _record("WbProp", struct.pack("<II", 0, 0) + _wide("")),
        _record("BeginBundleShs"),
        # BrtBundleSh: visible, tab id 1, the relationship id, the sheet name.
        _record("BundleSh", struct.pack("<II", 0, 1) + _wide("rId1") + _wide("GDP")),
        _record("EndBundleShs"),
        _record("EndBook"),
    ]
    rel = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/"
    head = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
    parts = {
        "[Content_Types].xml": head
        + '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
        '<Default Extension="rels" '
        'ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
        '<Override PartName="/xl/workbook.bin" '
        'ContentType="application/vnd.ms-excel.sheet.binary.macroEnabled.main"/>'
        '<Override PartName="/xl/worksheets/sheet1.bin" '
        'ContentType="application/vnd.ms-excel.worksheet"/>'
        '<Override PartName="/xl/styles.bin" ContentType="application/vnd.ms-excel.styles"/>'
        '<Override PartName="/xl/sharedStrings.bin" '
        'ContentType="application/vnd.ms-excel.sharedStrings"/></Types>',
        "_rels/.rels": head
        + '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        f'<Relationship Id="rId1" Type="{rel}officeDocument" Target="xl/workbook.bin"/>'
        "</Relationships>",
        "xl/workbook.bin": b"".join(book),
        "xl/_rels/workbook.bin.rels": head
        + '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
        f'<Relationship Id="rId1" Type="{rel}worksheet" Target="worksheets/sheet1.bin"/>'
        f'<Relationship Id="rId2" Type="{rel}styles" Target="styles.bin"/>'
        f'<Relationship Id="rId3" Type="{rel}sharedStrings" Target="sharedStrings.bin"/>'
        "</Relationships>",
        "xl/worksheets/sheet1.bin": b"".join(sheet),
        "xl/styles.bin": _styles(),
        "xl/sharedStrings.bin": b"".join(sst),
    }
    with zipfile.ZipFile(os.path.join(HERE, "pwt-gdp.xlsb"), "w") as z:
        for name, data in parts.items():
            entry = zipfile.ZipInfo(name, date_time=(1980, 1, 1, 0, 0, 0))
            entry.compress_type = zipfile.ZIP_DEFLATED
            entry.external_attr = 0o644 << 16
            z.writestr(entry, data.encode() if isinstance(data, str) else data)


BUILDERS = {"xlsx": xlsx, "ods": ods, "xls": xls, "xlsb": xlsb}

if __name__ == "__main__":
    wanted = sys.argv[1:] or list(BUILDERS)
    unknown = [w for w in wanted if w not in BUILDERS]
    if unknown:
        sys.exit(f"unknown format {', '.join(unknown)}: choose from {', '.join(BUILDERS)}")
    table = rows()
    for name in wanted:
        BUILDERS[name](table)
    print(f"wrote {len(table) - 2} rows into " + ", ".join(f"pwt-gdp.{w}" for w in wanted))
