//! xls through the read path: the raw bytes as a file (mode byte even), or
//! the bytes as the Workbook stream of a valid compound file (mode byte odd),
//! which is where the BIFF records the parser trusts live.
#![no_main]

use libfuzzer_sys::fuzz_target;
use workbook_io_fuzz::{compound_of, mode_and_rest, read_everything};

fuzz_target!(|data: &[u8]| {
    let Some((mode, rest)) = mode_and_rest(data) else {
        return;
    };
    if mode % 2 == 0 {
        read_everything(rest, "xls");
    } else {
        read_everything(&compound_of(rest), "xls");
    }
});
