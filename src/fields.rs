//! The fields a submission row can carry, with the names used in mapping files and messages.

use serde::{Deserialize, Serialize};

/// A column's meaning once its header has been understood.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Field {
    StudentId,
    StudentName,
    Section,
    Bench,
    Apparatus,
    Assistant,
    Compound,
    CrudeMass,
    RecoveredMass,
    SolventVolume,
    Solvent,
    MpRange,
    MpOnset,
    MpClear,
    ReportedRecovery,
    /// The family name, where names come in parts.
    LastName,
    /// The given name, where names come in parts.
    FirstName,
    /// A status such as "W" or "excused".
    Status,
    /// Free comments about the row (a notes or remarks column).
    Notes,
    /// How many days after the deadline the report came in.
    LateDays,
}

impl Field {
    pub const ALL: [Field; 20] = [
        Field::StudentId,
        Field::StudentName,
        Field::Section,
        Field::Bench,
        Field::Apparatus,
        Field::Assistant,
        Field::Compound,
        Field::CrudeMass,
        Field::RecoveredMass,
        Field::SolventVolume,
        Field::Solvent,
        Field::MpRange,
        Field::MpOnset,
        Field::MpClear,
        Field::ReportedRecovery,
        Field::LastName,
        Field::FirstName,
        Field::Status,
        Field::Notes,
        Field::LateDays,
    ];

    /// The name used in `[columns]` tables and `--columns` files.
    pub fn key(self) -> &'static str {
        match self {
            Field::StudentId => "student_id",
            Field::StudentName => "student_name",
            Field::Section => "section",
            Field::Bench => "bench",
            Field::Apparatus => "apparatus",
            Field::Assistant => "assistant",
            Field::Compound => "compound",
            Field::CrudeMass => "crude_mass",
            Field::RecoveredMass => "recovered_mass",
            Field::SolventVolume => "solvent_volume",
            Field::Solvent => "solvent",
            Field::MpRange => "mp_range",
            Field::MpOnset => "mp_onset",
            Field::MpClear => "mp_clear",
            Field::ReportedRecovery => "reported_recovery",
            Field::LastName => "last_name",
            Field::FirstName => "first_name",
            Field::Status => "status",
            Field::Notes => "notes",
            Field::LateDays => "late_days",
        }
    }

    /// Words for messages: "crude mass", "melting range".
    pub fn label(self) -> &'static str {
        match self {
            Field::StudentId => "student id",
            Field::StudentName => "student name",
            Field::Section => "section",
            Field::Bench => "bench",
            Field::Apparatus => "apparatus",
            Field::Assistant => "teaching assistant",
            Field::Compound => "compound",
            Field::CrudeMass => "crude mass",
            Field::RecoveredMass => "recovered mass",
            Field::SolventVolume => "solvent volume",
            Field::Solvent => "solvent",
            Field::MpRange => "melting range",
            Field::MpOnset => "melting onset",
            Field::MpClear => "clear point",
            Field::ReportedRecovery => "reported recovery",
            Field::LastName => "last name",
            Field::FirstName => "first name",
            Field::Status => "status",
            Field::Notes => "notes",
            Field::LateDays => "days late",
        }
    }

    pub fn from_key(key: &str) -> Option<Field> {
        Field::ALL.into_iter().find(|f| f.key() == key)
    }

    /// Fields a sheet must have a column for: without one, every row misses it.
    pub fn is_required(self) -> bool {
        matches!(
            self,
            Field::StudentId | Field::CrudeMass | Field::RecoveredMass
        )
    }

    /// Fields whose cells must hold numbers.
    pub fn is_numeric(self) -> bool {
        matches!(
            self,
            Field::CrudeMass
                | Field::RecoveredMass
                | Field::SolventVolume
                | Field::MpOnset
                | Field::MpClear
                | Field::ReportedRecovery
                | Field::LateDays
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_round_trip() {
        for f in Field::ALL {
            assert_eq!(Field::from_key(f.key()), Some(f));
        }
        assert_eq!(Field::from_key("crude"), None);
    }
}
