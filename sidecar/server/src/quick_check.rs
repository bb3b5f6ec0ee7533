//! The framing guard's one-pass check of a request body, building nothing.
//!
//! The protocol library reads a body as an untagged choice of response or
//! request: it first buffers the whole message as a tree of every value
//! (which decodes every string and number), then tries the two shapes. A
//! body it cannot read stops its reader for good, so the guard must know
//! beforehand that the library will read it. Doing the same buffering here
//! read every request twice into a tree.
//!
//! This check walks the same JSON with the same parser calls the library's
//! buffering makes (`deserialize_any` on every value, so strings are
//! decoded, escapes and surrogates checked, numbers parsed and range
//! checked, nesting limited the same way), but keeps nothing: strings are
//! looked at in place and dropped. Beside it, it notes the few facts that
//! make a body a request the library accepts: an object, `jsonrpc` equal to
//! `"2.0"`, `method` (when present) a string, `id` (when present) a whole
//! number that fits in 64 signed bits, a string or null, and none of these
//! four keys twice. Unknown keys are allowed, as the library allows them.
//!
//! [`is_plain_request`] answers true only when all of that holds (a
//! response of the usual shape passes too: it has the same keys but
//! `method`, which the library's request type gives a default); anything
//! else (batches, odd shapes, bad JSON) goes to the guard's full check,
//! which reads it as the library does and words the error answer.

use std::fmt;

use serde::de::{self, DeserializeSeed, Deserializer, MapAccess, SeqAccess, Visitor};

/// What one value was, as far as the request's shape needs to know.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Seen {
    /// The text `2.0`.
    VersionText,
    /// Any other text.
    Text,
    /// A whole number that fits an `i64`.
    SmallInteger,
    /// Null.
    Null,
    /// Anything else (other numbers, booleans, lists, objects).
    Other,
}

/// Walks one value of any kind, checking it as the library's buffering
/// would, and says what it was.
struct Walk;

impl<'de> DeserializeSeed<'de> for Walk {
    type Value = Seen;

    fn deserialize<D: Deserializer<'de>>(self, deserializer: D) -> Result<Seen, D::Error> {
        deserializer.deserialize_any(WalkVisitor)
    }
}

struct WalkVisitor;

impl<'de> Visitor<'de> for WalkVisitor {
    type Value = Seen;

    fn expecting(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str("any JSON value")
    }

    fn visit_bool<E: de::Error>(self, _: bool) -> Result<Seen, E> {
        Ok(Seen::Other)
    }

    fn visit_i64<E: de::Error>(self, _: i64) -> Result<Seen, E> {
        Ok(Seen::SmallInteger)
    }

    fn visit_u64<E: de::Error>(self, value: u64) -> Result<Seen, E> {
        Ok(if i64::try_from(value).is_ok() {
            Seen::SmallInteger
        } else {
            Seen::Other
        })
    }

    fn visit_f64<E: de::Error>(self, _: f64) -> Result<Seen, E> {
        Ok(Seen::Other)
    }

    fn visit_str<E: de::Error>(self, text: &str) -> Result<Seen, E> {
        Ok(if text == "2.0" { Seen::VersionText } else { Seen::Text })
    }

    fn visit_unit<E: de::Error>(self) -> Result<Seen, E> {
        Ok(Seen::Null)
    }

    fn visit_none<E: de::Error>(self) -> Result<Seen, E> {
        Ok(Seen::Null)
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Seen, A::Error> {
        while seq.next_element_seed(Walk)?.is_some() {}
        Ok(Seen::Other)
    }

    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Seen, A::Error> {
        while map.next_key_seed(Walk)?.is_some() {
            map.next_value_seed(Walk)?;
        }
        Ok(Seen::Other)
    }
}

/// The four keys of a request, or another.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Key {
    Version,
    Method,
    Params,
    Id,
    Other,
}

struct KeySeed;

impl<'de> DeserializeSeed<'de> for KeySeed {
    type Value = Key;

    fn deserialize<D: Deserializer<'de>>(self, deserializer: D) -> Result<Key, D::Error> {
        deserializer.deserialize_any(KeyVisitor)
    }
}

struct KeyVisitor;

impl<'de> Visitor<'de> for KeyVisitor {
    type Value = Key;

    fn expecting(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str("a key")
    }

    fn visit_str<E: de::Error>(self, text: &str) -> Result<Key, E> {
        Ok(match text {
            "jsonrpc" => Key::Version,
            "method" => Key::Method,
            "params" => Key::Params,
            "id" => Key::Id,
            _ => Key::Other,
        })
    }
}

/// The outcome of the walk over the top-level object.
struct TopVisitor;

impl<'de> Visitor<'de> for TopVisitor {
    type Value = bool;

    fn expecting(&self, formatter: &mut fmt::Formatter<'_>) -> fmt::Result {
        formatter.write_str("a JSON-RPC request object")
    }

    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<bool, A::Error> {
        let mut seen = [false; 4];
        let mut plain = true;
        let mut has_version = false;
        while let Some(key) = map.next_key_seed(KeySeed)? {
            let value = map.next_value_seed(Walk)?;
            let slot = match key {
                Key::Version => 0,
                Key::Method => 1,
                Key::Params => 2,
                Key::Id => 3,
                Key::Other => continue,
            };
            if seen[slot] {
                // The library refuses a key given twice; the full check words it.
                plain = false;
            }
            seen[slot] = true;
            plain &= match key {
                Key::Version => {
                    has_version = true;
                    value == Seen::VersionText
                }
                Key::Method => matches!(value, Seen::VersionText | Seen::Text),
                Key::Id => matches!(value, Seen::VersionText | Seen::Text | Seen::SmallInteger | Seen::Null),
                Key::Params | Key::Other => true,
            };
        }
        Ok(plain && has_version)
    }
}

/// True when `text` is one JSON value, checked throughout as the protocol
/// library checks it, and a request or notification the library accepts.
/// False says nothing either way: the caller then reads it fully.
pub fn is_plain_request(text: &str) -> bool {
    let mut deserializer = serde_json::Deserializer::from_str(text);
    match deserializer.deserialize_map(TopVisitor) {
        Ok(plain) => plain && deserializer.end().is_ok(),
        Err(_) => false,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use tower_lsp_server::jsonrpc::{Request, Response};

    /// The library's own reading: an untagged choice of response or request
    /// (the same types in the same order as its message type).
    #[derive(serde::Deserialize)]
    #[serde(untagged)]
    enum Incoming {
        #[allow(dead_code)]
        Response(Response),
        #[allow(dead_code)]
        Request(Request),
    }

    fn library_reads(text: &str) -> bool {
        serde_json::from_str::<Incoming>(text).is_ok()
    }

    /// The quick check never says yes where the library says no, and says
    /// yes to the requests add-ins send.
    #[test]
    fn agrees_with_the_library_and_never_passes_what_it_refuses() {
        let accepted = [
            r#"{"jsonrpc":"2.0","method":"exit"}"#,
            r##"{"jsonrpc":"2.0","id":1,"method":"trialyst/analyseCells","params":{"cells":[["A","B"],[1.5,"#N/A"],[null,true]]}}"##,
            r#"{"jsonrpc":"2.0","id":"x-7","method":"m","params":[1,2,3],"extra":{"k":[{}]}}"#,
            r#"{"jsonrpc":"2.0","id":null,"method":"m"}"#,
            r#"{"jsonrpc":"2.0","id":-9223372036854775808,"method":"m"}"#,
            r#"{"jsonrpc":"2.0","id":9223372036854775807,"method":"m"}"#,
            // JSON-RPC 2.0 lets `method` be left out only in responses, but the
            // library's request type gives it a default, so it reads this.
            r#"{"jsonrpc":"2.0","id":3}"#,
            "{\"jsonrpc\":\"2.0\",\"method\":\"m\",\"params\":{\"text\":\"caf\\u00e9 \\ud83d\\ude00 \\n\"}}",
            " {\"jsonrpc\" : \"2.0\" , \"method\" : \"m\"}\r\n",
            r#"{"jsonrpc":"2.0","method":"m","params":{"big":1e300,"huge":18446744073709551615}}"#,
        ];
        for text in accepted {
            assert!(library_reads(text), "the library reads {text}");
            assert!(is_plain_request(text), "the quick check passes {text}");
        }
        // Each of these the library refuses; the quick check must not pass them.
        let refused = [
            "",
            "{",
            "{not json",
            r#"[{"jsonrpc":"2.0","method":"exit"}]"#,
            r#"{"hello":1,"id":7}"#,
            r#"{"jsonrpc":"1.0","method":"m"}"#,
            r#"{"jsonrpc":2.0,"method":"m"}"#,
            r#"{"jsonrpc":"2.0","method":7}"#,
            r#"{"jsonrpc":"2.0","method":"m","id":1.5}"#,
            r#"{"jsonrpc":"2.0","method":"m","id":9223372036854775808}"#,
            r#"{"jsonrpc":"2.0","method":"m","id":[1]}"#,
            r#"{"jsonrpc":"2.0","method":"m","method":"n"}"#,
            r#"{"jsonrpc":"2.0","jsonrpc":"2.0","method":"m"}"#,
            // Found by the framing fuzz target: a lone surrogate in a field the
            // request type ignores stopped the library's reader.
            r#"{"jsonrpc":"2.0","method":"exit","junk":"\udc00"}"#,
            r#"{"jsonrpc":"2.0","method":"m","params":{"x":"\ud800"}}"#,
            r#"{"jsonrpc":"2.0","method":"m","params":{"x":1e400}}"#,
            r#"{"jsonrpc":"2.0","method":"m","params":{"x":-1e400}}"#,
            r#"{"jsonrpc":"2.0","method":"m"} trailing"#,
            r#"{"jsonrpc":"2.0","method":"m",}"#,
            r#"{"jsonrpc":"2.0","method":"m","params":[1,]}"#,
            r#"{"jsonrpc":"2.0","method":"m","params":"\x"}"#,
        ];
        for text in refused {
            assert!(!library_reads(text), "the library refuses {text}");
            assert!(!is_plain_request(text), "the quick check refuses {text}");
        }
        // Nesting deeper than the parser's limit (128 in serde_json) is refused by both.
        let deep = format!(
            r#"{{"jsonrpc":"2.0","method":"m","params":{}1{}}}"#,
            "[".repeat(200),
            "]".repeat(200)
        );
        assert!(!library_reads(&deep));
        assert!(!is_plain_request(&deep));
        // A response has the request's keys but `method` (which the library's
        // request type gives a default), so it passes too: the library reads it.
        let response = r#"{"jsonrpc":"2.0","id":1,"result":null}"#;
        assert!(library_reads(response));
        assert!(is_plain_request(response));
        // An error response with a float id is left to the full check.
        let odd = r#"{"jsonrpc":"2.0","id":1.5,"error":{"code":1,"message":"m"}}"#;
        assert!(!is_plain_request(odd));
    }

    /// Generated bodies: whatever the quick check passes, the library reads.
    #[test]
    fn generated_bodies_never_pass_what_the_library_refuses() {
        let pieces = [
            r#""2.0""#,
            r#""m""#,
            "1",
            "-1",
            "1.5",
            "1e400",
            "null",
            "true",
            "[]",
            "{}",
            r#""\ud800""#,
            r#""\u00e9""#,
            "9223372036854775808",
            r#"[1,"a",{"k":null}]"#,
            r#""\"""#,
        ];
        let keys = ["jsonrpc", "method", "params", "id", "other"];
        // A fixed-seed generator (xorshift64), so every run tries the same bodies.
        let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut next = |below: usize| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state % below as u64) as usize
        };
        let mut passed = 0;
        for _ in 0..20_000 {
            let members: Vec<String> = (0..next(6))
                .map(|_| format!(r#""{}":{}"#, keys[next(keys.len())], pieces[next(pieces.len())]))
                .collect();
            let text = format!("{{{}}}", members.join(","));
            let quick = is_plain_request(&text);
            if quick {
                passed += 1;
                assert!(
                    library_reads(&text),
                    "quick check passed what the library refuses: {text}"
                );
            }
        }
        assert!(
            passed > 100,
            "the generated bodies include requests the check passes ({passed})"
        );
    }
}
