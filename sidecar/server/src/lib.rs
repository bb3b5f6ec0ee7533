//! `trialyst serve`: the protocol front end for spreadsheet add-ins and
//! editors. JSON-RPC 2.0 with the Language Server Protocol's framing, on
//! stdio or on one loopback TCP connection.
//!
//! Built on `tower-lsp-server` over tokio. Only this module imports it.
//! Layers, from the bytes in:
//!
//! - [`framing`]: checks each incoming message (size, header, JSON) before
//!   the library sees it, and merges its own error answers into the output;
//! - [`side_channel`]: carries the cells of `trialyst/analyseCells` and
//!   `trialyst/inspectCells`, and the answer of the former, around the
//!   library's JSON trees;
//! - [`server`]: the handlers, thin callers of [`service`];
//! - [`documents`]: the one owner of the open-workbook state and diagnostics;
//! - [`from_proto`], [`to_proto`]: conversions between protocol values and
//!   the service's plain types.
//!
//! The methods are documented in `sidecar/docs/protocol.md`.

pub mod answer_tables;
pub mod documents;
pub mod framing;
pub mod from_proto;
pub mod planning;
pub mod quick_check;
pub mod server;
pub mod side_channel;
pub mod sorted_json;
pub mod to_proto;

#[cfg(test)]
mod tests;

#[cfg(test)]
mod secret_tests {
    use super::*;

    #[test]
    fn secrets_compare_by_every_byte_and_http_is_recognised() {
        assert!(same_secret(b"sixteen chars ok", b"sixteen chars ok"));
        assert!(!same_secret(b"sixteen chars oK", b"sixteen chars ok"));
        assert!(!same_secret(b"sixteen chars", b"sixteen chars ok"));
        assert!(!same_secret(b"sixteen chars ok!", b"sixteen chars ok"));
        assert!(looks_like_http(b"POST /x HTTP/1.1\r\nHost: a"));
        assert!(looks_like_http(b"GET / HTTP/1.0"));
        assert!(!looks_like_http(b"Content-Length: 5\r\n\r\n"));
        assert!(!looks_like_http(b"trialyst-token abc"));
    }
}

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
    /// `--listen` without a usable secret in the environment.
    #[error("--listen needs a secret: set {TOKEN_VARIABLE} to a string of at least {MIN_TOKEN_CHARS} characters that only the client knows (see docs/protocol.md)")]
    NoToken,
}

/// The environment variable that holds the secret a TCP client must send first.
pub const TOKEN_VARIABLE: &str = "TRIALYST_SERVE_TOKEN";

/// The shortest secret accepted.
pub const MIN_TOKEN_CHARS: usize = 16;

/// The line a TCP client sends before any message: this, a space, the secret, a newline.
pub const TOKEN_PREFIX: &str = "trialyst-token ";

/// How long a new connection may take to send its secret line.
pub const TOKEN_TIMEOUT: Duration = Duration::from_secs(5);

/// The longest secret line read.
const MAX_TOKEN_LINE: usize = 512;

/// Compares two byte strings in time that depends only on their lengths,
/// not on where they first differ.
pub fn same_secret(given: &[u8], expected: &[u8]) -> bool {
    let mut difference = given.len() ^ expected.len();
    for (index, expected_byte) in expected.iter().enumerate() {
        let byte = given.get(index).copied().unwrap_or(0);
        difference |= usize::from(byte ^ expected_byte);
    }
    difference == 0
}

/// True when `bytes` start like an HTTP request (a browser or any web
/// client): a request line `METHOD target HTTP/1.x`.
pub fn looks_like_http(bytes: &[u8]) -> bool {
    const METHODS: [&[u8]; 9] = [
        b"GET ",
        b"POST ",
        b"PUT ",
        b"HEAD ",
        b"DELETE ",
        b"OPTIONS ",
        b"PATCH ",
        b"CONNECT ",
        b"TRACE ",
    ];
    let first_line = bytes.split(|byte| *byte == b'\n').next().unwrap_or_default();
    METHODS.iter().any(|method| first_line.starts_with(method))
        || first_line
            .windows(7)
            .any(|window| window.eq_ignore_ascii_case(b" HTTP/1"))
}

/// Why a connection was turned away before its session.
#[derive(Debug, PartialEq, Eq)]
pub enum Refusal {
    /// Nothing arrived in time.
    Silent,
    /// An HTTP request line.
    Http,
    /// The line was not the secret.
    WrongSecret,
}

/// Reads the secret line from a new connection. The line ends at the first
/// newline; nothing after it is read.
///
/// # Errors
///
/// [`Refusal`]: silent past [`TOKEN_TIMEOUT`], an HTTP request, or not the secret.
pub async fn check_secret_line<R: AsyncRead + Unpin>(
    input: &mut R,
    expected: &str,
    wait: Duration,
) -> Result<(), Refusal> {
    use tokio::io::AsyncReadExt;
    let mut line = Vec::with_capacity(64);
    let reading = async {
        let mut byte = [0u8; 1];
        while line.len() < MAX_TOKEN_LINE {
            match input.read(&mut byte).await {
                Ok(1) if byte[0] == b'\n' => return true,
                Ok(1) => line.push(byte[0]),
                _ => return false,
            }
        }
        false
    };
    let complete = tokio::time::timeout(wait, reading).await.map_err(|_| Refusal::Silent)?;
    if looks_like_http(&line) {
        return Err(Refusal::Http);
    }
    if line.last() == Some(&b'\r') {
        line.pop();
    }
    let given = line.strip_prefix(TOKEN_PREFIX.as_bytes()).unwrap_or_default();
    if complete && same_secret(given, expected.as_bytes()) {
        Ok(())
    } else {
        Err(Refusal::WrongSecret)
    }
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
    // One stash per session: its guard, handlers and merger share it.
    let stash = options.side_channel.then(side_channel::Stash::new);
    serve_session_with(input, output, options, framing, stash).await
}

/// [`serve_session`] with the given stash (tests look into it).
pub(crate) async fn serve_session_with<R, W>(
    input: R,
    output: W,
    options: ServerOptions,
    framing: FramingOptions,
    stash: Option<side_channel::Stash>,
) -> i32
where
    R: AsyncRead + Unpin + Send + 'static,
    W: AsyncWrite + Unpin + Send + 'static,
{
    let shutdown_received = Arc::new(AtomicBool::new(false));
    let (service, socket) = server::build_service(options, shutdown_received.clone(), stash.clone());
    let (forward_writer, forward_reader) = tokio::io::duplex(1 << 20);
    let (server_writer, server_output) = tokio::io::duplex(1 << 20);
    let (answers_sender, answers_receiver) = mpsc::unbounded_channel();
    let guard = tokio::spawn(framing::guard_input_with(
        input,
        forward_writer,
        answers_sender,
        framing,
        stash.clone(),
    ));
    let merger = tokio::spawn(framing::merge_output_with(
        server_output,
        answers_receiver,
        output,
        stash,
    ));
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

/// The limits a session runs under, set on the command line.
#[derive(Debug, Clone, Copy)]
pub struct ServeLimits {
    /// Messages larger than this are refused unread.
    pub max_message_bytes: usize,
    /// Requests running longer than this are stopped and answered with an error.
    pub request_time_limit: Option<Duration>,
}

impl Default for ServeLimits {
    fn default() -> Self {
        Self {
            max_message_bytes: framing::DEFAULT_MAX_MESSAGE_BYTES,
            request_time_limit: Some(server::DEFAULT_REQUEST_TIME_LIMIT),
        }
    }
}

impl ServeLimits {
    fn options(self) -> (ServerOptions, FramingOptions) {
        (
            ServerOptions {
                max_message_bytes: self.max_message_bytes,
                request_time_limit: self.request_time_limit,
                ..ServerOptions::default()
            },
            FramingOptions {
                max_message_bytes: self.max_message_bytes,
                ..FramingOptions::default()
            },
        )
    }
}

/// `trialyst serve` on stdio. Returns the exit code.
///
/// # Errors
///
/// [`ServeError::Runtime`] when the runtime cannot start.
pub fn serve_stdio(limits: ServeLimits) -> Result<i32, ServeError> {
    let runtime = runtime()?;
    let (options, framing) = limits.options();
    let code = runtime.block_on(serve_session(tokio::io::stdin(), tokio::io::stdout(), options, framing));
    // Reading stdin blocks a thread that would hold up an orderly shutdown.
    runtime.shutdown_background();
    Ok(code)
}

/// `trialyst serve --listen ADDRESS`: serves one client on a loopback
/// socket. Prints `listening on ADDRESS` on stderr once ready.
///
/// Every connection must first send the line `trialyst-token SECRET`, the
/// secret being the value of [`TOKEN_VARIABLE`] in the server's
/// environment (set by the parent that starts it), within
/// [`TOKEN_TIMEOUT`]. A connection that is silent, speaks HTTP or sends
/// another line is closed and the server goes on waiting; the first that
/// passes gets the session, and the server ends with it. Connections made
/// while a session runs are closed at once.
///
/// # Errors
///
/// [`ServeError`] for a bad or non-loopback address, a missing secret, or a
/// socket that cannot be opened.
pub fn serve_tcp(address: &str, limits: ServeLimits) -> Result<i32, ServeError> {
    let socket_address = loopback_address(address)?;
    let token = std::env::var(TOKEN_VARIABLE).unwrap_or_default();
    if token.chars().count() < MIN_TOKEN_CHARS {
        return Err(ServeError::NoToken);
    }
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
        let token: Arc<str> = token.into();
        let (admitted_sender, mut admitted) = mpsc::channel::<tokio::net::TcpStream>(1);
        let session_started = Arc::new(AtomicBool::new(false));
        let acceptor = {
            let session_started = session_started.clone();
            tokio::spawn(async move {
                loop {
                    let Ok((mut stream, peer)) = listener.accept().await else {
                        // A failed accept (too many open files, a reset) costs that connection only.
                        tokio::time::sleep(Duration::from_millis(50)).await;
                        continue;
                    };
                    if session_started.load(Ordering::SeqCst) {
                        drop(stream);
                        continue;
                    }
                    let token = token.clone();
                    let admitted_sender = admitted_sender.clone();
                    tokio::spawn(async move {
                        match check_secret_line(&mut stream, &token, TOKEN_TIMEOUT).await {
                            Ok(()) => {
                                let _ = admitted_sender.try_send(stream);
                            }
                            Err(refusal) => {
                                #[allow(clippy::print_stderr)]
                                {
                                    eprintln!(
                                        "trialyst: closed a connection from {peer}: {}",
                                        match refusal {
                                            Refusal::Silent => "no secret line in time",
                                            Refusal::Http => "it sent an HTTP request",
                                            Refusal::WrongSecret => "wrong secret",
                                        }
                                    );
                                }
                            }
                        }
                    });
                }
            })
        };
        let Some(stream) = admitted.recv().await else {
            return Ok(EXIT_WITHOUT_SHUTDOWN);
        };
        session_started.store(true, Ordering::SeqCst);
        let (reader, writer) = stream.into_split();
        let (options, framing) = limits.options();
        let code = serve_session(reader, writer, options, framing).await;
        acceptor.abort();
        Ok::<i32, ServeError>(code)
    });
    runtime.shutdown_background();
    code
}
