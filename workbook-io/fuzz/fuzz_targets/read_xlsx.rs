//! xlsx through the read path: the raw bytes as a file (mode byte even), or
//! the bytes as the sheet part (and, after a 0xFF byte, the shared strings)
//! of an otherwise valid container (mode byte odd).
#![no_main]

use libfuzzer_sys::fuzz_target;
use workbook_io_fuzz::{mode_and_rest, read_everything, zip_of, CONTENT_TYPES, ROOT_RELS, WORKBOOK, WORKBOOK_RELS};

fuzz_target!(|data: &[u8]| {
    let Some((mode, rest)) = mode_and_rest(data) else {
        return;
    };
    if mode % 2 == 0 {
        read_everything(rest, "xlsx");
        return;
    }
    let (sheet, strings) = match rest.iter().position(|&byte| byte == 0xFF) {
        Some(split) => (&rest[..split], &rest[split + 1..]),
        None => (rest, &b"<sst/>"[..]),
    };
    let container = zip_of(&[
        ("[Content_Types].xml", CONTENT_TYPES.as_bytes()),
        ("_rels/.rels", ROOT_RELS.as_bytes()),
        ("xl/workbook.xml", WORKBOOK.as_bytes()),
        ("xl/_rels/workbook.xml.rels", WORKBOOK_RELS.as_bytes()),
        ("xl/worksheets/sheet1.xml", sheet),
        ("xl/sharedStrings.xml", strings),
    ]);
    read_everything(&container, "xlsx");
});
