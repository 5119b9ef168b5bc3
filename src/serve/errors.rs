//! The errors axum and tower-http answer by themselves, before a handler runs (a body past the
//! upload limit, a request that is not multipart, a path that does not parse, no such route),
//! answered on /api/ as JSON like the API's own errors, `{"error": "...", "field": "..."}`, so
//! that the page can show every one the same way.

use axum::http::{header, StatusCode};
use axum::response::{IntoResponse, Response};

use super::api::ApiError;

/// A plain-text error response to an /api/ request, as JSON; anything else as it is.
pub async fn as_json(path: &str, response: Response, upload_limit: usize) -> Response {
    let status = response.status();
    let json = response
        .headers()
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .is_some_and(|t| t.starts_with("application/json"));
    let error = status.is_client_error() || status.is_server_error();
    if json || !error || !path.starts_with("/api/") {
        return response;
    }
    let text = axum::body::to_bytes(response.into_body(), 64 << 10)
        .await
        .map(|b| String::from_utf8_lossy(&b).trim().to_string())
        .unwrap_or_default();
    let (field, message) = explain(path, status, &text, upload_limit);
    ApiError::new(status, field, message).into_response()
}

/// The field at fault and what to do, from the status and the framework's own words.
fn explain(path: &str, status: StatusCode, text: &str, limit: usize) -> (&'static str, String) {
    let said = if text.is_empty() {
        status.canonical_reason().unwrap_or("refused").to_string()
    } else {
        text.to_string()
    };
    if status == StatusCode::PAYLOAD_TOO_LARGE {
        let mb = limit / (1024 * 1024);
        return (
            "file",
            format!("the upload is larger than the limit of {mb} MB; nothing was stored"),
        );
    }
    if path == "/api/files" {
        return (
            "file",
            format!("the upload could not be read ({said}); nothing was stored"),
        );
    }
    match status {
        StatusCode::NOT_FOUND => ("path", format!("no such request: {path}")),
        StatusCode::METHOD_NOT_ALLOWED => ("method", format!("{path} does not take this method")),
        _ => ("path", said),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_framework_s_words_are_kept_and_the_limit_is_named() {
        let (field, m) = explain(
            "/api/files",
            StatusCode::PAYLOAD_TOO_LARGE,
            "length limit exceeded",
            5 << 20,
        );
        assert_eq!(
            (field, m.as_str()),
            (
                "file",
                "the upload is larger than the limit of 5 MB; nothing was stored"
            )
        );
        let (field, m) = explain(
            "/api/overrides/x",
            StatusCode::BAD_REQUEST,
            "Invalid URL: Cannot parse `x`",
            1,
        );
        assert_eq!(
            (field, m.as_str()),
            ("path", "Invalid URL: Cannot parse `x`")
        );
    }
}
