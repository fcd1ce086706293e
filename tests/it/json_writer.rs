//! gapwarden's JSON writer (`src/report/json.rs`) against serde_json's pretty printer, the
//! reference it replaces: serde_json with a formatter that makes gapwarden's two changes
//! (negative zero prints as 0; DEL and the characters `text::is_hazardous` names become
//! `\uXXXX` escapes). Every fixture and example that evaluates, and generated values with
//! every kind of character, nesting and number, must come out the same to the byte.

use std::collections::BTreeMap;
use std::io::Write;

use gapwarden::diag::Source;
use gapwarden::report::{check_source, to_json};
use proptest::prelude::*;
use serde::Serialize;

use crate::common::{project_files, root};

/// serde_json's pretty printer with gapwarden's two changes, as it was written before the
/// JSON writer replaced it.
struct Reference<'a>(serde_json::ser::PrettyFormatter<'a>);

macro_rules! forward {
    ($($method:ident($($arg:ident: $ty:ty),*)),* $(,)?) => {
        $(fn $method<W: ?Sized + Write>(&mut self, w: &mut W $(, $arg: $ty)*) -> std::io::Result<()> {
            self.0.$method(w $(, $arg)*)
        })*
    };
}

impl serde_json::ser::Formatter for Reference<'_> {
    fn write_f64<W: ?Sized + Write>(&mut self, w: &mut W, v: f64) -> std::io::Result<()> {
        self.0.write_f64(w, if v == 0.0 { 0.0 } else { v })
    }
    fn write_f32<W: ?Sized + Write>(&mut self, w: &mut W, v: f32) -> std::io::Result<()> {
        self.0.write_f32(w, if v == 0.0 { 0.0 } else { v })
    }
    fn write_string_fragment<W: ?Sized + Write>(
        &mut self,
        w: &mut W,
        fragment: &str,
    ) -> std::io::Result<()> {
        for c in fragment.chars() {
            if gapwarden::text::is_hazardous(c) {
                let mut units = [0u16; 2];
                for unit in c.encode_utf16(&mut units) {
                    write!(w, "\\u{unit:04x}")?;
                }
            } else {
                w.write_all(c.encode_utf8(&mut [0u8; 4]).as_bytes())?;
            }
        }
        Ok(())
    }
    forward! {
        begin_array(),
        end_array(),
        begin_array_value(first: bool),
        end_array_value(),
        begin_object(),
        end_object(),
        begin_object_key(first: bool),
        begin_object_value(),
        end_object_value(),
    }
}

fn reference<T: Serialize + ?Sized>(value: &T) -> String {
    let mut bytes = Vec::new();
    let mut ser = serde_json::Serializer::with_formatter(
        &mut bytes,
        Reference(serde_json::ser::PrettyFormatter::new()),
    );
    value.serialize(&mut ser).expect("serde_json writes it");
    let mut text = String::from_utf8(bytes).expect("serde_json writes UTF-8");
    text.push('\n');
    text
}

#[test]
fn every_fixture_and_example_is_written_as_serde_json_writes_it() {
    let rules = gapwarden::rules::RuleBook::shipped().expect("the shipped rules load");
    let mut files = Vec::new();
    project_files(&root().join("tests/fixtures"), &mut files);
    project_files(&root().join("examples"), &mut files);
    let mut written = 0;
    for path in &files {
        let Ok(text) = std::fs::read_to_string(path) else {
            continue;
        };
        let Ok(report) = check_source(&Source::new(path.display().to_string(), text), &rules)
        else {
            continue;
        };
        let ours = to_json(&report);
        assert!(
            ours == reference(&report),
            "{} is written differently from serde_json",
            path.display()
        );
        written += 1;
    }
    assert!(written >= 30, "only {written} reports were compared");
}

/// Every shape serde gives a writer: structs, enums of each kind, maps with string and
/// number keys, options, tuples, empty containers, and numbers of each type.
#[derive(Debug, Clone, Serialize)]
enum Shape {
    Unit,
    Newtype(f64),
    Tuple(i64, String),
    Struct { text: String, items: Vec<f64> },
}

#[derive(Debug, Clone, Serialize)]
struct Sample {
    text: String,
    figure: f64,
    single: f32,
    count: u64,
    signed: i32,
    flag: bool,
    maybe: Option<String>,
    list: Vec<String>,
    empty: Vec<u8>,
    pair: (u8, char),
    shapes: Vec<Shape>,
    by_name: BTreeMap<String, f64>,
    by_number: BTreeMap<i16, Vec<Shape>>,
    nested: Vec<Vec<Option<bool>>>,
}

/// Characters that each take a different way through the writer.
const CHARACTERS: &[char] = &[
    'a',
    ' ',
    '~',
    '"',
    '\\',
    '/',
    '\n',
    '\r',
    '\t',
    '\u{8}',
    '\u{c}',
    '\u{0}',
    '\u{1b}',
    '\u{1f}',
    '\u{7f}',
    '\u{80}',
    '\u{85}',
    '\u{9f}',
    '\u{a0}',
    '\u{ad}',
    'µ',
    'é',
    '–',
    '\u{200b}',
    '\u{202e}',
    '\u{2066}',
    '\u{feff}',
    '日',
    '😀',
    '\u{e0001}',
    '\u{10ffff}',
];

fn text() -> impl Strategy<Value = String> {
    prop_oneof![
        proptest::collection::vec(proptest::sample::select(CHARACTERS), 0..40)
            .prop_map(|c| c.into_iter().collect()),
        ".{0,40}",
    ]
}

fn number() -> impl Strategy<Value = f64> {
    prop_oneof![
        any::<f64>(),
        Just(-0.0),
        Just(f64::NAN),
        Just(f64::NEG_INFINITY),
        -1e6..1e6f64,
    ]
}

fn shape() -> impl Strategy<Value = Shape> {
    prop_oneof![
        Just(Shape::Unit),
        number().prop_map(Shape::Newtype),
        (any::<i64>(), text()).prop_map(|(n, t)| Shape::Tuple(n, t)),
        (text(), proptest::collection::vec(number(), 0..3))
            .prop_map(|(text, items)| Shape::Struct { text, items }),
    ]
}

fn sample() -> impl Strategy<Value = Sample> {
    (
        (
            text(),
            number(),
            any::<f32>(),
            any::<u64>(),
            any::<i32>(),
            any::<bool>(),
        ),
        (
            proptest::option::of(text()),
            proptest::collection::vec(text(), 0..3),
            (any::<u8>(), any::<char>()),
            proptest::collection::vec(shape(), 0..4),
        ),
        (
            proptest::collection::btree_map(text(), number(), 0..3),
            proptest::collection::btree_map(
                any::<i16>(),
                proptest::collection::vec(shape(), 0..2),
                0..3,
            ),
            proptest::collection::vec(
                proptest::collection::vec(proptest::option::of(any::<bool>()), 0..3),
                0..3,
            ),
        ),
    )
        .prop_map(
            |(
                (text, figure, single, count, signed, flag),
                (maybe, list, pair, shapes),
                (by_name, by_number, nested),
            )| {
                Sample {
                    text,
                    figure,
                    single,
                    count,
                    signed,
                    flag,
                    maybe,
                    list,
                    empty: Vec::new(),
                    pair,
                    shapes,
                    by_name,
                    by_number,
                    nested,
                }
            },
        )
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 512, .. ProptestConfig::default() })]

    #[test]
    fn generated_values_are_written_as_serde_json_writes_them(value in sample()) {
        prop_assert_eq!(to_json(&value), reference(&value));
    }

    #[test]
    fn json_values_are_written_as_serde_json_writes_them(text in text(), x in number()) {
        let value = serde_json::json!({ "text": text, "x": x, "list": [text, x, null, [], {}] });
        prop_assert_eq!(to_json(&value), reference(&value));
    }
}

/// Arrays and objects nested from 0 to 40 deep, several items at each level: the newline
/// (with the comma before every item but the first) is written from a run of spaces down
/// to 31 levels and one space at a time deeper; both must come out as serde_json writes.
#[test]
fn deep_nesting_is_written_as_serde_json_writes_it() {
    let mut compared = 0;
    for depth in 0..=40 {
        for width in 1..=3 {
            let mut array = serde_json::json!("leaf");
            let mut object = serde_json::json!(1.5);
            for level in 0..depth {
                let mut items = vec![array];
                let mut fields = serde_json::Map::new();
                fields.insert("first".to_string(), object);
                for k in 1..width {
                    items.push(serde_json::json!([]));
                    items.push(serde_json::json!({ "n": level, "k": k }));
                    fields.insert(format!("more{k}"), serde_json::json!([k, {}, "x"]));
                }
                array = serde_json::Value::Array(items);
                object = serde_json::Value::Object(fields);
            }
            for value in [&array, &object] {
                assert_eq!(
                    to_json(value),
                    reference(value),
                    "depth {depth}, width {width}"
                );
                compared += 1;
            }
        }
    }
    assert_eq!(compared, 41 * 3 * 2);
}
