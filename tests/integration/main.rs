//! The one integration-test binary: the real `benchgrade` run on fixtures and sample data.

mod bad_corpus;
mod bad_input;
mod cohort;
mod grading;
mod harness;
mod ingest_messy;
mod layers;
mod nist;
mod physchem;
mod reference_data;
mod sample_data;
mod workbooks;
