//! The raw form of an input file as serde reads it, and the helpers of the one validate pass
//! that turns it into checked types. Serde stops at the first problem, so the raw types are
//! lenient where a designer makes mistakes: every leaf (`Num`, `Text`, `Flag`, `Word`,
//! `Texts`) takes any TOML value with its span, and every table (`Section`) keeps the keys
//! it does not know instead of failing on them. `Reader` then judges each value against
//! what its key takes and reports every problem at once, each at the parser's position.

use std::marker::PhantomData;
use std::ops::Range;

use serde::Deserialize;
use serde::de::{
    self, DeserializeSeed, Deserializer, IgnoredAny, IntoDeserializer, MapAccess, SeqAccess,
    Visitor,
};
use toml::Spanned;
use toml::de::DeTable;

use crate::diag::{Diagnostic, Problems, Source, one_of, suggest};
use crate::input_limits::NumberRule;

pub type Span = Range<usize>;

/// A value together with where it was written.
#[derive(Debug, Clone, PartialEq)]
pub struct Located<T> {
    pub value: T,
    pub span: Span,
}

/// Longest string accepted for a name, id or note.
pub const MAX_STRING_CHARS: usize = 4000;

/// The key under which the TOML deserializer hands over a date or time.
const DATETIME_KEY: &str = "$__toml_private_datetime";

/// Any TOML value, as written. The leaves below wrap it so that a raw struct says what its
/// key takes while a wrong type still reaches `validate` as one problem among the others.
#[derive(Debug, Clone, PartialEq)]
pub enum Loose {
    String(String),
    /// `None`: an integer too large for 64 bits.
    Integer(Option<i64>),
    Float(f64),
    Boolean(bool),
    Datetime,
    Array(Vec<Spanned<Loose>>),
    Table,
}

impl Loose {
    /// The TOML name of the value's type, for "found ..." in messages.
    pub fn type_str(&self) -> &'static str {
        match self {
            Loose::String(_) => "string",
            Loose::Integer(_) => "integer",
            Loose::Float(_) => "float",
            Loose::Boolean(_) => "boolean",
            Loose::Datetime => "datetime",
            Loose::Array(_) => "array",
            Loose::Table => "table",
        }
    }
}

impl<'de> Deserialize<'de> for Loose {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        d.deserialize_any(LooseVisitor)
    }
}

struct LooseVisitor;

impl<'de> Visitor<'de> for LooseVisitor {
    type Value = Loose;

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("any TOML value")
    }

    fn visit_bool<E>(self, v: bool) -> Result<Loose, E> {
        Ok(Loose::Boolean(v))
    }

    fn visit_i64<E>(self, v: i64) -> Result<Loose, E> {
        Ok(Loose::Integer(Some(v)))
    }

    fn visit_u64<E>(self, v: u64) -> Result<Loose, E> {
        Ok(Loose::Integer(i64::try_from(v).ok()))
    }

    fn visit_i128<E>(self, v: i128) -> Result<Loose, E> {
        Ok(Loose::Integer(i64::try_from(v).ok()))
    }

    fn visit_u128<E>(self, v: u128) -> Result<Loose, E> {
        Ok(Loose::Integer(i64::try_from(v).ok()))
    }

    fn visit_f64<E>(self, v: f64) -> Result<Loose, E> {
        Ok(Loose::Float(v))
    }

    fn visit_str<E>(self, v: &str) -> Result<Loose, E> {
        Ok(Loose::String(v.to_string()))
    }

    fn visit_string<E>(self, v: String) -> Result<Loose, E> {
        Ok(Loose::String(v))
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Loose, A::Error> {
        let mut items = Vec::new();
        while let Some(item) = seq.next_element::<Spanned<Loose>>()? {
            items.push(item);
        }
        Ok(Loose::Array(items))
    }

    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Loose, A::Error> {
        let mut datetime = false;
        while let Some(key) = map.next_key::<String>()? {
            datetime |= key == DATETIME_KEY;
            map.next_value::<IgnoredAny>()?;
        }
        Ok(if datetime {
            Loose::Datetime
        } else {
            Loose::Table
        })
    }
}

macro_rules! leaf {
    ($(#[$meta:meta])* $name:ident) => {
        $(#[$meta])*
        #[derive(Debug, Clone, PartialEq)]
        pub struct $name(pub Loose);

        impl<'de> Deserialize<'de> for $name {
            fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
                Loose::deserialize(d).map($name)
            }
        }
    };
}

leaf!(
    /// A non-empty string of at most `MAX_STRING_CHARS` characters.
    Text
);
leaf!(
    /// `true` or `false`.
    Flag
);
leaf!(
    /// A list of non-empty strings.
    Texts
);

/// A number (integer or float); its unit is in the key's name. `R` names the
/// `NumberRule` the reader judges it by (`Num<rule::PollutionDegree>`, read with
/// `Reader::ruled`), so that the schema states the same limits; a plain `Num` is read with
/// a rule given at the call (`Reader::number`) and the schema says only "a number".
#[derive(Debug, Clone, PartialEq)]
pub struct Num<R = AnyNumber>(pub Loose, PhantomData<R>);

impl<'de, R> Deserialize<'de> for Num<R> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        Loose::deserialize(d).map(|l| Num(l, PhantomData))
    }
}

/// What a number key takes, as a type: `AnyNumber` (the rule is given where it is read)
/// or a marker of `crate::input_limits::rule` that carries its `NumberRule`.
pub trait NumberKind {
    const RULE: Option<NumberRule>;
}

/// A marker that names its rule (see `crate::input_limits::rule`).
pub trait Ruled: NumberKind {
    const THE_RULE: NumberRule;
}

/// A number whose rule is given where it is read.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AnyNumber;

impl NumberKind for AnyNumber {
    const RULE: Option<NumberRule> = None;
}

/// A value with where it was written: `toml::Spanned`, in a type of our own so that the
/// schema (`JsonSchema`) can describe the value itself.
#[derive(Debug, Clone, PartialEq)]
pub struct At<T>(pub Spanned<T>);

impl<T> At<T> {
    pub fn get_ref(&self) -> &T {
        self.0.get_ref()
    }

    pub fn span(&self) -> Span {
        self.0.span()
    }
}

impl<'de, T: Deserialize<'de>> Deserialize<'de> for At<T> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        Spanned::<T>::deserialize(d).map(At)
    }
}

/// One of the words of the domain enum `E` (its `clap::ValueEnum` names).
#[derive(Debug, Clone, PartialEq)]
pub struct Word<E>(pub Loose, PhantomData<E>);

impl<'de, E> Deserialize<'de> for Word<E> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        Loose::deserialize(d).map(|l| Word(l, PhantomData))
    }
}

/// A TOML table read into the raw struct `T`, with every key as written (for positions)
/// and the keys `T` does not have (reported by `validate` with a suggestion); or, where
/// the value is not a table at all, what it is.
#[derive(Debug, Clone, PartialEq)]
pub enum Section<T> {
    Table(Box<Table<T>>),
    Not(Loose),
}

#[derive(Debug, Clone, PartialEq)]
pub struct Table<T> {
    pub value: T,
    /// Every key of the table, in file order, where it was written.
    pub keys: Vec<Spanned<String>>,
    /// The keys that `T` does not have.
    pub unknown: Vec<Spanned<String>>,
    /// The keys `T` has (its serde field names).
    pub fields: &'static [&'static str],
}

impl<'de, T: Deserialize<'de>> Deserialize<'de> for Section<T> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        d.deserialize_any(SectionVisitor(PhantomData))
    }
}

struct SectionVisitor<T>(PhantomData<T>);

impl<'de, T: Deserialize<'de>> Visitor<'de> for SectionVisitor<T> {
    type Value = Section<T>;

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("a table")
    }

    fn visit_map<A: MapAccess<'de>>(self, map: A) -> Result<Section<T>, A::Error> {
        let mut seen = Seen {
            keys: Vec::new(),
            unknown: Vec::new(),
            fields: &[],
            datetime: false,
        };
        let value = T::deserialize(Fields {
            map,
            seen: &mut seen,
        })?;
        if seen.datetime {
            return Ok(Section::Not(Loose::Datetime));
        }
        Ok(Section::Table(Box::new(Table {
            value,
            keys: seen.keys,
            unknown: seen.unknown,
            fields: seen.fields,
        })))
    }

    fn visit_seq<A: SeqAccess<'de>>(self, seq: A) -> Result<Section<T>, A::Error> {
        LooseVisitor.visit_seq(seq).map(Section::Not)
    }

    fn visit_bool<E>(self, v: bool) -> Result<Section<T>, E> {
        Ok(Section::Not(Loose::Boolean(v)))
    }

    fn visit_i64<E>(self, v: i64) -> Result<Section<T>, E> {
        Ok(Section::Not(Loose::Integer(Some(v))))
    }

    fn visit_u64<E>(self, _: u64) -> Result<Section<T>, E> {
        Ok(Section::Not(Loose::Integer(None)))
    }

    fn visit_i128<E>(self, _: i128) -> Result<Section<T>, E> {
        Ok(Section::Not(Loose::Integer(None)))
    }

    fn visit_u128<E>(self, _: u128) -> Result<Section<T>, E> {
        Ok(Section::Not(Loose::Integer(None)))
    }

    fn visit_f64<E>(self, v: f64) -> Result<Section<T>, E> {
        Ok(Section::Not(Loose::Float(v)))
    }

    fn visit_str<E>(self, v: &str) -> Result<Section<T>, E> {
        Ok(Section::Not(Loose::String(v.to_string())))
    }
}

/// An array of tables (`[[name]]`), or what the value is where it is not an array.
#[derive(Debug, Clone, PartialEq)]
pub enum Sections<T> {
    List(Vec<Spanned<Section<T>>>),
    Not(Loose),
}

impl<'de, T: Deserialize<'de>> Deserialize<'de> for Sections<T> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        d.deserialize_any(SectionsVisitor(PhantomData))
    }
}

struct SectionsVisitor<T>(PhantomData<T>);

impl<'de, T: Deserialize<'de>> Visitor<'de> for SectionsVisitor<T> {
    type Value = Sections<T>;

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("an array of tables")
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Sections<T>, A::Error> {
        let mut items = Vec::new();
        while let Some(item) = seq.next_element::<Spanned<Section<T>>>()? {
            items.push(item);
        }
        Ok(Sections::List(items))
    }

    fn visit_map<A: MapAccess<'de>>(self, map: A) -> Result<Sections<T>, A::Error> {
        LooseVisitor.visit_map(map).map(Sections::Not)
    }

    fn visit_bool<E>(self, v: bool) -> Result<Sections<T>, E> {
        Ok(Sections::Not(Loose::Boolean(v)))
    }

    fn visit_i64<E>(self, v: i64) -> Result<Sections<T>, E> {
        Ok(Sections::Not(Loose::Integer(Some(v))))
    }

    fn visit_u64<E>(self, _: u64) -> Result<Sections<T>, E> {
        Ok(Sections::Not(Loose::Integer(None)))
    }

    fn visit_i128<E>(self, _: i128) -> Result<Sections<T>, E> {
        Ok(Sections::Not(Loose::Integer(None)))
    }

    fn visit_u128<E>(self, _: u128) -> Result<Sections<T>, E> {
        Ok(Sections::Not(Loose::Integer(None)))
    }

    fn visit_f64<E>(self, v: f64) -> Result<Sections<T>, E> {
        Ok(Sections::Not(Loose::Float(v)))
    }

    fn visit_str<E>(self, v: &str) -> Result<Sections<T>, E> {
        Ok(Sections::Not(Loose::String(v.to_string())))
    }
}

/// What a table's keys turned out to be while its struct was read.
struct Seen {
    keys: Vec<Spanned<String>>,
    unknown: Vec<Spanned<String>>,
    fields: &'static [&'static str],
    datetime: bool,
}

/// Hands a table to a raw struct's derived `Deserialize`, learning its field names from
/// `deserialize_struct` and setting aside (with their spans) the keys it does not have, so
/// that its `deny_unknown_fields` never ends the reading.
struct Fields<'s, A> {
    map: A,
    seen: &'s mut Seen,
}

impl<'de, A: MapAccess<'de>> Deserializer<'de> for Fields<'_, A> {
    type Error = A::Error;

    fn deserialize_any<V: Visitor<'de>>(self, visitor: V) -> Result<V::Value, A::Error> {
        visitor.visit_map(KeyCheck {
            map: self.map,
            seen: self.seen,
        })
    }

    fn deserialize_struct<V: Visitor<'de>>(
        self,
        _name: &'static str,
        fields: &'static [&'static str],
        visitor: V,
    ) -> Result<V::Value, A::Error> {
        self.seen.fields = fields;
        self.deserialize_any(visitor)
    }

    serde::forward_to_deserialize_any! {
        bool i8 i16 i32 i64 i128 u8 u16 u32 u64 u128 f32 f64 char str string bytes byte_buf
        option unit unit_struct newtype_struct seq tuple tuple_struct map enum identifier
        ignored_any
    }
}

struct KeyCheck<'s, A> {
    map: A,
    seen: &'s mut Seen,
}

impl<'de, A: MapAccess<'de>> MapAccess<'de> for KeyCheck<'_, A> {
    type Error = A::Error;

    fn next_key_seed<K: DeserializeSeed<'de>>(
        &mut self,
        seed: K,
    ) -> Result<Option<K::Value>, A::Error> {
        loop {
            let Some(key) = self.map.next_key::<Spanned<String>>()? else {
                return Ok(None);
            };
            if key.get_ref() == DATETIME_KEY {
                self.seen.datetime = true;
                self.map.next_value::<IgnoredAny>()?;
                continue;
            }
            self.seen.keys.push(key.clone());
            if self.seen.fields.contains(&key.get_ref().as_str()) {
                let name: de::value::StringDeserializer<A::Error> =
                    key.into_inner().into_deserializer();
                return seed.deserialize(name).map(Some);
            }
            self.seen.unknown.push(key);
            self.map.next_value::<IgnoredAny>()?;
        }
    }

    fn next_value_seed<V: DeserializeSeed<'de>>(&mut self, seed: V) -> Result<V::Value, A::Error> {
        self.map.next_value_seed(seed)
    }
}

/// Reads a whole document into its raw root struct: syntax errors first (all of them, from
/// the parser's recovering pass), then the structure through serde.
pub fn read_document<T: for<'de> Deserialize<'de>>(
    source: &Source,
) -> Result<Section<T>, Problems> {
    let doc = parse_document(source)?;
    let span = doc.span();
    Section::<T>::deserialize(toml::de::Deserializer::from(doc)).map_err(|e| {
        // The leaves take any value, so serde fails only where a date stands for a table.
        let message = if e.message().contains(DATETIME_KEY) {
            "expected a table, found datetime".to_string()
        } else {
            format!("cannot be read: {}", e.message().trim())
        };
        let d = source.diag(&e.span().unwrap_or(span), message);
        Problems(vec![match crate::diag::toml_error_key(&e) {
            Some(key) => d.with_key(key),
            None => d,
        }])
    })
}

/// A table being validated: its dotted path for messages and where a missing key of it is
/// reported (its header, or the first key of an entry of an array of tables).
#[derive(Debug, Clone)]
pub struct TableAt {
    pub path: String,
    pub span: Span,
}

impl TableAt {
    /// The document's top level.
    pub fn root<T>(doc: &Section<T>) -> (TableAt, Option<&T>) {
        let at = TableAt {
            path: String::new(),
            span: 0..0,
        };
        match doc {
            Section::Table(t) => (at, Some(&t.value)),
            Section::Not(_) => (at, None),
        }
    }
}

/// `("key", &raw.key)`: a raw field with its key, as the `Reader` methods take it.
#[macro_export]
macro_rules! key {
    ($raw:ident . $field:ident) => {
        (stringify!($field), &$raw.$field)
    };
}

/// Collects problems (errors) and warnings while the raw values are validated.
pub struct Reader<'s> {
    pub source: &'s Source,
    pub problems: Vec<Diagnostic>,
    pub warnings: Vec<Diagnostic>,
}

impl<'s> Reader<'s> {
    pub fn new(source: &'s Source) -> Self {
        Reader {
            source,
            problems: Vec::new(),
            warnings: Vec::new(),
        }
    }

    pub fn error(&mut self, span: &Span, key: impl Into<String>, message: impl Into<String>) {
        let d = self.source.diag(span, message).with_key(key);
        self.problems.push(d);
    }

    pub fn error_with_help(
        &mut self,
        span: &Span,
        key: impl Into<String>,
        message: impl Into<String>,
        help: impl Into<String>,
    ) {
        let d = self
            .source
            .diag(span, message)
            .with_key(key)
            .with_help(help);
        self.problems.push(d);
    }

    pub fn warn(&mut self, span: &Span, key: impl Into<String>, message: impl Into<String>) {
        let d = self.source.diag(span, message).with_key(key);
        self.warnings.push(d);
    }

    /// Ends reading: every problem, in the order they stand in the file.
    pub fn finish(&mut self) -> Result<(), Problems> {
        if self.problems.is_empty() {
            return Ok(());
        }
        let mut problems = std::mem::take(&mut self.problems);
        problems.sort_by_key(|d| (d.line, d.column));
        problems.dedup();
        Err(Problems(problems))
    }

    /// Reports the keys of a table that its raw struct does not have.
    pub fn unknown_keys<T>(&mut self, at: &TableAt, table: &Table<T>) {
        for key in &table.unknown {
            let name = key.get_ref().as_str();
            let path = join(&at.path, name);
            let where_ = if at.path.is_empty() {
                "at the top level".to_string()
            } else {
                format!("in [{}]", at.path)
            };
            let message = format!("unknown key {where_}");
            let help = match suggest(name, table.fields) {
                Some(best) => format!("did you mean `{best}`?"),
                None => format!("known keys here: {}", table.fields.join(", ")),
            };
            self.error_with_help(&key.span(), path, message, help);
        }
    }

    /// A sub-table (`[name]`), or `None` when absent (or not a table: an error).
    pub fn table<'a, T>(
        &mut self,
        parent: &TableAt,
        (key, value): (&str, &'a Option<At<Section<T>>>),
    ) -> Option<(TableAt, &'a T)> {
        let value = value.as_ref()?;
        let path = join(&parent.path, key);
        match value.get_ref() {
            Section::Table(table) => {
                let at = TableAt {
                    path,
                    span: value.span(),
                };
                self.unknown_keys(&at, table);
                Some((at, &table.value))
            }
            Section::Not(other) => {
                self.error(
                    &value.span(),
                    path,
                    format!("expected a table [{key}], found {}", other.type_str()),
                );
                None
            }
        }
    }

    /// The tables of an array of tables (`[[name]]`); absent is an empty list.
    pub fn table_array<'a, T>(
        &mut self,
        parent: &TableAt,
        (key, value): (&str, &'a Option<At<Sections<T>>>),
    ) -> Vec<(TableAt, &'a T)> {
        let Some(value) = value.as_ref() else {
            return Vec::new();
        };
        let base = join(&parent.path, key);
        let items = match value.get_ref() {
            Sections::List(items) => items,
            Sections::Not(other) => {
                self.error(
                    &value.span(),
                    base,
                    format!(
                        "expected an array of tables [[{key}]], found {}",
                        other.type_str()
                    ),
                );
                return Vec::new();
            }
        };
        let mut tables = Vec::new();
        for (i, item) in items.iter().enumerate() {
            let path = format!("{base}[{}]", i + 1);
            match item.get_ref() {
                Section::Table(table) => {
                    let span = table
                        .keys
                        .iter()
                        .map(|k| k.span())
                        .min_by_key(|s| s.start)
                        .unwrap_or_else(|| item.span());
                    let at = TableAt { path, span };
                    self.unknown_keys(&at, table);
                    tables.push((at, &table.value));
                }
                Section::Not(other) => self.error(
                    &item.span(),
                    path,
                    format!("expected a table, found {}", other.type_str()),
                ),
            }
        }
        tables
    }

    /// Reports a required key that is absent.
    pub fn missing(&mut self, table: &TableAt, key: &str, expected: &str) {
        let where_ = if table.path.is_empty() {
            "at the top level".to_string()
        } else {
            format!("in [{}]", table.path)
        };
        self.error(
            &table.span,
            join(&table.path, key),
            format!("missing {where_}; expected {expected}"),
        );
    }

    pub fn string(
        &mut self,
        table: &TableAt,
        (key, value): (&str, &Option<At<Text>>),
    ) -> Option<Located<String>> {
        let value = value.as_ref()?;
        let path = join(&table.path, key);
        match &value.get_ref().0 {
            Loose::String(s) => {
                if s.trim().is_empty() {
                    self.error(&value.span(), path, "is empty; expected a non-empty string");
                    return None;
                }
                if s.chars().count() > MAX_STRING_CHARS {
                    self.error(
                        &value.span(),
                        path,
                        format!("is longer than {MAX_STRING_CHARS} characters"),
                    );
                    return None;
                }
                Some(Located {
                    value: s.to_string(),
                    span: value.span(),
                })
            }
            other => {
                self.error(
                    &value.span(),
                    path,
                    format!("expected a string, found {}", other.type_str()),
                );
                None
            }
        }
    }

    pub fn required_string(
        &mut self,
        table: &TableAt,
        field: (&str, &Option<At<Text>>),
    ) -> Option<Located<String>> {
        if field.1.is_none() {
            self.missing(table, field.0, "a string");
            return None;
        }
        self.string(table, field)
    }

    pub fn boolean(
        &mut self,
        table: &TableAt,
        (key, value): (&str, &Option<At<Flag>>),
    ) -> Option<Located<bool>> {
        let value = value.as_ref()?;
        match &value.get_ref().0 {
            Loose::Boolean(b) => Some(Located {
                value: *b,
                span: value.span(),
            }),
            other => {
                self.error(
                    &value.span(),
                    join(&table.path, key),
                    format!("expected true or false, found {}", other.type_str()),
                );
                None
            }
        }
    }

    /// A number (integer or float), judged by `rule`.
    pub fn number(
        &mut self,
        table: &TableAt,
        field: (&str, &Option<At<Num>>),
        rule: &NumberRule,
    ) -> Option<Located<f64>> {
        self.number_by(table, field, rule)
    }

    /// A number whose rule is in its raw type (`Num<rule::X>`), the one the schema states.
    pub fn ruled<R: Ruled>(
        &mut self,
        table: &TableAt,
        field: (&str, &Option<At<Num<R>>>),
    ) -> Option<Located<f64>> {
        self.number_by(table, field, &R::THE_RULE)
    }

    pub fn required_ruled<R: Ruled>(
        &mut self,
        table: &TableAt,
        field: (&str, &Option<At<Num<R>>>),
    ) -> Option<Located<f64>> {
        if field.1.is_none() {
            self.missing(table, field.0, R::THE_RULE.expected);
            return None;
        }
        self.number_by(table, field, &R::THE_RULE)
    }

    /// A number judged by `rule`, whatever its raw type names: for a reader that first
    /// probes a key's value with a widened copy of its own rule (`power_entry::read`).
    pub fn number_by<R>(
        &mut self,
        table: &TableAt,
        (key, value): (&str, &Option<At<Num<R>>>),
        rule: &NumberRule,
    ) -> Option<Located<f64>> {
        let value = value.as_ref()?;
        let path = join(&table.path, key);
        let span = value.span();
        let number = match &value.get_ref().0 {
            Loose::Integer(i) => i.map(|v| v as f64),
            Loose::Float(f) => Some(*f),
            Loose::String(s) if s.trim().parse::<f64>().is_ok() => {
                self.error_with_help(
                    &span,
                    path,
                    format!("expected a number, found the string \"{s}\""),
                    format!("write it without quotes: {key} = {}", s.trim()),
                );
                return None;
            }
            other => {
                self.error(
                    &span,
                    path,
                    format!("expected {}, found {}", rule.expected, other.type_str()),
                );
                return None;
            }
        };
        let Some(number) = number else {
            self.error(
                &span,
                path,
                format!("cannot be read as a number; expected {}", rule.expected),
            );
            return None;
        };
        match rule.judge(number) {
            Ok(None) => {}
            Ok(Some(warning)) => self.warn(&span, path, warning),
            Err(reason) => {
                self.error(&span, path, reason);
                return None;
            }
        }
        Some(Located {
            value: number,
            span,
        })
    }

    pub fn required_number(
        &mut self,
        table: &TableAt,
        field: (&str, &Option<At<Num>>),
        rule: &NumberRule,
    ) -> Option<Located<f64>> {
        if field.1.is_none() {
            self.missing(table, field.0, rule.expected);
            return None;
        }
        self.number(table, field, rule)
    }

    /// One of the words of a domain enum (`crate::domain_words!`); a near miss gets a
    /// suggestion, and the list in the message is the enum's own.
    pub fn word<E: clap::ValueEnum>(
        &mut self,
        table: &TableAt,
        (key, value): (&str, &Option<At<Word<E>>>),
    ) -> Option<Located<E>> {
        let value = value.as_ref()?;
        let path = join(&table.path, key);
        let span = value.span();
        let words = crate::diag::words::<E>();
        let words: Vec<&str> = words.iter().map(String::as_str).collect();
        let Loose::String(s) = &value.get_ref().0 else {
            let message = format!(
                "expected one of {}, found {}",
                one_of(&words),
                value.get_ref().0.type_str()
            );
            // `protection_class = 2`: the numeral's Roman word, in quotes.
            let written = match &value.get_ref().0 {
                Loose::Integer(Some(i)) => Some(i.to_string()),
                Loose::Float(f) => Some(f.to_string()),
                _ => None,
            };
            match written.and_then(|w| crate::hints::word_help(&w, &words, false)) {
                Some(help) => self.error_with_help(&span, path, message, help),
                None => self.error(&span, path, message),
            }
            return None;
        };
        if let Some(word) = crate::diag::word::<E>(s) {
            return Some(Located { value: word, span });
        }
        let message = format!("\"{s}\" is not known; expected {}", one_of(&words));
        // A numeral or the wrong letter case ("3a" for "IIIa") first, then the nearest
        // spelling.
        match crate::hints::word_help(s, &words, true) {
            Some(help) => self.error_with_help(&span, path, message, help),
            None => self.error(&span, path, message),
        }
        None
    }

    pub fn required_word<E: clap::ValueEnum>(
        &mut self,
        table: &TableAt,
        field: (&str, &Option<At<Word<E>>>),
    ) -> Option<Located<E>> {
        if field.1.is_none() {
            let words = crate::diag::words::<E>();
            let words: Vec<&str> = words.iter().map(String::as_str).collect();
            self.missing(table, field.0, &one_of(&words));
            return None;
        }
        self.word(table, field)
    }

    /// An array of strings; each element keeps its own position.
    pub fn string_list(
        &mut self,
        table: &TableAt,
        (key, value): (&str, &Option<At<Texts>>),
    ) -> Option<Located<Vec<Located<String>>>> {
        let value = value.as_ref()?;
        let path = join(&table.path, key);
        let Loose::Array(items) = &value.get_ref().0 else {
            self.error(
                &value.span(),
                path,
                format!(
                    "expected an array of strings, found {}",
                    value.get_ref().0.type_str()
                ),
            );
            return None;
        };
        let mut out = Vec::new();
        for (i, item) in items.iter().enumerate() {
            match item.get_ref() {
                Loose::String(s)
                    if !s.trim().is_empty() && s.chars().count() <= MAX_STRING_CHARS =>
                {
                    out.push(Located {
                        value: s.to_string(),
                        span: item.span(),
                    })
                }
                Loose::String(_) => self.error(
                    &item.span(),
                    format!("{path}[{}]", i + 1),
                    format!("expected a non-empty string of at most {MAX_STRING_CHARS} characters"),
                ),
                other => self.error(
                    &item.span(),
                    format!("{path}[{}]", i + 1),
                    format!("expected a string, found {}", other.type_str()),
                ),
            }
        }
        Some(Located {
            value: out,
            span: value.span(),
        })
    }
}

/// The dotted path of `key` in the table at `path`, made for every key read (so joined
/// from its pieces, not `format!`ted: `tests::a_key_path_is_the_table_path_dot_key`).
fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        [path, ".", key].concat()
    }
}

/// Parses TOML text; syntax errors come back all at once with their positions.
pub fn parse_document(source: &Source) -> Result<Spanned<DeTable<'_>>, Problems> {
    let (doc, errors) = DeTable::parse_recoverable(&source.text);
    if errors.is_empty() {
        return Ok(doc);
    }
    let mut problems: Vec<Diagnostic> = errors
        .iter()
        .map(|e| {
            let message = format!("not valid TOML: {}", e.message().trim());
            match e.span() {
                Some(span) => source.diag(&span, message),
                // The parser gives its nesting limit no position: find the place ourselves.
                None if e.message().contains("recursion limit") => match too_deep(&source.text) {
                    Some((at, key)) => source
                        .diag(
                            &(at..at + 1),
                            format!(
                                "not valid TOML: nested more than {NESTING_LIMIT} levels deep \
                                     (dotted key, table header, array or inline table)"
                            ),
                        )
                        .with_key(key),
                    None => Diagnostic::new(&source.name, message),
                },
                None => Diagnostic::new(&source.name, message),
            }
        })
        .collect();
    problems.dedup();
    Err(Problems(problems))
}

/// The TOML parser's nesting limit (dotted key parts, arrays and inline tables together).
const NESTING_LIMIT: usize = 80;

/// The byte offset where a key, table header or value first nests more than the parser
/// allows, with the start of the key there (cut short). A rough scan: strings and comments
/// are skipped, so brackets inside them do not count.
fn too_deep(text: &str) -> Option<(usize, String)> {
    let bytes = text.as_bytes();
    let mut i = 0;
    let mut depth = 0usize; // open [ and { inside a value
    let mut key_parts = 1usize;
    let mut key_start: Option<usize> = None;
    let mut in_key = true; // before `=` on a line at depth 0
    let preview = |from: usize, to: usize| -> String {
        let key = text.get(from..to).unwrap_or("").trim();
        let cut: String = key.chars().take(40).collect();
        if cut.len() < key.len() {
            format!("{cut}...")
        } else {
            cut
        }
    };
    while i < bytes.len() {
        let c = bytes[i];
        match c {
            b'"' | b'\'' => {
                let triple = bytes
                    .get(i..i + 3)
                    .is_some_and(|t| t.iter().all(|&b| b == c));
                let step = if triple { 3 } else { 1 };
                i += step;
                while i < bytes.len() {
                    if c == b'"' && bytes[i] == b'\\' {
                        i += 2;
                        continue;
                    }
                    if !triple && bytes[i] == b'\n' {
                        break;
                    }
                    if bytes[i] == c
                        && (!triple
                            || bytes
                                .get(i..i + 3)
                                .is_some_and(|t| t.iter().all(|&b| b == c)))
                    {
                        i += step;
                        break;
                    }
                    i += 1;
                }
                continue;
            }
            b'#' => {
                while i < bytes.len() && bytes[i] != b'\n' {
                    i += 1;
                }
                continue;
            }
            b'\n' if depth == 0 => {
                in_key = true;
                key_parts = 1;
                key_start = None;
            }
            b'.' if in_key => key_parts += 1,
            b'=' if in_key => in_key = false,
            b'[' | b'{' => {
                if in_key && c == b'[' {
                    // A table header: its dots count as the key's.
                    key_start.get_or_insert(i);
                } else {
                    depth += 1;
                }
            }
            b']' | b'}' if !in_key => depth = depth.saturating_sub(1),
            b' ' | b'\t' | b'\r' | b']' => {}
            _ if in_key => {
                key_start.get_or_insert(i);
            }
            _ => {}
        }
        if key_parts + depth >= NESTING_LIMIT {
            let from = key_start.unwrap_or(i);
            return Some((i, preview(from, i.min(from + 200))));
        }
        i += 1;
    }
    None
}

#[cfg(test)]
mod tests {
    /// `join` against the `format!` it replaces, on empty, plain, dotted, indexed and
    /// non-ASCII paths and keys.
    #[test]
    fn a_key_path_is_the_table_path_dot_key() {
        let parts = ["", "input", "emc.points[2]", "barrier.pri-sec", "µ", "a b"];
        for path in parts {
            for key in parts {
                let reference = if path.is_empty() {
                    key.to_string()
                } else {
                    format!("{path}.{key}")
                };
                assert_eq!(super::join(path, key), reference, "{path:?} {key:?}");
            }
        }
    }
}
