//! `benchgrade serve`: a grading workspace in the browser, for assistants who never open a
//! terminal. A local HTTP server (axum on a one-thread tokio runtime) serves one embedded page
//! and the JSON API it uses; grading runs on a thread of its own (`grader`), over the same
//! files the command line reads (`workspace`). The server answers only its own page on this
//! computer (`guard`).
//!
//! `api`: the JSON API; `upload`: spreadsheets in; `outputs`: graded files out; `page`: the
//! page and its assets; `overrides_file`: overrides.csv as the page edits it; `roster`: the
//! roster, the entry workbooks made from it and the corrections; `corrections_file`:
//! corrections.csv as the page edits it; `errors`: the
//! framework's own error answers, as JSON; `connections`: the accept loop, with a cap on
//! connections and their timeouts; `child`: each grading run in a process of its own.

pub mod api;
pub mod child;
pub mod connections;
pub mod corrections_file;
pub mod errors;
pub mod grader;
pub mod guard;
pub mod line_file;
pub mod outputs;
pub mod overrides_file;
pub mod page;
pub mod roster;
pub mod upload;
pub mod workspace;

use std::io::Write as _;
use std::net::IpAddr;
use std::path::PathBuf;
use std::sync::{Arc, Mutex};
use std::time::Duration;

use axum::extract::DefaultBodyLimit;
use axum::routing::{delete, get, post};
use axum::Router;
use tower_http::limit::RequestBodyLimitLayer;

use grader::Grader;
use guard::Token;
use workspace::Workspace;

/// What `benchgrade serve` was asked for.
#[derive(Clone, Debug)]
pub struct ServeOptions {
    /// The workspace folder; created if missing. The server works inside it.
    pub workspace: PathBuf,
    /// The address to listen on: 127.0.0.1 unless `--listen` names another.
    pub listen: IpAddr,
    /// 0 picks a free port.
    pub port: u16,
    /// Open the page in the browser once the server listens.
    pub open: bool,
    /// The largest upload, in MB.
    pub upload_limit_mb: u64,
}

/// Why the server could not start (or stopped).
#[derive(Debug, thiserror::Error)]
pub enum ServeError {
    #[error("cannot use the workspace {path}: {source}")]
    Workspace {
        path: String,
        source: std::io::Error,
    },
    #[error("cannot listen on {addr}: {source}{hint}")]
    Listen {
        addr: String,
        source: std::io::Error,
        hint: &'static str,
    },
    #[error("{0}")]
    Invalid(String),
    #[error("the server stopped: {0}")]
    Server(std::io::Error),
}

/// What every handler shares.
pub struct App {
    pub token: Token,
    /// The Host header values this server answers: its own address and port.
    pub hosts: Vec<String>,
    pub grader: Arc<Grader>,
    pub ws: Workspace,
    /// One edit of the workspace's files at a time.
    pub edit: Mutex<()>,
    /// In bytes.
    pub upload_limit: usize,
}

/// The routes: the page, its assets and the JSON API, all behind `guard::check`.
pub fn router(app: Arc<App>) -> Router {
    let limit = app.upload_limit;
    let files = get(api::list_files)
        .post(upload::upload)
        .layer::<_, std::convert::Infallible>(DefaultBodyLimit::max(limit))
        .layer::<_, std::convert::Infallible>(RequestBodyLimitLayer::new(limit));
    let roster_routes = get(roster::get_roster)
        .post(roster::post_roster)
        .delete(roster::delete_roster)
        .layer::<_, std::convert::Infallible>(DefaultBodyLimit::max(limit))
        .layer::<_, std::convert::Infallible>(RequestBodyLimitLayer::new(limit));
    Router::new()
        .route("/", get(page::index))
        .route("/assets/{name}", get(page::asset))
        .route("/api/files", files)
        .route("/api/files/{*name}", delete(api::delete_file))
        .route("/api/columns", get(api::get_columns).put(api::put_columns))
        .route("/api/grade", post(api::grade))
        .route("/api/status", get(api::status))
        .route("/api/results", get(api::results))
        .route(
            "/api/overrides",
            get(api::get_overrides).post(api::post_override),
        )
        .route("/api/overrides/{line}", delete(api::delete_override))
        .route("/api/roster", roster_routes)
        .route("/api/templates", post(roster::post_templates))
        .route("/api/templates/{name}", get(roster::get_template))
        .route(
            "/api/corrections",
            get(roster::get_corrections).post(roster::post_correction),
        )
        .route("/api/corrections/{line}", delete(roster::delete_correction))
        .route("/api/outputs", get(outputs::list))
        .route("/api/outputs/{*name}", get(outputs::get))
        .layer(axum::middleware::from_fn_with_state(
            Arc::clone(&app),
            guard::check,
        ))
        .with_state(app)
}

/// The address listened on, as a Host header names it.
fn own_host(listen: IpAddr, port: u16) -> String {
    match listen {
        IpAddr::V4(a) => format!("{a}:{port}"),
        IpAddr::V6(a) => format!("[{a}]:{port}"),
    }
}

/// The Host header values to answer: the loopback names, and the address listened on.
fn hosts(listen: IpAddr, port: u16) -> Vec<String> {
    let mut out = vec![
        format!("127.0.0.1:{port}"),
        format!("localhost:{port}"),
        format!("[::1]:{port}"),
    ];
    let own = own_host(listen, port);
    if !out.contains(&own) {
        out.push(own);
    }
    out
}

/// Runs the server until Ctrl-C. The process's working directory becomes the workspace, so
/// that every file is named as `benchgrade grade inputs ...` run there names it.
pub fn run(opts: ServeOptions) -> Result<(), ServeError> {
    if opts.listen.is_unspecified() {
        return Err(ServeError::Invalid(format!(
            "--listen {}: name one address of this computer; an unspecified address would answer every network it is on",
            opts.listen
        )));
    }
    let limit = usize::try_from(opts.upload_limit_mb.saturating_mul(1024 * 1024))
        .ok()
        .filter(|l| *l > 0)
        .ok_or_else(|| ServeError::Invalid("--upload-limit must be at least 1 MB".into()))?;
    let shown = opts.workspace.display().to_string();
    let ws_error = |source| ServeError::Workspace {
        path: shown.clone(),
        source,
    };
    std::fs::create_dir_all(&opts.workspace).map_err(ws_error)?;
    std::env::set_current_dir(&opts.workspace).map_err(ws_error)?;
    let ws = Workspace::create_layout(&opts.workspace).map_err(ws_error)?;
    let token = Token::new()
        .map_err(|e| ServeError::Invalid(format!("no random numbers for the token: {e}")))?;
    let runtime = tokio::runtime::Builder::new_current_thread()
        .enable_all()
        .max_blocking_threads(4)
        .build()
        .map_err(ServeError::Server)?;
    let result = runtime.block_on(serve(&opts, ws, token, limit));
    runtime.shutdown_timeout(Duration::from_millis(500));
    result
}

async fn serve(
    opts: &ServeOptions,
    ws: Workspace,
    token: Token,
    limit: usize,
) -> Result<(), ServeError> {
    let listener = tokio::net::TcpListener::bind((opts.listen, opts.port))
        .await
        .map_err(|source| ServeError::Listen {
            addr: format!("{}:{}", opts.listen, opts.port),
            hint: if source.kind() == std::io::ErrorKind::AddrInUse {
                "; choose another --port, or --port 0 for any free one"
            } else {
                ""
            },
            source,
        })?;
    let port = listener.local_addr().map_err(ServeError::Server)?.port();
    let grader = Grader::start(ws.clone()).map_err(ServeError::Server)?;
    let app = Arc::new(App {
        hosts: hosts(opts.listen, port),
        token,
        grader: Arc::clone(&grader),
        ws,
        edit: Mutex::new(()),
        upload_limit: limit,
    });
    tokio::spawn(watch_hand_edits(grader));
    let url = format!(
        "http://{}/?token={}",
        own_host(opts.listen, port),
        app.token.as_str()
    );
    announce(opts, &url);
    let server = connections::serve(listener, router(app), connections::Limits::from_env());
    tokio::select! {
        r = server => r.map_err(ServeError::Server),
        _ = tokio::signal::ctrl_c() => Ok(()),
    }
}

/// The one line a user needs, and a warning when other computers could reach the page.
fn announce(opts: &ServeOptions, url: &str) {
    let mut out = std::io::stdout().lock();
    let _ = writeln!(out, "benchgrade workspace at {url}");
    let _ = out.flush();
    if !opts.listen.is_loopback() {
        let _ = writeln!(
            std::io::stderr(),
            "benchgrade: warning: listening on {}, not only this computer: anyone who can reach it and learns the token can see the students' data",
            opts.listen
        );
    }
    if opts.open {
        open_browser(url);
    }
}

/// Hands the address to the desktop's browser; a failure is only a note.
fn open_browser(url: &str) {
    let (program, args): (&str, &[&str]) = if cfg!(target_os = "macos") {
        ("open", &[])
    } else if cfg!(windows) {
        ("cmd", &["/C", "start", ""])
    } else {
        ("xdg-open", &[])
    };
    let started = std::process::Command::new(program)
        .args(args)
        .arg(url)
        .stdin(std::process::Stdio::null())
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn();
    if started.is_err() {
        let _ = writeln!(
            std::io::stderr(),
            "benchgrade: could not open a browser ({program}); open the address above yourself"
        );
    }
}

/// Looks every second for files edited by hand, which are then graded like the page's edits.
async fn watch_hand_edits(grader: Arc<Grader>) {
    let mut tick = tokio::time::interval(Duration::from_secs(1));
    tick.set_missed_tick_behavior(tokio::time::MissedTickBehavior::Delay);
    loop {
        tick.tick().await;
        let g = Arc::clone(&grader);
        let _ = tokio::task::spawn_blocking(move || g.notice_hand_edits()).await;
    }
}
