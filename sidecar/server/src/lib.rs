//! `trialyst serve`: the protocol front end for spreadsheet add-ins and
//! editors. JSON-RPC 2.0 with the Language Server Protocol's framing, on
//! stdio or on one loopback TCP connection.
//!
//! Built on `tower-lsp-server` over tokio. Only this module imports it.
//! Layers, from the bytes in:
//!
//! - [`framing`]: checks each incoming message (size, header, JSON) before
//!   the library sees it, and merges its own error answers into the output;
//! - [`server`]: the handlers, thin callers of [`service`];
//! - [`documents`]: the one owner of the open-workbook state and diagnostics;
//! - [`from_proto`], [`to_proto`]: conversions between protocol values and
//!   the service's plain types.
//!
//! The methods are documented in `sidecar/docs/protocol.md`.

pub mod documents;
pub mod framing;
pub mod from_proto;
pub mod planning;
pub mod server;
pub mod to_proto;

#[cfg(test)]
mod tests;

use std::net::{SocketAddr, ToSocketAddrs};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Duration;

use tokio::io::{AsyncRead, AsyncWrite};
use tokio::sync::mpsc;
use tower_lsp_server::Server;

pub use framing::FramingOptions;
pub use server::ServerOptions;

/// Exit code after `shutdown` then `exit`, as the protocol asks.
pub const EXIT_AFTER_SHUTDOWN: i32 = 0;
/// Exit code when the session ended without `shutdown` (the protocol's 1).
pub const EXIT_WITHOUT_SHUTDOWN: i32 = 1;
/// Exit code when the server could not start (a bad `--listen` address).
pub const EXIT_CANNOT_START: i32 = 2;

/// How many requests are answered at once; more wait their turn.
const CONCURRENT_REQUESTS: usize = 16;

/// Why `serve` could not start.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ServeError {
    /// The listen address is not of the form host:port.
    #[error("--listen '{address}' is not an address and port, such as 127.0.0.1:9257")]
    BadAddress {
        /// The address as given.
        address: String,
    },
    /// The listen address is reachable from other machines.
    #[error("--listen '{address}' is not a loopback address; only 127.0.0.1, ::1 or localhost are accepted, so that no other machine can reach the server")]
    NotLoopback {
        /// The address as given.
        address: String,
    },
    /// The socket could not be opened.
    #[error("cannot listen on '{address}'")]
    Listen {
        /// The address as given.
        address: String,
        /// The operating system's error.
        #[source]
        source: std::io::Error,
    },
    /// The runtime could not be started.
    #[error("cannot start the server's runtime")]
    Runtime(#[source] std::io::Error),
}

/// Checks a `--listen` address: it must resolve, and only to loopback addresses.
///
/// # Errors
///
/// [`ServeError::BadAddress`] or [`ServeError::NotLoopback`].
pub fn loopback_address(address: &str) -> Result<SocketAddr, ServeError> {
    let resolved: Vec<SocketAddr> = address
        .to_socket_addrs()
        .map_err(|_| ServeError::BadAddress {
            address: address.to_string(),
        })?
        .collect();
    if resolved.is_empty() {
        return Err(ServeError::BadAddress {
            address: address.to_string(),
        });
    }
    if resolved.iter().any(|socket| !socket.ip().is_loopback()) {
        return Err(ServeError::NotLoopback {
            address: address.to_string(),
        });
    }
    Ok(resolved[0])
}

/// Serves one session over `input` and `output`; returns the exit code the
/// protocol asks for.
pub async fn serve_session<R, W>(input: R, output: W, options: ServerOptions, framing: FramingOptions) -> i32
where
    R: AsyncRead + Unpin + Send + 'static,
    W: AsyncWrite + Unpin + Send + 'static,
{
    let shutdown_received = Arc::new(AtomicBool::new(false));
    let (service, socket) = server::build_service(options, shutdown_received.clone());
    let (forward_writer, forward_reader) = tokio::io::duplex(1 << 20);
    let (server_writer, server_output) = tokio::io::duplex(1 << 20);
    let (answers_sender, answers_receiver) = mpsc::unbounded_channel();
    let guard = tokio::spawn(framing::guard_input(input, forward_writer, answers_sender, framing));
    let merger = tokio::spawn(framing::merge_output(server_output, answers_receiver, output));
    Server::new(forward_reader, server_writer, socket)
        .concurrency_level(CONCURRENT_REQUESTS)
        .serve(service)
        .await;
    // The library's writer is dropped; the merger writes what is left.
    let _ = tokio::time::timeout(Duration::from_secs(2), merger).await;
    guard.abort();
    if shutdown_received.load(Ordering::SeqCst) {
        EXIT_AFTER_SHUTDOWN
    } else {
        EXIT_WITHOUT_SHUTDOWN
    }
}

fn runtime() -> Result<tokio::runtime::Runtime, ServeError> {
    tokio::runtime::Builder::new_multi_thread()
        .worker_threads(2)
        .max_blocking_threads(8)
        .enable_all()
        .build()
        .map_err(ServeError::Runtime)
}

/// `trialyst serve` on stdio. Returns the exit code.
///
/// # Errors
///
/// [`ServeError::Runtime`] when the runtime cannot start.
pub fn serve_stdio() -> Result<i32, ServeError> {
    let runtime = runtime()?;
    let code = runtime.block_on(serve_session(
        tokio::io::stdin(),
        tokio::io::stdout(),
        ServerOptions::default(),
        FramingOptions::default(),
    ));
    // Reading stdin blocks a thread that would hold up an orderly shutdown.
    runtime.shutdown_background();
    Ok(code)
}

/// `trialyst serve --listen ADDRESS`: serves one connection on a loopback
/// socket. Prints `listening on ADDRESS` on stderr once ready.
///
/// # Errors
///
/// [`ServeError`] for a bad or non-loopback address, or a socket that cannot be opened.
pub fn serve_tcp(address: &str) -> Result<i32, ServeError> {
    let socket_address = loopback_address(address)?;
    let runtime = runtime()?;
    let code = runtime.block_on(async {
        let listener = tokio::net::TcpListener::bind(socket_address)
            .await
            .map_err(|source| ServeError::Listen {
                address: address.to_string(),
                source,
            })?;
        let local = listener.local_addr().unwrap_or(socket_address);
        // The listening line is the server's handshake with the parent that started it.
        #[allow(clippy::print_stderr)]
        {
            eprintln!("trialyst: listening on {local}");
        }
        let (stream, _) = listener.accept().await.map_err(|source| ServeError::Listen {
            address: address.to_string(),
            source,
        })?;
        let (reader, writer) = stream.into_split();
        Ok::<i32, ServeError>(serve_session(reader, writer, ServerOptions::default(), FramingOptions::default()).await)
    });
    runtime.shutdown_background();
    code
}
