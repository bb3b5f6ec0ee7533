//! A way around the protocol library for requests that carry many cells.
//!
//! The library reads every request into its JSON tree and turns every
//! answer into its JSON tree before writing it. For `trialyst/analyseCells`
//! (and `trialyst/inspectCells`, which sends the same cells) those trees
//! cost more than all the rest of the protocol's work, so the cells and the
//! answer go around the library, through a [`Stash`] of the session:
//!
//! 1. the framing guard, which reads every message anyway, reads the
//!    request's cells once, straight into [`RawCells`], keeps them under a
//!    fresh key, and forwards to the library the same request with the
//!    field [`CELLS_FIELD`] (the key) in place of `cells`;
//! 2. the handler takes the cells by that key ([`Stash::take_cells`]),
//!    computes, writes its answer's JSON itself ([`crate::sorted_json`])
//!    into the stash ([`Stash::put_answer`]) and returns the small
//!    placeholder `{"_serverAnswer": key}`;
//! 3. the output merger, which frames every answer anyway, puts the stored
//!    answer in place of the placeholder ([`Stash::settle`]).
//!
//! The bytes the client gets are the same as without the stash. Keys carry
//! a random secret of the session, and the guard diverts nothing whose
//! params already hold [`CELLS_FIELD`], which the handler then refuses: a
//! client cannot reach the stash. An entry is removed when the answer with
//! its id passes the merger, whatever the answer (results, an error, the
//! library's refusal, a cancellation, a time limit), and an answer stored
//! after that is dropped; at most [`MAX_ENTRIES`] wait at once (past that,
//! requests take the library's own way). A request the guard cannot read
//! this way (a cell that is a list, a repeated field, an id that is not a
//! number or text, ...) takes the library's way, with its usual answer.

use std::collections::hash_map::RandomState;
use std::fmt;
use std::hash::{BuildHasher, Hasher};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Arc, Mutex, MutexGuard};

use serde::de::{self, Deserializer, MapAccess, SeqAccess, Visitor};
use serde::Deserialize;
use serde_json::{Map, Value};
use tower_lsp_server::jsonrpc::Id;

use crate::server::methods;

/// The params field that carries a stash key from the guard to the handler.
pub const CELLS_FIELD: &str = "_serverCells";

/// The field of the placeholder answer that the merger replaces.
pub const ANSWER_FIELD: &str = "_serverAnswer";

/// The most requests whose cells or answer wait in the stash at once.
pub const MAX_ENTRIES: usize = 32;

/// The methods whose cells go around the library.
pub const DIVERTED: [&str; 2] = [methods::ANALYSE_CELLS, methods::INSPECT_CELLS];

/// One cell as sent: what the grid is made from.
#[derive(Debug, Clone, PartialEq)]
pub enum RawCell {
    /// `null`.
    Blank,
    /// A number.
    Number(f64),
    /// `true` or `false`.
    Bool(bool),
    /// Text (an index into [`RawCells::texts`]).
    Text(u32),
}

/// The rows of cells of a request, read without a JSON tree.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RawCells {
    /// Every cell, row after row.
    pub cells: Vec<RawCell>,
    /// Where each row ends in `cells`.
    pub row_ends: Vec<usize>,
    /// The texts of the cells, in the order they came.
    pub texts: Vec<String>,
}

impl RawCells {
    /// The rows, each a slice of cells.
    pub fn rows(&self) -> impl Iterator<Item = &[RawCell]> {
        let starts = std::iter::once(0).chain(self.row_ends.iter().copied());
        starts
            .zip(self.row_ends.iter().copied())
            .map(|(start, end)| &self.cells[start..end])
    }

    /// The text of a text cell.
    pub fn text(&self, index: u32) -> &str {
        self.texts.get(index as usize).map_or("", String::as_str)
    }
}

impl<'de> Deserialize<'de> for RawCells {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_seq(RowsVisitor)
    }
}

struct RowsVisitor;

impl<'de> Visitor<'de> for RowsVisitor {
    type Value = RawCells;

    fn expecting(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str("a list of rows")
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut rows: A) -> Result<RawCells, A::Error> {
        let mut raw = RawCells::default();
        while rows.next_element_seed(RowSeed(&mut raw))?.is_some() {
            raw.row_ends.push(raw.cells.len());
        }
        Ok(raw)
    }
}

/// Reads one row into the cells read so far.
struct RowSeed<'r>(&'r mut RawCells);

impl<'de> de::DeserializeSeed<'de> for RowSeed<'_> {
    type Value = ();

    fn deserialize<D: Deserializer<'de>>(self, deserializer: D) -> Result<(), D::Error> {
        deserializer.deserialize_seq(self)
    }
}

impl<'de> Visitor<'de> for RowSeed<'_> {
    type Value = ();

    fn expecting(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str("a row of cell values")
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut values: A) -> Result<(), A::Error> {
        while let Some(cell) = values.next_element::<CellValue>()? {
            let cell = match cell {
                CellValue::Blank => RawCell::Blank,
                CellValue::Number(number) => RawCell::Number(number),
                CellValue::Bool(flag) => RawCell::Bool(flag),
                CellValue::Text(text) => {
                    let index = u32::try_from(self.0.texts.len()).map_err(|_| de::Error::custom("too many texts"))?;
                    self.0.texts.push(text);
                    RawCell::Text(index)
                }
            };
            self.0.cells.push(cell);
        }
        Ok(())
    }
}

/// One cell value: a number, text, true/false or null; anything else is
/// not read here (the request then takes the library's way).
enum CellValue {
    Blank,
    Number(f64),
    Bool(bool),
    Text(String),
}

impl<'de> Deserialize<'de> for CellValue {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_any(CellVisitor)
    }
}

struct CellVisitor;

impl<'de> Visitor<'de> for CellVisitor {
    type Value = CellValue;

    fn expecting(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str("a number, text, true/false or null")
    }
    fn visit_unit<E: de::Error>(self) -> Result<CellValue, E> {
        Ok(CellValue::Blank)
    }
    fn visit_bool<E: de::Error>(self, flag: bool) -> Result<CellValue, E> {
        Ok(CellValue::Bool(flag))
    }
    // As the JSON tree's `as_f64` reads its numbers.
    fn visit_i64<E: de::Error>(self, number: i64) -> Result<CellValue, E> {
        Ok(CellValue::Number(number as f64))
    }
    fn visit_u64<E: de::Error>(self, number: u64) -> Result<CellValue, E> {
        Ok(CellValue::Number(number as f64))
    }
    fn visit_f64<E: de::Error>(self, number: f64) -> Result<CellValue, E> {
        Ok(CellValue::Number(number))
    }
    fn visit_str<E: de::Error>(self, text: &str) -> Result<CellValue, E> {
        Ok(CellValue::Text(text.to_string()))
    }
    fn visit_string<E: de::Error>(self, text: String) -> Result<CellValue, E> {
        Ok(CellValue::Text(text))
    }
}

/// The params of a request with cells: the cells read as [`RawCells`], every
/// other field as the JSON tree it would have been.
struct CellsRequestParams {
    cells: Option<RawCells>,
    rest: Map<String, Value>,
}

impl<'de> Deserialize<'de> for CellsRequestParams {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_map(ParamsVisitor)
    }
}

struct ParamsVisitor;

impl<'de> Visitor<'de> for ParamsVisitor {
    type Value = CellsRequestParams;

    fn expecting(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str("an object of params")
    }

    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<CellsRequestParams, A::Error> {
        let mut params = CellsRequestParams {
            cells: None,
            rest: Map::new(),
        };
        while let Some(key) = map.next_key::<String>()? {
            // A field given twice is read by the tree as its last value; such
            // a request is left to the library.
            if key == "cells" {
                if params.cells.is_some() {
                    return Err(de::Error::custom("cells given twice"));
                }
                params.cells = Some(map.next_value()?);
            } else {
                let value: Value = map.next_value()?;
                if params.rest.insert(key, value).is_some() {
                    return Err(de::Error::custom("a field given twice"));
                }
            }
        }
        Ok(params)
    }
}

/// A request as the guard reads it. Any other field (a `result` or `error`
/// would make it a response to the library) leaves it to the library.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CellsRequest {
    jsonrpc: String,
    method: String,
    id: Option<Id>,
    params: Option<CellsRequestParams>,
}

/// A message from the library, as far as the merger needs it.
#[derive(Deserialize)]
struct Outgoing {
    #[serde(default)]
    id: Option<Id>,
    #[serde(default)]
    method: Option<de::IgnoredAny>,
}

struct Entry {
    key: String,
    id: Id,
    cells: Option<RawCells>,
    answer: Option<Vec<u8>>,
}

struct Inner {
    next: u64,
    entries: Vec<Entry>,
    /// How many answers were put in place of their placeholder.
    replaced: u64,
}

/// The stash of one session (stdio, or one TCP connection), shared by its
/// framing guard, handlers and output merger.
#[derive(Clone)]
pub struct Stash {
    inner: Arc<Mutex<Inner>>,
    /// How many entries there are, read without the lock by the merger.
    count: Arc<AtomicUsize>,
    secret: Arc<str>,
}

impl fmt::Debug for Stash {
    fn fmt(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter
            .debug_struct("Stash")
            .field("entries", &self.len())
            .finish_non_exhaustive()
    }
}

impl Default for Stash {
    fn default() -> Self {
        Self::new()
    }
}

/// 128 bits no client can know: from the standard library's randomly
/// seeded hasher keys, two instances apart.
fn session_secret() -> String {
    let mut parts = [0u64; 2];
    for (index, part) in parts.iter_mut().enumerate() {
        let mut hasher = RandomState::new().build_hasher();
        hasher.write_usize(index);
        hasher.write_u128(
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map(|since| since.as_nanos())
                .unwrap_or_default(),
        );
        *part = hasher.finish();
    }
    format!("{:016x}{:016x}", parts[0], parts[1])
}

impl Stash {
    /// An empty stash with a fresh secret.
    pub fn new() -> Self {
        Self {
            inner: Arc::new(Mutex::new(Inner {
                next: 1,
                entries: Vec::new(),
                replaced: 0,
            })),
            count: Arc::new(AtomicUsize::new(0)),
            secret: session_secret().into(),
        }
    }

    fn lock(&self) -> MutexGuard<'_, Inner> {
        self.inner.lock().unwrap_or_else(std::sync::PoisonError::into_inner)
    }

    /// How many requests have cells or an answer waiting.
    pub fn len(&self) -> usize {
        self.count.load(Ordering::SeqCst)
    }

    /// How many requests had their cells kept so far, and how many answers
    /// were put in place of their placeholder.
    pub fn counts(&self) -> (u64, u64) {
        let inner = self.lock();
        (inner.next - 1, inner.replaced)
    }

    /// True when nothing waits.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The guard's part: when `body` is a request of a [`DIVERTED`] method
    /// with cells, keeps its cells and returns the body to forward instead
    /// (the same request, its cells replaced by a key). `None` leaves the
    /// message to the library's own way.
    pub fn divert(&self, body: &[u8]) -> Option<Vec<u8>> {
        // Only an object; a body the library could read another way is left to it.
        if body.trim_ascii_start().first() != Some(&b'{') || self.len() >= MAX_ENTRIES {
            return None;
        }
        let request: CellsRequest = serde_json::from_slice(body).ok()?;
        if request.jsonrpc != "2.0" || !DIVERTED.contains(&request.method.as_str()) {
            return None;
        }
        let id = match request.id {
            Some(id @ (Id::Number(_) | Id::String(_))) => id,
            _ => return None,
        };
        let params = request.params?;
        let cells = params.cells?;
        let mut rest = params.rest;
        if rest.contains_key(CELLS_FIELD) {
            return None;
        }
        let key = {
            let mut inner = self.lock();
            // Ids of waiting requests stay distinct, so that an answer names one entry.
            if inner.entries.len() >= MAX_ENTRIES || inner.entries.iter().any(|entry| entry.id == id) {
                return None;
            }
            let key = format!("{}-{}", self.secret, inner.next);
            inner.next += 1;
            inner.entries.push(Entry {
                key: key.clone(),
                id: id.clone(),
                cells: Some(cells),
                answer: None,
            });
            self.count.store(inner.entries.len(), Ordering::SeqCst);
            key
        };
        rest.insert(CELLS_FIELD.into(), Value::String(key));
        let forwarded = serde_json::json!({
            "jsonrpc": "2.0",
            "id": id,
            "method": request.method,
            "params": Value::Object(rest),
        });
        serde_json::to_vec(&forwarded).ok()
    }

    /// The handler's part: the cells kept under `key`, taken out (the entry
    /// stays until its answer passes). `None` for a key the guard did not give.
    pub fn take_cells(&self, key: &str) -> Option<RawCells> {
        let mut inner = self.lock();
        inner
            .entries
            .iter_mut()
            .find(|entry| entry.key == key)
            .and_then(|entry| entry.cells.take())
    }

    /// The handler's part: stores the answer's JSON under `key`. False (and
    /// the answer dropped) when the entry is gone: the request was answered
    /// already (cancelled, or stopped at its time limit).
    pub fn put_answer(&self, key: &str, answer: Vec<u8>) -> bool {
        let mut inner = self.lock();
        match inner.entries.iter_mut().find(|entry| entry.key == key) {
            Some(entry) => {
                entry.answer = Some(answer);
                true
            }
            None => false,
        }
    }

    /// The placeholder answer for `key`, as the handler returns it.
    pub fn placeholder(key: &str) -> Value {
        serde_json::json!({ ANSWER_FIELD: key })
    }

    /// The merger's part, for every message from the library: when it is
    /// the answer to a request with an entry, the entry is removed, and an
    /// answer's placeholder is replaced by the stored answer (the new
    /// message returned, framed, in its three parts). `None`: send the
    /// message as it is.
    pub fn settle(&self, body: &[u8]) -> Option<Settled> {
        if self.is_empty() {
            return None;
        }
        let outgoing: Outgoing = serde_json::from_slice(body).ok()?;
        if outgoing.method.is_some() {
            return None;
        }
        let id = outgoing.id?;
        let entry = {
            let mut inner = self.lock();
            let index = inner.entries.iter().position(|entry| entry.id == id)?;
            let entry = inner.entries.swap_remove(index);
            self.count.store(inner.entries.len(), Ordering::SeqCst);
            entry
        };
        let answer = entry.answer?;
        let placeholder = serde_json::to_vec(&Self::placeholder(&entry.key)).ok()?;
        // The placeholder is the whole of a small answer's result.
        if body.len() > placeholder.len() + 256 {
            return None;
        }
        let at = body
            .windows(placeholder.len())
            .position(|window| window == placeholder.as_slice())?;
        let length = body.len() - placeholder.len() + answer.len();
        let mut head = format!("Content-Length: {length}\r\n\r\n").into_bytes();
        head.extend_from_slice(&body[..at]);
        self.lock().replaced += 1;
        Some(Settled {
            head,
            answer,
            tail: body[at + placeholder.len()..].to_vec(),
        })
    }
}

/// An answer put in place of its placeholder: the message is `head`, then
/// `answer`, then `tail` (kept apart so that the answer is not copied again).
#[derive(Debug)]
pub struct Settled {
    /// The header and the message up to the answer.
    pub head: Vec<u8>,
    /// The answer's JSON.
    pub answer: Vec<u8>,
    /// The rest of the message.
    pub tail: Vec<u8>,
}

impl Settled {
    /// The whole message in one piece.
    pub fn into_bytes(self) -> Vec<u8> {
        let mut bytes = self.head;
        bytes.extend_from_slice(&self.answer);
        bytes.extend_from_slice(&self.tail);
        bytes
    }
}

#[cfg(test)]
mod tests {
    use serde_json::json;

    use super::*;
    use crate::from_proto::{cells_params, cells_params_with};

    fn request(id: Value, params: Value) -> Vec<u8> {
        json!({"jsonrpc": "2.0", "id": id, "method": methods::ANALYSE_CELLS, "params": params})
            .to_string()
            .into_bytes()
    }

    /// The forwarded request's params, and the key it carries.
    fn forwarded(body: &[u8]) -> (Value, String) {
        let message: Value = serde_json::from_slice(body).expect("forwarded JSON");
        let params = message["params"].clone();
        let key = params[CELLS_FIELD].as_str().unwrap_or_default().to_string();
        (params, key)
    }

    /// The grid from the stashed cells is the grid from the JSON cells, for
    /// every kind of value, empty rows, ragged rows, repeated and error
    /// texts, and an origin away from A1; and so are the errors of a row
    /// below the last row of a sheet and a cell right of the last column.
    #[test]
    fn stashed_cells_make_the_same_grid_and_errors() {
        let cases = [
            json!({"cells": [["A", "B", "A"], [1, 2.5, -3e-5], [], [null, true, false], ["", " #N/A ", "#DIV/0!"], [18446744073709551615u64, -9007199254740993i64]], "origin": "Week 2!D7"}),
            json!({"cells": [], "sheet": "Empty"}),
            json!({"cells": [[1], [], [2, 3, 4, 5]], "origin": "XFC1"}),
            json!({"cells": [[1], [null], [3]], "origin": "A1048575"}),
            json!({"cells": [[1], [], []], "origin": "A1048575"}),
            json!({"cells": [["x"]], "origin": "no place"}),
            json!({"cells": [[1, 2]], "settings": {"confidence": "150%"}}),
        ];
        for params in cases {
            let stash = Stash::new();
            let body = request(json!(4), params.clone());
            let diverted = stash.divert(&body).expect("diverted");
            let (forwarded_params, key) = forwarded(&diverted);
            assert!(forwarded_params.get("cells").is_none(), "the cells are not forwarded");
            let raw = stash.take_cells(&key).expect("kept");
            assert!(stash.take_cells(&key).is_none(), "taken once");
            let by_json = cells_params(&params);
            let by_stash = cells_params_with(&forwarded_params, Some(&raw));
            match (by_json, by_stash) {
                (Ok(json_read), Ok(stash_read)) => {
                    assert_eq!(json_read.grid.cells, stash_read.grid.cells, "{params}");
                    assert_eq!(json_read.grid.strings, stash_read.grid.strings, "{params}");
                    assert_eq!(json_read.grid.name, stash_read.grid.name);
                    assert_eq!(json_read.n_cells, stash_read.n_cells);
                    assert_eq!(json_read.source_name, stash_read.source_name);
                }
                (Err(json_error), Err(stash_error)) => assert_eq!(json_error, stash_error, "{params}"),
                (json_read, stash_read) => panic!("{params}: {:?} against {:?}", json_read.err(), stash_read.err()),
            }
        }
    }

    /// What the guard leaves to the library: anything it cannot read whole
    /// into typed cells, or that is not a request of ours with cells.
    #[test]
    fn what_is_not_diverted() {
        let stash = Stash::new();
        let good = json!({"cells": [[1]]});
        let left: Vec<Vec<u8>> = vec![
            // Cells the grid refuses with a message naming the cell.
            request(json!(1), json!({"cells": [[1, {"a": 1}]]})),
            request(json!(1), json!({"cells": [[1], 7]})),
            request(json!(1), json!({"cells": 5})),
            // No cells, params not an object, an unusable id, a notification.
            request(json!(1), json!({"origin": "B2"})),
            request(json!(1), json!([1, 2])),
            request(json!(null), good.clone()),
            request(json!(1.5), good.clone()),
            json!({"jsonrpc": "2.0", "method": methods::ANALYSE_CELLS, "params": good}).to_string().into_bytes(),
            // The server's own field, sent by a client.
            request(json!(1), json!({"cells": [[1]], CELLS_FIELD: "guess-1"})),
            // Another method, another version, a response's field, a list.
            json!({"jsonrpc": "2.0", "id": 1, "method": methods::PLAN_TRIAL, "params": good}).to_string().into_bytes(),
            json!({"jsonrpc": "1.0", "id": 1, "method": methods::ANALYSE_CELLS, "params": good}).to_string().into_bytes(),
            json!({"jsonrpc": "2.0", "id": 1, "method": methods::ANALYSE_CELLS, "params": good, "result": null}).to_string().into_bytes(),
            br#"["2.0", "trialyst/analyseCells", 1]"#.to_vec(),
            // A field given twice (the tree keeps the last), at either level.
            br#"{"jsonrpc":"2.0","id":1,"method":"trialyst/analyseCells","params":{"cells":[[1]],"cells":[[2]]}}"#.to_vec(),
            br#"{"jsonrpc":"2.0","id":1,"method":"trialyst/analyseCells","params":{"cells":[[1]],"sheet":"a","sheet":"b"}}"#.to_vec(),
            br#"{"jsonrpc":"2.0","id":1,"id":2,"method":"trialyst/analyseCells","params":{"cells":[[1]]}}"#.to_vec(),
            // Not JSON the library reads: a lone surrogate, trailing bytes.
            br#"{"jsonrpc":"2.0","id":1,"method":"trialyst/analyseCells","params":{"cells":[["\udc00"]]}}"#.to_vec(),
            br#"{"jsonrpc":"2.0","id":1,"method":"trialyst/analyseCells","params":{"cells":[[1]]}} x"#.to_vec(),
        ];
        for body in left {
            assert!(stash.divert(&body).is_none(), "{}", String::from_utf8_lossy(&body));
        }
        assert!(stash.is_empty());
        // A string id is diverted; the same id again, while the first waits, is not.
        assert!(stash
            .divert(&request(json!("first"), json!({"cells": [[1]]})))
            .is_some());
        assert!(stash
            .divert(&request(json!("first"), json!({"cells": [[1]]})))
            .is_none());
        assert_eq!(stash.len(), 1);
    }

    /// Entries are bounded, removed by the answer with their id whatever it
    /// says, and an answer stored after that is dropped.
    #[test]
    fn entries_are_bounded_and_settled_by_their_answer() {
        let stash = Stash::new();
        let mut keys = Vec::new();
        for id in 0..MAX_ENTRIES {
            let diverted = stash
                .divert(&request(json!(id), json!({"cells": [[1]]})))
                .expect("room");
            keys.push(forwarded(&diverted).1);
        }
        assert!(
            stash.divert(&request(json!(999), json!({"cells": [[1]]}))).is_none(),
            "full"
        );
        assert_eq!(stash.len(), MAX_ENTRIES);
        // Keys are the session's secret and a count: distinct, not guessable from the id.
        assert!(keys.iter().all(|key| key.len() > 32));
        assert_ne!(Stash::new().secret, stash.secret);

        // Messages that answer nothing leave the entries.
        assert!(stash
            .settle(br#"{"jsonrpc":"2.0","method":"$/progress","params":{},"id":0}"#)
            .is_none());
        assert!(stash.settle(br#"{"jsonrpc":"2.0","result":null,"id":999}"#).is_none());
        assert_eq!(stash.len(), MAX_ENTRIES);

        // An error answer (a refusal, a cancellation) removes its entry.
        let refused = br#"{"jsonrpc":"2.0","error":{"code":-32800,"message":"canceled"},"id":0}"#;
        assert!(stash.settle(refused).is_none());
        assert_eq!(stash.len(), MAX_ENTRIES - 1);
        assert!(!stash.put_answer(&keys[0], b"[1]".to_vec()), "too late: dropped");
        assert_eq!(stash.len(), MAX_ENTRIES - 1);

        // A placeholder is replaced by the stored answer.
        assert_eq!(Stash::placeholder("k").to_string(), r#"{"_serverAnswer":"k"}"#);
        assert!(stash.put_answer(&keys[1], br#"{"a":[1,2]}"#.to_vec()));
        let placeholder = json!({"jsonrpc": "2.0", "result": Stash::placeholder(&keys[1]), "id": 1}).to_string();
        let replaced = stash.settle(placeholder.as_bytes()).expect("replaced").into_bytes();
        assert_eq!(
            String::from_utf8_lossy(&replaced),
            "Content-Length: 45\r\n\r\n{\"id\":1,\"jsonrpc\":\"2.0\",\"result\":{\"a\":[1,2]}}"
        );
        assert_eq!(stash.len(), MAX_ENTRIES - 2);
        // Room again.
        assert!(stash.divert(&request(json!(999), json!({"cells": [[1]]}))).is_some());
    }
}

#[cfg(test)]
mod mutation_tests {
    use serde_json::{json, Value};

    use super::{Stash, CELLS_FIELD};
    use crate::framing::Incoming;
    use crate::from_proto::{cells_params, cells_params_with};

    /// Bodies near a valid request (bytes changed, inserted or removed, from a
    /// fixed seed): whatever the guard diverts, the library reads as the same
    /// request, and the stashed cells make the same grid, or the same error, as
    /// the library's tree of them. The reference is the library itself.
    #[test]
    fn whatever_is_diverted_the_library_reads_as_the_same_request() {
        let bases = [
            json!({"jsonrpc": "2.0", "id": 3, "method": "trialyst/analyseCells",
                   "params": {"cells": [["A", "B"], [1.5, "#N/A"], [null, true], [2e3, -7]], "origin": "B2"}}),
            json!({"jsonrpc": "2.0", "id": "x", "method": "trialyst/inspectCells",
                   "params": {"cells": [[1, 2], [], ["t\u{e9}xt", 0.25]], "sheet": "S", "settings": {"confidence": 0.9}}}),
        ];
        let alphabet = b"{}[],:\"\\0123456789.eE+-aeilnrstu #/";
        let mut state: u64 = 0x0123_4567_89AB_CDEF;
        let mut next = |bound: usize| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state % bound as u64) as usize
        };
        let mut diverted = 0;
        for round in 0..20_000 {
            let mut body = bases[round % bases.len()].to_string().into_bytes();
            for _ in 0..1 + next(3) {
                let at = next(body.len());
                let byte = alphabet[next(alphabet.len())];
                match next(3) {
                    0 => body[at] = byte,
                    1 => body.insert(at, byte),
                    _ => {
                        body.remove(at);
                    }
                }
            }
            let stash = Stash::new();
            let Some(forwarded) = stash.divert(&body) else {
                continue;
            };
            diverted += 1;
            let text = String::from_utf8_lossy(&body);
            let Ok(Incoming::Request(original)) = serde_json::from_slice::<Incoming>(&body) else {
                panic!("diverted, but the library does not read it as a request: {text}");
            };
            let Ok(Incoming::Request(sent)) = serde_json::from_slice::<Incoming>(&forwarded) else {
                panic!("the forwarded body is not a request: {text}");
            };
            assert_eq!(original.method(), sent.method(), "{text}");
            assert_eq!(original.id(), sent.id(), "{text}");
            let original_params = original.params().cloned().unwrap_or(Value::Null);
            let sent_params = sent.params().cloned().unwrap_or(Value::Null);
            let key = sent_params[CELLS_FIELD].as_str().unwrap_or_default().to_string();
            let raw = stash.take_cells(&key).expect("kept");
            // Every other field goes through unchanged.
            let mut without_cells = original_params.clone();
            let mut without_key = sent_params.clone();
            if let (Some(a), Some(b)) = (without_cells.as_object_mut(), without_key.as_object_mut()) {
                a.remove("cells");
                b.remove(CELLS_FIELD);
            }
            assert_eq!(without_cells, without_key, "{text}");
            match (
                cells_params(&original_params),
                cells_params_with(&sent_params, Some(&raw)),
            ) {
                (Ok(a), Ok(b)) => {
                    assert_eq!(a.grid.cells, b.grid.cells, "{text}");
                    assert_eq!(a.grid.strings, b.grid.strings, "{text}");
                }
                (Err(a), Err(b)) => assert_eq!(a, b, "{text}"),
                (a, b) => panic!("{text}: {:?} against {:?}", a.err(), b.err()),
            }
        }
        // The mutations leave many requests readable: the check is not empty.
        assert!(diverted > 1_000, "only {diverted} diverted");
    }
}
