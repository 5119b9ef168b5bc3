//! Tests of `ods_scan`.

use super::*;

#[test]
fn a_percentage_s_decimals_are_read_from_the_text_it_shows() {
    // OpenDocument 1.2 part 1, 19.385: the cell's text:p is the value as displayed
    for (text, want) in [
        ("74.0%", Some(1)),
        ("74%", Some(0)),
        ("74,25 %", Some(2)),
        ("-3.5 %", Some(1)),
        ("74.0", None),
        ("", None),
        ("%", None),
    ] {
        assert_eq!(shown_decimals(text), want, "{text}");
    }
}

fn ods_with(content: &str) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let f = std::fs::File::create(dir.path().join("t.ods")).unwrap();
    let mut z = zip::ZipWriter::new(f);
    z.start_file("content.xml", zip::write::SimpleFileOptions::default())
        .unwrap();
    std::io::Write::write_all(&mut z, content.as_bytes()).unwrap();
    z.finish().unwrap();
    dir
}

#[test]
fn ods_percentage_cells_are_found_through_repeats() {
    // OpenDocument 1.2 part 1, 9.1.3 and 9.1.4: number-rows-repeated and
    // number-columns-repeated stand for that many copies of the row or cell
    let content = r#"<office:document-content xmlns:office="o" xmlns:table="t" xmlns:text="x"><office:body><office:spreadsheet>
<table:table table:name="Sec 1">
<table:table-row><table:table-cell office:value-type="string"><text:p>id</text:p></table:table-cell></table:table-row>
<table:table-row table:number-rows-repeated="2"><table:table-cell table:number-columns-repeated="2"/><table:table-cell office:value-type="percentage" office:value="0.73"/></table:table-row>
<table:table-row><table:table-cell office:value-type="float" office:value="3"/><table:table-cell office:value-type="percentage" office:value="0.5" table:number-columns-repeated="2"/></table:table-row>
<table:table-row><table:table-cell office:value-type="percentage" office:value="0.73995"><text:p>74.0%</text:p></table:table-cell></table:table-row>
</table:table>
<table:table table:name="Other"><table:table-row><table:table-cell office:value-type="float" office:value="1"/></table:table-row></table:table>
</office:spreadsheet></office:body></office:document-content>"#;
    let dir = ods_with(content);
    let found = ods(&dir.path().join("t.ods")).unwrap();
    assert_eq!(
        found.get("Sec 1").map(|b| b.to_vec()),
        Some(vec![
            Block {
                row: 1,
                rows: 2,
                col: 2,
                cols: 1,
                decimals: None,
            },
            Block {
                row: 3,
                rows: 1,
                col: 1,
                cols: 2,
                decimals: None,
            },
            // the decimals it shows, so that it reads as shown
            Block {
                row: 4,
                rows: 1,
                col: 0,
                cols: 1,
                decimals: Some(1),
            },
        ])
    );
    assert!(!found.contains_key("Other"));
}

/// A one-table content.xml around `rows`.
fn table(rows: &str) -> String {
    format!(
        r#"<office:document-content xmlns:office="o" xmlns:table="t" xmlns:text="x"><office:body><office:spreadsheet><table:table table:name="Sec 1">{rows}</table:table></office:spreadsheet></office:body></office:document-content>"#
    )
}

fn refused(content: &str) -> String {
    let dir = ods_with(content);
    ods(&dir.path().join("t.ods")).expect_err("refused")
}

const ID: &str =
    r#"<table:table-cell office:value-type="string"><text:p>id</text:p></table:table-cell>"#;

#[test]
fn a_run_of_a_billion_and_a_half_spaces_is_refused() {
    // OpenDocument 1.2 part 3, 6.1.3: text:s with text:c stands for that many spaces
    let cell = r#"<table:table-cell office:value-type="string"><text:p>a<text:s text:c="1500000000"/>b</text:p></table:table-cell>"#;
    let why = refused(&table(&format!(
        "<table:table-row>{cell}</table:table-row>"
    )));
    assert!(why.contains("text:s") && why.contains("Sec 1"), "{why}");
}

#[test]
fn repeated_columns_times_repeated_rows_are_refused() {
    // a value repeated across 16,000 columns in 300 rows: 4.8 million cells
    let row = r#"<table:table-row table:number-rows-repeated="300"><table:table-cell office:value-type="float" office:value="1" table:number-columns-repeated="16000"/></table:table-row>"#;
    let why = refused(&table(row));
    assert!(why.contains("more than 4000000 cells"), "{why}");
    // empty cells before one value, in many rows: the reader keeps each row's empties
    let row = r#"<table:table-row><table:table-cell table:number-columns-repeated="16000"/><table:table-cell office:value-type="float" office:value="1"/></table:table-row>"#;
    let why = refused(&table(&row.repeat(300)));
    assert!(why.contains("cells"), "{why}");
}

#[test]
fn text_copied_into_repeated_cells_is_counted_per_copy() {
    let long = "x".repeat(30_000);
    let row = format!(
        r#"<table:table-row><table:table-cell office:value-type="string" table:number-columns-repeated="10000"><text:p>{long}</text:p></table:table-cell></table:table-row>"#
    );
    let why = refused(&table(&row));
    assert!(why.contains("MiB"), "{why}");
}

#[test]
fn a_tag_longer_than_any_class_file_s_is_refused_without_reading_it_whole() {
    let value = "1".repeat(MOST_TOKEN_BYTES + 10);
    let row = format!(
        r#"<table:table-row><table:table-cell office:value-type="string" office:string-value="{value}"/></table:table-row>"#
    );
    let why = refused(&table(&row));
    assert!(why.contains("longer than"), "{why}");
}

#[test]
fn a_percentage_inside_a_sub_table_is_not_on_the_student_s_row() {
    // OpenDocument 1.2 part 1, 9.1.4: a cell may hold a table (table:table as cell
    // content); calamine skips it, and so must the percentages found
    let row = r#"<table:table-row><table:table-cell office:value-type="float" office:value="3.1"><table:table table:name="inner"><table:table-row><table:table-cell office:value-type="percentage" office:value="0.5"/></table:table-row><table:table-row><table:table-cell/></table:table-row></table:table></table:table-cell><table:table-cell office:value-type="percentage" office:value="0.7"/></table:table-row>"#;
    let dir = ods_with(&table(&format!(
        "<table:table-row>{ID}</table:table-row>{row}"
    )));
    let found = ods(&dir.path().join("t.ods")).unwrap();
    assert_eq!(
        found.get("Sec 1").map(|b| b.to_vec()),
        Some(vec![Block {
            row: 1,
            rows: 1,
            col: 1,
            cols: 1,
            decimals: None,
        }])
    );
    assert!(!found.contains_key("inner"));
}

#[test]
fn a_class_sized_table_passes() {
    let row = r#"<table:table-row><table:table-cell office:value-type="string"><text:p>S-1<text:s text:c="3"/>x</text:p></table:table-cell><table:table-cell office:value-type="float" office:value="3.02" table:number-columns-repeated="3"/><table:table-cell table:number-columns-repeated="16000"/></table:table-row>"#;
    let content = table(&format!(
        "{}<table:table-row table:number-rows-repeated=\"1048000\"><table:table-cell table:number-columns-repeated=\"16384\"/></table:table-row>",
        row.repeat(2000)
    ));
    let dir = ods_with(&content);
    assert!(ods(&dir.path().join("t.ods")).is_ok());
}

#[test]
fn a_content_xml_that_ends_inside_a_table_or_closes_the_wrong_element_is_refused() {
    // calamine 0.38 loops forever on either (it waits for the table's or the annotation's own
    // end tag and reads past the end of the file); found by the ods_content fuzz target
    let truncated = table("<table:table-row>").replace(
        "</table:table></office:spreadsheet></office:body></office:document-content>",
        "",
    );
    let why = refused(&truncated);
    assert!(why.contains("ends before its elements are closed"), "{why}");
    let crossed = table(
        r#"<table:table-row><table:table-cell office:value-type="string"><office:annotation><text:p>x</text:p></table:table-cell></office:annotation></table:table-row>"#,
    );
    let why = refused(&crossed);
    assert!(why.contains("does not close"), "{why}");
}
