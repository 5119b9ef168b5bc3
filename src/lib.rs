//! benchgrade: grades recrystallization lab submissions.
//!
//! The pipeline runs one way: `ingest` (files to submissions) → `assess` (measures and flags,
//! with the `reference` library and the `rubric`'s tolerances) → `export` (results files and
//! reports). `config` turns typed options into a validated run; `pipeline` strings the stages
//! together. Nothing here parses command lines or exits the process.

pub mod assess;
pub mod compare;
pub mod config;
pub mod contain;
pub mod error;
pub mod export;
pub mod fields;
pub mod files;
pub mod ingest;
pub mod model;
pub mod numtext;
pub mod pipeline;
pub mod reference;
pub mod rubric;
pub mod sample;
pub mod serve;
pub mod stats;

pub use config::{Config, Options};
pub use pipeline::{assess_batch, grade, grade_with_progress, Batch, Progress, RunError};
