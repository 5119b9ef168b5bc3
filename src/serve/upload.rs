//! `POST /api/files`: spreadsheets uploaded as multipart `file` fields, all or none. Every file
//! is received and checked (a name that sanitises to a spreadsheet type the command line
//! reads, not empty, the whole request within the size limit) before any is written; then each
//! is written to a hidden temporary file in inputs/ and renamed into place. A refused upload
//! leaves the workspace as it was.

use std::path::Path;
use std::sync::Arc;

use axum::extract::multipart::MultipartError;
use axum::extract::{Multipart, State};
use axum::http::StatusCode;
use axum::Json;
use serde_json::json;

use super::api::ApiError;
use super::workspace::{sanitise_name, temporary_path, INPUTS};
use super::App;

/// A file received, not yet written.
pub(super) struct Received {
    pub(super) name: String,
    pub(super) bytes: Vec<u8>,
}

/// Whether the upload failed because it passed the size limit: axum says so itself for its own
/// limit, tower-http's shows as a `LengthLimitError` somewhere down the chain.
fn too_large(e: &MultipartError) -> bool {
    let mut cause: Option<&(dyn std::error::Error + 'static)> = Some(e);
    while let Some(c) = cause {
        if c.is::<http_body_util::LengthLimitError>() {
            return true;
        }
        cause = c.source();
    }
    e.status() == StatusCode::PAYLOAD_TOO_LARGE
}

fn refused(e: &MultipartError, limit: usize) -> ApiError {
    let status = if too_large(e) {
        StatusCode::PAYLOAD_TOO_LARGE
    } else {
        e.status()
    };
    let message = if status == StatusCode::PAYLOAD_TOO_LARGE {
        format!(
            "the upload is larger than the limit of {} MB; nothing was stored",
            limit / (1024 * 1024)
        )
    } else {
        format!(
            "the upload could not be read ({}); nothing was stored",
            e.body_text()
        )
    };
    ApiError::new(status, "file", message)
}

/// Every `file` field of the request, checked; other fields are passed over.
pub(super) async fn receive(
    multipart: &mut Multipart,
    limit: usize,
) -> Result<Vec<Received>, ApiError> {
    let mut files: Vec<Received> = Vec::new();
    while let Some(field) = multipart
        .next_field()
        .await
        .map_err(|e| refused(&e, limit))?
    {
        if field.name() != Some("file") {
            continue;
        }
        let given = field.file_name().unwrap_or("").to_string();
        let name = sanitise_name(&given).map_err(|why| {
            ApiError::new(
                StatusCode::UNSUPPORTED_MEDIA_TYPE,
                "file",
                format!("{given}: {why}; nothing was stored"),
            )
        })?;
        let bytes = field.bytes().await.map_err(|e| refused(&e, limit))?;
        if bytes.is_empty() {
            return Err(ApiError::new(
                StatusCode::UNPROCESSABLE_ENTITY,
                "file",
                format!("{given}: the file is empty; nothing was stored"),
            ));
        }
        // the same name twice in one upload: the later file is the one kept
        files.retain(|f| f.name != name);
        files.push(Received {
            name,
            bytes: bytes.to_vec(),
        });
    }
    if files.is_empty() {
        return Err(ApiError::new(
            StatusCode::BAD_REQUEST,
            "file",
            "no file in the upload (send one or more multipart fields named \"file\")",
        ));
    }
    Ok(files)
}

/// Writes every file to a temporary file, then renames them all into place; on any failure
/// the temporary files are removed and nothing is renamed.
fn store(files: &[Received]) -> std::io::Result<()> {
    let dir = Path::new(INPUTS);
    std::fs::create_dir_all(dir)?;
    let mut written = Vec::new();
    let result = (|| {
        for f in files {
            let tmp = temporary_path(dir, &f.name);
            written.push(tmp.clone());
            let mut out = crate::files::create_new(&tmp)?;
            std::io::Write::write_all(&mut out, &f.bytes)?;
            out.sync_all()?;
            if dir.join(&f.name).is_dir() {
                return Err(std::io::Error::other(format!(
                    "{}: a folder of that name is in inputs/",
                    f.name
                )));
            }
        }
        Ok(())
    })();
    if let Err(e) = result {
        for tmp in &written {
            let _ = std::fs::remove_file(tmp);
        }
        return Err(e);
    }
    for (tmp, f) in written.iter().zip(files) {
        std::fs::rename(tmp, dir.join(&f.name))?;
    }
    Ok(())
}

/// `POST /api/files`: stores the uploaded spreadsheets in inputs/ and regrades.
pub async fn upload(
    State(app): State<Arc<App>>,
    mut multipart: Multipart,
) -> Result<(StatusCode, Json<serde_json::Value>), ApiError> {
    let files = receive(&mut multipart, app.upload_limit).await?;
    let names: Vec<String> = files.iter().map(|f| f.name.clone()).collect();
    let shared = Arc::clone(&app);
    let revision = super::api::blocking(move || {
        let _one = shared
            .edit
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        store(&files).map(|()| shared.grader.changed())
    })
    .await?
    .map_err(|e| {
        ApiError::new(
            StatusCode::INTERNAL_SERVER_ERROR,
            "file",
            format!("cannot store the upload: {e}; nothing was stored"),
        )
    })?;
    Ok((
        StatusCode::CREATED,
        Json(json!({"stored": names, "revision": revision})),
    ))
}
