//! What every request passes before it reaches a handler, and what every response carries.
//! The page holds students' names and marks, so the server answers only its own page on this
//! computer: a Host header naming the address it listens on (a page elsewhere that points a
//! name of its own at 127.0.0.1, DNS rebinding, is refused), no state-changing request from
//! another origin, and on /api/ a valid token, as a Bearer header or the cookie the page was
//! given, compared in constant time. Responses forbid framing, sniffing, caching and every
//! network source but the server itself (Content-Security-Policy).

use std::fmt::Write as _;
use std::sync::Arc;

use axum::extract::{Request, State};
use axum::http::{header, HeaderMap, HeaderValue, Method, StatusCode};
use axum::middleware::Next;
use axum::response::{IntoResponse, Response};
use subtle::ConstantTimeEq;

use super::api::ApiError;
use super::App;

/// The cookie the page's token is exchanged for.
pub const COOKIE: &str = "benchgrade-session";

/// The page's policy: its own script and style only, nothing from the network.
pub const PAGE_POLICY: &str = "default-src 'none'; script-src 'self'; style-src 'self'; img-src 'self'; connect-src 'self'; form-action 'self'; base-uri 'none'; frame-ancestors 'none'";

/// The secret that opens the workspace: 256 random bits, as 64 hex digits.
pub struct Token(String);

impl Token {
    pub fn new() -> Result<Token, getrandom::Error> {
        let mut bytes = [0u8; 32];
        getrandom::fill(&mut bytes)?;
        let hex = bytes.iter().fold(String::with_capacity(64), |mut s, b| {
            let _ = write!(s, "{b:02x}");
            s
        });
        Ok(Token(hex))
    }

    pub fn as_str(&self) -> &str {
        &self.0
    }

    /// Whether `given` is the token; the time taken does not depend on where they differ.
    pub fn matches(&self, given: &str) -> bool {
        self.0.as_bytes().ct_eq(given.as_bytes()).into()
    }
}

/// The value of the page's cookie in a request, if it has one.
pub fn cookie(headers: &HeaderMap) -> Option<&str> {
    headers
        .get_all(header::COOKIE)
        .iter()
        .filter_map(|v| v.to_str().ok())
        .flat_map(|v| v.split(';'))
        .find_map(|pair| {
            let (name, value) = pair.trim().split_once('=')?;
            (name == COOKIE).then_some(value)
        })
}

/// Whether the request carries the token, as a Bearer header or the cookie.
pub fn authorised(app: &App, headers: &HeaderMap) -> bool {
    let bearer = headers
        .get(header::AUTHORIZATION)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.strip_prefix("Bearer "))
        .is_some_and(|t| app.token.matches(t.trim()));
    bearer || cookie(headers).is_some_and(|t| app.token.matches(t))
}

fn host_allowed(app: &App, headers: &HeaderMap) -> bool {
    headers
        .get(header::HOST)
        .and_then(|v| v.to_str().ok())
        .is_some_and(|h| app.hosts.iter().any(|a| a.eq_ignore_ascii_case(h)))
}

/// A request that changes nothing, or one from the page itself (or from no browser at all).
fn origin_allowed(app: &App, method: &Method, headers: &HeaderMap) -> bool {
    if matches!(*method, Method::GET | Method::HEAD | Method::OPTIONS) {
        return true;
    }
    let site = headers
        .get("sec-fetch-site")
        .and_then(|v| v.to_str().ok())
        .unwrap_or("same-origin");
    if !matches!(site, "same-origin" | "none") {
        return false;
    }
    match headers.get(header::ORIGIN).map(HeaderValue::to_str) {
        None => true,
        Some(Ok(origin)) => app
            .hosts
            .iter()
            .any(|h| origin.eq_ignore_ascii_case(&format!("http://{h}"))),
        Some(Err(_)) => false,
    }
}

/// The checks, in order: Host, Origin, then the token for /api/.
pub async fn check(State(app): State<Arc<App>>, req: Request, next: Next) -> Response {
    let refused = if !host_allowed(&app, req.headers()) {
        Some(ApiError::new(
            StatusCode::FORBIDDEN,
            "host",
            "this server answers only its own address (the Host header names another)",
        ))
    } else if !origin_allowed(&app, req.method(), req.headers()) {
        Some(ApiError::new(
            StatusCode::FORBIDDEN,
            "origin",
            "a change may come only from the workspace page itself",
        ))
    } else if req.uri().path().starts_with("/api/") && !authorised(&app, req.headers()) {
        Some(ApiError::new(
            StatusCode::UNAUTHORIZED,
            "token",
            "no valid token: open the address benchgrade serve printed, or send Authorization: Bearer TOKEN",
        ))
    } else {
        None
    };
    let mut response = if let Some(e) = refused {
        e.into_response()
    } else {
        let path = req.uri().path().to_string();
        let response = next.run(req).await;
        super::errors::as_json(&path, response, app.upload_limit).await
    };
    protect(response.headers_mut());
    response
}

/// The headers every response carries; a handler's own policy (an output shown in the page)
/// is kept.
fn protect(h: &mut HeaderMap) {
    let fixed = [
        (header::X_CONTENT_TYPE_OPTIONS, "nosniff"),
        (header::REFERRER_POLICY, "no-referrer"),
        (header::X_FRAME_OPTIONS, "DENY"),
        (header::CACHE_CONTROL, "no-store"),
        (
            header::HeaderName::from_static("cross-origin-resource-policy"),
            "same-origin",
        ),
        (
            header::HeaderName::from_static("cross-origin-opener-policy"),
            "same-origin",
        ),
    ];
    for (name, value) in fixed {
        h.insert(name, HeaderValue::from_static(value));
    }
    if !h.contains_key(header::CONTENT_SECURITY_POLICY) {
        h.insert(
            header::CONTENT_SECURITY_POLICY,
            HeaderValue::from_static(PAGE_POLICY),
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tokens_are_long_random_and_compared_whole() {
        let a = Token::new().unwrap();
        let b = Token::new().unwrap();
        assert_eq!(a.as_str().len(), 64, "256 bits as hex");
        assert_ne!(a.as_str(), b.as_str());
        assert!(a.matches(a.as_str()));
        assert!(!a.matches(b.as_str()));
        assert!(!a.matches(&a.as_str()[..63]));
        assert!(!a.matches(""));
    }

    #[test]
    fn the_cookie_is_found_among_others() {
        let mut h = HeaderMap::new();
        h.insert(
            header::COOKIE,
            HeaderValue::from_static("a=1; benchgrade-session=abc; b=2"),
        );
        assert_eq!(cookie(&h), Some("abc"));
        h.insert(
            header::COOKIE,
            HeaderValue::from_static("xbenchgrade-session=abc"),
        );
        assert_eq!(cookie(&h), None);
    }
}
