//! The serve tests' client: `benchgrade serve` started on 127.0.0.1 with `--port 0` (the one
//! line it prints read for the port and token), requests with the token made with ureq, raw
//! requests over a socket for what no well-behaved client sends (a foreign Host header, a
//! declared length past the limit), and small helpers for the workspace's files.

use std::io::{BufRead, BufReader, Read, Write};
use std::net::TcpStream;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use serde_json::Value;

use crate::harness::project_root;

/// A running `benchgrade serve`, stopped when dropped.
pub struct Server {
    child: Child,
    pub port: u16,
    pub token: String,
    /// The address the server printed.
    pub url: String,
    agent: ureq::Agent,
}

impl Server {
    pub fn start(workspace: &Path) -> Server {
        Server::start_with(workspace, &[])
    }

    pub fn start_with(workspace: &Path, extra: &[&str]) -> Server {
        Server::start_env(workspace, extra, &[])
    }

    /// With environment variables set for the server (the test hooks).
    pub fn start_env(workspace: &Path, extra: &[&str], env: &[(&str, &str)]) -> Server {
        Server::start_program(
            Path::new(env!("CARGO_BIN_EXE_benchgrade")),
            workspace,
            extra,
            env,
        )
    }

    /// Started from `program` (a copy of the binary a test may then remove or replace).
    pub fn start_program(
        program: &Path,
        workspace: &Path,
        extra: &[&str],
        env: &[(&str, &str)],
    ) -> Server {
        let mut child = Command::new(program)
            .arg("serve")
            .arg(workspace)
            .args(["--port", "0"])
            .args(extra)
            .envs(env.iter().copied())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("the binary runs");
        let stdout = child.stdout.take().unwrap();
        let (tx, rx) = std::sync::mpsc::channel();
        std::thread::spawn(move || {
            let mut line = String::new();
            let _ = BufReader::new(stdout).read_line(&mut line);
            let _ = tx.send(line);
        });
        let line = rx.recv_timeout(Duration::from_secs(60)).unwrap_or_default();
        let Some(url) = line.trim().strip_prefix("benchgrade workspace at ") else {
            let _ = child.kill();
            let mut err = String::new();
            let _ = child.stderr.take().unwrap().read_to_string(&mut err);
            panic!("the server printed {line:?}; stderr: {err}");
        };
        let url = url.to_string();
        let rest = url.strip_prefix("http://127.0.0.1:").expect("loopback");
        let (port, token) = rest.split_once("/?token=").expect("a token");
        let agent: ureq::Agent = ureq::Agent::config_builder()
            .http_status_as_error(false)
            .max_redirects(0)
            .timeout_global(Some(Duration::from_secs(120)))
            .build()
            .into();
        Server {
            port: port.parse().unwrap(),
            token: token.to_string(),
            url,
            child,
            agent,
        }
    }

    pub fn base(&self) -> String {
        format!("http://127.0.0.1:{}", self.port)
    }

    fn finish(resp: Result<ureq::http::Response<ureq::Body>, ureq::Error>) -> (u16, Value) {
        let mut resp = resp.expect("the server answers");
        let status = resp.status().as_u16();
        let text = resp
            .body_mut()
            .with_config()
            .limit(500 * 1024 * 1024)
            .read_to_string()
            .expect("a body");
        (status, serde_json::from_str(&text).unwrap_or(Value::Null))
    }

    /// A GET with the token: its status, or `None` if the server did not answer (a connection
    /// refused or closed while it is still at its cap of connections).
    pub fn status_now(&self, path: &str) -> Option<u16> {
        let url = format!("{}{path}", self.base());
        let auth = format!("Bearer {}", self.token);
        match self.agent.get(&url).header("Authorization", &auth).call() {
            Ok(resp) => Some(resp.status().as_u16()),
            Err(ureq::Error::StatusCode(code)) => Some(code),
            Err(_) => None,
        }
    }

    /// A request with the token; `(status, JSON body)`.
    pub fn call(&self, method: &str, path: &str, body: Option<Value>) -> (u16, Value) {
        let url = format!("{}{path}", self.base());
        let auth = format!("Bearer {}", self.token);
        let resp = match (method, body) {
            ("GET", _) => self.agent.get(&url).header("Authorization", &auth).call(),
            ("DELETE", _) => self
                .agent
                .delete(&url)
                .header("Authorization", &auth)
                .call(),
            ("POST", None) => self
                .agent
                .post(&url)
                .header("Authorization", &auth)
                .send_empty(),
            ("POST", Some(b)) => self
                .agent
                .post(&url)
                .header("Authorization", &auth)
                .send_json(b),
            ("PUT", Some(b)) => self
                .agent
                .put(&url)
                .header("Authorization", &auth)
                .send_json(b),
            _ => panic!("no such call"),
        };
        Server::finish(resp)
    }

    pub fn get(&self, path: &str) -> Value {
        let (status, body) = self.call("GET", path, None);
        assert_eq!(status, 200, "GET {path}: {body}");
        body
    }

    /// Uploads `(name, bytes)` pairs as multipart `file` fields.
    pub fn upload(&self, files: &[(&str, &[u8])]) -> (u16, Value) {
        let (content_type, body) = multipart(files);
        let resp = self
            .agent
            .post(format!("{}/api/files", self.base()))
            .header("Authorization", format!("Bearer {}", self.token))
            .header("Content-Type", content_type)
            .send(&body[..]);
        Server::finish(resp)
    }

    /// Uploads `(name, bytes)` pairs as multipart `file` fields to `path`.
    pub fn upload_to(&self, path: &str, files: &[(&str, &[u8])]) -> (u16, Value) {
        let (content_type, body) = multipart(files);
        let resp = self
            .agent
            .post(format!("{}{path}", self.base()))
            .header("Authorization", format!("Bearer {}", self.token))
            .header("Content-Type", content_type)
            .send(&body[..]);
        Server::finish(resp)
    }

    /// A download with the token: its status, content type and bytes.
    pub fn download(&self, path: &str) -> (u16, String, Vec<u8>) {
        let mut resp = self
            .agent
            .get(format!("{}{path}", self.base()))
            .header("Authorization", format!("Bearer {}", self.token))
            .call()
            .expect("the server answers");
        let kind = resp
            .headers()
            .get("content-type")
            .and_then(|v| v.to_str().ok())
            .unwrap_or("")
            .to_string();
        let bytes = resp
            .body_mut()
            .with_config()
            .limit(100 * 1024 * 1024)
            .read_to_vec()
            .expect("a body");
        (resp.status().as_u16(), kind, bytes)
    }

    /// The results of a run that read at least `revision`.
    pub fn results_after(&self, revision: u64) -> Value {
        self.get(&format!("/api/results?revision={revision}"))
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

pub fn multipart(files: &[(&str, &[u8])]) -> (String, Vec<u8>) {
    let boundary = "benchgrade-test-3f9a61";
    let mut body = Vec::new();
    for (name, bytes) in files {
        body.extend_from_slice(
            format!("--{boundary}\r\nContent-Disposition: form-data; name=\"file\"; filename=\"{name}\"\r\nContent-Type: application/octet-stream\r\n\r\n").as_bytes(),
        );
        body.extend_from_slice(bytes);
        body.extend_from_slice(b"\r\n");
    }
    body.extend_from_slice(format!("--{boundary}--\r\n").as_bytes());
    (format!("multipart/form-data; boundary={boundary}"), body)
}

/// Sends `head` (and `body`) as they are over a socket; the response's status code and text.
pub fn raw(port: u16, head: &str, body: &[u8]) -> (u16, String) {
    let mut s = TcpStream::connect(("127.0.0.1", port)).unwrap();
    s.set_read_timeout(Some(Duration::from_secs(60))).unwrap();
    s.write_all(head.as_bytes()).unwrap();
    // the server may answer (and close) before the whole body is sent: the body goes from
    // another thread while this one reads, so that the answer is read as soon as it comes
    let mut writer = s.try_clone().unwrap();
    let body = body.to_vec();
    let sending = std::thread::spawn(move || {
        let _ = writer.write_all(&body);
    });
    let mut out = Vec::new();
    let _ = s.read_to_end(&mut out);
    let _ = s.shutdown(std::net::Shutdown::Both);
    let _ = sending.join();
    let text = String::from_utf8_lossy(&out).into_owned();
    let code = text
        .split_whitespace()
        .nth(1)
        .and_then(|c| c.parse().ok())
        .unwrap_or(0);
    (code, text)
}

/// The sample class's files, as the page uploads them.
pub fn sample_files() -> Vec<(String, Vec<u8>)> {
    let dir = project_root().join("sample-data");
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .map(|p| {
            let name = p.file_name().unwrap().to_string_lossy().into_owned();
            (name, std::fs::read(&p).unwrap())
        })
        .collect();
    files.sort();
    files
}

pub fn upload_sample(server: &Server) -> u64 {
    let files = sample_files();
    let parts: Vec<(&str, &[u8])> = files
        .iter()
        .map(|(n, b)| (n.as_str(), b.as_slice()))
        .collect();
    let (status, body) = server.upload(&parts);
    assert_eq!(status, 201, "{body}");
    body["revision"].as_u64().unwrap()
}

/// Every visible file under `dir`, recursively, with its bytes.
pub fn tree(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                let bytes = std::fs::read(&p).unwrap();
                out.push((p.strip_prefix(dir).unwrap().to_path_buf(), bytes));
            }
        }
    }
    out.sort();
    out
}

pub fn record<'a>(results: &'a Value, id: &str) -> &'a Value {
    results["records"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["student_id"] == id)
        .unwrap_or_else(|| panic!("no record for {id}"))
}

/// Polls until `done` holds, for at most `secs` seconds (a bound on the wait, not a speed check).
pub fn eventually(secs: u64, mut done: impl FnMut() -> bool) -> bool {
    let start = Instant::now();
    while start.elapsed() < Duration::from_secs(secs) {
        if done() {
            return true;
        }
        std::thread::sleep(Duration::from_millis(200));
    }
    false
}
