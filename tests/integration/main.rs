//! The one integration-test binary: the real `benchgrade` run on fixtures and sample data.

// a test reads best as one story, fixture to assertion
#![allow(
    clippy::too_many_lines,
    clippy::case_sensitive_file_extension_comparisons,
    clippy::format_push_string,
    clippy::format_collect
)]

mod bad_corpus;
mod bad_input;
mod browser;
mod cohort;
mod entry_sheets;
mod experiment;
mod folder_safety;
mod grading;
mod harness;
mod hostile_files;
mod ingest_messy;
mod languages;
mod layers;
mod nist;
mod physchem;
mod printouts;
mod privacy;
mod real_files;
mod reference_data;
mod registry;
mod reliability;
mod roster;
mod roster_slips;
mod same_outputs;
mod sample_data;
mod serve;
mod serve_client;
mod serve_hardening;
mod serve_roster;
mod template_key;
mod template_rubrics;
mod workbooks;
