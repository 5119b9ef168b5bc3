#!/usr/bin/env python3
"""Writes the bad-input corpus in this folder. Run once; the files are committed.

    python3 tests/data/bad/make.py          # needs msoffcrypto-tool for the encrypted workbook

Every workbook is built by hand with zipfile (the smallest OOXML a reader accepts), so that
each file is bad in exactly one way. README.md says what each file is and what benchgrade
must do with it; tests/integration/bad_corpus.rs checks it.
"""
import io
import os
import struct
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
    write_hostile_xls()
    write_hostile_ods()
    write_many_styles("xlsx-3-million-styles.xlsx", 3_000_000)


# --- legacy .xls: BIFF8 records (MS-XLS) in a compound file (MS-CFB), written by hand ---

def rec(kind, body=b""):
    """One BIFF record (MS-XLS 2.1.4): type, length, body."""
    return struct.pack("<HH", kind, len(body)) + body


def biff_sheet(dimensions=None, extra_records=1):
    """A worksheet substream: BOF, DIMENSIONS, the header and rows as LABEL and NUMBER cells."""
    out = rec(0x0809, struct.pack("<HH", 0x0600, 0x10) + bytes(12))
    rows = [HEADER] + ROWS
    rf, rl = dimensions or (0, len(rows))
    out += rec(0x0200, struct.pack("<IIHHH", rf, rl, 0, len(HEADER), 0))
    for r, values in enumerate(rows):
        for c, v in enumerate(values):
            if isinstance(v, float):
                out += rec(0x0203, struct.pack("<HHHd", r, c, 0, v))
            else:  # LABEL (2.4.148): an XLUnicodeString, 1-byte characters
                text = v.encode("latin-1")
                out += rec(0x0204, struct.pack("<HHHHB", r, c, 0, len(text), 0) + text)
    for _ in range(extra_records - 1):
        out += rec(0x0203, struct.pack("<HHHd", 0, 5, 0, 1.0))
    return out + rec(0x000A)


def biff_workbook(names, sheet, offset_shift=0):
    """A workbook stream: the globals with a BOUNDSHEET per name, all naming `sheet`."""
    bof = rec(0x0809, struct.pack("<HH", 0x0600, 0x0005) + bytes(12))
    def boundsheet(pos, name):
        n = name.encode("latin-1")
        return rec(0x0085, struct.pack("<IBBBB", pos, 0, 0, len(n), 0) + n)
    globals_len = len(bof) + sum(len(boundsheet(0, n)) for n in names) + 4
    body = bof + b"".join(boundsheet(globals_len + offset_shift, n) for n in names) + rec(0x000A)
    return body + sheet


def cfb(stream, name="Workbook"):
    """A version 3 compound file (MS-CFB) holding one stream of at least 4,096 bytes (so that
    it lives in regular sectors): sector 0 the FAT, 1 the directory, then the stream."""
    stream = stream + bytes(max(0, 4096 - len(stream)))
    n = (len(stream) + 511) // 512
    assert n + 2 <= 128, "one FAT sector holds 128 entries"
    fat = [0xFFFFFFFD, 0xFFFFFFFE] + [3 + i for i in range(n - 1)] + [0xFFFFFFFE]
    fat += [0xFFFFFFFF] * (128 - len(fat))
    header = (b"\xD0\xCF\x11\xE0\xA1\xB1\x1A\xE1" + bytes(16)
              + struct.pack("<HHHHH", 0x003E, 3, 0xFFFE, 9, 6) + bytes(6)
              + struct.pack("<IIIIIIIII", 0, 1, 1, 0, 4096, 0xFFFFFFFE, 0, 0xFFFFFFFE, 0)
              + struct.pack("<I", 0) + b"\xFF" * 4 * 108)
    def entry(name, kind, child, start, size):
        n = (name.encode("utf-16-le") + b"\0\0") if name else b""
        return (n.ljust(64, b"\0") + struct.pack("<HBB", len(n), kind, 1)
                + struct.pack("<III", 0xFFFFFFFF, 0xFFFFFFFF, child) + bytes(16 + 4 + 16)
                + struct.pack("<IIHH", start, size, 0, 0))
    directory = (entry("Root Entry", 5, 1, 0xFFFFFFFE, 0) + entry(name, 2, 0xFFFFFFFF, 2, len(stream))
                 + entry("", 0, 0xFFFFFFFF, 0, 0) * 2)
    return header + struct.pack("<128I", *fat) + directory + stream.ljust(n * 512, b"\0")


def write_hostile_xls():
    # DIMENSIONS (2.4.90) claiming rows 0 to 2^32 - 2: the reader would reserve 2^32 x 4 cells
    write("xls-dimensions-4-billion-rows.xls",
          cfb(biff_workbook(["Section A"], biff_sheet(dimensions=(0, 0xFFFFFFFF)))))
    # BOUNDSHEET (2.4.28) placing the sheet a megabyte past the end of the stream
    write("xls-sheet-past-the-end.xls",
          cfb(biff_workbook(["Section A"], biff_sheet(), offset_shift=1 << 20)))
    # 4,000 sheet records naming one sheet of 2,600 records: 10.4 million records to walk
    names = [f"S{i}" for i in range(4000)]
    write("xls-one-sheet-named-4000-times.xls",
          cfb_large(biff_workbook(names, biff_sheet(extra_records=2600))))


def cfb_large(stream):
    """`cfb` for a stream of more than 126 sectors: a second FAT sector, listed in the header."""
    stream = stream + bytes(max(0, 4096 - len(stream)))
    n = (len(stream) + 511) // 512
    fats = 1
    while fats * 128 < n + 1 + fats:
        fats += 1
    assert fats <= 109, "the header lists 109 FAT sectors"
    # sectors: the FAT sectors, then the directory, then the stream
    fat = [0xFFFFFFFD] * fats + [0xFFFFFFFE]
    first = fats + 1
    fat += [first + 1 + i for i in range(n - 1)] + [0xFFFFFFFE]
    fat += [0xFFFFFFFF] * (fats * 128 - len(fat))
    difat = list(range(fats)) + [0xFFFFFFFF] * (109 - fats)
    header = (b"\xD0\xCF\x11\xE0\xA1\xB1\x1A\xE1" + bytes(16)
              + struct.pack("<HHHHH", 0x003E, 3, 0xFFFE, 9, 6) + bytes(6)
              + struct.pack("<IIIIIIIII", 0, fats, fats, 0, 4096, 0xFFFFFFFE, 0, 0xFFFFFFFE, 0)
              + struct.pack("<109I", *difat))
    def entry(name, kind, child, start, size):
        n = (name.encode("utf-16-le") + b"\0\0") if name else b""
        return (n.ljust(64, b"\0") + struct.pack("<HBB", len(n), kind, 1)
                + struct.pack("<III", 0xFFFFFFFF, 0xFFFFFFFF, child) + bytes(16 + 4 + 16)
                + struct.pack("<IIHH", start, size, 0, 0))
    directory = (entry("Root Entry", 5, 1, 0xFFFFFFFE, 0) + entry("Workbook", 2, 0xFFFFFFFF, first, len(stream))
                 + entry("", 0, 0xFFFFFFFF, 0, 0) * 2)
    return header + struct.pack(f"<{fats * 128}I", *fat) + directory + stream.ljust(n * 512, b"\0")


# --- OpenDocument: content.xml with a table whose few bytes ask for a great deal ---

ODS_NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
          'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
          'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"')


def ods(rows_xml):
    header = "".join(f'<table:table-cell office:value-type="string"><text:p>{esc(h)}</text:p></table:table-cell>'
                     for h in HEADER)
    content = (f'<?xml version="1.0" encoding="UTF-8"?><office:document-content {ODS_NS} office:version="1.2">'
               f'<office:body><office:spreadsheet><table:table table:name="Section A">'
               f'<table:table-row>{header}</table:table-row>{rows_xml}</table:table>'
               '</office:spreadsheet></office:body></office:document-content>')
    manifest = ('<?xml version="1.0" encoding="UTF-8"?><manifest:manifest '
                'xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2">'
                '<manifest:file-entry manifest:full-path="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/>'
                '<manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>')
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet")
        z.writestr("META-INF/manifest.xml", manifest)
        z.writestr("content.xml", content)
    return buf.getvalue()


def ods_row(cells):
    return "<table:table-row>" + "".join(cells) + "</table:table-row>"


def ods_value(v):
    if isinstance(v, float):
        return f'<table:table-cell office:value-type="float" office:value="{v}"><text:p>{v}</text:p></table:table-cell>'
    return f'<table:table-cell office:value-type="string"><text:p>{esc(v)}</text:p></table:table-cell>'


def write_hostile_ods():
    # text:s (ODF 1.2 part 3, 6.1.3) standing for 1.5 billion spaces in a student's id
    spaced = ('<table:table-cell office:value-type="string"><text:p>B-1<text:s text:c="1500000000"/>01'
              '</text:p></table:table-cell>')
    write("ods-spaces-1500000000.ods", ods(ods_row([spaced] + [ods_value(v) for v in ROWS[0][1:]])))
    # a value repeated over 16,384 columns in 5,000 rows: 82 million cells from one element
    wide = ('<table:table-row table:number-rows-repeated="5000"><table:table-cell office:value-type="float" '
            'office:value="1" table:number-columns-repeated="16384"/></table:table-row>')
    write("ods-repeated-columns-and-rows.ods", ods(wide))
    # a crude mass whose cell holds a sub-table with a percentage in the crude column: the
    # mass stays 3.02 g
    sub = ('<table:table-cell office:value-type="float" office:value="3.02"><text:p>3.02</text:p>'
           '<table:table table:name="note"><table:table-row><table:table-cell/>'
           '<table:table-cell office:value-type="percentage" office:value="0.5"/></table:table-row>'
           '</table:table></table:table-cell>')
    rows = ods_row([ods_value(ROWS[0][0]), sub] + [ods_value(v) for v in ROWS[0][2:]])
    write("ods-sub-table-in-a-cell.ods", ods(rows + ods_row([ods_value(v) for v in ROWS[1]])))
    # content.xml cut off inside the table (calamine 0.38 then loops forever waiting for the
    # table's end tag; found by fuzzing)
    whole = ods("".join(ods_row([ods_value(v) for v in r]) for r in ROWS))
    with zipfile.ZipFile(io.BytesIO(whole)) as src:
        content = src.read("content.xml").decode()
        cut = content[: content.index("</table:table>")]
        buf = io.BytesIO()
        with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
            for name in ("mimetype", "META-INF/manifest.xml"):
                z.writestr(name, src.read(name))
            z.writestr("content.xml", cut)
    write("ods-content-cut-inside-the-table.ods", buf.getvalue())


def write_many_styles(name, count):
    """A good workbook whose styles.xml lists `count` empty cell formats (<xf/>)."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED, compresslevel=9) as z:
        write_parts(z, [("Section A", sheet_xml(table(HEADER, ROWS)))])
        z.writestr("xl/styles.xml",
                   '<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
                   f'<cellXfs count="{count}">' + "<xf/>" * count + "</cellXfs></styleSheet>")
    write(name, buf.getvalue())


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
    import sys
    if sys.argv[1:] == ["hostile"]:  # only the files of issue 20 (no msoffcrypto-tool needed)
        write_hostile_xls()
        write_hostile_ods()
        write_many_styles("xlsx-3-million-styles.xlsx", 3_000_000)
    else:
        main()
