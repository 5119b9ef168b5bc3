//! Exporters: one module per output, each taking finished values and a destination.

pub mod atomic;
pub mod baseline;
pub mod book_plan;
pub mod check_report;
pub mod cohort_csv;
pub mod cohort_workbook;
pub mod gradebook;
pub mod handouts;
pub mod html;
pub mod journal;
#[cfg(feature = "parquet")]
pub mod parquet;
#[cfg(not(feature = "parquet"))]
#[path = "parquet_stub.rs"]
pub mod parquet;
pub mod provenance;
pub mod pseudonym;
pub mod report;
pub mod report_html;
pub mod results_csv;
pub mod results_json;
pub mod row_thread;
pub mod section_sheet;
pub mod section_stats;
pub mod svg;
pub mod template;
pub mod template_entries;
pub mod template_rules;
pub mod text_outputs;
pub mod ticks;
pub mod workbook;
pub mod workbook_summary;
pub mod workbook_worker;

pub use crate::numtext::{number, push_number};

/// Guards a text cell from student input against spreadsheet formula injection in CSV:
/// text starting with = + - @, a tab, a carriage return or NUL gets a leading apostrophe.
pub fn neutralise(text: &str) -> std::borrow::Cow<'_, str> {
    match text.chars().next() {
        Some('=' | '+' | '-' | '@' | '\t' | '\r' | '\0') => format!("'{text}").into(),
        _ => text.into(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formula_injection_is_neutralised() {
        // OWASP CSV injection guidance (common practice): prefix such cells with a quote.
        assert_eq!(neutralise("=HYPERLINK(\"x\")"), "'=HYPERLINK(\"x\")");
        assert_eq!(neutralise("@SUM(A1)"), "'@SUM(A1)");
        assert_eq!(neutralise("Ana"), "Ana");
    }
}
