//! Purity, recovery ceiling and apparatus calibration through the real binary.

use approx::assert_abs_diff_eq;

use crate::harness::{by_id, flags, num, Fixture};

const CLASS: &str =
    "ID,Bench,Crude mass (g),Recovered mass (g),Water (mL),MP onset (°C),MP clear (°C)\n\
                     a,3,1.00,0.70,25,119.0,120.0\n\
                     b,7,2.50,2.60,60,115.0,119.0\n\
                     c,9,3.00,2.10,60,114.0,119.0\n";

#[test]
fn calibration_file_corrects_readings_and_keeps_them() {
    let f = Fixture::new();
    f.write("class.csv", CLASS);
    // standards observed 81.0 -> certified 82.0 and 234.5 -> 236.0 on bench 3 (hand-worked:
    // b = 1.003257, a = 0.7362; a reading of 120.0 corrects to 121.13 °C)
    f.write("cal.csv", "Bench,Standard,Observed,Certified\n3,vanillin,81.0,82.0\n3,caffeine,234.5,236.0\n12,vanillin,80,82\n");
    let run = f.run(&[
        "grade",
        "class.csv",
        "--calibration",
        "cal.csv",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr.contains("row 4") && run.stderr.contains("\"12\" appears in no submission"),
        "{}",
        run.stderr
    );
    let rows = f.results("out");
    let a = by_id(&rows, "a");
    assert_abs_diff_eq!(num(a, "mp_clear_c").unwrap(), 121.13, epsilon = 0.005);
    assert_eq!(num(a, "mp_clear_observed_c"), Some(120.0));
    assert!(a["calibration"].contains("bench 3"), "{}", a["calibration"]);
    // 1.00 g in 25 mL: ceiling 95.75 %, least boiling water 17.8 mL (handbook solubilities, from memory)
    assert_abs_diff_eq!(num(a, "max_recovery_pct").unwrap(), 95.75, epsilon = 1e-9);
    assert_abs_diff_eq!(num(a, "min_solvent_ml").unwrap(), 17.76, epsilon = 0.01);
    assert!(by_id(&rows, "b")["calibration"].contains("no calibration for bench 7"));
}

#[test]
fn wet_and_impure_with_purity() {
    let f = Fixture::new();
    f.write("class.csv", CLASS);
    let run = f.run(&["grade", "class.csv", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    let b = by_id(&rows, "b");
    assert!(
        flags(b).contains(&"likely-wet") && !flags(b).contains(&"likely-impure"),
        "{:?}",
        flags(b)
    );
    let c = by_id(&rows, "c");
    assert!(flags(c).contains(&"likely-impure") && !flags(c).contains(&"likely-wet"));
    // 120.0 °C against 122.4 °C, ΔHfus 18.02 kJ/mol: ln x1 = -(18020/8.314462618)(1/393.15 - 1/395.55)
    // = -0.03345, x1 = 96.71 mol % (hand-worked)
    assert_abs_diff_eq!(
        num(by_id(&rows, "a"), "purity_mol_pct").unwrap(),
        96.71,
        epsilon = 0.01
    );
    assert!(by_id(&rows, "a")["purity_note"].contains("eutectic"));
    // 119.0 °C: ln x1 = -(18020/8.314462618)(1/392.15 - 1/395.55) = -0.04750, x1 = 95.36 mol %
    assert_abs_diff_eq!(num(c, "purity_mol_pct").unwrap(), 95.36, epsilon = 0.01);
}

#[test]
fn a_bad_calibration_file_is_reported_and_the_batch_graded_uncorrected() {
    let f = Fixture::new();
    f.write("class.csv", CLASS);
    f.write("cal.csv", "Bench,Standard,Observed,Certified\n3,vanillin,81.0,82.0\n3,caffeine,hot,236.0\n4,vanillin,81.0,\n5,x,120,121\n5,y,120,122\n");
    let run = f.run(&[
        "grade",
        "class.csv",
        "--calibration",
        "cal.csv",
        "--out",
        "out",
    ]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    for needle in [
        "cal.csv row 3",
        "cal.csv row 4",
        "same temperature",
        "graded uncorrected",
    ] {
        assert!(run.stderr.contains(needle), "{needle}: {}", run.stderr);
    }
    let rows = f.results("out");
    assert_eq!(rows.len(), 3);
    assert_eq!(num(by_id(&rows, "a"), "mp_clear_c"), Some(120.0));
    assert_eq!(by_id(&rows, "a")["calibration"], "");
}

#[test]
fn a_rubric_can_accept_a_range_of_literature_values() {
    let f = Fixture::new();
    f.write(
        "s.csv",
        "ID,Crude mass (g),Recovered mass (g),MP\nx,2.0,1.5,164-165.2\ny,2.0,1.5,166.8-167.9\n",
    );
    f.write("r.toml", "[experiment]\nname = \"sulfanilamide\"\ncompound = \"sulfanilamide\"\nreference_range_c = [164.5, 166.5]\n");
    let run = f.run(&["grade", "s.csv", "--rubric", "r.toml", "--out", "out"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = f.results("out");
    assert_eq!(num(by_id(&rows, "x"), "depression_c"), Some(0.0));
    assert!(
        flags(by_id(&rows, "y")).contains(&"above-reference"),
        "167.9 > 166.5 + 1.0"
    );
    f.write("bad.toml", "[experiment]\nname = \"s\"\ncompound = \"sulfanilamide\"\nreference_source = \"Beilstein\"\n");
    let bad = f.run(&["grade", "s.csv", "--rubric", "bad.toml", "--out", "out2"]);
    assert_eq!(bad.code, 2);
    assert!(bad.stderr.contains("Beilstein"), "{}", bad.stderr);
}
