//! Request decoding: any JSON as the params of every method, through the
//! hand-written checks of `server::from_proto` (which must answer with an error
//! naming the field, never panic), and decoded cells through table detection.
#![no_main]

use libfuzzer_sys::fuzz_target;
use server::from_proto;
use workbook_io::layout::{detect_table, TableRequest};

fuzz_target!(|data: &[u8]| {
    let Ok(params) = serde_json::from_slice::<serde_json::Value>(data) else {
        return;
    };
    let _ = from_proto::params_object(&params);
    let _ = from_proto::settings(Some(&params));
    let _ = from_proto::settings(params.get("settings"));
    let _ = from_proto::workbook_params(&params);
    let _ = from_proto::write_params(&params);
    if let Ok(cells) = from_proto::cells_params(&params) {
        assert!(
            cells.grid.cells.windows(2).all(|pair| (pair[0].0.row, pair[0].0.col) < (pair[1].0.row, pair[1].0.col)),
            "decoded cells are in row-major order without repeats"
        );
        let _ = detect_table(&cells.grid, &TableRequest::default());
    }
    if let Some(uri) = params.get("uri").and_then(|uri| uri.as_str()) {
        if let Ok(uri) = uri.parse() {
            let _ = from_proto::file_path_of(&uri);
        }
    }
});
