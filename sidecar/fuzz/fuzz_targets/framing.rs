//! The framing guard over any byte stream from a client: every message is
//! checked, bad ones answered, good ones forwarded. It must end (at the end
//! of the input), never panic, forward only whole JSON-RPC messages and
//! answer with whole messages.
#![no_main]

use std::time::Duration;

use libfuzzer_sys::fuzz_target;
use server::framing::{guard_input, FramingOptions};
use tokio::io::AsyncReadExt;

fuzz_target!(|data: &[u8]| {
    let runtime = tokio::runtime::Builder::new_current_thread()
        .enable_time()
        .build()
        .expect("a runtime");
    runtime.block_on(async {
        let options = FramingOptions {
            max_message_bytes: 1 << 16,
            body_idle_timeout: Duration::from_millis(5),
        };
        let (forward_writer, mut forward_reader) = tokio::io::duplex(1 << 16);
        let (answers_tx, mut answers_rx) = tokio::sync::mpsc::unbounded_channel();
        let collector = tokio::spawn(async move {
            let mut forwarded = Vec::new();
            let _ = forward_reader.read_to_end(&mut forwarded).await;
            forwarded
        });
        guard_input(std::io::Cursor::new(data.to_vec()), forward_writer, answers_tx, options).await;
        let forwarded = collector.await.unwrap_or_default();
        // What was forwarded is a sequence of framed JSON-RPC messages.
        let mut rest = forwarded.as_slice();
        while !rest.is_empty() {
            let header_end = rest
                .windows(4)
                .position(|window| window == b"\r\n\r\n")
                .expect("a forwarded message has a header");
            let header = std::str::from_utf8(&rest[..header_end]).expect("the header is text");
            let length: usize = header
                .strip_prefix("Content-Length: ")
                .and_then(|value| value.parse().ok())
                .expect("the header is a Content-Length");
            let body = &rest[header_end + 4..header_end + 4 + length];
            let value: serde_json::Value = serde_json::from_slice(body).expect("a forwarded body is JSON");
            assert!(value.is_object(), "a forwarded body is one message");
            rest = &rest[header_end + 4 + length..];
        }
        while let Ok(answer) = answers_rx.try_recv() {
            let header_end = answer
                .windows(4)
                .position(|window| window == b"\r\n\r\n")
                .expect("an answer has a header");
            let value: serde_json::Value =
                serde_json::from_slice(&answer[header_end + 4..]).expect("an answer is JSON");
            assert!(value["error"]["code"].is_i64(), "an answer is an error response");
        }
    });
});
