//! The flag codes of the results contract, what each means, and how serious it is.

use serde::Serialize;

/// A finding about one submission. Codes are part of the public contract: never rename one.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize)]
pub enum Flag {
    RecoveryOver100,
    RangeInverted,
    AboveReference,
    NonpositiveMass,
    MissingValue,
    UnreadableValue,
    UnknownCompound,
    DuplicateStudent,
    RecoveryMismatch,
    LikelyImpure,
    LikelyWet,
    LowRecovery,
    SolventBelowMinimum,
    OutsideCalibratedSpan,
    Outlier,
    SingleReading,
    NoPurificationShown,
    NetMismatch,
    GrossBelowTare,
    TrialsDisagree,
    MixedMpContradicts,
    NotOnRoster,
    NameMismatch,
    OtherSection,
}

/// Whether a flag marks an entry that cannot be true or one that only looks wrong.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
pub enum Severity {
    Impossible,
    Suspicious,
}

impl Severity {
    /// The marker shown beside a flag wherever colour may be lost: "!" or "?".
    pub fn marker(self) -> &'static str {
        match self {
            Severity::Impossible => "!",
            Severity::Suspicious => "?",
        }
    }

    /// The kind in a word: "impossible" or "suspicious".
    pub fn word(self) -> &'static str {
        match self {
            Severity::Impossible => "impossible",
            Severity::Suspicious => "suspicious",
        }
    }
}

impl Flag {
    pub const ALL: [Flag; 24] = [
        Flag::RecoveryOver100,
        Flag::RangeInverted,
        Flag::AboveReference,
        Flag::NonpositiveMass,
        Flag::MissingValue,
        Flag::UnreadableValue,
        Flag::UnknownCompound,
        Flag::DuplicateStudent,
        Flag::RecoveryMismatch,
        Flag::LikelyImpure,
        Flag::LikelyWet,
        Flag::LowRecovery,
        Flag::SolventBelowMinimum,
        Flag::OutsideCalibratedSpan,
        Flag::Outlier,
        Flag::SingleReading,
        Flag::NoPurificationShown,
        Flag::NetMismatch,
        Flag::GrossBelowTare,
        Flag::TrialsDisagree,
        Flag::MixedMpContradicts,
        Flag::NotOnRoster,
        Flag::NameMismatch,
        Flag::OtherSection,
    ];

    pub fn code(self) -> &'static str {
        match self {
            Flag::RecoveryOver100 => "recovery-over-100",
            Flag::RangeInverted => "range-inverted",
            Flag::AboveReference => "above-reference",
            Flag::NonpositiveMass => "nonpositive-mass",
            Flag::MissingValue => "missing-value",
            Flag::UnreadableValue => "unreadable-value",
            Flag::UnknownCompound => "unknown-compound",
            Flag::DuplicateStudent => "duplicate-student",
            Flag::RecoveryMismatch => "recovery-mismatch",
            Flag::LikelyImpure => "likely-impure",
            Flag::LikelyWet => "likely-wet",
            Flag::LowRecovery => "low-recovery",
            Flag::SolventBelowMinimum => "solvent-below-minimum",
            Flag::OutsideCalibratedSpan => "outside-calibrated-span",
            Flag::Outlier => "outlier",
            Flag::SingleReading => "single-reading",
            Flag::NoPurificationShown => "no-purification-shown",
            Flag::NetMismatch => "net-mismatch",
            Flag::GrossBelowTare => "gross-below-tare",
            Flag::TrialsDisagree => "trials-disagree",
            Flag::MixedMpContradicts => "mixed-mp-contradicts",
            Flag::NotOnRoster => "not-on-roster",
            Flag::NameMismatch => "name-mismatch",
            Flag::OtherSection => "other-section",
        }
    }

    pub fn severity(self) -> Severity {
        match self {
            Flag::RecoveryMismatch
            | Flag::LikelyImpure
            | Flag::LikelyWet
            | Flag::LowRecovery
            | Flag::SolventBelowMinimum
            | Flag::OutsideCalibratedSpan
            | Flag::Outlier
            | Flag::SingleReading
            | Flag::NoPurificationShown
            | Flag::NetMismatch
            | Flag::TrialsDisagree
            | Flag::MixedMpContradicts
            | Flag::NameMismatch
            | Flag::OtherSection => Severity::Suspicious,
            _ => Severity::Impossible,
        }
    }

    /// What the flag means, in one line: `benchgrade check --explain` prints it for every flag
    /// raised.
    pub fn meaning(self) -> &'static str {
        match self {
            Flag::RecoveryOver100 => "more recovered than crude: a weighing or transcription error, or a wet product",
            Flag::RangeInverted => "melting onset written above the clear point",
            Flag::AboveReference => "clear point above the literature value by more than the tolerance: impurities only lower it",
            Flag::NonpositiveMass => "a mass of zero or less",
            Flag::MissingValue => "student id, a mass, the onset or the clear point is empty",
            Flag::UnreadableValue => "a cell holds text, an error or a date where a number belongs",
            Flag::UnknownCompound => "the compound is not in the reference library",
            Flag::DuplicateStudent => "the student id already appeared earlier in the same section",
            Flag::RecoveryMismatch => "the reported recovery disagrees with the masses",
            Flag::LikelyImpure => "broad or depressed melting range at a normal mass",
            Flag::LikelyWet => "heavy product with a broad or depressed range: solvent left in the crystals",
            Flag::LowRecovery => "recovery below the rubric's threshold",
            Flag::SolventBelowMinimum => "less solvent than dissolves the crude at the boil (a note: insoluble matter may have been filtered off)",
            Flag::OutsideCalibratedSpan => "a reading beyond the temperatures of the apparatus's calibration standards",
            Flag::Outlier => "recovery or depression far from the section's median (robust z-score beyond 3.5, in a section of at least outlier_min_n rows)",
            Flag::SingleReading => "the melting entry is one temperature, not a range: its width was not measured",
            Flag::NoPurificationShown => "the recrystallized melting range is no higher and no narrower than the crude product's: the recrystallization shows no purification",
            Flag::NetMismatch => "the net mass written disagrees with the difference of the gross and tare weighings by more than the balance's resolution",
            Flag::GrossBelowTare => "the container with the product weighs less than the empty container",
            Flag::TrialsDisagree => "repeat melting-point determinations differ by more than the tolerance",
            Flag::MixedMpContradicts => "the mixed melting point with the compound named is depressed: the unknown is likely not that compound",
            Flag::NotOnRoster => "the student id is not on the roster (--roster): most often a typing slip; the likely enrolled id is named when one is a slip away and its name agrees",
            Flag::NameMismatch => "the name on the sheet is not the roster's for this id (compared without case, accents, punctuation or order)",
            Flag::OtherSection => "the student is enrolled in another section than the one the row was submitted in; graded where submitted",
        }
    }

    /// Why the flag cost points, as a clause after a criterion's points ("0 of 40 points:
    /// recovered mass exceeds crude").
    pub fn short(self) -> &'static str {
        match self {
            Flag::RecoveryOver100 => "recovered mass exceeds crude",
            Flag::RangeInverted => "the onset is written above the clear point",
            Flag::AboveReference => "the clear point is above the literature value",
            Flag::NonpositiveMass => "a mass of zero or less",
            Flag::MissingValue => "a value is missing",
            Flag::UnreadableValue => "a value could not be read",
            Flag::UnknownCompound => "the compound is not in the library",
            Flag::DuplicateStudent => "a repeated submission",
            Flag::RecoveryMismatch => "the reported recovery disagrees with the masses",
            Flag::LikelyImpure => "the product looks impure",
            Flag::LikelyWet => "the product looks wet",
            Flag::LowRecovery => "the recovery is low",
            Flag::SolventBelowMinimum => "less solvent than dissolves the crude",
            Flag::OutsideCalibratedSpan => "a reading outside the calibrated span",
            Flag::Outlier => "far from the rest of the section",
            Flag::SingleReading => "one temperature is not a range",
            Flag::NoPurificationShown => "the recrystallization shows no purification",
            Flag::NetMismatch => "the net mass disagrees with the weighings",
            Flag::GrossBelowTare => "a gross weighing below its tare",
            Flag::TrialsDisagree => "the trials disagree",
            Flag::MixedMpContradicts => "the mixed melting point contradicts the identification",
            Flag::NotOnRoster => "the id is not on the roster",
            Flag::NameMismatch => "the name is not the roster's",
            Flag::OtherSection => "submitted in another section",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_are_distinct_kebab_case() {
        let mut codes: Vec<&str> = Flag::ALL.iter().map(|f| f.code()).collect();
        codes.sort_unstable();
        codes.dedup();
        assert_eq!(codes.len(), Flag::ALL.len());
        assert!(codes.iter().all(|c| c
            .chars()
            .all(|ch| ch.is_ascii_lowercase() || ch.is_ascii_digit() || ch == '-')));
    }
}
