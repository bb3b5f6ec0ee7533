//! The plan file parser (`trialyst plan --from`): any text, parsed into a
//! plan request with errors naming the key and line, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;
use service::plan::file::parse_plan_file;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Err(error) = parse_plan_file(text, "fuzz.toml").map(|file| file.request) {
        let message = error.to_string();
        assert!(message.starts_with("fuzz.toml"), "the error names the file: {message}");
    }
});
