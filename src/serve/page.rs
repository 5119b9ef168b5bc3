//! The page itself: one HTML file, its two scripts and its style sheet, embedded in the binary so
//! that nothing is loaded from anywhere else. Opening `/?token=...` exchanges the token for an
//! HttpOnly, SameSite=Strict cookie and sends the browser on to `/`, so that the token leaves
//! the address bar; `/` without the cookie explains how to get in.

use std::sync::Arc;

use axum::extract::{Path as UrlPath, Query, State};
use axum::http::{header, HeaderMap, HeaderValue, StatusCode};
use axum::response::{Html, IntoResponse, Response};
use serde::Deserialize;

use super::guard::{authorised, COOKIE};
use super::App;

const PAGE: &str = include_str!("../../assets/workspace/index.html");
const SCRIPT: &str = include_str!("../../assets/workspace/workspace.js");
const ROSTER_SCRIPT: &str = include_str!("../../assets/workspace/roster.js");
const STYLE: &str = include_str!("../../assets/workspace/workspace.css");

const LOCKED: &str = "<!doctype html><html lang=\"en\"><head><meta charset=\"utf-8\"><title>benchgrade workspace: locked</title></head><body><h1>This workspace is locked</h1><p>Open the address that <code>benchgrade serve</code> printed when it started (it ends in <code>?token=</code> and a long key). Each start of the server prints a new one.</p></body></html>";

#[derive(Deserialize)]
pub struct Opening {
    token: Option<String>,
}

/// `GET /`: the page, for a browser that holds the cookie or brings the token.
pub async fn index(
    State(app): State<Arc<App>>,
    Query(q): Query<Opening>,
    headers: HeaderMap,
) -> Response {
    if let Some(t) = q.token {
        if !app.token.matches(&t) {
            return (StatusCode::UNAUTHORIZED, Html(LOCKED)).into_response();
        }
        let cookie = format!("{COOKIE}={t}; HttpOnly; SameSite=Strict; Path=/");
        let mut r = (StatusCode::SEE_OTHER, [(header::LOCATION, "/")]).into_response();
        if let Ok(v) = HeaderValue::from_str(&cookie) {
            r.headers_mut().insert(header::SET_COOKIE, v);
        }
        return r;
    }
    if authorised(&app, &headers) {
        Html(PAGE).into_response()
    } else {
        (StatusCode::UNAUTHORIZED, Html(LOCKED)).into_response()
    }
}

/// `GET /assets/{name}`: the page's script and style (no student data in either).
pub async fn asset(UrlPath(name): UrlPath<String>) -> Response {
    let (body, kind) = match name.as_str() {
        "workspace.js" => (SCRIPT, "text/javascript; charset=utf-8"),
        "roster.js" => (ROSTER_SCRIPT, "text/javascript; charset=utf-8"),
        "workspace.css" => (STYLE, "text/css; charset=utf-8"),
        _ => return StatusCode::NOT_FOUND.into_response(),
    };
    ([(header::CONTENT_TYPE, kind)], body).into_response()
}
