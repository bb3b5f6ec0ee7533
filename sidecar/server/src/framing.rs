//! The framing guard: reads the client's byte stream, checks every message's
//! framing and shape, and forwards only well-formed messages to the protocol
//! library.
//!
//! Why it exists: the library's decoder has no bound on a message's size
//! (it buffers whatever `Content-Length` claims), and its reader stops for
//! good after the first undecodable message. Here every message is checked
//! first: a header without a usable `Content-Length`, a body larger than
//! [`FramingOptions::max_message_bytes`], a body that never arrives in full,
//! bytes that are not JSON, and JSON that is not a JSON-RPC message are each
//! answered with a JSON-RPC error and skipped, and reading goes on with the
//! next message. Forwarded messages are re-framed with a `Content-Length`
//! header alone.
//!
//! Answers from the guard and the library's own output are merged by
//! [`merge_output`], which writes whole messages only, so the two never
//! interleave inside a message.

use std::time::Duration;

use serde_json::{json, Value};
use tokio::io::{AsyncRead, AsyncReadExt, AsyncWrite, AsyncWriteExt};
use tokio::sync::mpsc;
use tower_lsp_server::jsonrpc::{Request, Response};

use crate::side_channel::{Settled, Stash};

/// The largest message accepted by default: 64 MiB.
pub const DEFAULT_MAX_MESSAGE_BYTES: usize = 64 << 20;

/// The longest header block accepted, in bytes.
const MAX_HEADER_BYTES: usize = 8 << 10;

/// The name of the one header that matters.
const CONTENT_LENGTH: &[u8] = b"content-length";

/// JSON-RPC's code for bytes that are not JSON.
const PARSE_ERROR: i64 = -32700;
/// JSON-RPC's code for JSON that is not a valid request.
const INVALID_REQUEST: i64 = -32600;

/// Limits the guard enforces.
#[derive(Debug, Clone)]
pub struct FramingOptions {
    /// Messages whose `Content-Length` is above this are skipped unread.
    pub max_message_bytes: usize,
    /// A body that stops arriving for this long is given up as incomplete.
    pub body_idle_timeout: Duration,
}

impl Default for FramingOptions {
    fn default() -> Self {
        Self {
            max_message_bytes: DEFAULT_MAX_MESSAGE_BYTES,
            body_idle_timeout: Duration::from_secs(1),
        }
    }
}

/// Frames a JSON text with a `Content-Length` header.
pub fn frame(body: &[u8]) -> Vec<u8> {
    let mut framed = format!("Content-Length: {}\r\n\r\n", body.len()).into_bytes();
    framed.extend_from_slice(body);
    framed
}

/// A JSON-RPC error response, framed, for an answer the guard gives itself.
fn error_frame(id: Value, code: i64, message: String) -> Vec<u8> {
    let body = json!({
        "jsonrpc": "2.0",
        "id": id,
        "error": { "code": code, "message": message },
    });
    frame(body.to_string().as_bytes())
}

/// Position of `needle` in `haystack`, ignoring ASCII case.
fn find_ignoring_case(haystack: &[u8], needle: &[u8]) -> Option<usize> {
    if needle.len() > haystack.len() {
        return None;
    }
    (0..=haystack.len() - needle.len())
        .find(|&start| haystack[start..start + needle.len()].eq_ignore_ascii_case(needle))
}

fn find(haystack: &[u8], needle: &[u8]) -> Option<usize> {
    if needle.len() > haystack.len() {
        return None;
    }
    haystack.windows(needle.len()).position(|window| window == needle)
}

/// True when the bytes just before a `Content-Length` end with a header
/// line of another name (`Host: ...`, `Origin: ...`): part of the same
/// header block, from a client that is not ours.
fn foreign_header_before(skipped: &[u8]) -> bool {
    let Some(before) = skipped.strip_suffix(b"\r\n") else {
        return false;
    };
    let line = before.rsplit(|byte| *byte == b'\n').next().unwrap_or_default();
    let Some(colon) = line.iter().position(|byte| *byte == b':') else {
        return false;
    };
    let name = &line[..colon];
    !name.is_empty()
        && name.iter().all(|byte| byte.is_ascii_alphanumeric() || *byte == b'-')
        && !name.eq_ignore_ascii_case(b"content-type")
}

/// What the header block said.
enum Header {
    /// A usable length.
    Length(usize),
    /// Unusable, with the reason.
    Bad(String),
    /// A header the protocol does not have (`Host`, `Origin`, ...): not our
    /// client; the connection is closed.
    Foreign,
}

fn parse_header_block(block: &[u8]) -> Header {
    let Ok(text) = std::str::from_utf8(block) else {
        return Header::Bad("the message header is not text".into());
    };
    let mut length = None;
    for line in text.split("\r\n").filter(|line| !line.is_empty()) {
        let Some((name, value)) = line.split_once(':') else {
            return Header::Bad(format!(
                "the header line '{}' has no ':'",
                line.chars().take(80).collect::<String>()
            ));
        };
        let name = name.trim();
        let value = value.trim();
        if name.eq_ignore_ascii_case("content-length") {
            match value.parse::<usize>() {
                Ok(parsed) => length = Some(parsed),
                Err(_) => return Header::Bad(format!("Content-Length must be a whole number of bytes, not '{value}'")),
            }
        } else if !name.eq_ignore_ascii_case("content-type") {
            return Header::Foreign;
        } else {
            let charset = value
                .split(';')
                .skip(1)
                .filter_map(|part| part.trim().strip_prefix("charset="))
                .next();
            if let Some(charset) = charset {
                if !charset.eq_ignore_ascii_case("utf-8") && !charset.eq_ignore_ascii_case("utf8") {
                    return Header::Bad(format!("only the utf-8 charset is understood, not '{charset}'"));
                }
            }
        }
    }
    match length {
        Some(length) => Header::Length(length),
        None => Header::Bad("the message header has no Content-Length".into()),
    }
}

/// A message as the library reads it: the same types, in the same order
/// (the library's own message type is private to it).
#[derive(serde::Deserialize)]
#[serde(untagged)]
pub enum Incoming {
    /// A response to a request of the server.
    Response(Response),
    /// A request or notification.
    Request(Request),
}

/// Checks a complete body: it must be JSON and a JSON-RPC request,
/// notification or response. Returns the error answer when it is not.
pub fn check_body(body: &[u8]) -> Result<(), Vec<u8>> {
    // The library reads a body as UTF-8 text, then as an untagged choice of
    // response or request (which buffers the whole message and so checks
    // every string, unknown fields' included); a body it cannot read stops
    // its reader for good. So the same two steps are taken here.
    let Ok(text) = std::str::from_utf8(body) else {
        return Err(error_frame(
            Value::Null,
            PARSE_ERROR,
            "the message is not UTF-8 text".into(),
        ));
    };
    // Requests, nearly every message, are checked in one pass that builds
    // nothing (the library then reads them once); the rest are read here as
    // the library reads them.
    if crate::quick_check::is_plain_request(text) || serde_json::from_str::<Incoming>(text).is_ok() {
        return Ok(());
    }
    let value: Value = match serde_json::from_str(text) {
        Ok(value) => value,
        Err(error) => {
            return Err(error_frame(
                Value::Null,
                PARSE_ERROR,
                format!("the message is not valid JSON: {error}"),
            ))
        }
    };
    // The id, when there is a usable one, lets the client match the answer.
    let id = match value.get("id") {
        Some(id @ (Value::Number(_) | Value::String(_))) => id.clone(),
        _ => Value::Null,
    };
    let what = if value.is_array() {
        "batches of messages are not accepted; send one message at a time".to_string()
    } else {
        "the message is not a JSON-RPC 2.0 request, notification or response".to_string()
    };
    Err(error_frame(id, INVALID_REQUEST, what))
}

/// Reads messages from `input`, forwards the well-formed ones to `forward`,
/// and sends error answers for the others to `answers`. Returns at the end of
/// the input or when the forward side is closed.
pub async fn guard_input<R, W>(input: R, forward: W, answers: mpsc::UnboundedSender<Vec<u8>>, options: FramingOptions)
where
    R: AsyncRead + Unpin,
    W: AsyncWrite + Unpin,
{
    guard_input_with(input, forward, answers, options, None).await;
}

/// [`guard_input`], with the session's [`Stash`]: once the client has sent
/// `initialized`, the cells of a request that [`Stash::divert`] takes are
/// kept there and the request forwarded without them.
pub async fn guard_input_with<R, W>(
    mut input: R,
    mut forward: W,
    answers: mpsc::UnboundedSender<Vec<u8>>,
    options: FramingOptions,
    stash: Option<Stash>,
) where
    R: AsyncRead + Unpin,
    W: AsyncWrite + Unpin,
{
    // Nothing is diverted before the session is set up.
    let mut initialized = false;
    let mut buffer: Vec<u8> = Vec::with_capacity(64 << 10);
    let mut chunk = vec![0u8; 64 << 10];
    let mut at_end = false;
    // True while skipping bytes that belong to no message, so that one run of
    // garbage gets one answer.
    let mut in_garbage = false;
    loop {
        // Header phase: find the start of a header and the end of its block.
        let header = loop {
            // A web client (a browser made to post to the port) is not ours:
            // nothing it sent is taken as a message; the connection is closed.
            if crate::looks_like_http(buffer.trim_ascii_start()) {
                break Some(Header::Foreign);
            }
            if let Some(start) = find_ignoring_case(&buffer, CONTENT_LENGTH) {
                if start > 0 && foreign_header_before(&buffer[..start]) {
                    break Some(Header::Foreign);
                }
                if start > 0 {
                    let skipped_text = String::from_utf8_lossy(&buffer[..start]);
                    let harmless = skipped_text.trim().is_empty()
                        || skipped_text
                            .trim_start()
                            .to_ascii_lowercase()
                            .starts_with("content-type");
                    if !harmless && !in_garbage {
                        let _ = answers.send(error_frame(
                            Value::Null,
                            PARSE_ERROR,
                            format!("{start} byte(s) outside any message were skipped"),
                        ));
                    }
                    buffer.drain(..start);
                }
                in_garbage = false;
                if let Some(end) = find(&buffer, b"\r\n\r\n") {
                    let block: Vec<u8> = buffer.drain(..end + 4).collect();
                    break Some(parse_header_block(&block[..end]));
                }
                if buffer.len() > MAX_HEADER_BYTES {
                    let _ = answers.send(error_frame(
                        Value::Null,
                        PARSE_ERROR,
                        format!("a message header longer than {MAX_HEADER_BYTES} bytes was skipped"),
                    ));
                    // Skip past this header's name and look for the next one.
                    buffer.drain(..CONTENT_LENGTH.len());
                    in_garbage = true;
                    continue;
                }
            } else if buffer.len() > MAX_HEADER_BYTES {
                if !in_garbage && !String::from_utf8_lossy(&buffer).trim().is_empty() {
                    let _ = answers.send(error_frame(
                        Value::Null,
                        PARSE_ERROR,
                        "bytes outside any message were skipped".into(),
                    ));
                    in_garbage = true;
                }
                // Keep a tail in case a header name is split across reads.
                let keep = CONTENT_LENGTH.len();
                let cut = buffer.len() - keep;
                buffer.drain(..cut);
            }
            if at_end {
                break None;
            }
            match input.read(&mut chunk).await {
                Ok(0) | Err(_) => at_end = true,
                Ok(read) => buffer.extend_from_slice(&chunk[..read]),
            }
        };
        let Some(header) = header else {
            break;
        };
        let length = match header {
            Header::Foreign => break,
            Header::Bad(reason) => {
                let _ = answers.send(error_frame(Value::Null, PARSE_ERROR, reason));
                continue;
            }
            Header::Length(length) => length,
        };

        if length > options.max_message_bytes {
            let _ = answers.send(error_frame(
                Value::Null,
                INVALID_REQUEST,
                format!(
                    "a message of {length} bytes is larger than the limit of {} bytes (the server's --max-message-mib); it was skipped unread",
                    options.max_message_bytes
                ),
            ));
            // The body is not read as one: whatever follows is skipped as
            // bytes outside any message (in bounded pieces) up to the next
            // header, so a length of any size, even 2^64 - 1, costs one
            // answer and the next message is read as usual.
            in_garbage = true;
            continue;
        }

        // Body phase: wait for the whole body, but not for ever.
        let mut complete = buffer.len() >= length;
        while !complete && !at_end {
            match tokio::time::timeout(options.body_idle_timeout, input.read(&mut chunk)).await {
                Err(_) => break,
                Ok(Ok(0)) | Ok(Err(_)) => at_end = true,
                Ok(Ok(read)) => {
                    buffer.extend_from_slice(&chunk[..read]);
                    complete = buffer.len() >= length;
                }
            }
        }
        if !complete {
            if at_end {
                break;
            }
            let _ = answers.send(error_frame(
                Value::Null,
                PARSE_ERROR,
                format!(
                    "the message was incomplete: its Content-Length said {length} bytes but only {} arrived",
                    buffer.len()
                ),
            ));
            // What did arrive may hold the start of the next message; the
            // header phase skips to it without a second answer.
            in_garbage = true;
            continue;
        }
        let body: Vec<u8> = buffer.drain(..length).collect();
        if let Some(stash) = stash.as_ref().filter(|_| initialized) {
            // A request read whole into typed cells is well-formed: no other check is needed.
            if let Some(diverted) = stash.divert(&body) {
                if forward.write_all(&frame(&diverted)).await.is_err() || forward.flush().await.is_err() {
                    break;
                }
                continue;
            }
        }
        match check_body(&body) {
            Ok(()) => {
                if !initialized && is_initialized_notification(&body) {
                    initialized = true;
                }
                if forward.write_all(&frame(&body)).await.is_err() || forward.flush().await.is_err() {
                    break;
                }
            }
            Err(answer) => {
                let _ = answers.send(answer);
                // A Content-Length that was too long swallows the start of
                // the next message, and one too short leaves the end of this
                // one: put the body back and let the header phase skip to the
                // next header without a second answer.
                let mut rest = body;
                rest.extend_from_slice(&buffer);
                buffer = rest;
                in_garbage = true;
            }
        }
    }
    let _ = forward.shutdown().await;
}

/// True for the client's `initialized` notification (a small message).
fn is_initialized_notification(body: &[u8]) -> bool {
    #[derive(serde::Deserialize)]
    struct Method {
        method: Option<String>,
        id: Option<serde::de::IgnoredAny>,
    }
    body.len() < 4096
        && serde_json::from_slice::<Method>(body)
            .is_ok_and(|message| message.id.is_none() && message.method.as_deref() == Some("initialized"))
}

/// Writes the library's output and the guard's answers to `output`, whole
/// messages at a time. Returns when the library's output ends.
pub async fn merge_output<R, W>(server_output: R, answers: mpsc::UnboundedReceiver<Vec<u8>>, output: W)
where
    R: AsyncRead + Unpin,
    W: AsyncWrite + Unpin,
{
    merge_output_with(server_output, answers, output, None).await;
}

/// [`merge_output`], with the session's [`Stash`]: each answer from the
/// library settles its request's entry, and a placeholder is replaced by
/// the stored answer (see [`Stash::settle`]).
pub async fn merge_output_with<R, W>(
    mut server_output: R,
    mut answers: mpsc::UnboundedReceiver<Vec<u8>>,
    mut output: W,
    stash: Option<Stash>,
) where
    R: AsyncRead + Unpin,
    W: AsyncWrite + Unpin,
{
    let mut pending: Vec<u8> = Vec::with_capacity(64 << 10);
    let mut chunk = vec![0u8; 64 << 10];
    let mut answers_open = true;
    loop {
        tokio::select! {
            read = server_output.read(&mut chunk) => {
                match read {
                    Ok(0) | Err(_) => break,
                    Ok(read) => pending.extend_from_slice(&chunk[..read]),
                }
                // Write out every complete message.
                while let Some(size) = complete_message_size(&pending) {
                    let settled = stash.as_ref().and_then(|stash| {
                        let body_start = find(&pending[..size], b"\r\n\r\n").map_or(0, |end| end + 4);
                        stash.settle(&pending[body_start..size])
                    });
                    let written = match settled {
                        Some(settled) => write_settled(&mut output, &settled).await,
                        None => output.write_all(&pending[..size]).await,
                    };
                    if written.is_err() {
                        return;
                    }
                    pending.drain(..size);
                }
                if output.flush().await.is_err() {
                    return;
                }
            }
            answer = answers.recv(), if answers_open => {
                match answer {
                    Some(answer) => {
                        if output.write_all(&answer).await.is_err() || output.flush().await.is_err() {
                            return;
                        }
                    }
                    None => answers_open = false,
                }
            }
        }
    }
    // The library is done; write any answers still queued.
    while let Ok(answer) = answers.try_recv() {
        if output.write_all(&answer).await.is_err() {
            break;
        }
    }
    let _ = output.write_all(&pending).await;
    let _ = output.flush().await;
}

/// Writes a message whose answer was put in place, in its three parts.
async fn write_settled<W: AsyncWrite + Unpin>(output: &mut W, settled: &Settled) -> std::io::Result<()> {
    output.write_all(&settled.head).await?;
    output.write_all(&settled.answer).await?;
    output.write_all(&settled.tail).await
}

/// The size of the first complete message in `bytes` (header and body), if
/// it is all there. The library frames its output as `Content-Length: N`
/// followed by a blank line and the body.
fn complete_message_size(bytes: &[u8]) -> Option<usize> {
    let header_end = find(bytes, b"\r\n\r\n")?;
    let header = std::str::from_utf8(&bytes[..header_end]).ok()?;
    let length: usize = header
        .split("\r\n")
        .filter_map(|line| line.split_once(':'))
        .find(|(name, _)| name.trim().eq_ignore_ascii_case("content-length"))
        .and_then(|(_, value)| value.trim().parse().ok())?;
    let total = header_end + 4 + length;
    (bytes.len() >= total).then_some(total)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Runs the guard over `input` and returns (forwarded bytes, answers).
    async fn run(input: Vec<u8>, options: FramingOptions) -> (Vec<u8>, Vec<Value>) {
        let (forward_writer, mut forward_reader) = tokio::io::duplex(1 << 16);
        let (answers_tx, mut answers_rx) = mpsc::unbounded_channel();
        let reader = std::io::Cursor::new(input);
        let collector = tokio::spawn(async move {
            let mut forwarded = Vec::new();
            let _ = forward_reader.read_to_end(&mut forwarded).await;
            forwarded
        });
        guard_input(reader, forward_writer, answers_tx, options).await;
        let forwarded = collector.await.unwrap_or_default();
        let mut answers = Vec::new();
        while let Ok(answer) = answers_rx.try_recv() {
            let size = complete_message_size(&answer).unwrap_or(0);
            assert_eq!(size, answer.len(), "answers are whole messages");
            let body_start = find(&answer, b"\r\n\r\n").map(|end| end + 4).unwrap_or(0);
            answers.push(serde_json::from_slice(&answer[body_start..]).unwrap_or(Value::Null));
        }
        (forwarded, answers)
    }

    const EXIT: &[u8] = br#"{"jsonrpc":"2.0","method":"exit"}"#;

    #[tokio::test]
    async fn passes_good_messages_and_recovers_from_bad_ones() {
        let mut input = Vec::new();
        input.extend_from_slice(b"Content-Type: application/vscode-jsonrpc; charset=utf-8\r\n");
        input.extend_from_slice(&frame(EXIT));
        input.extend_from_slice(&frame(b"{not json"));
        input.extend_from_slice(&frame(br#"{"hello":1,"id":7}"#));
        input.extend_from_slice(&frame(br#"[{"jsonrpc":"2.0","method":"exit"}]"#));
        input.extend_from_slice(b"Content-Length: twelve\r\n\r\n");
        input.extend_from_slice(b"garbage between messages ");
        input.extend_from_slice(&frame(EXIT));
        let (forwarded, answers) = run(input, FramingOptions::default()).await;
        let mut expected = frame(EXIT);
        expected.extend_from_slice(&frame(EXIT));
        assert_eq!(forwarded, expected);
        // JSON-RPC 2.0 specification, section 5.1: -32700 parse error, -32600 invalid request.
        let codes: Vec<i64> = answers
            .iter()
            .map(|answer| answer["error"]["code"].as_i64().unwrap_or(0))
            .collect();
        assert_eq!(codes, vec![-32700, -32600, -32600, -32700, -32700], "{answers:?}");
        assert_eq!(answers[1]["id"], 7, "a readable id is answered");
        assert!(answers[3]["error"]["message"].as_str().unwrap_or("").contains("twelve"));
    }

    #[tokio::test]
    async fn bodies_the_library_cannot_read_are_answered_not_forwarded() {
        // Found by the framing fuzz target: invalid UTF-8, and a lone
        // surrogate escape, in a field the request type ignores, passed the
        // check and would have stopped the library's reader for good.
        let mut input = Vec::new();
        input.extend_from_slice(&frame(
            b"{\"jsonrpc\":\"2.0\",\"method\":\"exit\",\"junk\":\"\x97\x85\"}",
        ));
        input.extend_from_slice(&frame(br#"{"jsonrpc":"2.0","method":"exit","junk":"\udc00"}"#));
        input.extend_from_slice(&frame(EXIT));
        let (forwarded, answers) = run(input, FramingOptions::default()).await;
        assert_eq!(forwarded, frame(EXIT));
        assert_eq!(answers.len(), 2, "{answers:?}");
        assert!(answers[0]["error"]["message"]
            .as_str()
            .unwrap_or("")
            .contains("not UTF-8"));
    }

    #[tokio::test]
    async fn skips_a_message_over_the_limit_without_keeping_it() {
        let options = FramingOptions {
            max_message_bytes: 1_000,
            ..FramingOptions::default()
        };
        let mut input = b"Content-Length: 5000\r\n\r\n".to_vec();
        input.extend(std::iter::repeat_n(b'x', 5_000));
        input.extend_from_slice(&frame(EXIT));
        let (forwarded, answers) = run(input, options).await;
        assert_eq!(forwarded, frame(EXIT));
        assert_eq!(answers.len(), 1);
        assert_eq!(answers[0]["error"]["code"], -32600);
        assert!(answers[0]["error"]["message"]
            .as_str()
            .unwrap_or("")
            .contains("5000 bytes"));
    }

    #[tokio::test]
    async fn a_huge_length_costs_one_answer_and_the_next_message_is_read() {
        for claimed in ["67108865", "18446744073709551615", "4294967296"] {
            let mut input = format!("Content-Length: {claimed}\r\n\r\n{{\"jsonrpc\":\"2.0\"}}").into_bytes();
            input.extend_from_slice(&frame(EXIT));
            let (forwarded, answers) = run(input, FramingOptions::default()).await;
            assert_eq!(forwarded, frame(EXIT), "{claimed}");
            assert_eq!(answers.len(), 1, "{claimed}: {answers:?}");
        }
    }

    #[tokio::test]
    async fn http_requests_and_headers_close_the_input() {
        let post = b"POST / HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: text/plain\r\nContent-Length: 60\r\n\r\n";
        let mut input = post.to_vec();
        input.extend_from_slice(&frame(EXIT));
        let (forwarded, _) = run(input, FramingOptions::default()).await;
        assert!(forwarded.is_empty(), "{}", String::from_utf8_lossy(&forwarded));
        let mut input = b"Origin: http://example.invalid\r\nContent-Length: 2\r\n\r\n{}".to_vec();
        input.extend_from_slice(&frame(EXIT));
        let (forwarded, _) = run(input, FramingOptions::default()).await;
        assert!(forwarded.is_empty(), "{}", String::from_utf8_lossy(&forwarded));
    }

    #[tokio::test]
    async fn a_length_too_long_swallows_then_releases_the_next_message() {
        // The first message claims 10 bytes more than it has; the next
        // message's header lands in its body and must be read after all.
        let first = br#"{"jsonrpc":"2.0","method":"initialized","params":{}}"#;
        let mut input = format!("Content-Length: {}\r\n\r\n", first.len() + 10).into_bytes();
        input.extend_from_slice(first);
        input.extend_from_slice(&frame(EXIT));
        let (forwarded, answers) = run(input, FramingOptions::default()).await;
        assert_eq!(forwarded, frame(EXIT));
        assert_eq!(answers.len(), 1);
        assert_eq!(answers[0]["error"]["code"], -32700);
    }

    #[tokio::test]
    async fn a_length_too_short_is_answered_and_reading_goes_on() {
        let mut input = format!("Content-Length: {}\r\n\r\n", EXIT.len() - 5).into_bytes();
        input.extend_from_slice(EXIT);
        input.extend_from_slice(&frame(EXIT));
        let (forwarded, answers) = run(input, FramingOptions::default()).await;
        assert_eq!(forwarded, frame(EXIT));
        assert_eq!(answers.len(), 1, "{answers:?}");
        assert_eq!(answers[0]["error"]["code"], -32700);
    }

    #[tokio::test]
    async fn merges_whole_messages() {
        let (mut server_writer, server_reader) = tokio::io::duplex(64);
        let (answers_tx, answers_rx) = mpsc::unbounded_channel();
        let (output_writer, mut output_reader) = tokio::io::duplex(1 << 16);
        let merger = tokio::spawn(merge_output(server_reader, answers_rx, output_writer));
        let message = frame(br#"{"jsonrpc":"2.0","id":1,"result":null}"#);
        // Half a message, then a guard answer, then the rest.
        let (head, tail) = message.split_at(10);
        let _ = server_writer.write_all(head).await;
        let _ = answers_tx.send(frame(
            br#"{"jsonrpc":"2.0","id":null,"error":{"code":-32700,"message":"x"}}"#,
        ));
        tokio::time::sleep(Duration::from_millis(20)).await;
        let _ = server_writer.write_all(tail).await;
        drop(server_writer);
        let _ = merger.await;
        let mut output = Vec::new();
        let _ = output_reader.read_to_end(&mut output).await;
        let first_size = complete_message_size(&output).unwrap_or(0);
        let second_size = complete_message_size(&output[first_size..]).unwrap_or(0);
        assert_eq!(first_size + second_size, output.len());
        assert!(output.windows(message.len()).any(|window| window == message.as_slice()));
    }
}
