//! The JSON writer: any `Serialize` value as pretty-printed JSON, in the layout of
//! serde_json's pretty printer (two-space indent, `"key": value`, `[]` and `{}` when empty,
//! numbers through serde_json's own number formatting) with gapwarden's two changes: a
//! negative zero prints as 0 (a figure of "-0.0" reads as a sign error), and every
//! character a terminal would act on or that hides or reorders text (see
//! `text::is_hazardous`) is a `\uXXXX` escape. JSON readers decode an escape to the same
//! character, so the data are unchanged; only what a terminal sees is.
//!
//! Written here rather than as a serde_json formatter because serde_json looks at every
//! byte of every string through a table before a formatter sees it; this writer skips
//! the plain runs sixteen bytes at a time, and writes struct field names without looking
//! at them. `tests/it/report_layout.rs` holds it to
//! serde_json's output on every fixture and on generated strings.

use std::fmt::Display;

use serde::ser::{self, Serialize};
use serde_json::ser::{CompactFormatter, Formatter};

/// The value as pretty-printed JSON, without a final newline.
pub fn pretty<T: Serialize + ?Sized>(value: &T) -> Result<String, Error> {
    let mut writer = Writer {
        // Room for a whole report of the size the examples write (160 KB) without
        // copying it as it grows.
        out: String::with_capacity(1 << 18),
        scratch: Vec::new(),
        depth: 0,
    };
    value.serialize(&mut writer)?;
    Ok(writer.out)
}

/// Why a value could not be written (a map key that is not a string or a number, or a
/// value's own serialisation error).
#[derive(Debug)]
pub struct Error(String);

impl Display for Error {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for Error {}

impl ser::Error for Error {
    fn custom<T: Display>(msg: T) -> Self {
        Error(msg.to_string())
    }
}

struct Writer {
    /// Written as text from the start (whole strings, pieces of them cut where a
    /// character starts, ASCII punctuation and digits), so the 160 KB of a report need no
    /// UTF-8 check at the end.
    out: String,
    /// Where serde_json's formatter writes a number before it is added to `out`.
    scratch: Vec<u8>,
    /// Containers open around the next value.
    depth: usize,
}

impl Writer {
    fn newline(&mut self) {
        // A newline and two spaces a level, from one run of spaces while it lasts.
        const LINE: &str = "\n                                                                ";
        let indent = 2 * self.depth;
        match LINE.get(..1 + indent) {
            // The whole run, a copy of fixed length (a few vector stores, no call), cut
            // back to the indent.
            Some(line) => {
                let end = self.out.len() + line.len();
                self.out.push_str(LINE);
                self.out.truncate(end);
            }
            None => self.deep_newline(LINE, indent),
        }
    }

    /// [`Writer::newline`] below 32 levels: the run of spaces, then one space at a time.
    /// Out of line, so that the common case saves no registers (a report never goes so
    /// deep; about ten instructions less on each of its 3,800 lines).
    #[cold]
    #[inline(never)]
    fn deep_newline(&mut self, line: &str, indent: usize) {
        self.out.push_str(line);
        self.out
            .extend(std::iter::repeat_n(' ', indent + 1 - line.len()));
    }

    /// A struct's field name (or a variant's) and the `": "` after it: our own
    /// identifiers, which need no escaping (checked in debug builds, and by the comparison
    /// with serde_json's output in the tests).
    fn field_name(&mut self, name: &'static str) {
        debug_assert_eq!(
            plain_run(name.as_bytes()),
            name.len(),
            "field name {name:?}"
        );
        self.out.reserve(name.len() + 4);
        self.out.push('"');
        self.out.push_str(name);
        self.out.push_str("\": ");
    }

    fn open(&mut self, bracket: char) -> Compound<'_> {
        self.out.push(bracket);
        self.depth += 1;
        Compound {
            writer: self,
            first: true,
            closing: "",
        }
    }

    fn string(&mut self, s: &str) {
        let out = &mut self.out;
        let bytes = s.as_bytes();
        let plain = plain_run(bytes);
        out.reserve(bytes.len() + 2);
        out.push('"');
        if plain == bytes.len() {
            // Most strings (every key): nothing to escape.
            out.push_str(s);
            out.push('"');
            return;
        }
        let (mut copied, mut i) = (0, plain);
        while let Some(&b) = bytes.get(i) {
            let escape: &str = match b {
                b'"' => "\\\"",
                b'\\' => "\\\\",
                b'\n' => "\\n",
                b'\r' => "\\r",
                b'\t' => "\\t",
                0x08 => "\\b",
                0x0c => "\\f",
                0x00..=0x1f | 0x7f => "",
                _ => {
                    // Beyond ASCII: kept as written unless hazardous.
                    let Some(c) = s[i..].chars().next() else {
                        break;
                    };
                    if crate::text::is_hazardous(c) {
                        out.push_str(&s[copied..i]);
                        let mut units = [0u16; 2];
                        for &mut unit in c.encode_utf16(&mut units) {
                            unicode_escape(out, unit);
                        }
                        copied = i + c.len_utf8();
                    }
                    i += c.len_utf8();
                    i += plain_run(&bytes[i..]);
                    continue;
                }
            };
            out.push_str(&s[copied..i]);
            if escape.is_empty() {
                unicode_escape(out, u16::from(b));
            } else {
                out.push_str(escape);
            }
            i += 1;
            copied = i;
            i += plain_run(&bytes[i..]);
        }
        out.push_str(&s[copied..]);
        out.push('"');
    }

    fn number(&mut self, write: impl FnOnce(&mut Vec<u8>) -> std::io::Result<()>) {
        // Writing to a Vec cannot fail, and serde_json writes a number in ASCII (digits,
        // sign, point, exponent), so the check passes; it is a few bytes long.
        self.scratch.clear();
        let _ = write(&mut self.scratch);
        if let Ok(text) = std::str::from_utf8(&self.scratch) {
            self.out.push_str(text);
        }
    }

    fn float(&mut self, v: f64) {
        if v.is_finite() {
            self.number(|w| CompactFormatter.write_f64(w, if v == 0.0 { 0.0 } else { v }));
        } else {
            self.out.push_str("null");
        }
    }
}

/// How many bytes at the start of `bytes` a JSON string holds as they are: printable ASCII
/// (0x20 to 0x7e) other than the quote and the backslash. Looked at sixteen bytes at a
/// time, the last sixteen overlapping the chunk before; a string of four to fifteen bytes
/// as its first and last eight (or four) bytes, which overlap and so cover every byte.
fn plain_run(bytes: &[u8]) -> usize {
    let n = bytes.len();
    let kept = |b: &&u8| (0x20..0x7f).contains(*b) && **b != b'"' && **b != b'\\';
    let whole = match n {
        0..4 => false,
        4..8 => {
            let (low, high) = (
                u32::from_le_bytes(head(bytes)),
                u32::from_le_bytes(tail(bytes)),
            );
            !word_stops(u64::from(low) | u64::from(high) << 32)
        }
        8..16 => {
            !word_stops(u64::from_le_bytes(head(bytes)))
                && !word_stops(u64::from_le_bytes(tail(bytes)))
        }
        _ => {
            let (chunks, _) = bytes.as_chunks::<16>();
            for (k, chunk) in chunks.iter().enumerate() {
                if stops(chunk) {
                    let i = 16 * k;
                    return i + bytes[i..].iter().take_while(kept).count();
                }
            }
            let (_, ends) = bytes.as_rchunks::<16>();
            ends.last().is_none_or(|chunk| !stops(chunk))
        }
    };
    if whole {
        n
    } else {
        bytes.iter().take_while(kept).count()
    }
}

/// True where some byte of a chunk ends a run of a JSON string's plain bytes: a control
/// character, a quote, a backslash, DEL or a byte beyond ASCII. Written byte by byte;
/// compiled as a few vector instructions.
#[inline(always)]
fn stops(chunk: &[u8; 16]) -> bool {
    let mut any = false;
    for &b in chunk {
        any |= (b < 0x20) | (b == b'"') | (b == b'\\') | (b >= 0x7f);
    }
    any
}

/// The first `N` bytes (the caller has checked there are that many).
fn head<const N: usize>(bytes: &[u8]) -> [u8; N] {
    let mut part = [0; N];
    part.copy_from_slice(&bytes[..N]);
    part
}

/// The last `N` bytes (the caller has checked there are that many).
fn tail<const N: usize>(bytes: &[u8]) -> [u8; N] {
    let mut part = [0; N];
    part.copy_from_slice(&bytes[bytes.len() - N..]);
    part
}

/// [`stops`] for eight bytes in a word: `(x - n) & !x` has a byte's high bit set where
/// that byte of `x` is below `n` (or a byte before it is, which is then a stop too); a
/// byte equal to `b` is a zero byte of `x ^ b...b`; DEL plus one and every byte beyond
/// ASCII have the high bit set (the word tricks of `text`).
fn word_stops(w: u64) -> bool {
    use crate::text::{HIGH, ONES};
    let below = |x: u64, n: u64| x.wrapping_sub(n * ONES) & !x;
    let equal = |b: u8| below(w ^ (u64::from(b) * ONES), 1);
    (w | w.wrapping_add(ONES) | below(w, 0x20) | equal(b'"') | equal(b'\\')) & HIGH != 0
}

/// `\u00e9`: four lowercase hex digits, as serde_json writes them.
fn unicode_escape(out: &mut String, unit: u16) {
    const HEX: &[u8; 16] = b"0123456789abcdef";
    out.push_str("\\u");
    for shift in [12, 8, 4, 0] {
        out.push(char::from(HEX[usize::from((unit >> shift) & 0xf)]));
    }
}

/// An open array or object (`closing` holds what a variant's wrapping object still needs).
struct Compound<'a> {
    writer: &'a mut Writer,
    first: bool,
    closing: &'static str,
}

impl Compound<'_> {
    fn item(&mut self) {
        if std::mem::replace(&mut self.first, false) {
            self.writer.newline();
            return;
        }
        // The comma and the newline as one copy of fixed length (as in `newline`), cut back
        // to the indent: one check of the room left instead of two.
        const COMMA_LINE: &str =
            ",\n                                                                ";
        let writer = &mut *self.writer;
        let indent = 2 * writer.depth;
        if indent <= COMMA_LINE.len() - 2 {
            let end = writer.out.len() + 2 + indent;
            writer.out.push_str(COMMA_LINE);
            writer.out.truncate(end);
        } else {
            writer.out.push(',');
            writer.newline();
        }
    }

    fn key(&mut self, key: &'static str) {
        self.item();
        self.writer.field_name(key);
    }

    fn close(self, bracket: char) {
        let Compound {
            writer,
            first,
            closing,
        } = self;
        writer.depth -= 1;
        if !first {
            writer.newline();
        }
        writer.out.push(bracket);
        if !closing.is_empty() {
            // The object round a variant: `{"Variant": [...]}` or `{"Variant": {...}}`.
            writer.depth -= 1;
            writer.newline();
            writer.out.push_str(closing);
        }
    }
}

/// `{ "variant": ` before a variant's content, as serde_json writes an externally tagged
/// enum.
fn open_variant<'a>(writer: &'a mut Writer, variant: &'static str, bracket: char) -> Compound<'a> {
    writer.out.push('{');
    writer.depth += 1;
    writer.newline();
    writer.field_name(variant);
    let mut inner = writer.open(bracket);
    inner.closing = "}";
    inner
}

macro_rules! integers {
    ($($method:ident $ty:ty => $write:ident),* $(,)?) => {
        $(fn $method(self, v: $ty) -> Result<(), Error> {
            self.number(|w| CompactFormatter.$write(w, v));
            Ok(())
        })*
    };
}

impl<'a> ser::Serializer for &'a mut Writer {
    type Ok = ();
    type Error = Error;
    type SerializeSeq = Compound<'a>;
    type SerializeTuple = Compound<'a>;
    type SerializeTupleStruct = Compound<'a>;
    type SerializeTupleVariant = Compound<'a>;
    type SerializeMap = Compound<'a>;
    type SerializeStruct = Compound<'a>;
    type SerializeStructVariant = Compound<'a>;

    fn serialize_bool(self, v: bool) -> Result<(), Error> {
        self.out.push_str(if v { "true" } else { "false" });
        Ok(())
    }

    integers! {
        serialize_i8 i8 => write_i8,
        serialize_i16 i16 => write_i16,
        serialize_i32 i32 => write_i32,
        serialize_i64 i64 => write_i64,
        serialize_i128 i128 => write_i128,
        serialize_u8 u8 => write_u8,
        serialize_u16 u16 => write_u16,
        serialize_u32 u32 => write_u32,
        serialize_u64 u64 => write_u64,
        serialize_u128 u128 => write_u128,
    }

    fn serialize_f32(self, v: f32) -> Result<(), Error> {
        if v.is_finite() {
            self.number(|w| CompactFormatter.write_f32(w, if v == 0.0 { 0.0 } else { v }));
        } else {
            self.out.push_str("null");
        }
        Ok(())
    }

    fn serialize_f64(self, v: f64) -> Result<(), Error> {
        self.float(v);
        Ok(())
    }

    fn serialize_char(self, v: char) -> Result<(), Error> {
        self.string(v.encode_utf8(&mut [0u8; 4]));
        Ok(())
    }

    fn serialize_str(self, v: &str) -> Result<(), Error> {
        self.string(v);
        Ok(())
    }

    fn serialize_bytes(self, v: &[u8]) -> Result<(), Error> {
        use ser::SerializeSeq;
        let mut seq = self.serialize_seq(Some(v.len()))?;
        for b in v {
            seq.serialize_element(b)?;
        }
        seq.end()
    }

    fn serialize_none(self) -> Result<(), Error> {
        self.serialize_unit()
    }

    fn serialize_some<T: Serialize + ?Sized>(self, value: &T) -> Result<(), Error> {
        value.serialize(self)
    }

    fn serialize_unit(self) -> Result<(), Error> {
        self.out.push_str("null");
        Ok(())
    }

    fn serialize_unit_struct(self, _name: &'static str) -> Result<(), Error> {
        self.serialize_unit()
    }

    fn serialize_unit_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
    ) -> Result<(), Error> {
        self.string(variant);
        Ok(())
    }

    fn serialize_newtype_struct<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        value: &T,
    ) -> Result<(), Error> {
        value.serialize(self)
    }

    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        value: &T,
    ) -> Result<(), Error> {
        let mut object = self.open('{');
        object.key(variant);
        value.serialize(&mut *object.writer)?;
        object.close('}');
        Ok(())
    }

    fn serialize_seq(self, _len: Option<usize>) -> Result<Compound<'a>, Error> {
        Ok(self.open('['))
    }

    fn serialize_tuple(self, len: usize) -> Result<Compound<'a>, Error> {
        self.serialize_seq(Some(len))
    }

    fn serialize_tuple_struct(
        self,
        _name: &'static str,
        len: usize,
    ) -> Result<Compound<'a>, Error> {
        self.serialize_seq(Some(len))
    }

    fn serialize_tuple_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        _len: usize,
    ) -> Result<Compound<'a>, Error> {
        Ok(open_variant(self, variant, '['))
    }

    fn serialize_map(self, _len: Option<usize>) -> Result<Compound<'a>, Error> {
        Ok(self.open('{'))
    }

    fn serialize_struct(self, _name: &'static str, _len: usize) -> Result<Compound<'a>, Error> {
        Ok(self.open('{'))
    }

    fn serialize_struct_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        _len: usize,
    ) -> Result<Compound<'a>, Error> {
        Ok(open_variant(self, variant, '{'))
    }
}

impl ser::SerializeSeq for Compound<'_> {
    type Ok = ();
    type Error = Error;

    fn serialize_element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
        self.item();
        value.serialize(&mut *self.writer)
    }

    fn end(self) -> Result<(), Error> {
        self.close(']');
        Ok(())
    }
}

/// Tuples of every kind are written as arrays, like sequences.
macro_rules! as_sequence {
    ($($trait:ident::$add:ident),* $(,)?) => {
        $(impl ser::$trait for Compound<'_> {
            type Ok = ();
            type Error = Error;

            fn $add<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
                ser::SerializeSeq::serialize_element(self, value)
            }

            fn end(self) -> Result<(), Error> {
                ser::SerializeSeq::end(self)
            }
        })*
    };
}

as_sequence! {
    SerializeTuple::serialize_element,
    SerializeTupleStruct::serialize_field,
    SerializeTupleVariant::serialize_field,
}

impl ser::SerializeMap for Compound<'_> {
    type Ok = ();
    type Error = Error;

    fn serialize_key<T: Serialize + ?Sized>(&mut self, key: &T) -> Result<(), Error> {
        self.item();
        key.serialize(KeyWriter(&mut *self.writer))?;
        self.writer.out.push_str(": ");
        Ok(())
    }

    fn serialize_value<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
        value.serialize(&mut *self.writer)
    }

    fn end(self) -> Result<(), Error> {
        self.close('}');
        Ok(())
    }
}

/// Structs and struct variants are written as objects of their fields.
macro_rules! as_object {
    ($($trait:ident),* $(,)?) => {
        $(impl ser::$trait for Compound<'_> {
            type Ok = ();
            type Error = Error;

            fn serialize_field<T: Serialize + ?Sized>(
                &mut self,
                key: &'static str,
                value: &T,
            ) -> Result<(), Error> {
                self.key(key);
                value.serialize(&mut *self.writer)
            }

            fn end(self) -> Result<(), Error> {
                self.close('}');
                Ok(())
            }
        })*
    };
}

as_object!(SerializeStruct, SerializeStructVariant);

/// A map key: JSON keys are strings, so a number is written in quotes, as serde_json does.
struct KeyWriter<'a>(&'a mut Writer);

impl KeyWriter<'_> {
    fn quoted(self, write: impl FnOnce(&mut Vec<u8>) -> std::io::Result<()>) -> Result<(), Error> {
        self.0.out.push('"');
        self.0.number(write);
        self.0.out.push('"');
        Ok(())
    }
}

fn key_must_be_a_string() -> Error {
    Error("key must be a string".to_string())
}

/// Key kinds JSON has no string form for.
macro_rules! refused {
    ($($method:ident($ty:ty)),* $(,)?) => {
        $(fn $method(self, _v: $ty) -> Result<(), Error> {
            Err(key_must_be_a_string())
        })*
    };
}

macro_rules! quoted_integers {
    ($($method:ident $ty:ty => $write:ident),* $(,)?) => {
        $(fn $method(self, v: $ty) -> Result<(), Error> {
            self.quoted(|w| CompactFormatter.$write(w, v))
        })*
    };
}

impl ser::Serializer for KeyWriter<'_> {
    type Ok = ();
    type Error = Error;
    type SerializeSeq = ser::Impossible<(), Error>;
    type SerializeTuple = ser::Impossible<(), Error>;
    type SerializeTupleStruct = ser::Impossible<(), Error>;
    type SerializeTupleVariant = ser::Impossible<(), Error>;
    type SerializeMap = ser::Impossible<(), Error>;
    type SerializeStruct = ser::Impossible<(), Error>;
    type SerializeStructVariant = ser::Impossible<(), Error>;

    fn serialize_str(self, v: &str) -> Result<(), Error> {
        self.0.string(v);
        Ok(())
    }

    fn serialize_char(self, v: char) -> Result<(), Error> {
        self.0.string(v.encode_utf8(&mut [0u8; 4]));
        Ok(())
    }

    fn serialize_bool(self, v: bool) -> Result<(), Error> {
        self.0.string(if v { "true" } else { "false" });
        Ok(())
    }

    quoted_integers! {
        serialize_i8 i8 => write_i8,
        serialize_i16 i16 => write_i16,
        serialize_i32 i32 => write_i32,
        serialize_i64 i64 => write_i64,
        serialize_i128 i128 => write_i128,
        serialize_u8 u8 => write_u8,
        serialize_u16 u16 => write_u16,
        serialize_u32 u32 => write_u32,
        serialize_u64 u64 => write_u64,
        serialize_u128 u128 => write_u128,
    }

    refused! {
        serialize_f32(f32),
        serialize_f64(f64),
        serialize_bytes(&[u8]),
    }

    fn serialize_none(self) -> Result<(), Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_some<T: Serialize + ?Sized>(self, _value: &T) -> Result<(), Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_unit(self) -> Result<(), Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_unit_struct(self, _name: &'static str) -> Result<(), Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_unit_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
    ) -> Result<(), Error> {
        self.serialize_str(variant)
    }

    fn serialize_newtype_struct<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        value: &T,
    ) -> Result<(), Error> {
        value.serialize(self)
    }

    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
        _value: &T,
    ) -> Result<(), Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_seq(self, _len: Option<usize>) -> Result<Self::SerializeSeq, Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_tuple(self, _len: usize) -> Result<Self::SerializeTuple, Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_tuple_struct(
        self,
        _name: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeTupleStruct, Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_tuple_variant(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeTupleVariant, Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_map(self, _len: Option<usize>) -> Result<Self::SerializeMap, Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_struct(
        self,
        _name: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeStruct, Error> {
        Err(key_must_be_a_string())
    }

    fn serialize_struct_variant(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeStructVariant, Error> {
        Err(key_must_be_a_string())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn kept(b: u8) -> bool {
        (0x20..0x7f).contains(&b) && b != b'"' && b != b'\\'
    }

    /// Bytes at and around every boundary the run tests: controls, space, quote,
    /// backslash, tilde, DEL, the first and last bytes beyond ASCII.
    const EDGES: [u8; 11] = [
        0x00, 0x1f, 0x20, 0x21, b'"', b'\\', 0x7e, 0x7f, 0x80, 0xc2, 0xff,
    ];

    /// Every length to 40 (under four bytes, one word of four to eight, two overlapping
    /// words to sixteen, chunks of sixteen with an overlapping last one), every byte value
    /// at every position: the run is as long as a byte-by-byte reading says.
    #[test]
    fn the_plain_run_is_exact_at_every_length_and_position() {
        crate::text::tests::assert_exact_at_every_length(plain_run, kept, 40);
    }

    /// Two bytes from the boundary set at every pair of positions: a stop after another
    /// (a carry or borrow between bytes of a word) never changes the count.
    #[test]
    fn the_plain_run_is_exact_with_two_stops() {
        for len in 2..=40 {
            for first in 0..len {
                for second in first + 1..len {
                    for a in EDGES {
                        for b in EDGES {
                            let mut text = vec![b'~'; len];
                            text[first] = a;
                            text[second] = b;
                            let expected = text.iter().take_while(|&&b| kept(b)).count();
                            assert_eq!(plain_run(&text), expected, "{text:?}");
                        }
                    }
                }
            }
        }
    }

    /// A field name goes out as it is, with its quotes and `": "`.
    #[test]
    fn a_field_name_is_written_in_quotes() {
        let mut writer = Writer {
            out: String::new(),
            scratch: Vec::new(),
            depth: 0,
        };
        writer.field_name("clearance_mm");
        assert_eq!(writer.out, "\"clearance_mm\": ");
    }
}
