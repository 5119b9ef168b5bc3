//! The server's connections, so that a stuck or hostile client costs nothing: at most
//! `max` connections at a time (one past it is closed at once, before it holds anything), a
//! request header that must arrive whole within `header` of the connection opening or of the
//! last response (a connection that sends nothing, or half a header, or sits idle between
//! requests is closed), and a connection on which no byte moves either way for `idle` while no
//! request is being answered (a body sent too slowly, a response nobody reads) is closed too.
//!
//! axum's own `serve` sets no timer, so hyper's header timeout never runs there; this is its
//! accept loop with hyper's HTTP/1 connection builder, its header timeout and tokio's timer.

use std::convert::Infallible;
use std::future::Future;
use std::io;
use std::pin::Pin;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Arc;
use std::task::{Context, Poll};
use std::time::Duration;

use axum::Router;
use hyper::body::Incoming;
use hyper::server::conn::http1;
use hyper_util::rt::{TokioIo, TokioTimer};
use hyper_util::service::TowerToHyperService;
use tokio::io::{AsyncRead, AsyncWrite, ReadBuf};
use tokio::net::{TcpListener, TcpStream};
use tokio::sync::Semaphore;
use tokio::time::{Instant, Sleep};

/// How many connections, and how long each may wait.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Limits {
    pub max: usize,
    pub header: Duration,
    pub idle: Duration,
}

impl Default for Limits {
    /// 512 connections (a browser opens six; half the usual limit of 1,024 open files), a
    /// header within 10 s, 60 s without a byte (the longest poll waits 25 s).
    fn default() -> Limits {
        Limits {
            max: 512,
            header: Duration::from_secs(10),
            idle: Duration::from_secs(60),
        }
    }
}

impl Limits {
    /// The defaults, or the tests' hooks: `BENCHGRADE_SERVE_TIMEOUT_MS` (the header and idle
    /// timeouts) and `BENCHGRADE_MAX_CONNECTIONS`.
    pub fn from_env() -> Limits {
        let number = |name: &str| {
            std::env::var(name)
                .ok()
                .and_then(|v| v.trim().parse::<u64>().ok())
                .filter(|v| *v > 0)
        };
        let mut limits = Limits::default();
        if let Some(ms) = number("BENCHGRADE_SERVE_TIMEOUT_MS") {
            limits.header = Duration::from_millis(ms);
            limits.idle = Duration::from_millis(ms);
        }
        if let Some(n) = number("BENCHGRADE_MAX_CONNECTIONS") {
            limits.max = usize::try_from(n).unwrap_or(limits.max);
        }
        limits
    }
}

/// Accepts connections until the task is dropped, each served on a task of its own.
pub async fn serve(listener: TcpListener, router: Router, limits: Limits) -> io::Result<()> {
    let permits = Arc::new(Semaphore::new(limits.max));
    loop {
        // out of open files, or a connection reset before it was taken: the held ones time
        // out, so wait a moment and go on
        let Ok((stream, _)) = listener.accept().await else {
            tokio::time::sleep(Duration::from_millis(50)).await;
            continue;
        };
        // past the cap the connection is closed at once (dropped)
        let Ok(permit) = Arc::clone(&permits).try_acquire_owned() else {
            continue;
        };
        let _ = stream.set_nodelay(true);
        let busy = Arc::new(AtomicUsize::new(0));
        let service = Counted {
            inner: TowerToHyperService::new(router.clone()),
            busy: Arc::clone(&busy),
        };
        let io = TokioIo::new(Idle::new(stream, limits.idle, busy));
        tokio::spawn(async move {
            let connection = http1::Builder::new()
                .timer(TokioTimer::new())
                .header_read_timeout(limits.header)
                .serve_connection(io, service);
            // a connection that ends in an error (a timeout, a reset) ends quietly: the
            // server logs nothing about requests
            let _ = connection.await;
            drop(permit);
        });
    }
}

/// The router, counting the requests being answered on its connection.
#[derive(Clone)]
struct Counted {
    inner: TowerToHyperService<Router>,
    busy: Arc<AtomicUsize>,
}

/// One request being answered; the count goes down when its answer's head is ready.
struct Busy(Arc<AtomicUsize>);

impl Drop for Busy {
    fn drop(&mut self) {
        self.0.fetch_sub(1, Ordering::SeqCst);
    }
}

type Answer = axum::response::Response;

impl hyper::service::Service<hyper::Request<Incoming>> for Counted {
    type Response = Answer;
    type Error = Infallible;
    type Future = Pin<Box<dyn Future<Output = Result<Answer, Infallible>> + Send>>;

    fn call(&self, req: hyper::Request<Incoming>) -> Self::Future {
        self.busy.fetch_add(1, Ordering::SeqCst);
        let busy = Busy(Arc::clone(&self.busy));
        let answer = self.inner.call(req);
        Box::pin(async move {
            let out = answer.await;
            drop(busy);
            out
        })
    }
}

/// A connection that fails with `TimedOut` once no byte has moved either way for `timeout`
/// while no request is being answered.
struct Idle {
    inner: TcpStream,
    timeout: Duration,
    deadline: Pin<Box<Sleep>>,
    busy: Arc<AtomicUsize>,
}

impl Idle {
    fn new(inner: TcpStream, timeout: Duration, busy: Arc<AtomicUsize>) -> Idle {
        Idle {
            inner,
            timeout,
            deadline: Box::pin(tokio::time::sleep(timeout)),
            busy,
        }
    }

    fn moved(&mut self) {
        let next = Instant::now() + self.timeout;
        self.deadline.as_mut().reset(next);
    }

    /// Called when the socket has nothing to give or take: an error once the time is up.
    fn waiting<T>(&mut self, cx: &mut Context<'_>) -> Poll<io::Result<T>> {
        if self.busy.load(Ordering::SeqCst) > 0 {
            // a handler is at work (a long poll, a run): the clock starts after its answer
            self.moved();
            return Poll::Pending;
        }
        match self.deadline.as_mut().poll(cx) {
            Poll::Ready(()) => Poll::Ready(Err(io::Error::new(
                io::ErrorKind::TimedOut,
                "no byte moved within the idle timeout",
            ))),
            Poll::Pending => Poll::Pending,
        }
    }
}

impl AsyncRead for Idle {
    fn poll_read(
        self: Pin<&mut Self>,
        cx: &mut Context<'_>,
        buf: &mut ReadBuf<'_>,
    ) -> Poll<io::Result<()>> {
        let this = self.get_mut();
        match Pin::new(&mut this.inner).poll_read(cx, buf) {
            Poll::Ready(r) => {
                this.moved();
                Poll::Ready(r)
            }
            Poll::Pending => this.waiting(cx),
        }
    }
}

impl AsyncWrite for Idle {
    fn poll_write(
        self: Pin<&mut Self>,
        cx: &mut Context<'_>,
        buf: &[u8],
    ) -> Poll<io::Result<usize>> {
        let this = self.get_mut();
        match Pin::new(&mut this.inner).poll_write(cx, buf) {
            Poll::Ready(r) => {
                this.moved();
                Poll::Ready(r)
            }
            Poll::Pending => this.waiting(cx),
        }
    }

    fn poll_flush(self: Pin<&mut Self>, cx: &mut Context<'_>) -> Poll<io::Result<()>> {
        let this = self.get_mut();
        match Pin::new(&mut this.inner).poll_flush(cx) {
            Poll::Ready(r) => Poll::Ready(r),
            Poll::Pending => this.waiting(cx),
        }
    }

    fn poll_shutdown(self: Pin<&mut Self>, cx: &mut Context<'_>) -> Poll<io::Result<()>> {
        Pin::new(&mut self.get_mut().inner).poll_shutdown(cx)
    }

    fn poll_write_vectored(
        self: Pin<&mut Self>,
        cx: &mut Context<'_>,
        bufs: &[io::IoSlice<'_>],
    ) -> Poll<io::Result<usize>> {
        let this = self.get_mut();
        match Pin::new(&mut this.inner).poll_write_vectored(cx, bufs) {
            Poll::Ready(r) => {
                this.moved();
                Poll::Ready(r)
            }
            Poll::Pending => this.waiting(cx),
        }
    }

    fn is_write_vectored(&self) -> bool {
        self.inner.is_write_vectored()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_defaults_fit_the_usual_file_limit_and_the_longest_poll() {
        let d = Limits::default();
        assert!(
            d.max >= 64 && d.max <= 1000,
            "under the usual 1,024 open files"
        );
        assert!(
            d.idle > Duration::from_secs(25),
            "longer than the longest poll"
        );
    }
}
