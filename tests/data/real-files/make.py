#!/usr/bin/env python3
"""Writes the LibreOffice-saved spreadsheet fixtures in this folder. Run once; the files are committed.

    python3 tests/data/real-files/make.py      # needs LibreOffice (soffice) on PATH or in $SOFFICE

The class is typed once, as a flat ODS file (class.fods, written here by hand so that every cell
carries a real spreadsheet number format), and LibreOffice Calc itself converts it to .xlsx, .ods,
.xls and a "Save As CSV" .csv. two-mass-columns.fods -> .xlsx is the same, smaller. After
converting, the script opens every output and checks that it holds what was typed (percent cells
stored as fractions with a percent format, and so on); it exits non-zero if anything is off.

All names, IDs, the course and the measurements are invented. Standard library only.
"""
import csv
import io
import os
import re
import shlex
import shutil
import subprocess
import sys
import tempfile
import zipfile
import xml.etree.ElementTree as ET
from decimal import Decimal, ROUND_HALF_UP

HERE = os.path.dirname(os.path.abspath(__file__))
SOFFICE = os.environ.get("SOFFICE") or shutil.which("soffice") or "/usr/bin/soffice"

# Fixed document dates written into the .fods meta (LibreOffice may still stamp its own on save).
CREATED = "2024-10-08T16:42:00"
MODIFIED = "2024-10-15T09:05:00"
AUTHOR = "M. Ferreira"

# LibreOffice filter names and the CSV export options of File > Save As > Text CSV with the
# dialog's defaults on a UTF-8 system: field separator ',' (44), text delimiter '"' (34),
# UTF-8 (76), line 1, no column formats, language 0, quote all text cells off, (import-only
# token), save cell contents as shown ON, export formulas off, remove spaces off. A 12th token
# (sheet number N) would make soffice name the output "class-Sec 07.csv"; without it soffice
# writes the first sheet to class.csv.
FILTERS = {
    "xlsx": "xlsx:Calc MS Excel 2007 XML",
    "ods": "ods:calc8",
    "xls": "xls:MS Excel 97",
    "csv": "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,true,false,false",
}

TITLE = "CHEM 2150 Recrystallization \u2014 Section 07 (TA: M. Ferreira)"
HEADER = ["Last name", "First name", "Student ID", "Bench", "Crude mass", "Recovered mass",
          "Water used", "MP range", "% Recovery", "Status", "TA notes"]
UNITS = ["", "", "", "", "(g)", "mg", "mL", "\u00b0C", "%", "", ""]

# One row per student. crude: grams (typed as shown, format 0.000); rec: milligrams; water: mL;
# mp: the text the TA typed; pct: the recovery the TA typed, in percent, with its shown format
# ("0.0%" or "0%"); the cell holds pct/100. None = empty cell.
S = dict
STUDENTS = [
    S(last="Abernathy", first="Lena", id="S0702141", bench=1, crude="2.514", rec=1834, water="35",
      mp="120.5-122.0", pct="73.0", fmt="0.0%", status=None, notes=None),
    S(last="Castellanos", first="Rub\u00e9n", id="S0702157", bench=1, crude="3.108", rec=2291,
      water="48", mp="121.0-122.2", pct="73.7", fmt="0.0%", status=None, notes=None),
    S(last="Dlamini", first="Thandi", id="S0702166", bench=2, crude="2.245", rec=1402, water="30",
      mp="116.0-119.5", pct="62.4", fmt="0.0%", status=None,
      notes="oiled out once, reheated with more water"),
    S(last="Gallagher", first="Owen", id="S0702173", bench=2, crude=None, rec=None, water=None,
      mp=None, pct=None, fmt=None, status="W", notes=None),
    S(last="Haddad", first="Samir", id="S0702188", bench=3, crude="2.870", rec=2148, water="42.5",
      mp="121.2", pct="74.8", fmt="0.0%", status=None, notes=None),
    S(last="Ishikawa", first="Ren", id="S0702190", bench=3, crude="3.402", rec=2705, water="55",
      mp="120.8-122.1", pct="80", fmt="0%", status=None, notes=None),
    S(last="Kowalczyk", first="Marta", id="S0702204", bench=4, crude="2.033", rec=1702, water="25",
      mp="117.5-120.0", pct="83.7", fmt="0.0%", status=None,
      notes="crystals still damp at weighing"),
    S(last="Lindqvist", first="Zo\u00eb", id="S0702219", bench=4, crude="2.761", rec=1988,
      water="38", mp="124.5-123.5", pct="72.0", fmt="0.0%", status=None, notes=None),
    S(last="N\u00fa\u00f1ez", first="Pilar", id="S0702225", bench=5, crude="2.390", rec=1655,
      water="33", mp="119.8-121.5", pct="69.2", fmt="0.0%", status="excused",
      notes="fire alarm during drying; excused by instructor"),
    S(last="Obi", first="Daniel", id="S0702232", bench=5, crude=None, rec=None, water=None,
      mp=None, pct=None, fmt=None, status=None, notes="absent"),
    S(last="Park", first="Jisoo", id="S0702247", bench=6, crude="2.655", rec=1873, water="40",
      mp="120.9-122.3", pct="76.8", fmt="0.0%", status=None,
      notes="re-weighed after drying, first reading 2.040 g"),
    S(last="Park", first="Minho", id="S0702251", bench=6, crude="3.017", rec=2260, water="52",
      mp="121.4-122.4", pct="74.9", fmt="0.0%", status=None, notes=None),
    S(last="Quintero", first="Sofia", id="S0702266", bench=7, crude="2.148", rec=1522, water="28",
      mp="118.2-121.9", pct="71", fmt="0%", status=None, notes=None),
    S(last="Varga", first="Bence", id="S0702270", bench=7, crude="3.295", rec=2497, water="60",
      mp="121.1-122.3", pct="75.8", fmt="0.0%", status=None, notes=None),
]
DISAGREE = {"S0702247"}  # the reported recovery does not match recovered / crude

FIRST_DATA_ROW = 5  # spreadsheet row number of the first student (title, empty, header, units)
LAST_DATA_ROW = FIRST_DATA_ROW + len(STUDENTS) - 1
AVERAGE_ROW = LAST_DATA_ROW + 2

TWO_HEADER = ["ID", "Name", "Mass (g)", "Mass (g)", "MP (\u00b0C)"]
TWO_ROWS = [  # id, name, crude g, recovered g, mp text
    ("T-01", "Ilse Marchetti", "2.512", "1.904", "121.0-122.1"),
    ("T-02", "Bram Oyelaran", "3.045", "2.318", "120.6-121.9"),
    ("T-03", "Kalani Brennan", "2.278", "1.511", "117.9-120.4"),
    ("T-04", "Yusra Delacroix", "2.890", "2.207", "121.3-122.2"),
    ("T-05", "Teodor Halvorsen", "2.634", "1.872", "120.2-121.8"),
]

# ---------------------------------------------------------------------------- self-consistency


def computed_pct(s):
    """recovered / crude in percent (rec is mg, crude g)."""
    return Decimal(s["rec"]) / Decimal(s["crude"]) / 10


def shown(value, places):
    q = Decimal(1).scaleb(-places)
    return value.quantize(q, rounding=ROUND_HALF_UP)


def check_table():
    for s in STUDENTS:
        if s["pct"] is None:
            continue
        places = 1 if s["fmt"] == "0.0%" else 0
        agrees = shown(computed_pct(s), places) == Decimal(s["pct"])
        assert agrees == (s["id"] not in DISAGREE), (s["id"], computed_pct(s), s["pct"])
    assert len({s["id"] for s in STUDENTS}) == len(STUDENTS)


def fraction(pct):
    """'72.9' -> '0.729', exactly, as the spreadsheet stores a typed 72.9%."""
    return format((Decimal(pct) / 100).normalize(), "f")


def average(values):
    vals = [Decimal(v) for v in values if v is not None]
    return sum(vals) / len(vals)


# ---------------------------------------------------------------------------- flat ODS writer

NS = {
    "office": "urn:oasis:names:tc:opendocument:xmlns:office:1.0",
    "style": "urn:oasis:names:tc:opendocument:xmlns:style:1.0",
    "text": "urn:oasis:names:tc:opendocument:xmlns:text:1.0",
    "table": "urn:oasis:names:tc:opendocument:xmlns:table:1.0",
    "fo": "urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0",
    "dc": "http://purl.org/dc/elements/1.1/",
    "meta": "urn:oasis:names:tc:opendocument:xmlns:meta:1.0",
    "number": "urn:oasis:names:tc:opendocument:xmlns:datastyle:1.0",
    "of": "urn:oasis:names:tc:opendocument:xmlns:of:1.2",
}


def esc(s):
    return (s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
            .replace('"', "&quot;"))


def c_text(s, style=None):
    st = f' table:style-name="{style}"' if style else ""
    return f'<table:table-cell{st} office:value-type="string"><text:p>{esc(s)}</text:p></table:table-cell>'


def c_num(value, display, style=None):
    st = f' table:style-name="{style}"' if style else ""
    return (f'<table:table-cell{st} office:value-type="float" office:value="{value}">'
            f'<text:p>{esc(display)}</text:p></table:table-cell>')


def c_pct(value, display, style):
    return (f'<table:table-cell table:style-name="{style}" office:value-type="percentage" '
            f'office:value="{value}"><text:p>{esc(display)}</text:p></table:table-cell>')


def c_formula(formula, value, display, style):
    return (f'<table:table-cell table:style-name="{style}" table:formula="{esc(formula)}" '
            f'office:value-type="float" office:value="{value}"><text:p>{esc(display)}</text:p>'
            f'</table:table-cell>')


def c_empty(n=1):
    return '<table:table-cell/>' if n == 1 else f'<table:table-cell table:number-columns-repeated="{n}"/>'


def row(cells):
    return "<table:table-row>" + "".join(cells) + "</table:table-row>"


def fods(sheet_name, widths_cm, rows, title):
    ns = " ".join(f'xmlns:{k}="{v}"' for k, v in NS.items())
    cols = "".join(f'<style:style style:name="co{i}" style:family="table-column">'
                   f'<style:table-column-properties fo:break-before="auto" '
                   f'style:column-width="{w}cm"/></style:style>' for i, w in enumerate(widths_cm))
    colrefs = "".join(f'<table:table-column table:style-name="co{i}" '
                      f'table:default-cell-style-name="Default"/>' for i in range(len(widths_cm)))
    return f"""<?xml version="1.0" encoding="UTF-8"?>
<office:document {ns} office:version="1.3" office:mimetype="application/vnd.oasis.opendocument.spreadsheet">
 <office:meta>
  <dc:title>{esc(title)}</dc:title>
  <meta:initial-creator>{AUTHOR}</meta:initial-creator>
  <dc:creator>{AUTHOR}</dc:creator>
  <meta:creation-date>{CREATED}</meta:creation-date>
  <dc:date>{MODIFIED}</dc:date>
  <meta:editing-cycles>1</meta:editing-cycles>
  <meta:editing-duration>PT0S</meta:editing-duration>
 </office:meta>
 <office:styles>
  <style:style style:name="Default" style:family="table-cell"/>
 </office:styles>
 <office:automatic-styles>
  {cols}
  <style:style style:name="ta1" style:family="table"><style:table-properties table:display="true" style:writing-mode="lr-tb"/></style:style>
  <number:number-style style:name="N3dp"><number:number number:decimal-places="3" number:min-decimal-places="3" number:min-integer-digits="1"/></number:number-style>
  <number:number-style style:name="N0dp"><number:number number:decimal-places="0" number:min-decimal-places="0" number:min-integer-digits="1"/></number:number-style>
  <number:percentage-style style:name="P1dp"><number:number number:decimal-places="1" number:min-decimal-places="1" number:min-integer-digits="1"/><number:text>%</number:text></number:percentage-style>
  <number:percentage-style style:name="P0dp"><number:number number:decimal-places="0" number:min-decimal-places="0" number:min-integer-digits="1"/><number:text>%</number:text></number:percentage-style>
  <style:style style:name="ceTitle" style:family="table-cell" style:parent-style-name="Default"><style:text-properties fo:font-size="12pt" fo:font-weight="bold"/></style:style>
  <style:style style:name="ceHead" style:family="table-cell" style:parent-style-name="Default"><style:text-properties fo:font-weight="bold"/></style:style>
  <style:style style:name="ceUnit" style:family="table-cell" style:parent-style-name="Default"><style:text-properties fo:font-style="italic"/></style:style>
  <style:style style:name="ceG3" style:family="table-cell" style:parent-style-name="Default" style:data-style-name="N3dp"/>
  <style:style style:name="ceG0" style:family="table-cell" style:parent-style-name="Default" style:data-style-name="N0dp"/>
  <style:style style:name="ceP1" style:family="table-cell" style:parent-style-name="Default" style:data-style-name="P1dp"/>
  <style:style style:name="ceP0" style:family="table-cell" style:parent-style-name="Default" style:data-style-name="P0dp"/>
 </office:automatic-styles>
 <office:body>
  <office:spreadsheet>
   <table:table table:name="{esc(sheet_name)}" table:style-name="ta1">
    {colrefs}
    {chr(10).join('    ' + r for r in rows).lstrip()}
   </table:table>
  </office:spreadsheet>
 </office:body>
</office:document>
"""


def plain(d):
    """Decimal -> shortest plain decimal text ('42.50' -> '42.5')."""
    t = format(Decimal(d).normalize(), "f")
    return t


def class_rows():
    ncol = len(HEADER)
    rows = [row([c_text(TITLE, "ceTitle"), c_empty(ncol - 1)]),
            row([c_empty(ncol)]),
            row([c_text(h, "ceHead") for h in HEADER]),
            row([c_text(u, "ceUnit") if u else c_empty() for u in UNITS])]
    for s in STUDENTS:
        cells = [c_text(s["last"]), c_text(s["first"]), c_text(s["id"]),
                 c_num(s["bench"], str(s["bench"]))]
        cells.append(c_num(plain(s["crude"]), s["crude"], "ceG3") if s["crude"] else c_empty())
        cells.append(c_num(s["rec"], str(s["rec"])) if s["rec"] is not None else c_empty())
        cells.append(c_num(plain(s["water"]), plain(s["water"])) if s["water"] else c_empty())
        cells.append(c_text(s["mp"]) if s["mp"] else c_empty())
        if s["pct"]:
            style = "ceP1" if s["fmt"] == "0.0%" else "ceP0"
            cells.append(c_pct(fraction(s["pct"]), s["pct"] + "%", style))
        else:
            cells.append(c_empty())
        cells.append(c_text(s["status"]) if s["status"] else c_empty())
        cells.append(c_text(s["notes"]) if s["notes"] else c_empty())
        rows.append(row(cells))
    rows.append(row([c_empty(ncol)]))
    a, b = FIRST_DATA_ROW, LAST_DATA_ROW
    avg_crude = average([s["crude"] for s in STUDENTS])
    avg_rec = average([s["rec"] for s in STUDENTS])
    rows.append(row([c_text("Average"), c_empty(3),
                     c_formula(f"of:=AVERAGE([.E{a}:.E{b}])", float(avg_crude),
                               str(shown(avg_crude, 3)), "ceG3"),
                     c_formula(f"of:=AVERAGE([.F{a}:.F{b}])", float(avg_rec),
                               str(shown(avg_rec, 0)), "ceG0"),
                     c_empty(ncol - 6)]))
    return rows


def two_rows():
    rows = [row([c_text(h, "ceHead") for h in TWO_HEADER])]
    for i, name, crude, rec, mp in TWO_ROWS:
        rows.append(row([c_text(i), c_text(name), c_num(plain(crude), crude, "ceG3"),
                         c_num(plain(rec), rec, "ceG3"), c_text(mp)]))
    return rows


# ---------------------------------------------------------------------------- LibreOffice


def soffice(profile, target, src, outdir):
    cmd = [SOFFICE, f"-env:UserInstallation=file://{profile}", "--headless", "--norestore",
           "--convert-to", FILTERS[target] if target in FILTERS else target,
           "--outdir", outdir, src]
    print("+", shlex.join(cmd[:1] + cmd[2:]), flush=True)
    env = dict(os.environ, LC_ALL="C.UTF-8", LANG="C.UTF-8", TZ="UTC")
    subprocess.run(cmd, check=True, env=env, stdout=subprocess.DEVNULL)


def convert(profile, src, targets, outdir):
    tmp = tempfile.mkdtemp(prefix="bg-conv-")
    try:
        base = os.path.splitext(os.path.basename(src))[0]
        for t in targets:
            soffice(profile, t, src, tmp)
            produced = os.path.join(tmp, f"{base}.{t}")
            if not os.path.exists(produced):
                sys.exit(f"soffice did not produce {base}.{t}")
            shutil.move(produced, os.path.join(outdir, f"{base}.{t}"))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


# ---------------------------------------------------------------------------- verification

FAILS = []


def expect(cond, what):
    if not cond:
        FAILS.append(what)
        print("  FAIL:", what)


def col_letter(c):
    name = ""
    c += 1
    while c:
        c, r = divmod(c - 1, 26)
        name = chr(65 + r) + name
    return name


BUILTIN_FMT = {0: "General", 1: "0", 2: "0.00", 9: "0%", 10: "0.00%"}
X = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
R = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}"


def read_xlsx(path):
    """{'A1': (kind, value, numfmt, formula)} of the first sheet, plus the sheet name."""
    z = zipfile.ZipFile(path)
    wb = ET.fromstring(z.read("xl/workbook.xml"))
    sheet = wb.find(f"{X}sheets/{X}sheet")
    rels = ET.fromstring(z.read("xl/_rels/workbook.xml.rels"))
    target = next(r.get("Target") for r in rels if r.get("Id") == sheet.get(f"{R}id"))
    target = target.lstrip("/")
    if not target.startswith("xl/"):
        target = "xl/" + target
    shared = []
    if "xl/sharedStrings.xml" in z.namelist():
        for si in ET.fromstring(z.read("xl/sharedStrings.xml")):
            shared.append("".join(t.text or "" for t in si.iter(f"{X}t")))
    st = ET.fromstring(z.read("xl/styles.xml"))
    fmts = dict(BUILTIN_FMT)
    for nf in st.iter(f"{X}numFmt"):
        fmts[int(nf.get("numFmtId"))] = nf.get("formatCode")
    xfs = [int(xf.get("numFmtId", "0")) for xf in st.find(f"{X}cellXfs")]
    cells = {}
    for c in ET.fromstring(z.read(target)).iter(f"{X}c"):
        v = c.find(f"{X}v")
        f = c.find(f"{X}f")
        t = c.get("t", "n")
        fmt = fmts.get(xfs[int(c.get("s", "0"))], "?")
        if t == "s":
            val, kind = shared[int(v.text)], "s"
        elif t == "inlineStr":
            val, kind = "".join(x.text or "" for x in c.iter(f"{X}t")), "s"
        elif v is None:
            continue
        else:
            val, kind = v.text, t
        cells[c.get("r")] = (kind, val, fmt, f.text if f is not None else None)
    return sheet.get("name"), cells


def check_xlsx_class(path):
    print("checking", os.path.basename(path))
    name, cells = read_xlsx(path)
    expect(name == "Sec 07", f"xlsx sheet name {name!r}")
    expect(cells.get("A1", (0, 0))[1] == TITLE, "xlsx title A1")
    expect(not any(k.endswith("2") and k[:-1].isalpha() for k in cells), "xlsx row 2 empty")
    for i, h in enumerate(HEADER):
        expect(cells.get(f"{col_letter(i)}3", (0, None))[1] == h, f"xlsx header {h}")
    for i, u in enumerate(UNITS):
        got = cells.get(f"{col_letter(i)}4", (0, ""))[1]
        expect(got == u, f"xlsx unit {col_letter(i)}4 {got!r} != {u!r}")
    for n, s in enumerate(STUDENTS):
        r = FIRST_DATA_ROW + n
        get = lambda col: cells.get(f"{col}{r}")
        expect(get("A")[1] == s["last"] and get("B")[1] == s["first"], f"xlsx names row {r}")
        expect(get("C") == ("s", s["id"], "General", None), f"xlsx id row {r}: {get('C')}")
        if s["crude"]:
            expect(get("E")[0] == "n" and Decimal(get("E")[1]) == Decimal(s["crude"])
                   and get("E")[2] == "0.000", f"xlsx crude row {r}: {get('E')}")
            expect(get("F")[0] == "n" and Decimal(get("F")[1]) == s["rec"], f"xlsx rec row {r}")
            expect(get("G")[0] == "n" and Decimal(get("G")[1]) == Decimal(s["water"]),
                   f"xlsx water row {r}")
            expect(get("H") and get("H")[:2] == ("s", s["mp"]), f"xlsx mp row {r}")
        else:
            expect(all(get(c) is None for c in "EFGHI"), f"xlsx row {r} measurements empty")
        if s["pct"]:
            kind, val, fmt, _ = get("I")
            expect(kind == "n", f"xlsx I{r} is a number cell (t={kind})")
            expect(Decimal(val) == Decimal(fraction(s["pct"])), f"xlsx I{r} = {val}")
            expect(fmt == s["fmt"], f"xlsx I{r} numFmt {fmt!r} != {s['fmt']!r}")
        expect((get("J") or (0, None))[1] == s["status"], f"xlsx status row {r}")
        expect((get("K") or (0, None))[1] == s["notes"], f"xlsx notes row {r}")
    for r in range(LAST_DATA_ROW + 1, AVERAGE_ROW):
        expect(not any(re.fullmatch(rf"[A-Z]+{r}", k) for k in cells), f"xlsx row {r} empty")
    a = AVERAGE_ROW
    expect(cells.get(f"A{a}", (0, None))[1] == "Average", "xlsx Average label")
    for col, key, fmt in (("E", "crude", "0.000"), ("F", "rec", "0")):
        kind, val, f, formula = cells[f"{col}{a}"]
        want = average([s[key] for s in STUDENTS])
        expect(formula == f"AVERAGE({col}{FIRST_DATA_ROW}:{col}{LAST_DATA_ROW})",
               f"xlsx {col}{a} formula {formula!r}")
        expect(abs(Decimal(val) - want) < Decimal("1e-9"), f"xlsx {col}{a} value {val}")
        expect(f == fmt, f"xlsx {col}{a} format {f!r}")
    pcts = sorted({v[2] for k, v in cells.items() if k.startswith("I") and v[0] == "n"})
    print("  percent cells: number cells with formats", pcts)


def check_xlsx_two(path):
    print("checking", os.path.basename(path))
    name, cells = read_xlsx(path)
    for i, h in enumerate(TWO_HEADER):
        expect(cells.get(f"{col_letter(i)}1", (0, None))[1] == h, f"two: header {h}")
    for n, (i, nm, crude, rec, mp) in enumerate(TWO_ROWS):
        r = n + 2
        expect(cells[f"A{r}"][1] == i and cells[f"B{r}"][1] == nm, f"two: row {r} id/name")
        expect(cells[f"C{r}"][0] == "n" and Decimal(cells[f"C{r}"][1]) == Decimal(crude)
               and cells[f"C{r}"][2] == "0.000", f"two: C{r}")
        expect(cells[f"D{r}"][0] == "n" and Decimal(cells[f"D{r}"][1]) == Decimal(rec)
               and cells[f"D{r}"][2] == "0.000", f"two: D{r}")
        expect(cells[f"E{r}"][1] == mp, f"two: E{r}")
    expect(len(cells) == 5 * (1 + len(TWO_ROWS)), f"two: {len(cells)} cells")


def read_ods_content(root):
    """First table of an ODS content tree -> (name, {(row, col): (cell element, style name)}),
    1-based. A cell without table:style-name takes its column's table:default-cell-style-name
    (LibreOffice moves a column's most common cell style there when it saves)."""
    t = "{%s}" % NS["table"]
    table = next(root.iter(f"{t}table"))
    col_default = [None]
    for tcol in table.iter(f"{t}table-column"):
        n = int(tcol.get(f"{t}number-columns-repeated", "1"))
        col_default += [tcol.get(f"{t}default-cell-style-name")] * min(n, 1024)
    cells = {}
    r = 0
    for tr in table.iter(f"{t}table-row"):
        for _ in range(min(int(tr.get(f"{t}number-rows-repeated", "1")), 1024)):
            r += 1
            c = 0
            for tc in tr:
                if tc.tag not in (f"{t}table-cell", f"{t}covered-table-cell"):
                    continue
                for _ in range(min(int(tc.get(f"{t}number-columns-repeated", "1")), 1024)):
                    c += 1
                    if len(tc) or tc.get("{%s}value-type" % NS["office"]):
                        style = tc.get(f"{t}style-name") or (
                            col_default[c] if c < len(col_default) else None)
                        cells[(r, c)] = (tc, style)
    return table.get(f"{t}name"), cells


def ods_formats(*roots):
    """cell style name -> (data style element, decimal places), over content.xml and styles.xml"""
    st, nm = ("{%s}" % NS[k] for k in ("style", "number"))
    data, out = {}, {}
    for root in roots:
        for el in root.iter():
            if el.tag.startswith(nm) and el.tag.endswith("-style"):
                num = el.find(f"{nm}number")
                places = num.get(f"{nm}decimal-places") if num is not None else None
                data[el.get(f"{st}name")] = (el.tag[len(nm):], places)
    for root in roots:
        for el in root.iter(f"{st}style"):
            if el.get(f"{st}family") == "table-cell" and el.get(f"{st}data-style-name"):
                out[el.get(f"{st}name")] = data.get(el.get(f"{st}data-style-name"))
    return out


def check_ods_class(path):
    print("checking", os.path.basename(path))
    z = zipfile.ZipFile(path)
    expect(z.read("mimetype") == b"application/vnd.oasis.opendocument.spreadsheet", "ods mimetype")
    content = ET.fromstring(z.read("content.xml"))
    styles_root = ET.fromstring(z.read("styles.xml"))
    fmts = ods_formats(content, styles_root)
    name, cells = read_ods_content(content)
    o, t, tx = ("{%s}" % NS[k] for k in ("office", "table", "text"))
    text = lambda r, c: "".join(cells[(r, c)][0].itertext()) if (r, c) in cells else None
    expect(name == "Sec 07", f"ods sheet name {name!r}")
    expect(text(1, 1) == TITLE, "ods title")
    expect(not any(k[0] == 2 for k in cells), "ods row 2 empty")
    expect([text(3, c + 1) for c in range(len(HEADER))] == HEADER, "ods header")
    for n, s in enumerate(STUDENTS):
        r = FIRST_DATA_ROW + n
        expect(text(r, 3) == s["id"], f"ods id row {r}")
        if s["crude"]:
            e = cells[(r, 5)][0]
            expect(e.get(f"{o}value-type") == "float"
                   and Decimal(e.get(f"{o}value")) == Decimal(s["crude"]), f"ods crude row {r}")
            expect(Decimal(cells[(r, 6)][0].get(f"{o}value")) == s["rec"], f"ods rec row {r}")
        if s["pct"]:
            e, style = cells[(r, 9)]
            expect(e.get(f"{o}value-type") == "percentage", f"ods I{r} value-type "
                   f"{e.get(o + 'value-type')!r}")
            expect(Decimal(e.get(f"{o}value")) == Decimal(fraction(s["pct"])),
                   f"ods I{r} value {e.get(o + 'value')}")
            want = ("percentage-style", "1" if s["fmt"] == "0.0%" else "0")
            got = fmts.get(style)
            expect(got == want, f"ods I{r} style {got} != {want}")
            expect(text(r, 9) == s["pct"] + "%", f"ods I{r} shown {text(r, 9)!r}")
        else:
            expect((r, 9) not in cells, f"ods I{r} empty")
        expect(text(r, 10) == s["status"] and text(r, 11) == s["notes"], f"ods J/K row {r}")
    e = cells[(AVERAGE_ROW, 5)][0]
    expect(e.get(f"{t}formula", "").endswith(f"AVERAGE([.E{FIRST_DATA_ROW}:.E{LAST_DATA_ROW}])"),
           f"ods average formula {e.get(t + 'formula')!r}")
    print("  percent cells: value-type",
          sorted({cells[(FIRST_DATA_ROW + n, 9)][0].get(f"{o}value-type")
                  for n, s in enumerate(STUDENTS) if s["pct"]}))


def expected_csv_rows():
    ncol = len(HEADER)
    rows = [[TITLE] + [""] * (ncol - 1), [""] * ncol, HEADER, UNITS]
    for s in STUDENTS:
        m = bool(s["crude"])
        rows.append([s["last"], s["first"], s["id"], str(s["bench"]),
                     s["crude"] if m else "", str(s["rec"]) if m else "",
                     plain(s["water"]) if m else "", s["mp"] or "",
                     s["pct"] + "%" if s["pct"] else "", s["status"] or "", s["notes"] or ""])
    rows.append([""] * ncol)
    rows.append(["Average", "", "", "", str(shown(average([s["crude"] for s in STUDENTS]), 3)),
                 str(shown(average([s["rec"] for s in STUDENTS]), 0))] + [""] * (ncol - 6))
    return rows


def check_csv(path):
    print("checking", os.path.basename(path))
    raw = open(path, "rb").read()
    expect(not raw.startswith(b"\xef\xbb\xbf"), "csv has no byte-order mark")
    got = list(csv.reader(io.StringIO(raw.decode("utf-8"), newline="")))
    want = expected_csv_rows()
    expect(len(got) == len(want), f"csv {len(got)} rows, want {len(want)}")
    for i, (g, w) in enumerate(zip(got, want)):
        expect(g == w, f"csv line {i + 1}: {g} != {w}")


def check_round_trip(profile, src, reference):
    """src (xls/xlsx/ods) -> csv with the same options, must equal the committed csv."""
    tmp = tempfile.mkdtemp(prefix="bg-back-")
    try:
        soffice(profile, "csv", src, tmp)
        out = os.path.join(tmp, os.path.splitext(os.path.basename(src))[0] + ".csv")
        same = open(out, "rb").read() == open(reference, "rb").read()
        print(f"checking {os.path.basename(src)} -> csv: {'identical' if same else 'DIFFERENT'}"
              " to class.csv")
        expect(same, f"{os.path.basename(src)} -> csv differs from class.csv")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


# ---------------------------------------------------------------------------- main


def main():
    check_table()
    widths = [2.8, 2.4, 2.4, 1.4, 2.2, 2.8, 2.2, 2.6, 2.2, 1.8, 7.5]
    class_fods = os.path.join(HERE, "class.fods")
    two_fods = os.path.join(HERE, "two-mass-columns.fods")
    with open(class_fods, "w", encoding="utf-8", newline="\n") as f:
        f.write(fods("Sec 07", widths, class_rows(), TITLE))
    with open(two_fods, "w", encoding="utf-8", newline="\n") as f:
        f.write(fods("Sheet1", [1.6, 4.0, 2.2, 2.2, 2.6], two_rows(), "Two mass columns"))
    version = subprocess.run([SOFFICE, "--version"], capture_output=True, text=True).stdout.strip()
    print("using", version)
    profile = tempfile.mkdtemp(prefix="bg-lo-profile-")
    try:
        convert(profile, class_fods, ["xlsx", "ods", "xls", "csv"], HERE)
        convert(profile, two_fods, ["xlsx"], HERE)
        check_xlsx_class(os.path.join(HERE, "class.xlsx"))
        check_ods_class(os.path.join(HERE, "class.ods"))
        check_csv(os.path.join(HERE, "class.csv"))
        for ext in ("xls", "xlsx", "ods"):
            check_round_trip(profile, os.path.join(HERE, f"class.{ext}"),
                             os.path.join(HERE, "class.csv"))
        check_xlsx_two(os.path.join(HERE, "two-mass-columns.xlsx"))
    finally:
        shutil.rmtree(profile, ignore_errors=True)
    if FAILS:
        sys.exit(f"{len(FAILS)} check(s) failed")
    print("all checks passed")


if __name__ == "__main__":
    main()
