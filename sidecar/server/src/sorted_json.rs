//! JSON text straight from a serialisable value, with the keys of every
//! object in sorted order: the same bytes as `serde_json::to_vec` of
//! `serde_json::to_value` of it (whose objects are sorted maps), without
//! building that tree.
//!
//! The protocol library turns every answer into its JSON tree before it
//! writes it; an answer sent around the library (see [`crate::side_channel`])
//! is written here instead, and must read exactly as it would have.
//!
//! How: each object's entries are written in the order they come, into the
//! one output buffer, and their places noted; when the object ends, they are
//! put in key order (the last of equal keys kept, as a map's insert does) if
//! they were not in order already. Numbers, text and the rest are written by
//! `serde_json`'s own writer, with the tree's conversions (an `f32` is
//! widened to `f64`, as the tree stores it).

use std::borrow::Cow;

use serde::ser::{self, Impossible, Serialize};
use serde_json::Error;

/// Writes `value` as compact JSON with sorted object keys.
///
/// # Errors
///
/// Whatever the value's own serialisation reports, or a map key that is
/// not text, a number or true/false (the JSON tree refuses those too).
pub fn to_vec_sorted<T: Serialize + ?Sized>(value: &T) -> Result<Vec<u8>, Error> {
    // Room for a large answer at once: memory not written to is not used,
    // and growing by doubling would copy the answer several times.
    let mut buffers = Buffers {
        out: Vec::with_capacity(1 << 20),
        scratch: Vec::new(),
    };
    value.serialize(Sorted { out: &mut buffers })?;
    Ok(buffers.out)
}

/// The output, and room to put an object's entries in order (one for the
/// whole answer: objects are closed one at a time).
struct Buffers {
    out: Vec<u8>,
    scratch: Vec<u8>,
}

impl std::ops::Deref for Buffers {
    type Target = Vec<u8>;
    fn deref(&self) -> &Vec<u8> {
        &self.out
    }
}

impl std::ops::DerefMut for Buffers {
    fn deref_mut(&mut self) -> &mut Vec<u8> {
        &mut self.out
    }
}

struct Sorted<'a> {
    out: &'a mut Buffers,
}

impl Sorted<'_> {
    fn json(&mut self) -> serde_json::Serializer<&mut Vec<u8>> {
        serde_json::Serializer::new(&mut self.out.out)
    }
}

fn custom(message: &str) -> Error {
    <Error as ser::Error>::custom(message)
}

impl<'a> ser::Serializer for Sorted<'a> {
    type Ok = ();
    type Error = Error;
    type SerializeSeq = Seq<'a>;
    type SerializeTuple = Seq<'a>;
    type SerializeTupleStruct = Seq<'a>;
    type SerializeTupleVariant = Seq<'a>;
    type SerializeMap = Object<'a>;
    type SerializeStruct = Object<'a>;
    type SerializeStructVariant = Object<'a>;

    fn serialize_bool(mut self, v: bool) -> Result<(), Error> {
        ser::Serializer::serialize_bool(&mut self.json(), v)
    }
    fn serialize_i8(self, v: i8) -> Result<(), Error> {
        self.serialize_i64(i64::from(v))
    }
    fn serialize_i16(self, v: i16) -> Result<(), Error> {
        self.serialize_i64(i64::from(v))
    }
    fn serialize_i32(self, v: i32) -> Result<(), Error> {
        self.serialize_i64(i64::from(v))
    }
    fn serialize_i64(mut self, v: i64) -> Result<(), Error> {
        ser::Serializer::serialize_i64(&mut self.json(), v)
    }
    fn serialize_i128(self, v: i128) -> Result<(), Error> {
        // The tree keeps only what fits 64 bits.
        if let Ok(small) = i64::try_from(v) {
            return self.serialize_i64(small);
        }
        match u64::try_from(v) {
            Ok(small) => self.serialize_u64(small),
            Err(_) => Err(custom("number out of range")),
        }
    }
    fn serialize_u8(self, v: u8) -> Result<(), Error> {
        self.serialize_u64(u64::from(v))
    }
    fn serialize_u16(self, v: u16) -> Result<(), Error> {
        self.serialize_u64(u64::from(v))
    }
    fn serialize_u32(self, v: u32) -> Result<(), Error> {
        self.serialize_u64(u64::from(v))
    }
    fn serialize_u64(mut self, v: u64) -> Result<(), Error> {
        ser::Serializer::serialize_u64(&mut self.json(), v)
    }
    fn serialize_u128(self, v: u128) -> Result<(), Error> {
        match u64::try_from(v) {
            Ok(small) => self.serialize_u64(small),
            Err(_) => Err(custom("number out of range")),
        }
    }
    fn serialize_f32(self, v: f32) -> Result<(), Error> {
        // The tree stores an f32 as the f64 of the same value.
        self.serialize_f64(f64::from(v))
    }
    fn serialize_f64(mut self, v: f64) -> Result<(), Error> {
        ser::Serializer::serialize_f64(&mut self.json(), v)
    }
    fn serialize_char(self, v: char) -> Result<(), Error> {
        let mut buffer = [0u8; 4];
        self.serialize_str(v.encode_utf8(&mut buffer))
    }
    fn serialize_str(mut self, v: &str) -> Result<(), Error> {
        ser::Serializer::serialize_str(&mut self.json(), v)
    }
    fn serialize_bytes(self, v: &[u8]) -> Result<(), Error> {
        // The tree makes a list of numbers.
        let mut seq = ser::Serializer::serialize_seq(self, Some(v.len()))?;
        for byte in v {
            ser::SerializeSeq::serialize_element(&mut seq, byte)?;
        }
        ser::SerializeSeq::end(seq)
    }
    fn serialize_none(self) -> Result<(), Error> {
        self.serialize_unit()
    }
    fn serialize_some<T: Serialize + ?Sized>(self, value: &T) -> Result<(), Error> {
        value.serialize(self)
    }
    fn serialize_unit(self) -> Result<(), Error> {
        self.out.extend_from_slice(b"null");
        Ok(())
    }
    fn serialize_unit_struct(self, _name: &'static str) -> Result<(), Error> {
        self.serialize_unit()
    }
    fn serialize_unit_variant(self, _name: &'static str, _index: u32, variant: &'static str) -> Result<(), Error> {
        self.serialize_str(variant)
    }
    fn serialize_newtype_struct<T: Serialize + ?Sized>(self, _name: &'static str, value: &T) -> Result<(), Error> {
        value.serialize(self)
    }
    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        value: &T,
    ) -> Result<(), Error> {
        // An object of one entry: no order to keep.
        self.out.push(b'{');
        Sorted { out: &mut *self.out }.serialize_str(variant)?;
        self.out.push(b':');
        value.serialize(Sorted { out: &mut *self.out })?;
        self.out.push(b'}');
        Ok(())
    }
    fn serialize_seq(self, _len: Option<usize>) -> Result<Seq<'a>, Error> {
        self.out.push(b'[');
        Ok(Seq {
            out: self.out,
            first: true,
            close: b"]",
        })
    }
    fn serialize_tuple(self, len: usize) -> Result<Seq<'a>, Error> {
        self.serialize_seq(Some(len))
    }
    fn serialize_tuple_struct(self, _name: &'static str, len: usize) -> Result<Seq<'a>, Error> {
        self.serialize_seq(Some(len))
    }
    fn serialize_tuple_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        _len: usize,
    ) -> Result<Seq<'a>, Error> {
        self.out.push(b'{');
        Sorted { out: &mut *self.out }.serialize_str(variant)?;
        self.out.extend_from_slice(b":[");
        Ok(Seq {
            out: self.out,
            first: true,
            close: b"]}",
        })
    }
    fn serialize_map(self, len: Option<usize>) -> Result<Object<'a>, Error> {
        Ok(Object::open(self.out, len.unwrap_or(0), false))
    }
    fn serialize_struct(self, _name: &'static str, len: usize) -> Result<Object<'a>, Error> {
        Ok(Object::open(self.out, len, false))
    }
    fn serialize_struct_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        len: usize,
    ) -> Result<Object<'a>, Error> {
        self.out.push(b'{');
        Sorted { out: &mut *self.out }.serialize_str(variant)?;
        self.out.push(b':');
        Ok(Object::open(self.out, len, true))
    }
    fn collect_str<T: std::fmt::Display + ?Sized>(self, value: &T) -> Result<(), Error> {
        self.serialize_str(&value.to_string())
    }
}

/// A list being written.
struct Seq<'a> {
    out: &'a mut Buffers,
    first: bool,
    close: &'static [u8],
}

impl Seq<'_> {
    fn element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
        if !self.first {
            self.out.push(b',');
        }
        self.first = false;
        value.serialize(Sorted { out: &mut *self.out })
    }

    fn close(self) -> Result<(), Error> {
        self.out.extend_from_slice(self.close);
        Ok(())
    }
}

/// Every kind of list is written alike: serde's four traits for them, one body.
macro_rules! list_kind {
    ($($kind:ident :: $add:ident),*) => {$(
        impl ser::$kind for Seq<'_> {
            type Ok = ();
            type Error = Error;
            fn $add<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
                self.element(value)
            }
            fn end(self) -> Result<(), Error> {
                self.close()
            }
        }
    )*};
}

list_kind!(
    SerializeSeq::serialize_element,
    SerializeTuple::serialize_element,
    SerializeTupleStruct::serialize_field,
    SerializeTupleVariant::serialize_field
);

/// One entry of an object: its key and where `"key":value` lies in the output.
struct Entry {
    key: Cow<'static, str>,
    start: usize,
    end: usize,
}

/// An object being written.
struct Object<'a> {
    out: &'a mut Buffers,
    /// Where the object's first entry starts (just after its `{`).
    base: usize,
    entries: Vec<Entry>,
    /// The key of a map entry whose value is still to come.
    pending_key: Option<String>,
    /// A struct variant: the object sits inside the variant's one-entry object.
    in_variant: bool,
}

impl<'a> Object<'a> {
    fn open(out: &'a mut Buffers, len: usize, in_variant: bool) -> Self {
        out.push(b'{');
        let base = out.len();
        Self {
            out,
            base,
            entries: Vec::with_capacity(len),
            pending_key: None,
            in_variant,
        }
    }

    fn entry<T: Serialize + ?Sized>(&mut self, key: Cow<'static, str>, value: &T) -> Result<(), Error> {
        if !self.entries.is_empty() {
            self.out.push(b',');
        }
        let start = self.out.len();
        ser::Serializer::serialize_str(Sorted { out: &mut *self.out }, &key)?;
        self.out.push(b':');
        value.serialize(Sorted { out: &mut *self.out })?;
        self.entries.push(Entry {
            key,
            start,
            end: self.out.len(),
        });
        Ok(())
    }

    fn close(mut self) -> Result<(), Error> {
        let in_order = self.entries.windows(2).all(|pair| pair[0].key < pair[1].key);
        if !in_order {
            // Stable: of equal keys the last written is last, and is kept.
            self.entries.sort_by(|a, b| a.key.cmp(&b.key));
            let Buffers { out, scratch } = &mut *self.out;
            scratch.clear();
            scratch.extend_from_slice(&out[self.base..]);
            out.truncate(self.base);
            let count = self.entries.len();
            let mut first = true;
            for (index, entry) in self.entries.iter().enumerate() {
                if index + 1 < count && self.entries[index + 1].key == entry.key {
                    continue;
                }
                if !first {
                    out.push(b',');
                }
                first = false;
                out.extend_from_slice(&scratch[entry.start - self.base..entry.end - self.base]);
            }
        }
        self.out.push(b'}');
        if self.in_variant {
            self.out.push(b'}');
        }
        Ok(())
    }
}

/// Structs and struct variants are written alike.
macro_rules! struct_kind {
    ($($kind:ident),*) => {$(
        impl ser::$kind for Object<'_> {
            type Ok = ();
            type Error = Error;
            fn serialize_field<T: Serialize + ?Sized>(&mut self, key: &'static str, value: &T) -> Result<(), Error> {
                self.entry(Cow::Borrowed(key), value)
            }
            fn end(self) -> Result<(), Error> {
                self.close()
            }
        }
    )*};
}

struct_kind!(SerializeStruct, SerializeStructVariant);

impl ser::SerializeMap for Object<'_> {
    type Ok = ();
    type Error = Error;
    fn serialize_key<T: Serialize + ?Sized>(&mut self, key: &T) -> Result<(), Error> {
        self.pending_key = Some(key.serialize(KeyText)?);
        Ok(())
    }
    fn serialize_value<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
        let key = self
            .pending_key
            .take()
            .ok_or_else(|| custom("a map value came without its key"))?;
        self.entry(Cow::Owned(key), value)
    }
    fn end(self) -> Result<(), Error> {
        self.close()
    }
}

/// A map key as the tree makes it: text as is; numbers, true/false and
/// unit variants as their text.
struct KeyText;

fn key_must_be_text() -> Error {
    custom("key must be a string")
}

impl ser::Serializer for KeyText {
    type Ok = String;
    type Error = Error;
    type SerializeSeq = Impossible<String, Error>;
    type SerializeTuple = Impossible<String, Error>;
    type SerializeTupleStruct = Impossible<String, Error>;
    type SerializeTupleVariant = Impossible<String, Error>;
    type SerializeMap = Impossible<String, Error>;
    type SerializeStruct = Impossible<String, Error>;
    type SerializeStructVariant = Impossible<String, Error>;

    fn serialize_bool(self, v: bool) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_i8(self, v: i8) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_i16(self, v: i16) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_i32(self, v: i32) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_i64(self, v: i64) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_u8(self, v: u8) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_u16(self, v: u16) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_u32(self, v: u32) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_u64(self, v: u64) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_f32(self, v: f32) -> Result<String, Error> {
        // Keys of floats go through the tree's own key writer.
        key_via_tree(&v)
    }
    fn serialize_f64(self, v: f64) -> Result<String, Error> {
        key_via_tree(&v)
    }
    fn serialize_char(self, v: char) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_str(self, v: &str) -> Result<String, Error> {
        Ok(v.to_string())
    }
    fn serialize_bytes(self, _v: &[u8]) -> Result<String, Error> {
        Err(key_must_be_text())
    }
    fn serialize_none(self) -> Result<String, Error> {
        Err(key_must_be_text())
    }
    fn serialize_some<T: Serialize + ?Sized>(self, _value: &T) -> Result<String, Error> {
        Err(key_must_be_text())
    }
    fn serialize_unit(self) -> Result<String, Error> {
        Err(key_must_be_text())
    }
    fn serialize_unit_struct(self, _name: &'static str) -> Result<String, Error> {
        Err(key_must_be_text())
    }
    fn serialize_unit_variant(self, _name: &'static str, _index: u32, variant: &'static str) -> Result<String, Error> {
        Ok(variant.to_string())
    }
    fn serialize_newtype_struct<T: Serialize + ?Sized>(self, _name: &'static str, value: &T) -> Result<String, Error> {
        value.serialize(self)
    }
    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
        _value: &T,
    ) -> Result<String, Error> {
        Err(key_must_be_text())
    }
    fn serialize_seq(self, _len: Option<usize>) -> Result<Self::SerializeSeq, Error> {
        Err(key_must_be_text())
    }
    fn serialize_tuple(self, _len: usize) -> Result<Self::SerializeTuple, Error> {
        Err(key_must_be_text())
    }
    fn serialize_tuple_struct(self, _name: &'static str, _len: usize) -> Result<Self::SerializeTupleStruct, Error> {
        Err(key_must_be_text())
    }
    fn serialize_tuple_variant(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeTupleVariant, Error> {
        Err(key_must_be_text())
    }
    fn serialize_map(self, _len: Option<usize>) -> Result<Self::SerializeMap, Error> {
        Err(key_must_be_text())
    }
    fn serialize_struct(self, _name: &'static str, _len: usize) -> Result<Self::SerializeStruct, Error> {
        Err(key_must_be_text())
    }
    fn serialize_struct_variant(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeStructVariant, Error> {
        Err(key_must_be_text())
    }
    fn collect_str<T: std::fmt::Display + ?Sized>(self, value: &T) -> Result<String, Error> {
        Ok(value.to_string())
    }
}

/// A float key, made as the tree makes it: a one-entry map turned into the
/// tree, its one key read back.
fn key_via_tree<T: Serialize>(key: &T) -> Result<String, Error> {
    let tree = serde_json::to_value(OneKey(key))?;
    tree.as_object()
        .and_then(|object| object.keys().next().cloned())
        .ok_or_else(key_must_be_text)
}

/// A map of one entry, `key: null`.
struct OneKey<'k, T>(&'k T);

impl<T: Serialize> Serialize for OneKey<'_, T> {
    fn serialize<S: ser::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        use ser::SerializeMap;
        let mut map = serializer.serialize_map(Some(1))?;
        map.serialize_entry(self.0, &())?;
        map.end()
    }
}

#[cfg(test)]
mod tests {
    use std::collections::{BTreeMap, HashMap};

    use serde::Serialize;

    use super::to_vec_sorted;

    /// The reference: `serde_json` 1's own tree (objects are sorted maps
    /// without its `preserve_order` feature), then its writer.
    fn through_the_tree<T: Serialize>(value: &T) -> Vec<u8> {
        serde_json::to_vec(&serde_json::to_value(value).expect("a tree")).expect("written")
    }

    #[derive(Serialize)]
    #[serde(rename_all = "camelCase")]
    struct Inner {
        zeta: f32,
        alpha: Option<f64>,
        #[serde(skip_serializing_if = "Option::is_none")]
        skipped: Option<u8>,
        middle_name: &'static str,
    }

    #[derive(Serialize)]
    enum Kind {
        Plain,
        Wrapped(i64),
        Pair(u8, String),
        Shaped { yes: bool, no: bool, char_code: char },
    }

    #[derive(Serialize)]
    struct Extra {
        b_flat: i32,
        a_flat: &'static str,
        // Repeats an outer field: the tree keeps the value written last.
        tail: u8,
    }

    #[derive(Serialize)]
    struct Outer {
        tail: Vec<Kind>,
        head: Inner,
        numbers: Vec<f64>,
        unit: (),
        by_number: BTreeMap<i32, &'static str>,
        by_text: HashMap<String, u16>,
        #[serde(with = "serde_bytes_as_seq")]
        bytes: Vec<u8>,
        big: u64,
        negative: i64,
        wide: i128,
        #[serde(flatten)]
        extra: Extra,
    }

    mod serde_bytes_as_seq {
        pub fn serialize<S: serde::Serializer>(bytes: &[u8], serializer: S) -> Result<S::Ok, S::Error> {
            serializer.serialize_bytes(bytes)
        }
    }

    /// Every kind of value serde has, in structs whose fields are out of
    /// order, maps with keys of numbers and of text (escapes included), a
    /// flattened struct that repeats a key, and numbers the tree treats in
    /// its own way (an f32 widened, a NaN and infinities as null, -0.0).
    #[test]
    fn writes_the_same_bytes_as_the_tree() {
        let value = Outer {
            tail: vec![
                Kind::Plain,
                Kind::Wrapped(-3),
                Kind::Pair(7, "x\"y".into()),
                Kind::Shaped {
                    yes: true,
                    no: false,
                    char_code: 'é',
                },
            ],
            head: Inner {
                zeta: 0.1,
                alpha: None,
                skipped: None,
                middle_name: "line\n\ttab \u{1}",
            },
            numbers: vec![1.0, -0.0, 1e300, 2.5e-310, f64::NAN, f64::INFINITY, 0.1 + 0.2],
            unit: (),
            by_number: [(10, "ten"), (2, "two"), (-1, "minus one")].into_iter().collect(),
            by_text: [("b", 1), ("a\"", 2), ("A", 3), ("é", 4), ("", 5)]
                .into_iter()
                .map(|(key, value)| (key.to_string(), value))
                .collect(),
            bytes: vec![0, 255, 16],
            big: u64::MAX,
            negative: i64::MIN,
            wide: -5,
            extra: Extra {
                b_flat: 2,
                a_flat: "flat",
                tail: 9,
            },
        };
        let direct = to_vec_sorted(&value).expect("written");
        assert_eq!(
            String::from_utf8_lossy(&direct),
            String::from_utf8_lossy(&through_the_tree(&value))
        );
        // Float keys, and a list of maps.
        let float_keys: Vec<BTreeMap<i64, f64>> = vec![BTreeMap::new(), [(3, 0.5), (1, 2.0)].into_iter().collect()];
        assert_eq!(to_vec_sorted(&float_keys).ok(), Some(through_the_tree(&float_keys)));
        // A key the tree refuses is refused here too.
        let list_keys: BTreeMap<Vec<u8>, u8> = [(vec![1], 1)].into_iter().collect();
        assert!(serde_json::to_value(&list_keys).is_err());
        assert!(to_vec_sorted(&list_keys).is_err());
    }

    /// A real answer of `trialyst/analyseCells` (an invented trial of three
    /// lines), written both ways.
    #[test]
    fn a_cells_answer_reads_as_the_library_writes_it() {
        let rows: Vec<serde_json::Value> = std::iter::once(serde_json::json!(["Left", "Middle", "Right"]))
            .chain((0..30).map(|row| {
                let row = f64::from(row);
                serde_json::json!([20.0 + (row * 0.9).sin(), 20.4 + (row * 1.7).cos(), 19.8 + row * 0.01])
            }))
            .collect();
        let params = serde_json::json!({"cells": rows, "origin": "C3", "sheet": "Run 4"});
        let results = crate::tests::analysed_params(&params);
        let tables = crate::answer_tables::BookTables(service::report::build_results_book(&results));
        let answer = crate::server::CellsAnswer { results, tables };
        let direct = to_vec_sorted(&answer).expect("written");
        assert!(direct.len() > 10_000);
        assert!(direct == through_the_tree(&answer));
    }
}
