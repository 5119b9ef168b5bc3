#!/usr/bin/env python3
"""Writes the class files of the whole experiment in this folder. Run once; the files are committed.

    python3 tests/data/experiment-files/make.py     # needs LibreOffice (soffice) on PATH or in $SOFFICE

Four invented sections, each kept one of the ways courses run the experiment (crude and
recrystallized ranges; masses weighed by difference; two capillaries; unknowns with a mixed
melting point), are typed as CSV text here and opened and saved by LibreOffice Calc (headless)
as .xlsx, .ods and .xls, cells typed by its import (numbers as numbers, ranges as text). The
answer key is key.csv. All names, IDs and measurements are invented. Standard library only.
"""
import os
import shutil
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
SOFFICE = os.environ.get("SOFFICE") or shutil.which("soffice") or "/usr/bin/soffice"

SECTIONS = {
    "crude-recryst": (
        "Student ID,Name,Crude (g),Recryst. mass (g),Crude mp (°C),Recryst. mp (°C)\n"
        "E101,Ines Varga,3.02,2.31,114.0-119.5,120.6-121.9\n"
        "E102,Tomas Reyes,3.00,2.10,120.0-122.0,119.5-121.8\n"
        "E103,Ada Kowal,2.80,1.96,115.5-119.0,121.0-122.1\n"
    ),
    "by-difference": (
        "Student ID,Name,Empty vial (g),Vial + crude (g),Vial + crystals (g),Recovered mass (g),MP range\n"
        "E201,Jun Okada,12.105,15.432,14.210,2.105,121.0-122.0\n"
        "E202,Mira Lund,12.105,15.432,14.210,2.150,121.0-122.0\n"
        "E203,Pavel Dane,12.105,11.900,14.000,,121.0-122.0\n"
    ),
    "capillaries": (
        "Student ID,Name,Crude (g),Recovered (g),mp Trial 1,mp Trial 2\n"
        "E301,Sofia Brandt,3.0,2.0,120.5-121.8,120.9-122.4\n"
        "E302,Omar Haddad,3.0,2.0,119.0-120.0,121.5-122.4\n"
        "E303,Lea Marin,3.0,2.0,121.0-122.0,\n"
    ),
    "unknowns": (
        "Student ID,Name,Unknown #,Identified as,Crude (g),Recovered (g),Recryst. mp (°C),Mixed mp (°C)\n"
        "E401,Noor Salem,U-1,acetanilide,3.0,2.0,113.5-114.6,113.2-114.5\n"
        "E402,Kai Berg,U-2,acetanilide,3.0,2.0,120.8-122.0,108.0-115.0\n"
        "E403,Rita Sousa,U-2,,3.0,2.0,120.8-122.0,\n"
    ),
}
KEY = "Unknown #,Compound\nU-1,acetanilide\nU-2,benzoic acid\n"
FILTERS = {"xlsx": "xlsx:Calc MS Excel 2007 XML", "ods": "ods:calc8", "xls": "xls:MS Excel 97"}


def main():
    with open(os.path.join(HERE, "key.csv"), "w", encoding="utf-8", newline="") as f:
        f.write(KEY)
    profile = tempfile.mkdtemp(prefix="bg-lo-profile-")
    out = tempfile.mkdtemp(prefix="bg-lo-out-")
    env = dict(os.environ, LC_ALL="C.UTF-8", LANG="C.UTF-8", TZ="UTC")
    for name, text in SECTIONS.items():
        os.makedirs(os.path.join(HERE, "csv"), exist_ok=True)
        src = os.path.join(HERE, "csv", f"{name}.csv")
        with open(src, "w", encoding="utf-8", newline="") as f:
            f.write(text)
        for ext, flt in FILTERS.items():
            subprocess.run([SOFFICE, f"-env:UserInstallation=file://{profile}", "--headless",
                            "--infilter=CSV:44,34,76,1", "--convert-to", flt, "--outdir", out, src],
                           check=True, env=env, stdout=subprocess.DEVNULL)
            os.makedirs(os.path.join(HERE, ext), exist_ok=True)
            shutil.move(os.path.join(out, f"{name}.{ext}"), os.path.join(HERE, ext, f"{name}.{ext}"))
    shutil.rmtree(profile, ignore_errors=True)
    shutil.rmtree(out, ignore_errors=True)
    print("wrote", HERE)


if __name__ == "__main__":
    sys.exit(main())
