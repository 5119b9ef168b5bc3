//! Rubric files: any text is a rubric or a located error, and any rubric that parses scores a
//! row without panicking.
#![no_main]
use benchgrade::assess::ReferenceRule;
use benchgrade::ingest::headers::ColumnOverrides;
use benchgrade::model::Assessed;
use benchgrade::rubric::{score, Rubric};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|text: &str| {
    if let Ok(r) = Rubric::parse(text, "fuzz.toml") {
        let _ = r.criterion_ids();
        let _ = ReferenceRule::for_experiment(&r.experiment, None);
        let _ = ColumnOverrides::from_table(&r.columns);
        let row = Assessed {
            recovery_pct: Some(71.5),
            range_width_c: Some(1.2),
            depression_c: Some(0.4),
            ..Assessed::default()
        };
        let s = score::score(&r, &row, &[]);
        assert!(s.total.is_finite() || r.criteria.is_empty());
    }
});
