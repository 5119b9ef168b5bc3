#!/usr/bin/env python3
"""Writes the bad-input corpus in this folder. Run once; the files are committed.

    python3 tests/data/bad/make.py          # needs msoffcrypto-tool for the encrypted workbook

Every workbook is built by hand with zipfile (the smallest OOXML a reader accepts), so that
each file is bad in exactly one way. README.md says what each file is and what benchgrade
must do with it; tests/integration/bad_corpus.rs checks it.
"""
import io
import os
import zipfile

HERE = os.path.dirname(os.path.abspath(__file__))
HEADER = ["Student ID", "Crude mass (g)", "Recovered mass (g)", "MP range (°C)"]
ROWS = [["B-101", 3.02, 2.11, "120.9-121.8"], ["B-102", 2.87, 1.95, "120.4-121.6"]]


def col(c):
    name = ""
    c += 1
    while c:
        c, r = divmod(c - 1, 26)
        name = chr(65 + r) + name
    return name


def esc(s):
    return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


def cell(r, c, v):
    ref = f"{col(c)}{r + 1}"
    if isinstance(v, tuple):  # ("e", "#DIV/0!", "1/0"): an error value with its formula
        kind, value, formula = v
        return f'<c r="{ref}" t="{kind}"><f>{esc(formula)}</f><v>{esc(value)}</v></c>'
    if isinstance(v, (int, float)):
        return f'<c r="{ref}"><v>{v}</v></c>'
    return f'<c r="{ref}" t="inlineStr"><is><t>{esc(v)}</t></is></c>'


def sheet_xml(rows):
    out = ['<?xml version="1.0" encoding="UTF-8" standalone="yes"?>',
           '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>']
    for r, values in rows:
        out.append(f'<row r="{r + 1}">' + "".join(cell(r, c, v) for c, v in values) + "</row>")
    out.append("</sheetData></worksheet>")
    return "".join(out)


def table(header, rows):
    return [(0, list(enumerate(header)))] + [(i + 1, list(enumerate(r))) for i, r in enumerate(rows)]


def workbook(sheets):
    """sheets: [(name, sheet xml)] -> xlsx bytes."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        write_parts(z, sheets)
    return buf.getvalue()


def write_parts(z, sheets, skip_sheet_xml=False):
    ns = "http://schemas.openxmlformats.org"
    overrides = "".join(
        f'<Override PartName="/xl/worksheets/sheet{i + 1}.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
        for i in range(len(sheets)))
    z.writestr("[Content_Types].xml",
               f'<?xml version="1.0" encoding="UTF-8"?><Types xmlns="{ns}/package/2006/content-types">'
               '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
               '<Default Extension="xml" ContentType="application/xml"/>'
               '<Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
               f'{overrides}</Types>')
    z.writestr("_rels/.rels",
               f'<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="{ns}/package/2006/relationships">'
               f'<Relationship Id="rId1" Type="{ns}/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>')
    names = "".join(f'<sheet name="{esc(n)}" sheetId="{i + 1}" r:id="rId{i + 1}"/>' for i, (n, _) in enumerate(sheets))
    z.writestr("xl/workbook.xml",
               f'<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="{ns}/spreadsheetml/2006/main" '
               f'xmlns:r="{ns}/officeDocument/2006/relationships"><sheets>{names}</sheets></workbook>')
    rels = "".join(
        f'<Relationship Id="rId{i + 1}" Type="{ns}/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet{i + 1}.xml"/>'
        for i in range(len(sheets)))
    z.writestr("xl/_rels/workbook.xml.rels",
               f'<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="{ns}/package/2006/relationships">{rels}</Relationships>')
    if not skip_sheet_xml:
        for i, (_, xml) in enumerate(sheets):
            z.writestr(f"xl/worksheets/sheet{i + 1}.xml", xml)


def write(name, data):
    with open(os.path.join(HERE, name), "wb") as f:
        f.write(data.encode("utf-8") if isinstance(data, str) else data)


def main():
    good = workbook([("Section A", sheet_xml(table(HEADER, ROWS)))])
    write("truncated.xlsx", good[: len(good) // 2])
    write("text-renamed.xlsx", "Student ID,Crude mass (g)\nB-101,3.02\n")
    write("empty.csv", b"")
    # 16,384 columns (A to XFD): the table in the first four, a note in the last one
    wide = table(HEADER, ROWS)
    wide[0][1].append((16383, "last column"))
    write("wide-16384-columns.xlsx", workbook([("Wide", sheet_xml(wide))]))
    write("header-only.xlsx", workbook([("Section A", sheet_xml(table(HEADER, [])))]))
    write("latin1.csv", "Student ID,Name,Crude mass (g),Recovered mass (g),MP range (°C)\n"
          "B-201,José Núñez,3.10,2.20,120.8-121.9\nB-202,Françoise Müller,2.95,2.01,120.2-121.5\n"
          .encode("latin-1"))
    write("bom.csv", "\ufeffStudent ID,Crude mass (g),Recovered mass (g),MP range (°C)\n"
          "B-301,3.00,2.05,121.0-121.9\n")
    write("semicolon-decimal-comma.csv", "Student ID;Crude mass (g);Recovered mass (g);MP range (°C)\n"
          "B-401;3,05;2,12;120,7-121,8\nB-402;2,90;1,99;120,1-121,4\n")
    errors = table(HEADER, [["B-501", 3.0, ("e", "#DIV/0!", "1/0"), "120.9-121.8"],
                            ["B-502", ("e", "#REF!", "#REF!+1"), 2.0, "120.5-121.5"],
                            ["B-503", 2.9, 2.0, ("str", "=HYPERLINK(\"http://x\")", "A1")]])
    write("formula-errors.xlsx", workbook([("Section A", sheet_xml(errors))]))
    write("sheet-name-illegal-in-files.xlsx",
          workbook([('..\\..\\<bench>|"7":*?', sheet_xml(table(HEADER, ROWS)))]))
    corners = [(0, [(0, "Student ID")]), (1048575, [(16383, "far corner")])]
    write("opposite-corners.xlsx", workbook([("Corners", sheet_xml(corners))]))
    write_bomb("zip-bomb.xlsx", 3 << 30)
    write_strings_bomb("shared-strings-bomb.xlsx", 3 << 29, understate=False)
    write_strings_bomb("shared-strings-bomb-understated.xlsx", 3 << 29, understate=True)
    write_encrypted("password-protected.xlsx", good)


def write_bomb(name, size):
    """A workbook whose one sheet inflates to `size` bytes of XML (honest sizes in the zip)."""
    with zipfile.ZipFile(os.path.join(HERE, name), "w", zipfile.ZIP_DEFLATED, compresslevel=9) as z:
        sheets = [("Bomb", "")]
        write_parts(z, sheets, skip_sheet_xml=True)
        with z.open("xl/worksheets/sheet1.xml", "w", force_zip64=True) as f:
            head = b'<?xml version="1.0"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
            f.write(head)
            chunk = b" " * (1 << 24)
            left = size - len(head)
            while left > 0:
                f.write(chunk[: min(left, len(chunk))])
                left -= len(chunk)


def write_strings_bomb(name, size, understate):
    """A small workbook whose shared-strings part inflates to `size` bytes, one string of
    that length; with `understate`, the zip's headers claim 1,000 bytes instead."""
    path = os.path.join(HERE, name)
    sheet = ('<?xml version="1.0"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
             '<sheetData><row r="1"><c r="A1" t="s"><v>0</v></c></row></sheetData></worksheet>')
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED, compresslevel=9) as z:
        write_parts(z, [("Strings", sheet)])
        with z.open("xl/sharedStrings.xml", "w") as f:
            head = b'<?xml version="1.0"?><sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="1" uniqueCount="1"><si><t>'
            tail = b"</t></si></sst>"
            f.write(head)
            chunk = b"a" * (1 << 24)
            left = size - len(head) - len(tail)
            while left > 0:
                f.write(chunk[: min(left, len(chunk))])
                left -= len(chunk)
            f.write(tail)
    if understate:
        data = bytearray(open(path, "rb").read())
        target = b"xl/sharedStrings.xml"
        # local file header: uncompressed size at offset 22; central directory header: at 24
        for sig, at in ((b"PK\x03\x04", 22), (b"PK\x01\x02", 24)):
            i = 0
            while (i := data.find(sig, i)) >= 0:
                name_at = i + (30 if at == 22 else 46)
                if data[name_at:name_at + len(target)] == target:
                    data[i + at:i + at + 4] = (1000).to_bytes(4, "little")
                i += 4
        open(path, "wb").write(bytes(data))


def write_encrypted(name, plain):
    """The good workbook encrypted with the password "benchgrade" (MS-OFFCRYPTO agile)."""
    import msoffcrypto
    from msoffcrypto.format.ooxml import OOXMLFile

    out = io.BytesIO()
    OOXMLFile(io.BytesIO(plain)).encrypt("benchgrade", out)
    write(name, out.getvalue())


if __name__ == "__main__":
    main()
