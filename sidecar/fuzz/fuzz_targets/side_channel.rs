//! The side channel's guard part: whatever body `Stash::divert` takes, the
//! protocol library reads as the same request (method, id, every other
//! field), and the stashed cells make the same grid, or the same error, as
//! the library's tree of them; the entry is then settled by an answer.
#![no_main]

use libfuzzer_sys::fuzz_target;
use server::framing::Incoming;
use server::from_proto::{cells_params, cells_params_with};
use server::side_channel::{Stash, CELLS_FIELD};

fuzz_target!(|data: &[u8]| {
    let stash = Stash::new();
    let Some(forwarded) = stash.divert(data) else {
        return;
    };
    let Ok(Incoming::Request(original)) = serde_json::from_slice::<Incoming>(data) else {
        panic!("diverted, but the library does not read it as a request");
    };
    let Ok(Incoming::Request(sent)) = serde_json::from_slice::<Incoming>(&forwarded) else {
        panic!("the forwarded body is not a request");
    };
    assert_eq!(original.method(), sent.method());
    assert_eq!(original.id(), sent.id());
    let original_params = original.params().cloned().unwrap_or_default();
    let sent_params = sent.params().cloned().unwrap_or_default();
    let key = sent_params[CELLS_FIELD].as_str().unwrap_or_default().to_string();
    let raw = stash.take_cells(&key).expect("the cells are kept under the key");
    let mut without_cells = original_params.clone();
    let mut without_key = sent_params.clone();
    if let (Some(a), Some(b)) = (without_cells.as_object_mut(), without_key.as_object_mut()) {
        a.remove("cells");
        b.remove(CELLS_FIELD);
    }
    assert_eq!(without_cells, without_key, "every other field goes through unchanged");
    match (cells_params(&original_params), cells_params_with(&sent_params, Some(&raw))) {
        (Ok(a), Ok(b)) => {
            assert_eq!(a.grid.cells, b.grid.cells);
            assert_eq!(a.grid.strings, b.grid.strings);
        }
        (Err(a), Err(b)) => assert_eq!(a, b),
        (a, b) => panic!("{:?} against {:?}", a.err(), b.err()),
    }
    // Any answer with the id settles the entry.
    let id = serde_json::to_string(sent.id().expect("an id")).unwrap_or_default();
    let answer = format!(r#"{{"jsonrpc":"2.0","result":null,"id":{id}}}"#);
    assert!(stash.settle(answer.as_bytes()).is_none());
    assert!(stash.is_empty());
});
