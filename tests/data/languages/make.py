#!/usr/bin/env python3
"""Writes the LibreOffice-saved class files in this folder. Run once; the files are committed.

    python3 tests/data/languages/make.py      # needs LibreOffice (soffice) on PATH or in $SOFFICE

One invented class, typed as flat ODS files (a .fods each, written here): in English with a
one-row header (en.fods), and in German, Spanish and French with a two-row header whose group
names are merged cells over sub-headers (de.fods, es.fods, fr.fods), with the language's words,
a withdrawal word in the notes, a melting range typed as text with the language's separator and
decimal commas, and the section and assistant in the title row. LibreOffice Calc converts each
to .xlsx, .ods and .xls (the filters of File > Save As). tests/integration/languages.rs grades
every file and compares it with the English twin.

All names, ids and measurements are invented. Standard library only.
"""
import os
import shlex
import shutil
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
SOFFICE = os.environ.get("SOFFICE") or shutil.which("soffice") or "/usr/bin/soffice"
FILTERS = {"xlsx": "xlsx:Calc MS Excel 2007 XML", "ods": "ods:calc8", "xls": "xls:MS Excel 97"}

# id, name, bench, crude g, recovered g, reported %, melting range (onset, clear), notes key
CLASS = [
    ("5101", "Ilka Sorensen", 1, "2.514", "1.834", "73.0", ("120.5", "122.0"), ""),
    ("5102", "Tomas Reyes", 2, "3.108", "2.291", "73.7", ("121.0", "122.2"), ""),
    ("5103", "Amara Quist", 3, "2.750", "0.745", "27.1", ("119.0", "121.5"), ""),
    ("5104", "Lior Bakker", 4, "2.900", "3.010", "103.8", ("118.5", "121.0"), ""),
    ("5105", "Noor Fielding", 5, "2.600", "1.900", "73.1", ("122.5", "121.9"), ""),
    ("5106", "Rafe Ulloa", 6, None, None, None, None, "W"),
    ("5107", "Sune Mbeki", 7, "2.800", "0", None, None, "S"),
    ("5108", "Vera Castell", 8, "2.450", "1.800", "73.5", ("120.8", "122.0"), ""),
]

LANGS = {
    "en": dict(
        title="Recrystallization of benzoic acid \u2014 Section 4 (TA: J. Ortiz)",
        upper=["Student ID", "Name", "Bench", "Crude mass (g)", "Recovered mass (g)",
               "% Recovery", "Melting range (\u00b0C)", "Notes"],
        lower=None, sep="-", comma=False,
        withdrawn="withdrawn", sentence="dropped filter paper in sink"),
    "de": dict(
        title="Umkristallisation von Benzoes\u00e4ure \u2014 Sektion 4 (Betreuer: J. Ortiz)",
        upper=["Matrikelnummer", "Name", "Platz", "Masse (g)", None, "Ausbeute (%)",
               "Schmelzbereich (\u00b0C)", "Bemerkungen"],
        lower=["", "", "", "Rohprodukt", "Ausbeute", "", "", ""], sep=" bis ", comma=True,
        withdrawn="abgemeldet", sentence="Filterpapier ins Waschbecken fallen gelassen"),
    "es": dict(
        title="Recristalizaci\u00f3n del \u00e1cido benzoico \u2014 Secci\u00f3n 4 (Asistente: J. Ortiz)",
        upper=["Matr\u00edcula", "Nombre", "Mesa", "Masa (g)", None, "% Recuperaci\u00f3n",
               "Punto de fusi\u00f3n (\u00b0C)", "Observaciones"],
        lower=["", "", "", "Cruda", "Recuperada", "", "", ""], sep=" a ", comma=True,
        withdrawn="baja", sentence="se le cay\u00f3 el papel de filtro al fregadero"),
    "fr": dict(
        title="Recristallisation de l'acide benzo\u00efque \u2014 Section 4 (Encadrant : J. Ortiz)",
        upper=["Num\u00e9ro \u00e9tudiant", "Nom", "Paillasse", "Masse (g)", None, "Rendement (%)",
               "Point de fusion (\u00b0C)", "Remarques"],
        lower=["", "", "", "Brute", "Purifi\u00e9e", "", "", ""], sep=" \u00e0 ", comma=True,
        withdrawn="d\u00e9sinscrit", sentence="a renvers\u00e9 le papier filtre dans l'\u00e9vier"),
}

NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
      'xmlns:style="urn:oasis:names:tc:opendocument:xmlns:style:1.0" '
      'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" '
      'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
      'xmlns:fo="urn:oasis:names:tc:opendocument:xmlns:xsl-fo-compatible:1.0"')


def esc(s):
    return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")


def text(s):
    return f'<table:table-cell office:value-type="string"><text:p>{esc(s)}</text:p></table:table-cell>'


def num(v, shown):
    return (f'<table:table-cell office:value-type="float" office:value="{v}">'
            f'<text:p>{esc(shown)}</text:p></table:table-cell>')


def empty():
    return "<table:table-cell/>"


def row(cells):
    return "<table:table-row>" + "".join(cells) + "</table:table-row>"


def header_rows(lang):
    upper, lower = lang["upper"], lang["lower"]
    if lower is None:
        return [row([text(h) for h in upper])]
    cells = []
    i = 0
    while i < len(upper):
        span = 1
        while i + span < len(upper) and upper[i + span] is None:
            span += 1
        if span > 1:  # a group name merged over its sub-headers
            cells.append(f'<table:table-cell table:number-columns-spanned="{span}" '
                         f'office:value-type="string"><text:p>{esc(upper[i])}</text:p>'
                         f'</table:table-cell>')
            cells.extend("<table:covered-table-cell/>" for _ in range(span - 1))
        else:
            cells.append(text(upper[i]))
        i += span
    return [row(cells), row([text(t) if t else empty() for t in lower])]


def student_row(s, lang):
    sid, name, bench, crude, rec, pct, mp, note = s
    shown = (lambda v: v.replace(".", ",")) if lang["comma"] else (lambda v: v)
    cells = [text(sid), text(name), num(bench, str(bench))]
    for v in (crude, rec, pct):
        cells.append(num(v, shown(v)) if v is not None else empty())
    cells.append(text(shown(mp[0]) + lang["sep"] + shown(mp[1])) if mp else empty())
    notes = {"W": lang["withdrawn"], "S": lang["sentence"]}.get(note, note)
    cells.append(text(notes) if notes else empty())
    return row(cells)


def fods(lang):
    rows = [row([text(lang["title"])]), row([empty()])]
    rows += header_rows(lang)
    rows += [student_row(s, lang) for s in CLASS]
    body = "\n".join(rows)
    return (f'<?xml version="1.0" encoding="UTF-8"?>\n<office:document {NS} office:version="1.3" '
            f'office:mimetype="application/vnd.oasis.opendocument.spreadsheet"><office:body>'
            f'<office:spreadsheet><table:table table:name="Exp4">{body}</table:table>'
            f'</office:spreadsheet></office:body></office:document>\n')


def convert(profile, src, target, outdir):
    cmd = [SOFFICE, f"-env:UserInstallation=file://{profile}", "--headless", "--norestore",
           "--convert-to", FILTERS[target], "--outdir", outdir, src]
    print("+", shlex.join(cmd[:1] + cmd[2:]), flush=True)
    env = dict(os.environ, LC_ALL="C.UTF-8", LANG="C.UTF-8", TZ="UTC")
    subprocess.run(cmd, check=True, env=env, stdout=subprocess.DEVNULL)


def main():
    profile = tempfile.mkdtemp(prefix="bg-lo-profile-")
    try:
        for code, lang in LANGS.items():
            src = os.path.join(HERE, f"{code}.fods")
            with open(src, "w", encoding="utf-8") as f:
                f.write(fods(lang))
            for target in ("xlsx", "ods", "xls"):
                convert(profile, src, target, HERE)
                out = os.path.join(HERE, f"{code}.{target}")
                if not os.path.getsize(out):
                    sys.exit(f"{out} is empty")
    finally:
        shutil.rmtree(profile, ignore_errors=True)


if __name__ == "__main__":
    main()
