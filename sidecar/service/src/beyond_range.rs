//! Where the results document holds a figure beyond the range of the arithmetic.
//!
//! JSON has no infinity: serde writes an infinite number as `null`, exactly as it writes a
//! figure that is not defined. So that a reader can tell the two apart, the document lists
//! the places of the infinite figures, as JSON Pointers (RFC 6901: `/responses/0/one_way/
//! between/ss`), in its top-level `beyond_range` list (see `sidecar/docs/results-format.md`).
//!
//! [`infinite_figures`] finds them by walking the very serialisation that writes the
//! document, so the pointers follow every rename, skipped field and flattened map the
//! derived serialisers apply. A NaN is a figure that is not defined, not one beyond the
//! range, and is not listed.

use std::fmt::Display;

use serde::ser::{self, Serialize};

/// The JSON Pointers of every infinite number in `value`'s serialisation, in document order.
pub fn infinite_figures<T: Serialize + ?Sized>(value: &T) -> Vec<String> {
    let mut walker = Walker::default();
    // The walker itself never fails; a value whose own serialiser fails gives no document
    // either, so its list does not matter.
    let _ = value.serialize(&mut walker);
    walker.found
}

/// The walk: the path from the root to the value being serialised, and the pointers found.
#[derive(Default)]
struct Walker {
    path: Vec<String>,
    found: Vec<String>,
}

impl Walker {
    fn number(&mut self, value: f64) {
        if value.is_infinite() {
            let pointer: String = self
                .path
                .iter()
                .map(|token| format!("/{}", token.replace('~', "~0").replace('/', "~1")))
                .collect();
            self.found.push(pointer);
        }
    }

    fn within<T: Serialize + ?Sized>(&mut self, token: String, value: &T) -> Result<(), WalkError> {
        self.path.push(token);
        let walked = value.serialize(&mut *self);
        self.path.pop();
        walked
    }
}

/// The walker's error type (it never raises one; serialisers of the walked value may).
#[derive(Debug)]
struct WalkError(String);

impl Display for WalkError {
    fn fmt(&self, formatter: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        formatter.write_str(&self.0)
    }
}

impl std::error::Error for WalkError {}

impl ser::Error for WalkError {
    fn custom<M: Display>(message: M) -> Self {
        WalkError(message.to_string())
    }
}

/// A sequence, tuple or map being walked: the walker and the index or key of the next item.
struct Items<'a> {
    walker: &'a mut Walker,
    index: usize,
    key: Option<String>,
}

/// Scalars that hold no number: nothing to find in them.
macro_rules! nothing_to_find {
    ($($method:ident: $kind:ty),*) => {
        $(fn $method(self, _: $kind) -> Result<(), WalkError> {
            Ok(())
        })*
    };
}

impl<'a> ser::Serializer for &'a mut Walker {
    type Ok = ();
    type Error = WalkError;
    type SerializeSeq = Items<'a>;
    type SerializeTuple = Items<'a>;
    type SerializeTupleStruct = Items<'a>;
    type SerializeTupleVariant = Items<'a>;
    type SerializeMap = Items<'a>;
    type SerializeStruct = Items<'a>;
    type SerializeStructVariant = Items<'a>;

    nothing_to_find!(
        serialize_bool: bool, serialize_i8: i8, serialize_i16: i16, serialize_i32: i32,
        serialize_i64: i64, serialize_u8: u8, serialize_u16: u16, serialize_u32: u32,
        serialize_u64: u64, serialize_char: char, serialize_str: &str, serialize_bytes: &[u8]
    );

    fn serialize_f32(self, value: f32) -> Result<(), WalkError> {
        self.number(f64::from(value));
        Ok(())
    }
    fn serialize_f64(self, value: f64) -> Result<(), WalkError> {
        self.number(value);
        Ok(())
    }
    fn serialize_none(self) -> Result<(), WalkError> {
        Ok(())
    }
    fn serialize_some<T: Serialize + ?Sized>(self, value: &T) -> Result<(), WalkError> {
        value.serialize(self)
    }
    fn serialize_unit(self) -> Result<(), WalkError> {
        Ok(())
    }
    fn serialize_unit_struct(self, _: &'static str) -> Result<(), WalkError> {
        Ok(())
    }
    fn serialize_unit_variant(self, _: &'static str, _: u32, _: &'static str) -> Result<(), WalkError> {
        Ok(())
    }
    fn serialize_newtype_struct<T: Serialize + ?Sized>(self, _: &'static str, value: &T) -> Result<(), WalkError> {
        value.serialize(self)
    }
    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        value: &T,
    ) -> Result<(), WalkError> {
        // JSON writes `{"variant": value}`.
        self.within(variant.to_string(), value)
    }
    fn serialize_seq(self, _: Option<usize>) -> Result<Items<'a>, WalkError> {
        Ok(Items::below(self, None))
    }
    fn serialize_tuple(self, _: usize) -> Result<Items<'a>, WalkError> {
        Ok(Items::below(self, None))
    }
    fn serialize_tuple_struct(self, _: &'static str, _: usize) -> Result<Items<'a>, WalkError> {
        Ok(Items::below(self, None))
    }
    fn serialize_tuple_variant(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        _: usize,
    ) -> Result<Items<'a>, WalkError> {
        // JSON writes `{"variant": [items]}`: the items sit below the variant's name.
        Ok(Items::below(self, Some(variant)))
    }
    fn serialize_map(self, _: Option<usize>) -> Result<Items<'a>, WalkError> {
        Ok(Items::below(self, None))
    }
    fn serialize_struct(self, _: &'static str, _: usize) -> Result<Items<'a>, WalkError> {
        Ok(Items::below(self, None))
    }
    fn serialize_struct_variant(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        _: usize,
    ) -> Result<Items<'a>, WalkError> {
        Ok(Items::below(self, Some(variant)))
    }
}

impl<'a> Items<'a> {
    /// The walk of a container's items; a variant's items sit below the variant's name.
    fn below(walker: &'a mut Walker, variant: Option<&'static str>) -> Self {
        if let Some(name) = variant {
            walker.path.push(name.to_string());
        }
        Items {
            walker,
            index: 0,
            key: None,
        }
    }

    fn next<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
        let token = self.index.to_string();
        self.index += 1;
        self.walker.within(token, value)
    }
}

/// The sequence-like walks: each item below its index; a variant's walk ends by leaving the
/// variant's name.
macro_rules! indexed_items {
    ($($kind:ident, $method:ident, $leave:expr;)*) => {
        $(impl ser::$kind for Items<'_> {
            type Ok = ();
            type Error = WalkError;
            fn $method<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
                self.next(value)
            }
            fn end(self) -> Result<(), WalkError> {
                if $leave {
                    self.walker.path.pop();
                }
                Ok(())
            }
        })*
    };
}

indexed_items!(
    SerializeSeq, serialize_element, false;
    SerializeTuple, serialize_element, false;
    SerializeTupleStruct, serialize_field, false;
    SerializeTupleVariant, serialize_field, true;
);

impl ser::SerializeMap for Items<'_> {
    type Ok = ();
    type Error = WalkError;
    fn serialize_key<T: Serialize + ?Sized>(&mut self, key: &T) -> Result<(), WalkError> {
        // The text JSON writes for the key: a text as it is, a number or a truth value in
        // the form serde_json quotes it in.
        let text = match serde_json::to_value(key).map_err(ser::Error::custom)? {
            serde_json::Value::String(text) => text,
            other => other.to_string(),
        };
        self.key = Some(text);
        Ok(())
    }
    fn serialize_value<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
        let token = self.key.take().unwrap_or_default();
        self.walker.within(token, value)
    }
    fn end(self) -> Result<(), WalkError> {
        Ok(())
    }
}

/// The struct-like walks: each field below its name.
macro_rules! named_fields {
    ($($kind:ident, $leave:expr;)*) => {
        $(impl ser::$kind for Items<'_> {
            type Ok = ();
            type Error = WalkError;
            fn serialize_field<T: Serialize + ?Sized>(&mut self, key: &'static str, value: &T) -> Result<(), WalkError> {
                self.walker.within(key.to_string(), value)
            }
            fn end(self) -> Result<(), WalkError> {
                if $leave {
                    self.walker.path.pop();
                }
                Ok(())
            }
        })*
    };
}

named_fields!(
    SerializeStruct, false;
    SerializeStructVariant, true;
);

#[cfg(test)]
mod tests {
    use super::infinite_figures;
    use serde::Serialize;
    use std::collections::BTreeMap;

    #[derive(Serialize)]
    #[serde(rename_all = "snake_case")]
    enum Shape {
        Plain(f64),
        Pair(f64, f64),
        Named { size: f64 },
        Nothing,
    }

    #[derive(Serialize)]
    struct Inner {
        #[serde(rename = "f ratio")]
        f: Option<f64>,
        #[serde(skip_serializing_if = "Option::is_none")]
        skipped: Option<f64>,
        after: f64,
        #[serde(flatten)]
        extra: BTreeMap<String, f64>,
    }

    #[derive(Serialize)]
    struct Outer {
        items: Vec<Inner>,
        shapes: Vec<Shape>,
        keyed: BTreeMap<u32, f64>,
        tuple: (f64, f64),
        not_defined: f64,
    }

    #[test]
    fn pointers_follow_the_json_that_serde_writes() {
        let document = Outer {
            items: vec![
                Inner {
                    f: Some(1.0),
                    skipped: None,
                    after: 2.0,
                    extra: BTreeMap::new(),
                },
                Inner {
                    f: Some(f64::INFINITY),
                    skipped: None,
                    after: f64::NEG_INFINITY,
                    extra: BTreeMap::from([("a/b~c".to_string(), f64::INFINITY)]),
                },
            ],
            shapes: vec![
                Shape::Plain(f64::INFINITY),
                Shape::Pair(1.0, f64::INFINITY),
                Shape::Named {
                    size: f64::NEG_INFINITY,
                },
                Shape::Nothing,
            ],
            keyed: BTreeMap::from([(7, f64::INFINITY)]),
            tuple: (0.0, f64::INFINITY),
            not_defined: f64::NAN,
        };
        let found = infinite_figures(&document);
        let expected = [
            "/items/1/f ratio",
            "/items/1/after",
            "/items/1/a~1b~0c",
            "/shapes/0/plain",
            "/shapes/1/pair/1",
            "/shapes/2/named/size",
            "/keyed/7",
            "/tuple/1",
        ];
        assert_eq!(found, expected);
        // Each pointer names a null in the JSON that serde_json writes (RFC 6901 lookup).
        let json = serde_json::to_value(&document).expect("the document encodes");
        for pointer in &found {
            assert_eq!(json.pointer(pointer), Some(&serde_json::Value::Null), "{pointer}");
        }
        // A figure that is merely not defined (NaN) is null too, but not listed.
        assert_eq!(json["not_defined"], serde_json::Value::Null);
        assert!(infinite_figures(&1.5_f64).is_empty());
    }
}
