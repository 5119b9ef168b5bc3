#!/usr/bin/env python3
"""Writes an invented term kept as one CSV file per section, for bench/term.sh.

    python3 bench/make_term.py DIR [FILES] [STUDENTS]      (defaults 120 40)

Every file is one section of an invented course: ids, invented names, bench, masses, solvent
volume and a melting range, with a small share of wet, impure and impossible rows. The same
arguments give the same files (a fixed seed).
"""
import os
import random
import sys

FIRST = ["Ada", "Bram", "Cleo", "Dario", "Esme", "Farid", "Greta", "Hugo", "Ines", "Jonah",
         "Kaia", "Lior", "Mina", "Nils", "Odile", "Pavel", "Quinn", "Rosa", "Soren", "Tamsin"]
LAST = ["Abernethy", "Brightwater", "Castellan", "Dunmore", "Elsworth", "Fairlie", "Galloway",
        "Hartigan", "Ivers", "Jessop", "Kirkland", "Lowther", "Marchetti", "Norcross", "Ormsby"]


def main():
    out = sys.argv[1]
    files = int(sys.argv[2]) if len(sys.argv) > 2 else 120
    students = int(sys.argv[3]) if len(sys.argv) > 3 else 40
    rng = random.Random(42)
    os.makedirs(out, exist_ok=True)
    sid = 2400000
    for f in range(files):
        lines = ["Student ID,Name,Bench,Crude mass (g),Recovered mass (g),"
                 "Solvent volume (mL),MP range (°C)"]
        for _ in range(students):
            sid += 1
            crude = round(rng.uniform(0.8, 1.2), 3)
            share = rng.uniform(0.45, 0.9) if rng.random() > 0.03 else rng.uniform(1.0, 1.2)
            rec = round(crude * share, 3)
            lo = round(rng.uniform(118.0, 122.0) if rng.random() > 0.1 else rng.uniform(110, 118), 1)
            hi = round(lo + rng.uniform(0.4, 3.0), 1)
            name = f"{rng.choice(LAST)}, {rng.choice(FIRST)}"
            lines.append(f'{sid},"{name}",{rng.randint(1, 12)},{crude},{rec},'
                         f'{round(rng.uniform(8, 25), 1)},{lo}-{hi}')
        with open(os.path.join(out, f"section-{f + 1:03}.csv"), "w", encoding="utf-8") as fh:
            fh.write("\n".join(lines) + "\n")


if __name__ == "__main__":
    main()
