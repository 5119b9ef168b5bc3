//! The outputs in `graded/`, listed and downloaded: every visible file the last run wrote (the
//! graded workbooks to hand back, the gradebook, the results, the cohort report), named only
//! as the folder's listing names them. `?view=1` shows a report or a text file in the browser
//! instead, the HTML report under a policy of its own: its inline style, no script, sandboxed.

use std::sync::Arc;

use axum::body::Body;
use axum::extract::{Path as UrlPath, Query, State};
use axum::http::{header, HeaderValue, StatusCode};
use axum::response::{IntoResponse, Response};
use axum::Json;
use serde::Deserialize;
use serde_json::json;

use super::api::{blocking, ApiError, Reply};
use super::App;

/// `GET /api/outputs`: the files of graded/.
pub async fn list(State(app): State<Arc<App>>) -> Reply {
    let ws = app.ws.clone();
    let outputs = blocking(move || ws.outputs()).await?;
    Ok(Json(json!({"outputs": outputs})))
}

#[derive(Deserialize)]
pub struct View {
    view: Option<String>,
}

/// The content type of an output, and whether the browser may show it.
fn kind(name: &str) -> (&'static str, bool) {
    let ext = name.rsplit('.').next().unwrap_or("").to_ascii_lowercase();
    match ext.as_str() {
        "html" => ("text/html; charset=utf-8", true),
        "csv" => ("text/csv; charset=utf-8", true),
        "json" => ("application/json", true),
        "xlsx" => (
            "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
            false,
        ),
        _ => ("application/octet-stream", false),
    }
}

/// `filename*=` in RFC 5987's form: every byte but letters, digits and `.-_` percent-encoded.
pub(super) fn disposition(how: &str, name: &str) -> String {
    let plain: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || ".-_".contains(c) {
                c
            } else {
                '_'
            }
        })
        .collect();
    let encoded: String = name
        .bytes()
        .map(|b| {
            if b.is_ascii_alphanumeric() || b".-_".contains(&b) {
                (b as char).to_string()
            } else {
                format!("%{b:02X}")
            }
        })
        .collect();
    format!("{how}; filename=\"{plain}\"; filename*=UTF-8''{encoded}")
}

/// `GET /api/outputs/{name}[?view=1]`: one output, to download or to view.
pub async fn get(
    State(app): State<Arc<App>>,
    UrlPath(name): UrlPath<String>,
    Query(q): Query<View>,
) -> Result<Response, ApiError> {
    let ws = app.ws.clone();
    let wanted = name.clone();
    let bytes = blocking(move || ws.read_output(&wanted))
        .await?
        .ok_or_else(|| ApiError::new(StatusCode::NOT_FOUND, "name", "no such output in graded/"))?
        .map_err(|e| {
            ApiError::new(
                StatusCode::INTERNAL_SERVER_ERROR,
                "name",
                format!("cannot read it: {e}"),
            )
        })?;
    let (content_type, viewable) = kind(&name);
    let view = viewable && q.view.is_some();
    let mut response = Body::from(bytes).into_response();
    let h = response.headers_mut();
    let shown_type = if view && content_type.starts_with("text/csv") {
        "text/plain; charset=utf-8"
    } else {
        content_type
    };
    h.insert(header::CONTENT_TYPE, HeaderValue::from_static(shown_type));
    let how = if view { "inline" } else { "attachment" };
    if let Ok(v) = HeaderValue::from_str(&disposition(how, &name)) {
        h.insert(header::CONTENT_DISPOSITION, v);
    }
    if view {
        h.insert(
            header::CONTENT_SECURITY_POLICY,
            HeaderValue::from_static(
                "default-src 'none'; style-src 'unsafe-inline'; img-src data:; sandbox",
            ),
        );
    }
    Ok(response)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn download_names_are_quoted_safely() {
        assert_eq!(
            disposition("attachment", "gradebook.csv"),
            "attachment; filename=\"gradebook.csv\"; filename*=UTF-8''gradebook.csv"
        );
        assert_eq!(
            disposition("inline", "Sektion \"3\".xlsx"),
            "inline; filename=\"Sektion__3_.xlsx\"; filename*=UTF-8''Sektion%20%223%22.xlsx"
        );
    }
}
