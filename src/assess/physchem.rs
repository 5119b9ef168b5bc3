//! Physical chemistry of a recrystallization: purity from the clear point by the van 't Hoff
//! (ideal eutectic) relation, solubility at a temperature, the recovery ceiling and the least
//! boiling solvent. Pure functions over plain numbers.
//!
//! Assumptions of the purity estimate, stated wherever it is reported: a eutectic system, the
//! impurity insoluble in the solid (soluble in the melt), ideal dilute solution, and a slow
//! enough heating rate that the clear point is the liquidus temperature.

use crate::reference::{Compound, Solubility};

/// Molar gas constant, J/(mol K) (CODATA 2018, exact since the 2019 SI).
pub const R: f64 = 8.314_462_618;
/// Celsius to kelvin offset (SI definition).
pub const KELVIN: f64 = 273.15;

/// The van 't Hoff relation for an ideal eutectic: ln x1 = -(ΔHfus/R)(1/T - 1/T0).
/// Returns x1, the mole fraction of the main component, for a clear point `t_k`.
pub fn mole_fraction_from_clear_point(t_k: f64, t0_k: f64, hfus_j_mol: f64) -> f64 {
    (-(hfus_j_mol / R) * (1.0 / t_k - 1.0 / t0_k)).exp()
}

/// The clear point (K) of a sample holding mole fraction `x2` of impurity, by the full relation.
pub fn clear_point_for_impurity(x2: f64, t0_k: f64, hfus_j_mol: f64) -> f64 {
    1.0 / (1.0 / t0_k - R * (1.0 - x2).ln() / hfus_j_mol)
}

/// The dilute (linearised) form: ΔT = R T0² x2 / ΔHfus.
pub fn dilute_depression(x2: f64, t0_k: f64, hfus_j_mol: f64) -> f64 {
    R * t0_k * t0_k * x2 / hfus_j_mol
}

/// What the purity estimate says for one row.
#[derive(Clone, Debug, PartialEq)]
pub struct PurityEstimate {
    /// Mole percent of the main component, when the method applies.
    pub mol_pct: Option<f64>,
    pub note: String,
}

/// The assumptions, for notes and reports.
pub const PURITY_ASSUMPTIONS: &str =
    "van 't Hoff, ideal eutectic: impurity insoluble in the crystal, dilute, slow heating";

/// Purity from the clear point against the reference melting point (both °C).
/// `max_impurity_mol_pct` bounds the dilute range the method assumes (about 5 mol %).
pub fn purity(
    clear_c: Option<f64>,
    reference_c: Option<f64>,
    compound: Option<&Compound>,
    max_impurity_mol_pct: f64,
) -> PurityEstimate {
    let none = |note: String| PurityEstimate {
        mol_pct: None,
        note,
    };
    let Some(c) = compound else {
        return none("no reference compound".into());
    };
    let (Some(clear), Some(t0)) = (clear_c, reference_c) else {
        return none("no clear point".into());
    };
    if c.decomposes {
        return none(format!(
            "{} decomposes on melting: the van 't Hoff method does not apply",
            c.name
        ));
    }
    let Some(h) = &c.hfus_kj_mol else {
        return none(format!("no enthalpy of fusion known for {}", c.name));
    };
    if clear > t0 {
        let (c, r) = apart(clear, t0);
        return none(format!(
            "clear point {c} °C is above the reference {r} °C: the method does not apply"
        ));
    }
    let x1 = mole_fraction_from_clear_point(clear + KELVIN, t0 + KELVIN, h.value * 1000.0);
    let impurity = 100.0 * (1.0 - x1);
    if impurity > max_impurity_mol_pct {
        return none(format!(
            "impurity about {impurity:.1} mol %, above the {max_impurity_mol_pct:.0} mol % the dilute method holds for"
        ));
    }
    PurityEstimate {
        mol_pct: Some(100.0 * x1),
        note: format!("{PURITY_ASSUMPTIONS}; ΔHfus {} kJ/mol", h.value),
    }
}

/// Solubility (g/L) at `t_c`: a listed value, or interpolated between the two listed values
/// around it with ln S linear in T (solubility rises roughly exponentially with temperature).
/// `None` outside the listed temperatures: no extrapolation.
pub fn solubility_at(points: &[Solubility], t_c: f64) -> Option<f64> {
    if let Some(p) = points.iter().find(|p| (p.t_c - t_c).abs() < 1e-9) {
        return Some(p.g_per_l);
    }
    let below = points
        .iter()
        .filter(|p| p.t_c < t_c && p.g_per_l > 0.0)
        .max_by(|a, b| a.t_c.total_cmp(&b.t_c))?;
    let above = points
        .iter()
        .filter(|p| p.t_c > t_c && p.g_per_l > 0.0)
        .min_by(|a, b| a.t_c.total_cmp(&b.t_c))?;
    let f = (t_c - below.t_c) / (above.t_c - below.t_c);
    Some((below.g_per_l.ln() + f * (above.g_per_l.ln() - below.g_per_l.ln())).exp())
}

/// The most that could crystallise, taking the crude as pure: 100 x (crude - S_cold x V) / crude.
pub fn max_recovery_pct(crude_g: f64, cold_g_per_l: f64, volume_ml: f64) -> f64 {
    // more solvent than keeps all of the crude dissolved leaves nothing to crystallise: 0 %
    (100.0 * (crude_g - cold_g_per_l * volume_ml / 1000.0) / crude_g).max(0.0)
}

/// Two temperatures to as many decimals (one to four) as tell them apart.
fn apart(a: f64, b: f64) -> (String, String) {
    for d in 1..=4 {
        let (x, y) = (format!("{a:.d$}"), format!("{b:.d$}"));
        if x != y || d == 4 {
            return (x, y);
        }
    }
    (a.to_string(), b.to_string())
}

/// The least boiling solvent that dissolves the crude: crude / S_hot, in mL.
pub fn min_solvent_ml(crude_g: f64, hot_g_per_l: f64) -> f64 {
    crude_g / hot_g_per_l * 1000.0
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::{Compound, Library, Sourced};
    use approx::assert_abs_diff_eq;

    // Benzoic acid: T0 = 395.52 K (NIST WebBook triple point), ΔHfus = 18.02 kJ/mol (CRC Handbook).
    const T0: f64 = 395.52;
    const H: f64 = 18_020.0;

    #[test]
    fn two_mol_percent_impurity_lowers_benzoic_acid_by_1_453_k() {
        let full = T0 - clear_point_for_impurity(0.02, T0, H);
        assert_abs_diff_eq!(full, 1.453, epsilon = 0.0005);
        assert_abs_diff_eq!(dilute_depression(0.02, T0, H), 1.444, epsilon = 0.0005);
        // and back again
        let x1 = mole_fraction_from_clear_point(T0 - full, T0, H);
        assert_abs_diff_eq!(x1, 0.98, epsilon = 1e-12);
    }

    fn benzoic() -> Compound {
        let mut c = Library::builtin()
            .unwrap()
            .lookup("benzoic acid")
            .unwrap()
            .clone();
        c.hfus_kj_mol = Some(Sourced {
            value: 18.02,
            source: "CRC".into(),
        });
        c
    }

    #[test]
    fn a_clear_point_of_120_50_gives_97_4_mol_percent() {
        let p = purity(Some(120.50), Some(T0 - KELVIN), Some(&benzoic()), 5.0);
        assert_abs_diff_eq!(p.mol_pct.unwrap(), 97.4, epsilon = 0.05);
        assert!(p.note.contains("eutectic"));
    }

    #[test]
    fn where_the_method_does_not_hold() {
        let c = benzoic();
        assert!(purity(Some(123.0), Some(122.37), Some(&c), 5.0)
            .note
            .contains("above the reference"));
        let far = purity(Some(110.0), Some(122.37), Some(&c), 5.0);
        assert_eq!(far.mol_pct, None);
        assert!(far.note.contains("mol %"), "{}", far.note);
        let mut no_h = c.clone();
        no_h.hfus_kj_mol = None;
        assert!(purity(Some(121.0), Some(122.37), Some(&no_h), 5.0)
            .note
            .contains("no enthalpy"));
        let aspirin = Library::builtin()
            .unwrap()
            .lookup("aspirin")
            .unwrap()
            .clone();
        assert!(purity(Some(134.0), Some(135.0), Some(&aspirin), 5.0)
            .note
            .contains("decomposes"));
        assert_eq!(
            purity(Some(122.37), Some(122.37), Some(&c), 5.0).mol_pct,
            Some(100.0)
        );
    }

    #[test]
    fn benzoic_acid_needs_17_8_ml_of_boiling_water_per_gram() {
        // Handbook solubilities (from memory): 56.3 g/L near 100 °C, 1.7 g/L at 0 °C.
        let lib = Library::builtin().unwrap();
        let s = &lib.lookup("benzoic acid").unwrap().solubility;
        let hot = solubility_at(s, 100.0).unwrap();
        assert_abs_diff_eq!(min_solvent_ml(1.00, hot), 17.8, epsilon = 0.05);
        let cold = solubility_at(s, 0.0).unwrap();
        assert_abs_diff_eq!(max_recovery_pct(1.00, cold, 25.0), 95.75, epsilon = 1e-9);
    }

    #[test]
    fn solubility_interpolates_log_linearly_and_never_extrapolates() {
        let pts = vec![
            Solubility {
                t_c: 0.0,
                g_per_l: 1.0,
                source: String::new(),
            },
            Solubility {
                t_c: 20.0,
                g_per_l: 4.0,
                source: String::new(),
            },
        ];
        // halfway in T is the geometric mean in S (hand-worked): sqrt(1 x 4) = 2
        assert_abs_diff_eq!(solubility_at(&pts, 10.0).unwrap(), 2.0, epsilon = 1e-12);
        assert_eq!(solubility_at(&pts, 25.0), None);
        assert_eq!(solubility_at(&pts, -5.0), None);
    }

    #[test]
    fn the_ceiling_is_never_below_zero_and_notes_tell_close_temperatures_apart() {
        // urea, about 1080 g/L at 20 °C (handbook, from memory): 1 mL keeps 1.08 g dissolved,
        // more than 1.0 g of crude: nothing can crystallise, a ceiling of 0 %, not -8 %
        assert_eq!(max_recovery_pct(1.0, 1080.0, 1.0), 0.0);
        assert_eq!(
            apart(122.44, 122.4),
            ("122.44".to_string(), "122.40".to_string())
        );
        assert_eq!(
            apart(123.0, 122.4),
            ("123.0".to_string(), "122.4".to_string())
        );
    }
}
