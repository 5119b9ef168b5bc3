//! The roster and the corrections in the workspace page: a roster uploaded (kept as
//! `roster.EXT` and given to every run as `--roster`), replaced or removed; the entry workbooks
//! made from it by `benchgrade template` itself (run as a process of its own, as a grading run
//! is, so that no roster file can take the server down) into `templates/`, and downloaded; the
//! rostered students of whom no row was read and the rows whose id is not on the roster, with
//! the enrolled id a run found one typing slip away, which the page offers as a one-click
//! correction; and the corrections themselves, added, listed and removed as overrides are,
//! kept in `corrections.csv` and given to every run as `--corrections`.

use std::path::Path;
use std::process::{Command, Stdio};
use std::sync::{Arc, PoisonError};
use std::time::{Duration, Instant};

use axum::body::{Body, Bytes};
use axum::extract::{Multipart, Path as UrlPath, State};
use axum::http::{header, HeaderValue, StatusCode};
use axum::response::{IntoResponse, Response};
use axum::Json;
use serde::Deserialize;
use serde_json::{json, Value};

use crate::fields::Field;
use crate::rubric::corrections::{Typed, CORRECTABLE};
use crate::rubric::overrides::Invalid;

use super::api::{blocking, edit, given, text_of, ApiError, Reply};
use super::corrections_file;
use super::workspace::{roster_file, sanitise_name, Workspace, INPUTS, RUBRIC, TEMPLATES};
use super::App;

fn server_error(field: &str, message: String) -> ApiError {
    ApiError::new(StatusCode::INTERNAL_SERVER_ERROR, field, message)
}

/// The rostered students the last run found with no submission, by section in natural order.
fn no_submission(records: &[Value]) -> Vec<Value> {
    let mut sections: Vec<(String, Vec<Value>)> = Vec::new();
    for r in records
        .iter()
        .filter(|r| r["status"].as_str() == Some("no-submission"))
    {
        let section = r["section"].as_str().unwrap_or("").to_string();
        let student = json!({"student_id": r["student_id"], "student_name": r["student_name"]});
        match sections.iter_mut().find(|(s, _)| *s == section) {
            Some((_, list)) => list.push(student),
            None => sections.push((section, vec![student])),
        }
    }
    sections.sort_by(|a, b| crate::stats::cohort::natural_cmp(&a.0, &b.0));
    sections
        .into_iter()
        .map(|(section, students)| json!({"section": section, "students": students}))
        .collect()
}

/// The rows the last run flagged `not-on-roster`, each with the enrolled id its note names as
/// the likely one (`nearest`, null where the run found none).
fn not_on_roster(records: &[Value]) -> Vec<Value> {
    let code = crate::model::Flag::NotOnRoster.code();
    records
        .iter()
        .filter(|r| {
            r["flags"]
                .as_array()
                .is_some_and(|f| f.iter().any(|c| c == code))
        })
        .map(|r| {
            let nearest = r["flag_notes"].as_array().and_then(|notes| {
                notes
                    .iter()
                    .filter_map(Value::as_str)
                    .filter(|n| n.starts_with(code))
                    .find_map(crate::assess::roster::likely_in_note)
            });
            json!({
                "student_id": r["student_id"], "student_name": r["student_name"],
                "section": r["section"], "source": r["source"], "sheet": r["sheet"],
                "row": r["row"], "nearest": nearest,
            })
        })
        .collect()
}

/// `GET /api/roster`: the roster file, what the last run found against it, and the entry
/// workbooks made from it.
pub async fn get_roster(State(app): State<Arc<App>>) -> Reply {
    let ws = app.ws.clone();
    let (roster, templates) = blocking(move || {
        let roster = roster_file().and_then(|name| {
            let size = std::fs::metadata(&name).ok()?.len();
            Some(json!({"name": name, "size": size}))
        });
        (roster, ws.templates())
    })
    .await?;
    let outcome = app.grader.state().outcome;
    Ok(Json(json!({
        "roster": roster,
        "no_submission": no_submission(&outcome.records),
        "not_on_roster": not_on_roster(&outcome.records),
        "templates": templates,
    })))
}

/// `POST /api/roster`: one multipart `file` field, stored as `roster.EXT` in place of the
/// roster there was.
pub async fn post_roster(
    State(app): State<Arc<App>>,
    mut multipart: Multipart,
) -> Result<(StatusCode, Json<Value>), ApiError> {
    let mut files = super::upload::receive(&mut multipart, app.upload_limit).await?;
    let (Some(file), true) = (files.pop(), files.is_empty()) else {
        return Err(ApiError::new(
            StatusCode::BAD_REQUEST,
            "file",
            "send one roster file; nothing was stored",
        ));
    };
    // the name was checked by `receive`: a spreadsheet type the command line reads
    let ext = sanitise_name(&file.name)
        .ok()
        .and_then(|n| n.rsplit_once('.').map(|(_, e)| e.to_string()))
        .unwrap_or_default();
    let ws = app.ws.clone();
    let (stored, revision) = edit(&app, move || {
        ws.store_roster(&ext, &file.bytes)
            .map_err(|e| server_error("file", format!("cannot store the roster: {e}")))
    })
    .await?;
    Ok((
        StatusCode::CREATED,
        Json(json!({"stored": stored, "revision": revision})),
    ))
}

/// `DELETE /api/roster`: the workspace is graded without a roster again.
pub async fn delete_roster(State(app): State<Arc<App>>) -> Reply {
    let ws = app.ws.clone();
    let (removed, revision) = edit(&app, move || {
        ws.remove_roster()
            .map_err(|e| server_error("roster", format!("cannot remove the roster: {e}")))
    })
    .await?;
    if !removed {
        return Err(ApiError::new(
            StatusCode::NOT_FOUND,
            "roster",
            "the workspace has no roster",
        ));
    }
    Ok(Json(json!({"revision": revision})))
}

/// The longest `benchgrade template` may take for the page.
const TEMPLATE_LIMIT: Duration = Duration::from_secs(120);

/// The arguments of `benchgrade template` for the workspace: its roster, its rubric if it has
/// one, and an answer key among its inputs (a file named as one: "answer-key.csv").
fn template_args(ws: &Workspace, roster: &str) -> Vec<String> {
    let mut args: Vec<String> = vec!["template".into(), "--roster".into(), roster.into()];
    if Path::new(RUBRIC).is_file() {
        args.extend(["--rubric".into(), RUBRIC.into()]);
    }
    let key = ws
        .inputs()
        .into_iter()
        .map(|f| format!("{INPUTS}/{}", f.name))
        .find(|p| crate::ingest::key::is_key_file(Path::new(p)));
    if let Some(k) = key {
        args.extend(["--key".into(), k]);
    }
    args.extend(["--out".into(), TEMPLATES.into()]);
    args
}

/// Starts this program as a child process: from the file it was started from, or, where that
/// file is gone or replaced since the server started (the path then names no file, or
/// another program), from the running program itself (`/proc/self/exe` on Linux).
fn spawn_self(build: impl Fn(&mut Command)) -> std::io::Result<std::process::Child> {
    let from = |exe: &Path| {
        let mut c = Command::new(exe);
        build(&mut c);
        c.spawn()
    };
    std::env::current_exe()
        .and_then(|exe| from(&exe))
        .or_else(|e| {
            let running = Path::new("/proc/self/exe");
            if running.exists() {
                from(running)
            } else {
                Err(e)
            }
        })
}

/// `benchgrade template` started with `args`, its standard error piped; a 503 when no program
/// can be started.
fn start_template(args: &[String]) -> Result<std::process::Child, ApiError> {
    spawn_self(|c| {
        c.args(args)
            .stdin(Stdio::null())
            .stdout(Stdio::null())
            .stderr(Stdio::piped());
    })
    .map_err(|e| {
        ApiError::new(
            StatusCode::SERVICE_UNAVAILABLE,
            "roster",
            format!("cannot run benchgrade template ({e}): the benchgrade program was removed or replaced since the server started; restart `benchgrade serve`"),
        )
    })
}

/// Runs `benchgrade template` in the workspace; its message when it fails. Its standard
/// error is read for the message only, never passed on to the server's.
fn make_templates(ws: &Workspace) -> Result<(), ApiError> {
    let Some(roster) = roster_file() else {
        return Err(ApiError::new(
            StatusCode::CONFLICT,
            "roster",
            "upload a roster first: the entry workbooks are made from it",
        ));
    };
    // `template --out` follows a link as a user's folder; the page writes only inside the
    // workspace
    if std::fs::symlink_metadata(TEMPLATES).is_ok_and(|m| !m.is_dir()) {
        return Err(ApiError::new(
            StatusCode::CONFLICT,
            "templates",
            format!("{TEMPLATES} in the workspace is a link or a file, not a folder; the page writes only inside the workspace (remove it there yourself)"),
        ));
    }
    let mut child = start_template(&template_args(ws, &roster))?;
    let stderr = child.stderr.take();
    let said = std::thread::spawn(move || {
        let mut text = String::new();
        if let Some(mut s) = stderr {
            let _ = std::io::Read::read_to_string(&mut s, &mut text);
        }
        text
    });
    let started = Instant::now();
    let status = loop {
        match child.try_wait() {
            Ok(Some(s)) => break Some(s),
            Ok(None) if started.elapsed() < TEMPLATE_LIMIT => {
                std::thread::sleep(Duration::from_millis(20));
            }
            _ => {
                let _ = child.kill();
                let _ = child.wait();
                break None;
            }
        }
    };
    let text = said.join().unwrap_or_default();
    match status {
        Some(s) if s.success() => Ok(()),
        Some(_) => Err(ApiError::new(
            StatusCode::UNPROCESSABLE_ENTITY,
            "roster",
            text.trim().trim_start_matches("benchgrade: ").to_string(),
        )),
        None => Err(server_error(
            "roster",
            "benchgrade template took too long and was stopped; check the roster with `benchgrade check --roster`".into(),
        )),
    }
}

/// `POST /api/templates`: makes the entry workbooks from the roster (as `benchgrade template
/// --roster roster.EXT [--rubric rubric.toml] [--key KEY] --out templates`) and lists them.
pub async fn post_templates(State(app): State<Arc<App>>) -> Reply {
    let shared = Arc::clone(&app);
    let made = blocking(move || {
        let _one = shared.edit.lock().unwrap_or_else(PoisonError::into_inner);
        make_templates(&shared.ws).map(|()| shared.ws.templates())
    })
    .await??;
    Ok(Json(json!({"templates": made})))
}

/// `GET /api/templates/{name}`: one entry workbook, as a download.
pub async fn get_template(
    State(app): State<Arc<App>>,
    UrlPath(name): UrlPath<String>,
) -> Result<Response, ApiError> {
    let ws = app.ws.clone();
    let wanted = name.clone();
    let bytes = blocking(move || ws.read_template(&wanted))
        .await?
        .ok_or_else(|| {
            ApiError::new(
                StatusCode::NOT_FOUND,
                "name",
                "no such entry workbook in templates/",
            )
        })?
        .map_err(|e| server_error("name", format!("cannot read it: {e}")))?;
    let mut response = Body::from(bytes).into_response();
    let h = response.headers_mut();
    h.insert(
        header::CONTENT_TYPE,
        HeaderValue::from_static(
            "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
        ),
    );
    if let Ok(v) = HeaderValue::from_str(&super::outputs::disposition("attachment", &name)) {
        h.insert(header::CONTENT_DISPOSITION, v);
    }
    Ok(response)
}

/// `GET /api/corrections`: the corrections in corrections.csv, each with its line, and the
/// fields a correction may set.
pub async fn get_corrections() -> Reply {
    let listed = blocking(corrections_file::list).await?;
    let fields: Vec<Value> = CORRECTABLE
        .iter()
        .map(|f| json!({"key": f.key(), "label": f.label()}))
        .collect();
    Ok(Json(match listed {
        Ok(list) => json!({"corrections": list, "error": null, "fields": fields}),
        Err(e) => json!({"corrections": [], "error": e, "fields": fields}),
    }))
}

/// A correction as the form sends it; the value may be a number or text.
#[derive(Deserialize, Default)]
#[serde(default, deny_unknown_fields)]
struct CorrectionForm {
    student_id: Option<String>,
    section: Option<String>,
    field: Option<String>,
    value: Option<Value>,
    reason: Option<String>,
    grader: Option<String>,
}

/// The form's parts as a line of the file gives them, `value` its value as text.
fn typed<'a>(form: &'a CorrectionForm, value: Option<&'a String>) -> Typed<'a> {
    Typed {
        student_id: given(form.student_id.as_ref()),
        section: given(form.section.as_ref()),
        field: given(form.field.as_ref()),
        value: given(value),
        reason: given(form.reason.as_ref()),
        grader: given(form.grader.as_ref()),
    }
}

/// A correction finds its row by the id as the sheet has it: a row the last run read with that
/// id (in that section, if one is given), or one an earlier correction already names (its id
/// may since have been corrected). The command line refuses a correction that finds no row.
fn known_row(
    records: &[Value],
    corrections: &[corrections_file::Entry],
    id: &str,
    section: Option<&str>,
) -> Result<(), Invalid> {
    let same_section = |s: Option<&str>| {
        section.is_none_or(|want| {
            s.is_some_and(|s| crate::model::section_key(s) == crate::model::section_key(want))
        })
    };
    let read = |any_section: bool| {
        records.iter().any(|r| {
            r["status"].as_str() != Some("no-submission")
                && r["student_id"].as_str().map(str::trim) == Some(id)
                && (any_section || same_section(r["section"].as_str()))
        }) || corrections.iter().any(|c| {
            c.student_id == id
                && (any_section || c.section.is_none() || same_section(c.section.as_deref()))
        })
    };
    // a row shows the id a correction gave it, but corrections find rows by the id as typed
    if let Some(c) = corrections
        .iter()
        .find(|c| c.field == "student_id" && c.value.trim() == id)
    {
        return Err(Invalid {
            field: "student_id",
            message: format!(
                "{id} is the id the correction on line {} gave this student; name them by the id as the sheet has it, {}",
                c.line, c.student_id
            ),
        });
    }
    if read(false) {
        return Ok(());
    }
    let where_ = section
        .map(|s| format!(" in section {s}"))
        .unwrap_or_default();
    Err(Invalid {
        // an id read in another section: the section is what to fix
        field: if read(true) { "section" } else { "student_id" },
        message: format!(
            "no row read has this student id{where_}; name the student by the id as the sheet has it"
        ),
    })
}

/// The form's correction checked as a line of `--corrections` is, with a status in words the
/// readers know.
fn check_form(form: &CorrectionForm, records: &[Value]) -> Result<Option<String>, Invalid> {
    let value = text_of(form.value.as_ref());
    let c = typed(form, value.as_ref()).check(0)?;
    if c.field == Field::Status && !crate::config::status_read(&c.written) {
        return Err(Invalid {
            field: "value",
            message: format!(
                "status \"{}\" is neither graded nor a word that excuses (W, withdrawn, excused, absent, exempt, ...)",
                c.written
            ),
        });
    }
    let listed = corrections_file::list().unwrap_or_default();
    known_row(records, &listed, &c.student_id, c.section.as_deref())?;
    Ok(value)
}

/// `POST /api/corrections`: checks a correction as `--corrections` would and adds it to the
/// file; the run that follows applies it.
pub async fn post_correction(
    State(app): State<Arc<App>>,
    body: Bytes,
) -> Result<(StatusCode, Json<Value>), ApiError> {
    let form: CorrectionForm = serde_json::from_slice(&body).map_err(|e| {
        ApiError::new(
            StatusCode::UNPROCESSABLE_ENTITY,
            "body",
            format!("expected a correction as JSON: {e}"),
        )
    })?;
    let current = app.grader.state().revision;
    let records = app.grader.graded(current).await;
    let (line, revision) = edit(&app, move || {
        let value = check_form(&form, &records.records).map_err(ApiError::invalid)?;
        corrections_file::add(&typed(&form, value.as_ref())).map_err(ApiError::invalid)
    })
    .await?;
    Ok((
        StatusCode::CREATED,
        Json(json!({"line": line, "revision": revision})),
    ))
}

/// `DELETE /api/corrections/{line}`: takes out the correction on that line of corrections.csv.
pub async fn delete_correction(
    State(app): State<Arc<App>>,
    UrlPath(line): UrlPath<usize>,
) -> Reply {
    let (removed, revision) = edit(&app, move || {
        corrections_file::remove(line).map_err(ApiError::invalid)
    })
    .await?;
    if !removed {
        return Err(ApiError::new(
            StatusCode::NOT_FOUND,
            "line",
            format!("no correction on line {line} of corrections.csv"),
        ));
    }
    Ok(Json(json!({"revision": revision})))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A correction names its row by the id the sheet has (hand-made records).
    #[test]
    fn a_correction_needs_a_row_read() {
        let records = vec![
            json!({"student_id": "270231", "section": "S4", "status": "graded"}),
            json!({"student_id": "2701231", "section": "S4", "status": "no-submission"}),
        ];
        assert!(known_row(&records, &[], "270231", Some("S4")).is_ok());
        assert!(known_row(&records, &[], "270231", None).is_ok());
        // a rostered student of whom no row was read has no row to correct
        assert_eq!(
            known_row(&records, &[], "2701231", None).unwrap_err().field,
            "student_id"
        );
        assert_eq!(
            known_row(&records, &[], "270231", Some("S1"))
                .unwrap_err()
                .field,
            "section"
        );
        // once corrected, the row shows the enrolled id; a further correction names the typed one
        let corrected = vec![
            json!({"student_id": "2701231", "section": "S4", "status": "graded"}),
            json!({"student_id": "2701231", "section": "S4", "status": "no-submission"}),
        ];
        let line = corrections_file::Entry {
            line: 2,
            student_id: "270231".into(),
            section: Some("S4".into()),
            field: "student_id".into(),
            value: "2701231".into(),
            reason: "a digit dropped".into(),
            grader: "R. Vance".into(),
        };
        let e = known_row(&corrected, std::slice::from_ref(&line), "2701231", None).unwrap_err();
        assert!(e.message.contains("270231"), "{}", e.message);
        assert!(known_row(&corrected, &[line], "270231", Some("S4")).is_ok());
    }

    #[test]
    fn the_likely_id_comes_from_the_note() {
        let records = vec![json!({
            "student_id": "2700170", "student_name": "Ashdown, Bastian", "section": "S1",
            "flags": ["not-on-roster"],
            "flag_notes": ["not-on-roster: id 2700170 is not on the roster; it is one typing slip from 2701070, whose name agrees: confirm with a correction"],
        })];
        let listed = not_on_roster(&records);
        assert_eq!(listed[0]["nearest"], "2701070");
    }
}
