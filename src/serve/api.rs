//! The JSON API the page uses (documented in the README): the files, the column mapping, the
//! runs and their results, the overrides and the outputs. Errors are JSON too, `{"error":
//! "...", "field": "..."}`, the field naming what to fix. File work runs on the blocking pool,
//! one edit of the workspace at a time; nothing here waits for a grading run unless the
//! request asks for its outcome.

use std::collections::BTreeMap;
use std::sync::{Arc, PoisonError};
use std::time::Duration;

use axum::body::Bytes;
use axum::extract::{Path as UrlPath, Query, State};
use axum::http::StatusCode;
use axum::response::{IntoResponse, Response};
use axum::Json;
use serde::{Deserialize, Serialize};
use serde_json::{json, Value};

use crate::fields::Field;
use crate::ingest::headers::{ColumnOverrides, MappingValue};
use crate::rubric::overrides::{Invalid, Limits, Typed};

use super::grader::{Outcome, State as RunState};
use super::overrides_file;
use super::workspace::{write_atomically, Refused, COLUMNS};
use super::App;

/// An error as the page shows it: a status, the field at fault and what to do.
#[derive(Debug)]
pub struct ApiError {
    pub status: StatusCode,
    pub field: String,
    pub message: String,
}

impl ApiError {
    pub fn new(status: StatusCode, field: &str, message: impl Into<String>) -> ApiError {
        ApiError {
            status,
            field: field.to_string(),
            message: message.into(),
        }
    }

    pub(super) fn invalid(i: Invalid) -> ApiError {
        ApiError::new(StatusCode::UNPROCESSABLE_ENTITY, i.field, i.message)
    }
}

impl IntoResponse for ApiError {
    fn into_response(self) -> Response {
        let body = json!({"error": self.message, "field": self.field});
        (self.status, Json(body)).into_response()
    }
}

pub type Reply = Result<Json<Value>, ApiError>;

/// Runs file work off the server's thread.
pub async fn blocking<T: Send + 'static>(
    work: impl FnOnce() -> T + Send + 'static,
) -> Result<T, ApiError> {
    tokio::task::spawn_blocking(work).await.map_err(|_| {
        ApiError::new(
            StatusCode::INTERNAL_SERVER_ERROR,
            "server",
            "internal error (a bug); nothing was changed",
        )
    })
}

/// Runs an edit of the workspace's files, one at a time, and regrades when it succeeds.
pub(super) async fn edit<T: Send + 'static>(
    app: &Arc<App>,
    work: impl FnOnce() -> Result<T, ApiError> + Send + 'static,
) -> Result<(T, u64), ApiError> {
    let app = Arc::clone(app);
    blocking(move || {
        let _one = app.edit.lock().unwrap_or_else(PoisonError::into_inner);
        let done = work()?;
        Ok((done, app.grader.changed()))
    })
    .await?
}

fn summary_json(s: &RunState) -> Value {
    let o = &s.outcome;
    json!({
        "version": s.version,
        "revision": s.revision,
        "graded": o.covers,
        "grading": s.grading,
        "summary": o.summary,
        "error": o.error,
        "millis": o.millis,
        "set_aside": o.set_aside,
    })
}

#[derive(Deserialize)]
pub struct Since {
    since: Option<u64>,
}

/// `GET /api/status[?since=VERSION]`: where grading stands; with `since`, waits (up to 25 s)
/// for it to move.
pub async fn status(State(app): State<Arc<App>>, Query(q): Query<Since>) -> Reply {
    let mut rx = app.grader.subscribe();
    if let Some(v) = q.since {
        let moved = rx.wait_for(|s| s.version != v);
        let _ = tokio::time::timeout(Duration::from_secs(25), moved).await;
    }
    let s = rx.borrow().clone();
    Ok(Json(summary_json(&s)))
}

fn run_json(o: &Outcome) -> Value {
    json!({
        "revision": o.covers,
        "summary": o.summary,
        "error": o.error,
        "problems": o.problems,
        "millis": o.millis,
        "set_aside": o.set_aside,
    })
}

/// `POST /api/grade`: grades now (whatever changed) and answers with the run's summary.
pub async fn grade(State(app): State<Arc<App>>) -> Reply {
    let g = Arc::clone(&app.grader);
    let revision = blocking(move || {
        g.notice_hand_edits();
        g.changed()
    })
    .await?;
    let outcome = app.grader.graded(revision).await;
    Ok(Json(run_json(&outcome)))
}

#[derive(Deserialize)]
pub struct AtLeast {
    revision: Option<u64>,
}

/// `GET /api/results[?revision=N]`: the last run's records (results.json's field names), with
/// `revision`, once a run has read at least that revision.
pub async fn results(State(app): State<Arc<App>>, Query(q): Query<AtLeast>) -> Reply {
    let outcome = match q.revision {
        Some(r) => app.grader.graded(r).await,
        None => app.grader.state().outcome,
    };
    let s = app.grader.state();
    let mut v = run_json(&outcome);
    v["current"] = s.revision.into();
    v["grading"] = s.grading.into();
    v["criteria"] = json!(outcome.criteria);
    v["records"] = json!(outcome.records);
    Ok(Json(v))
}

/// `GET /api/files`: the files in inputs/, each with the problems the last run found in it.
pub async fn list_files(State(app): State<Arc<App>>) -> Reply {
    let ws = app.ws.clone();
    let files = blocking(move || ws.inputs()).await?;
    let outcome = app.grader.state().outcome;
    let listed: Vec<Value> = files
        .iter()
        .map(|f| {
            let problems: Vec<_> = outcome
                .problems
                .iter()
                .filter(|p| p.file == f.name)
                .collect();
            let sheets: Vec<Value> = outcome
                .sheets
                .iter()
                .filter(|s| s["file"] == f.name.as_str())
                .map(|s| json!({"sheet": s["sheet"], "students": s["students"]}))
                .collect();
            json!({"name": f.name, "size": f.size, "problems": problems, "sheets": sheets})
        })
        .collect();
    // the files set aside in quarantine/ are told there too, with why
    let elsewhere: Vec<_> = outcome
        .problems
        .iter()
        .filter(|p| !files.iter().any(|f| f.name == p.file))
        .chain(&outcome.set_aside)
        .collect();
    Ok(Json(json!({
        "files": listed,
        "other_problems": elsewhere,
        "upload_limit": app.upload_limit,
        "types": crate::ingest::discover::EXTENSIONS,
    })))
}

/// `DELETE /api/files/{name}`: takes a file out of inputs/.
pub async fn delete_file(State(app): State<Arc<App>>, UrlPath(name): UrlPath<String>) -> Reply {
    let ws = app.ws.clone();
    let ((), revision) = edit(&app, move || {
        ws.remove_input(&name).map_err(|e| {
            let status = match e {
                Refused::Missing => StatusCode::NOT_FOUND,
                Refused::Linked(_) => StatusCode::CONFLICT,
                Refused::Io(_) => StatusCode::INTERNAL_SERVER_ERROR,
            };
            ApiError::new(status, "name", e.to_string())
        })
    })
    .await?;
    Ok(Json(json!({"revision": revision})))
}

/// columns.toml as the command line reads it.
#[derive(Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
struct ColumnsDoc {
    #[serde(default)]
    columns: BTreeMap<String, MappingValue>,
}

fn read_columns() -> Result<BTreeMap<String, MappingValue>, String> {
    let text = match crate::files::read_to_string(std::path::Path::new(COLUMNS)) {
        Ok(t) => t,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(BTreeMap::new()),
        Err(e) => return Err(format!("cannot read {COLUMNS}: {e}")),
    };
    crate::error::parse_toml::<ColumnsDoc>(&text, COLUMNS)
        .map(|d| d.columns)
        .map_err(|e| e.to_string())
}

/// `GET /api/columns`: the mapping in columns.toml, how the last run read each sheet, and the
/// fields a column can be given.
pub async fn get_columns(State(app): State<Arc<App>>) -> Reply {
    let read = blocking(read_columns).await?;
    let (columns, error) = match read {
        Ok(c) => (json!(c), None),
        Err(e) => (json!({}), Some(e)),
    };
    let fields: Vec<Value> = Field::ALL
        .iter()
        .map(|f| json!({"key": f.key(), "label": f.label()}))
        .collect();
    let outcome = app.grader.state().outcome;
    Ok(Json(json!({
        "columns": columns,
        "error": error,
        "sheets": outcome.sheets,
        "fields": fields,
    })))
}

/// `PUT /api/columns` with `{"columns": {...}}`, the `[columns]` table as JSON: checked as
/// `--columns` checks it, then written to columns.toml.
pub async fn put_columns(State(app): State<Arc<App>>, body: Bytes) -> Reply {
    let doc: ColumnsDoc = serde_json::from_slice(&body).map_err(|e| {
        ApiError::new(
            StatusCode::UNPROCESSABLE_ENTITY,
            "columns",
            format!(
                "expected {{\"columns\": {{\"header or column letter\": \"field\", ...}}}}: {e}"
            ),
        )
    })?;
    ColumnOverrides::from_table(&doc.columns)
        .map_err(|m| ApiError::new(StatusCode::UNPROCESSABLE_ENTITY, "columns", m))?;
    let text = toml::to_string(&doc)
        .map_err(|e| ApiError::new(StatusCode::UNPROCESSABLE_ENTITY, "columns", e.to_string()))?;
    let text = format!("# Column mappings for the sheets in inputs/, as for `benchgrade grade --columns`.\n# Written by the workspace page; edits made by hand are picked up.\n{text}");
    let ((), revision) = edit(&app, move || {
        write_atomically(std::path::Path::new(COLUMNS), text.as_bytes()).map_err(|e| {
            ApiError::new(
                StatusCode::INTERNAL_SERVER_ERROR,
                "columns",
                format!("cannot write {COLUMNS}: {e}"),
            )
        })
    })
    .await?;
    Ok(Json(json!({"revision": revision})))
}

fn criterion_limits() -> Result<Limits, ApiError> {
    let path = std::path::Path::new(super::workspace::RUBRIC);
    let rubric = if path.is_file() {
        crate::rubric::Rubric::load(path)
    } else {
        crate::rubric::Rubric::builtin()
    };
    rubric
        .map(|r| r.override_limits())
        .map_err(|e| ApiError::new(StatusCode::UNPROCESSABLE_ENTITY, "rubric", e.to_string()))
}

/// `GET /api/overrides`: the overrides in overrides.csv, each with its line.
pub async fn get_overrides() -> Reply {
    let listed = blocking(|| criterion_limits().map(|c| overrides_file::list(&c))).await??;
    Ok(Json(match listed {
        Ok(list) => json!({"overrides": list, "error": null}),
        Err(e) => json!({"overrides": [], "error": e}),
    }))
}

/// An override as the form sends it; points may be a number or text.
#[derive(Deserialize, Default)]
#[serde(default, deny_unknown_fields)]
struct OverrideForm {
    student_id: Option<String>,
    section: Option<String>,
    criterion: Option<String>,
    points: Option<Value>,
    adjust: Option<Value>,
    reason: Option<String>,
    grader: Option<String>,
}

/// A form's value as text, whether it came as a JSON string or a number.
pub(super) fn text_of(v: Option<&Value>) -> Option<String> {
    match v? {
        Value::String(s) => Some(s.clone()),
        Value::Number(n) => Some(n.to_string()),
        _ => None,
    }
}

/// Trimmed, and `None` when empty.
pub(super) fn given(s: Option<&String>) -> Option<&str> {
    s.map(|s| s.trim()).filter(|s| !s.is_empty())
}

/// The student of an override must have a graded submission, as the command line requires.
fn known_student(records: &[Value], id: &str, section: Option<&str>) -> Result<(), Invalid> {
    let theirs: Vec<&Value> = records
        .iter()
        .filter(|r| {
            r["student_id"].as_str().map(str::trim) == Some(id)
                && section.is_none_or(|s| r["section"].as_str() == Some(s))
        })
        .collect();
    if theirs
        .iter()
        .any(|r| r["status"].as_str() != Some("excused"))
    {
        return Ok(());
    }
    if !theirs.is_empty() {
        // the command line would take it and say "not applied": the page says so at once
        return Err(Invalid {
            field: "student_id",
            message: "this student is excused and has no score to change; a change of status belongs in the class file".into(),
        });
    }
    let where_ = section
        .map(|s| format!(" in section {s}"))
        .unwrap_or_default();
    Err(Invalid {
        field: if section.is_some() {
            "section"
        } else {
            "student_id"
        },
        message: format!("no graded submission has this student id{where_}; check the id"),
    })
}

/// `POST /api/overrides`: checks an override as `--overrides` would and adds it to the file.
pub async fn post_override(
    State(app): State<Arc<App>>,
    body: Bytes,
) -> Result<(StatusCode, Json<Value>), ApiError> {
    let form: OverrideForm = serde_json::from_slice(&body).map_err(|e| {
        ApiError::new(
            StatusCode::UNPROCESSABLE_ENTITY,
            "body",
            format!("expected an override as JSON: {e}"),
        )
    })?;
    // the student is looked for in a run that has read every change made so far
    let current = app.grader.state().revision;
    let records = app.grader.graded(current).await;
    let (line, revision) = edit(&app, move || {
        let criteria = criterion_limits()?;
        let (points, adjust) = (text_of(form.points.as_ref()), text_of(form.adjust.as_ref()));
        let typed = Typed {
            student_id: given(form.student_id.as_ref()),
            section: given(form.section.as_ref()),
            criterion: given(form.criterion.as_ref()),
            points: given(points.as_ref()),
            adjust: given(adjust.as_ref()),
            reason: given(form.reason.as_ref()),
            grader: given(form.grader.as_ref()),
        };
        typed.check(&criteria, 0).map_err(ApiError::invalid)?;
        if let Some(id) = typed.student_id {
            known_student(&records.records, id, typed.section).map_err(ApiError::invalid)?;
        }
        overrides_file::add(&typed, &criteria).map_err(ApiError::invalid)
    })
    .await?;
    Ok((
        StatusCode::CREATED,
        Json(json!({"line": line, "revision": revision})),
    ))
}

/// `DELETE /api/overrides/{line}`: takes out the override on that line of overrides.csv.
pub async fn delete_override(State(app): State<Arc<App>>, UrlPath(line): UrlPath<usize>) -> Reply {
    let (removed, revision) = edit(&app, move || {
        let criteria = criterion_limits()?;
        overrides_file::remove(line, &criteria).map_err(ApiError::invalid)
    })
    .await?;
    if !removed {
        return Err(ApiError::new(
            StatusCode::NOT_FOUND,
            "line",
            format!("no override on line {line} of overrides.csv"),
        ));
    }
    Ok(Json(json!({"revision": revision})))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An excused student has no score for an override to change (a trial: the page took one
    /// and the run then said "not applied").
    #[test]
    fn an_override_needs_a_graded_submission() {
        let records = vec![
            json!({"student_id": "3004", "section": "A", "status": "excused"}),
            json!({"student_id": "3005", "section": "A", "status": "graded"}),
            json!({"student_id": "3006", "section": "A", "status": "excused"}),
            json!({"student_id": "3006", "section": "B", "status": "graded"}),
        ];
        let e = known_student(&records, "3004", None).unwrap_err();
        assert_eq!(e.field, "student_id");
        assert!(e.message.contains("excused"), "{}", e.message);
        assert!(known_student(&records, "3005", Some("A")).is_ok());
        assert!(known_student(&records, "3006", None).is_ok());
        assert!(known_student(&records, "3006", Some("A")).is_err());
        assert_eq!(
            known_student(&records, "9999", Some("A"))
                .unwrap_err()
                .field,
            "section"
        );
    }
}
