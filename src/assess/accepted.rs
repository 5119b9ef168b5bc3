//! Which literature value a row is judged against. Sources disagree (sulfanilamide is given
//! from 162 to 166 °C), so the rubric may pick a value, a source, or accept a range; every
//! other compound uses the library's accepted value.

use crate::reference::Compound;
use crate::rubric::Experiment;

/// How the rubric chooses the experiment compound's reference.
#[derive(Clone, Debug, PartialEq)]
pub enum ReferenceRule {
    /// The library's accepted value.
    Accepted,
    /// A value in °C (the rubric's `reference_mp_c` or `--reference-mp`).
    Value(f64),
    /// The literature value whose source mentions this text.
    Source(String),
    /// Any clear point within this range (°C) is at the reference.
    Range(f64, f64),
    /// Any clear point within the spread of the library's literature values.
    Literature,
}

impl ReferenceRule {
    /// How the experiment's own compound is judged: the command line's value wins, then the
    /// rubric's value, range, source or literature spread, else the library's accepted value.
    pub fn for_experiment(e: &Experiment, command_line_mp_c: Option<f64>) -> ReferenceRule {
        use ReferenceRule as R;
        match (
            command_line_mp_c.or(e.reference_mp_c),
            e.reference_range_c,
            &e.reference_source,
        ) {
            (Some(v), _, _) => R::Value(v),
            (None, Some([lo, hi]), _) => R::Range(lo, hi),
            (None, None, Some(s)) => R::Source(s.clone()),
            _ if e.accept_literature_range => R::Literature,
            _ => R::Accepted,
        }
    }
}

/// The reference for one compound: a value, or an accepted range.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Reference {
    Point(f64),
    Range(f64, f64),
}

impl Reference {
    /// The reference value for a clear point: within an accepted range, the nearest point of
    /// the range (so a clear point inside it is at the reference); without one, the middle.
    pub fn at(&self, clear_c: Option<f64>) -> f64 {
        match *self {
            Reference::Point(v) => v,
            Reference::Range(lo, hi) => clear_c.map_or(f64::midpoint(lo, hi), |c| c.clamp(lo, hi)),
        }
    }

    pub fn describe(&self) -> String {
        match self {
            Reference::Point(v) => format!("{v:.1} °C"),
            Reference::Range(lo, hi) => format!("{lo:.1}-{hi:.1} °C"),
        }
    }
}

/// Applies a rule to a compound; `Err` says why it cannot be applied.
pub fn reference_for(compound: &Compound, rule: &ReferenceRule) -> Result<Reference, String> {
    match rule {
        ReferenceRule::Accepted => Ok(Reference::Point(compound.accepted_mp_c)),
        ReferenceRule::Value(v) => Ok(Reference::Point(*v)),
        ReferenceRule::Range(lo, hi) => Ok(Reference::Range(*lo, *hi)),
        ReferenceRule::Source(text) => {
            let want = text.to_lowercase();
            compound
                .melting_points
                .iter()
                .find(|m| m.source.to_lowercase().contains(&want))
                .map(|m| Reference::Point(m.value_c))
                .ok_or_else(|| {
                    let sources: Vec<&str> = compound
                        .melting_points
                        .iter()
                        .map(|m| m.source.as_str())
                        .collect();
                    format!(
                        "no literature value for {} cites \"{text}\"; its sources are: {}",
                        compound.name,
                        sources.join("; ")
                    )
                })
        }
        ReferenceRule::Literature => {
            let values = compound.melting_points.iter().map(|m| m.value_c);
            let lo = values.clone().fold(f64::INFINITY, f64::min);
            let hi = values.fold(f64::NEG_INFINITY, f64::max);
            if lo.is_finite() {
                Ok(Reference::Range(lo, hi))
            } else {
                Ok(Reference::Point(compound.accepted_mp_c))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::Library;

    #[test]
    fn sulfanilamide_keeps_every_value_and_the_rubric_chooses() {
        let lib = Library::builtin().unwrap();
        let c = lib.lookup("sulfanilamide").unwrap();
        assert!(c.melting_points.len() >= 3);
        assert_eq!(
            reference_for(c, &ReferenceRule::Accepted).unwrap(),
            Reference::Point(165.5)
        );
        assert_eq!(
            reference_for(c, &ReferenceRule::Source("CRC".into())).unwrap(),
            Reference::Point(164.5)
        );
        // the library's spread for sulfanilamide: 163.0 (older editions) to 165.5 °C
        assert_eq!(
            reference_for(c, &ReferenceRule::Literature).unwrap(),
            Reference::Range(163.0, 165.5)
        );
        assert!(reference_for(c, &ReferenceRule::Source("Gmelin".into())).is_err());
    }

    #[test]
    fn within_a_range_the_clear_point_is_at_the_reference() {
        let r = Reference::Range(164.5, 166.5);
        assert_eq!(r.at(Some(165.0)), 165.0);
        assert_eq!(r.at(Some(163.0)), 164.5);
        assert_eq!(r.at(Some(168.0)), 166.5);
        assert_eq!(r.at(None), 165.5);
    }
}
