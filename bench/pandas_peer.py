#!/usr/bin/env python3
"""The reference peer for the benchmark: what a competent analyst would write with pandas to do
benchgrade's core job on the benchmark class (examples/make_class.rs): read every section sheet
with the calamine engine, recompute recovery, range width and depression, flag impossible and
suspicious rows, score them on the default rubric's bands, compute per-section statistics, and
write a graded workbook (xlsxwriter, constant-memory) and a results CSV.

It knows the benchmark layout (title row, blank row, header on row 3) instead of finding
tables, and leaves out what pandas has no ready answer for (van 't Hoff purity, calibration,
outliers, the cohort report), so it does less than benchgrade: a generous peer.

    python3 bench/pandas_peer.py CLASS.xlsx OUT_DIR

Needs pandas, python-calamine, xlsxwriter and scipy.
"""
import os
import sys

import numpy as np
import pandas as pd
from scipy import stats

REFERENCE_MP_C = 122.4  # benzoic acid, as in the default rubric
TOLERANCE_C = 1.0
COLUMNS = {
    "Student ID": "student_id",
    "Name": "student_name",
    "Bench": "bench",
    "Crude mass (g)": "crude_mass_g",
    "Recovered mass (g)": "recovered_mass_g",
    "Solvent volume (mL)": "solvent_volume_ml",
    "MP range (°C)": "mp_range",
    "% Recovery": "reported_recovery_pct",
}


def band(values, edges, points):
    """Points for each value: the first band whose upper edge is not passed."""
    return pd.Series(np.select([values <= e for e in edges], points, default=0.0), index=values.index)


def grade(df):
    for c in ["crude_mass_g", "recovered_mass_g", "solvent_volume_ml", "reported_recovery_pct"]:
        df[c + "_raw"] = df[c]
        df[c] = pd.to_numeric(df[c], errors="coerce")
    parts = df["mp_range"].astype(str).str.extract(r"^\s*([-\d.]+)\s*[-–]\s*([-\d.]+)\s*$")
    df["mp_onset_c"] = pd.to_numeric(parts[0], errors="coerce")
    df["mp_clear_c"] = pd.to_numeric(parts[1], errors="coerce")
    df["recovery_pct"] = df["recovered_mass_g"] / df["crude_mass_g"] * 100
    df["range_width_c"] = df["mp_clear_c"] - df["mp_onset_c"]
    df["depression_c"] = REFERENCE_MP_C - df["mp_clear_c"]
    flags = {
        "recovery-over-100": df["recovered_mass_g"] > df["crude_mass_g"],
        "range-inverted": df["mp_onset_c"] > df["mp_clear_c"],
        "above-reference": df["mp_clear_c"] > REFERENCE_MP_C + TOLERANCE_C,
        "nonpositive-mass": (df["crude_mass_g"] <= 0) | (df["recovered_mass_g"] <= 0),
        "unreadable-value": df["recovered_mass_g"].isna() & df["recovered_mass_g_raw"].notna(),
        "missing-value": df[["student_id", "crude_mass_g_raw", "recovered_mass_g_raw", "mp_range"]].isna().any(axis=1),
        "duplicate-student": df.duplicated(["section", "student_id"]),
        "recovery-mismatch": (df["reported_recovery_pct"] - df["recovery_pct"]).abs() > 1.0,
        "likely-wet": (df["recovery_pct"] > 95) & (df["range_width_c"] > 2.0),
        "likely-impure": (df["depression_c"] > 2.0) & (df["range_width_c"] > 2.0),
    }
    codes = pd.DataFrame(flags).fillna(False)
    df["flags"] = codes.apply(lambda r: ";".join(sorted(k for k, v in r.items() if v)), axis=1)
    impossible = codes[["recovery-over-100", "range-inverted", "above-reference", "nonpositive-mass",
                        "unreadable-value", "missing-value", "duplicate-student"]].any(axis=1)
    df["impossible"] = impossible
    df["points_recovery"] = band(df["recovery_pct"], [50, 65, 75, 90, 100], [12, 24, 36, 40, 30])
    df["points_range"] = band(df["range_width_c"], [1.0, 2.0, 3.0, 5.0], [25, 20, 12, 5])
    df["points_depression"] = band(df["depression_c"], [0.5, 1.0, 2.0, 4.0], [25, 23.5, 15, 6])
    df["points_reporting"] = np.where(codes["recovery-mismatch"], 0.0, 10.0)
    total = df[["points_recovery", "points_range", "points_depression", "points_reporting"]].sum(axis=1)
    df["score"] = np.where(impossible, np.minimum(total, 50.0), total)
    df["letter"] = pd.cut(df["score"], [-1, 60, 70, 80, 90, 101], labels=list("FDCBA"), right=False)
    return df


def section_stats(df):
    rows = []
    usable = df[~df["impossible"]]
    for section, g in usable.groupby("section", sort=True):
        for measure in ["recovery_pct", "range_width_c", "depression_c", "score"]:
            v = g[measure].dropna()
            n = len(v)
            mean, sd = v.mean(), v.std(ddof=1)
            sem = sd / np.sqrt(n) if n > 1 else np.nan
            half = stats.t.ppf(0.975, n - 1) * sem if n > 1 else np.nan
            rows.append({
                "section": section, "measure": measure, "n": n, "mean": mean, "sd": sd, "sem": sem,
                "median": v.median(), "q1": v.quantile(0.25), "q3": v.quantile(0.75),
                "min": v.min(), "max": v.max(), "ci95_low": mean - half, "ci95_high": mean + half,
            })
    return pd.DataFrame(rows)


def main():
    src, out = sys.argv[1], sys.argv[2]
    os.makedirs(out, exist_ok=True)
    sheets = pd.read_excel(src, sheet_name=None, header=2, engine="calamine", dtype=object)
    frames = []
    for name, sheet in sheets.items():
        sheet = sheet.rename(columns=COLUMNS)
        sheet["section"] = name
        sheet["row"] = np.arange(len(sheet)) + 4
        frames.append(sheet)
    df = grade(pd.concat(frames, ignore_index=True))
    st = section_stats(df)
    keep = ["student_id", "student_name", "bench", "crude_mass_g_raw", "recovered_mass_g_raw",
            "solvent_volume_ml_raw", "mp_range", "reported_recovery_pct_raw", "recovery_pct",
            "range_width_c", "depression_c", "mp_onset_c", "mp_clear_c", "points_recovery",
            "points_range", "points_depression", "points_reporting", "score", "letter", "flags"]
    with pd.ExcelWriter(os.path.join(out, "graded.xlsx"), engine="xlsxwriter",
                        engine_kwargs={"options": {"constant_memory": True}}) as xw:
        for section, g in df.groupby("section", sort=True):
            g[keep].to_excel(xw, sheet_name=section, index=False)
        st.to_excel(xw, sheet_name="Statistics", index=False)
    df.drop(columns=["impossible"]).to_csv(os.path.join(out, "results.csv"), index=False)
    st.to_csv(os.path.join(out, "section-stats.csv"), index=False)
    print(f"{len(df)} rows, {int(df['impossible'].sum())} impossible")


if __name__ == "__main__":
    main()
