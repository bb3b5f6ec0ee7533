//! ods through the read path: the raw bytes as a file (mode byte even), or
//! the bytes as `content.xml` of a valid container (mode byte odd).
#![no_main]

use libfuzzer_sys::fuzz_target;
use workbook_io_fuzz::{mode_and_rest, read_everything, zip_of};

const MANIFEST: &str = r#"<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2"><manifest:file-entry manifest:full-path="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>"#;

fuzz_target!(|data: &[u8]| {
    let Some((mode, rest)) = mode_and_rest(data) else {
        return;
    };
    if mode % 2 == 0 {
        read_everything(rest, "ods");
        return;
    }
    let container = zip_of(&[
        ("mimetype", b"application/vnd.oasis.opendocument.spreadsheet"),
        ("META-INF/manifest.xml", MANIFEST.as_bytes()),
        ("content.xml", rest),
    ]);
    read_everything(&container, "ods");
});
