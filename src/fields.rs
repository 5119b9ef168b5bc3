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
    /// The crude product's melting range, onset and clear point (before recrystallization).
    CrudeMpRange,
    CrudeMpOnset,
    CrudeMpClear,
    /// One of two or more repeat determinations (trials, runs, capillaries) of the
    /// recrystallized product's melting range, onset or clear point: every column mapped to
    /// one of these is a trial of its own, in sheet order.
    MpTrialRange,
    MpTrialOnset,
    MpTrialClear,
    /// An empty container weighed once for both products (weighing by difference).
    Tare,
    /// The empty container of the crude product, and that container with the crude in it.
    CrudeTare,
    CrudeGross,
    /// The empty container of the recrystallized product, and that container with it.
    RecoveredTare,
    RecoveredGross,
    /// The code of an unknown sample handed to the student ("U-7"), not a compound.
    UnknownCode,
    /// The compound the student identified the unknown as.
    IdentifiedAs,
    /// The melting range (onset, clear point) of the unknown mixed with the compound named.
    MixedMpRange,
    MixedMpOnset,
    MixedMpClear,
    /// How many days after the deadline the report came in.
    LateDays,
}

impl Field {
    pub const ALL: [Field; 36] = [
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
        Field::CrudeMpRange,
        Field::CrudeMpOnset,
        Field::CrudeMpClear,
        Field::MpTrialRange,
        Field::MpTrialOnset,
        Field::MpTrialClear,
        Field::Tare,
        Field::CrudeTare,
        Field::CrudeGross,
        Field::RecoveredTare,
        Field::RecoveredGross,
        Field::UnknownCode,
        Field::IdentifiedAs,
        Field::MixedMpRange,
        Field::MixedMpOnset,
        Field::MixedMpClear,
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
            Field::CrudeMpRange => "crude_mp_range",
            Field::CrudeMpOnset => "crude_mp_onset",
            Field::CrudeMpClear => "crude_mp_clear",
            Field::MpTrialRange => "mp_trial_range",
            Field::MpTrialOnset => "mp_trial_onset",
            Field::MpTrialClear => "mp_trial_clear",
            Field::Tare => "tare",
            Field::CrudeTare => "crude_tare",
            Field::CrudeGross => "crude_gross",
            Field::RecoveredTare => "recovered_tare",
            Field::RecoveredGross => "recovered_gross",
            Field::UnknownCode => "unknown_code",
            Field::IdentifiedAs => "identified_as",
            Field::MixedMpRange => "mixed_mp_range",
            Field::MixedMpOnset => "mixed_mp_onset",
            Field::MixedMpClear => "mixed_mp_clear",
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
            Field::CrudeMpRange => "crude melting range",
            Field::CrudeMpOnset => "crude melting onset",
            Field::CrudeMpClear => "crude clear point",
            Field::MpTrialRange => "trial melting range",
            Field::MpTrialOnset => "trial melting onset",
            Field::MpTrialClear => "trial clear point",
            Field::Tare => "empty container (tare)",
            Field::CrudeTare => "crude product's tare",
            Field::CrudeGross => "crude product with its container",
            Field::RecoveredTare => "recovered product's tare",
            Field::RecoveredGross => "recovered product with its container",
            Field::UnknownCode => "unknown's code",
            Field::IdentifiedAs => "identification",
            Field::MixedMpRange => "mixed melting range",
            Field::MixedMpOnset => "mixed melting onset",
            Field::MixedMpClear => "mixed clear point",
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
                | Field::CrudeMpOnset
                | Field::CrudeMpClear
                | Field::MpTrialOnset
                | Field::MpTrialClear
                | Field::Tare
                | Field::CrudeTare
                | Field::CrudeGross
                | Field::RecoveredTare
                | Field::RecoveredGross
                | Field::MixedMpOnset
                | Field::MixedMpClear
        )
    }

    /// What the field's values measure. A field that holds no number is read as the reported
    /// recovery is, a percentage.
    pub fn quantity(self) -> Quantity {
        match self {
            Field::CrudeMass
            | Field::RecoveredMass
            | Field::Tare
            | Field::CrudeTare
            | Field::CrudeGross
            | Field::RecoveredTare
            | Field::RecoveredGross => Quantity::Mass,
            Field::SolventVolume => Quantity::Volume,
            Field::MpOnset
            | Field::MpClear
            | Field::MpRange
            | Field::CrudeMpRange
            | Field::CrudeMpOnset
            | Field::CrudeMpClear
            | Field::MpTrialRange
            | Field::MpTrialOnset
            | Field::MpTrialClear
            | Field::MixedMpRange
            | Field::MixedMpOnset
            | Field::MixedMpClear => Quantity::Temperature,
            Field::LateDays => Quantity::Days,
            _ => Quantity::Percent,
        }
    }

    /// Fields whose cells hold a melting range ("121-122") in one column.
    pub fn is_range(self) -> bool {
        matches!(
            self,
            Field::MpRange | Field::CrudeMpRange | Field::MpTrialRange | Field::MixedMpRange
        )
    }

    /// Fields several columns may hold at once, each a value of its own (repeat
    /// determinations), rather than two columns claiming one value.
    pub fn repeats(self) -> bool {
        matches!(
            self,
            Field::MpTrialRange | Field::MpTrialOnset | Field::MpTrialClear
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

/// What a field's values measure.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Quantity {
    Mass,
    Volume,
    Temperature,
    Percent,
    Days,
}

impl Quantity {
    /// The unit values are kept in, as a person reads it.
    pub fn base_unit(self) -> &'static str {
        match self {
            Quantity::Mass => "g",
            Quantity::Volume => "mL",
            Quantity::Temperature => "°C",
            Quantity::Percent => "%",
            Quantity::Days => "days",
        }
    }
}
