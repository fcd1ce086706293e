//! A shipped rule file's values as a static tree that `build.rs` writes into the binary,
//! and a serde `Deserializer` over it, so that a run reads a shipped table into its type
//! without parsing text. The tree holds each value as the TOML parser gives it (integers
//! as `i64`, floats as `f64`), and the deserializer hands serde the same calls the TOML
//! reader makes, so a table reads the same from its tree as from its file (a unit test
//! below and `tests/it/rule_tables.rs` hold every shipped table to that).

use serde::de::value::{BorrowedStrDeserializer, Error};
use serde::de::{self, DeserializeSeed, IntoDeserializer, Visitor};

/// One value of a shipped rule file.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Node {
    Str(&'static str),
    Int(i64),
    Float(f64),
    Bool(bool),
    Array(&'static [Node]),
    /// A table's keys and values in the order build.rs met them.
    Table(&'static [(&'static str, Node)]),
}

impl Node {
    /// The value of `key` in a table (`None` for another kind of node).
    pub fn get(&self, key: &str) -> Option<&'static Node> {
        match *self {
            Node::Table(entries) => entries.iter().find(|(k, _)| *k == key).map(|(_, v)| v),
            _ => None,
        }
    }

    /// Reads `T` from the tree, as serde would read it from the same TOML.
    pub fn read<T: de::Deserialize<'static>>(&'static self) -> Result<T, Error> {
        T::deserialize(NodeDeserializer(self))
    }

    fn kind(&self) -> de::Unexpected<'static> {
        match *self {
            Node::Str(s) => de::Unexpected::Str(s),
            Node::Int(i) => de::Unexpected::Signed(i),
            Node::Float(f) => de::Unexpected::Float(f),
            Node::Bool(b) => de::Unexpected::Bool(b),
            Node::Array(_) => de::Unexpected::Seq,
            Node::Table(_) => de::Unexpected::Map,
        }
    }
}

/// Serde's view of one node.
#[derive(Clone, Copy)]
pub struct NodeDeserializer(pub &'static Node);

impl<'de> de::Deserializer<'de> for NodeDeserializer {
    type Error = Error;

    fn deserialize_any<V: Visitor<'de>>(self, visitor: V) -> Result<V::Value, Error> {
        match *self.0 {
            Node::Str(s) => visitor.visit_borrowed_str(s),
            Node::Int(i) => visitor.visit_i64(i),
            Node::Float(f) => visitor.visit_f64(f),
            Node::Bool(b) => visitor.visit_bool(b),
            Node::Array(items) => visitor.visit_seq(Items(items.iter())),
            Node::Table(entries) => visitor.visit_map(Entries {
                entries: entries.iter(),
                value: None,
            }),
        }
    }

    /// TOML has no null: a value that is there is `Some`.
    fn deserialize_option<V: Visitor<'de>>(self, visitor: V) -> Result<V::Value, Error> {
        visitor.visit_some(self)
    }

    fn deserialize_newtype_struct<V: Visitor<'de>>(
        self,
        _name: &'static str,
        visitor: V,
    ) -> Result<V::Value, Error> {
        visitor.visit_newtype_struct(self)
    }

    /// As the TOML reader: a string is a unit variant, a table of one key the variant of
    /// that name with the key's value as its content.
    fn deserialize_enum<V: Visitor<'de>>(
        self,
        _name: &'static str,
        _variants: &'static [&'static str],
        visitor: V,
    ) -> Result<V::Value, Error> {
        match *self.0 {
            Node::Str(s) => visitor.visit_enum(s.into_deserializer()),
            Node::Table([(variant, content)]) => visitor.visit_enum(Variant { variant, content }),
            ref other => Err(de::Error::invalid_type(
                other.kind(),
                &"a string or a table of one key",
            )),
        }
    }

    serde::forward_to_deserialize_any! {
        bool i8 i16 i32 i64 i128 u8 u16 u32 u64 u128 f32 f64 char str string
        bytes byte_buf unit unit_struct seq tuple tuple_struct map struct identifier
        ignored_any
    }
}

struct Items(std::slice::Iter<'static, Node>);

impl<'de> de::SeqAccess<'de> for Items {
    type Error = Error;

    fn next_element_seed<S: DeserializeSeed<'de>>(
        &mut self,
        seed: S,
    ) -> Result<Option<S::Value>, Error> {
        self.0
            .next()
            .map(|n| seed.deserialize(NodeDeserializer(n)))
            .transpose()
    }

    fn size_hint(&self) -> Option<usize> {
        Some(self.0.len())
    }
}

struct Entries {
    entries: std::slice::Iter<'static, (&'static str, Node)>,
    value: Option<&'static Node>,
}

impl<'de> de::MapAccess<'de> for Entries {
    type Error = Error;

    fn next_key_seed<S: DeserializeSeed<'de>>(
        &mut self,
        seed: S,
    ) -> Result<Option<S::Value>, Error> {
        let Some((key, value)) = self.entries.next() else {
            return Ok(None);
        };
        self.value = Some(value);
        seed.deserialize(BorrowedStrDeserializer::new(key))
            .map(Some)
    }

    fn next_value_seed<S: DeserializeSeed<'de>>(&mut self, seed: S) -> Result<S::Value, Error> {
        match self.value.take() {
            Some(value) => seed.deserialize(NodeDeserializer(value)),
            None => Err(de::Error::custom("a value was asked for before its key")),
        }
    }

    fn size_hint(&self) -> Option<usize> {
        Some(self.entries.len())
    }
}

/// A table of one key read as an enum variant.
struct Variant {
    variant: &'static str,
    content: &'static Node,
}

impl<'de> de::EnumAccess<'de> for Variant {
    type Error = Error;
    type Variant = NodeDeserializer;

    fn variant_seed<S: DeserializeSeed<'de>>(
        self,
        seed: S,
    ) -> Result<(S::Value, NodeDeserializer), Error> {
        let variant = seed.deserialize(BorrowedStrDeserializer::<Error>::new(self.variant))?;
        Ok((variant, NodeDeserializer(self.content)))
    }
}

impl<'de> de::VariantAccess<'de> for NodeDeserializer {
    type Error = Error;

    fn unit_variant(self) -> Result<(), Error> {
        Ok(())
    }

    fn newtype_variant_seed<S: DeserializeSeed<'de>>(self, seed: S) -> Result<S::Value, Error> {
        seed.deserialize(self)
    }

    fn tuple_variant<V: Visitor<'de>>(self, _len: usize, visitor: V) -> Result<V::Value, Error> {
        de::Deserializer::deserialize_seq(self, visitor)
    }

    fn struct_variant<V: Visitor<'de>>(
        self,
        _fields: &'static [&'static str],
        visitor: V,
    ) -> Result<V::Value, Error> {
        de::Deserializer::deserialize_map(self, visitor)
    }
}

#[cfg(test)]
mod tests {
    use super::Node;

    /// Where `node` differs from `value` (kind, integer, float bits, string, key set).
    fn differs(node: &Node, value: &toml::Value, at: &str) -> Option<String> {
        match (node, value) {
            (Node::Str(a), toml::Value::String(b)) if a == b => None,
            (Node::Int(a), toml::Value::Integer(b)) if a == b => None,
            (Node::Float(a), toml::Value::Float(b)) if a.to_bits() == b.to_bits() => None,
            (Node::Bool(a), toml::Value::Boolean(b)) if a == b => None,
            (Node::Array(a), toml::Value::Array(b)) if a.len() == b.len() => a
                .iter()
                .zip(b)
                .enumerate()
                .find_map(|(i, (a, b))| differs(a, b, &format!("{at}[{}]", i + 1))),
            (Node::Table(a), toml::Value::Table(b)) if a.len() == b.len() => {
                a.iter().find_map(|(key, a)| match b.get(*key) {
                    Some(b) => differs(a, b, &format!("{at}.{key}")),
                    None => Some(format!("{at}.{key}: not in the TOML")),
                })
            }
            (a, b) => Some(format!("{at}: {a:?} in the tree, {b:?} in the TOML")),
        }
    }

    /// Every shipped table file's tree holds what the TOML parser reads from its text:
    /// the same keys, integers as integers, floats with the same bits.
    #[test]
    fn every_shipped_tree_is_the_toml_the_parser_reads() {
        let mut compared = 0;
        for rule in super::super::SHIPPED_RULES.iter().filter(|r| !r.is_checks) {
            let toml: toml::Value = toml::from_str(rule.text).expect("shipped file is TOML");
            if let Some(d) = differs(&rule.values, &toml, rule.name) {
                panic!("{d}");
            }
            // Read through serde, as any table type is: the same value as from the TOML.
            let from_tree: serde_json::Value = rule.values.read().expect("the tree reads");
            let from_toml: serde_json::Value = toml::from_str(rule.text).expect("TOML reads");
            assert_eq!(from_tree, from_toml, "{}", rule.name);
            compared += 1;
        }
        // 20 tables of IEC 60664-1 and the like, 15 of the end-product standards, retired ids.
        assert!(compared > 30, "only {compared} files compared");
    }

    #[derive(Debug, PartialEq, serde::Deserialize)]
    enum Kind {
        Plain,
        Rated { v: f64 },
        Count(u32),
    }

    #[derive(Debug, PartialEq, serde::Deserialize)]
    #[serde(deny_unknown_fields)]
    struct Sample {
        name: String,
        whole_as_float: f64,
        count: u32,
        missing: Option<f64>,
        given: Option<i64>,
        kinds: Vec<Kind>,
    }

    static SAMPLE: Node = Node::Table(&[
        ("name", Node::Str("a")),
        ("whole_as_float", Node::Int(50)),
        ("count", Node::Int(3)),
        ("given", Node::Int(-2)),
        (
            "kinds",
            Node::Array(&[
                Node::Str("Plain"),
                Node::Table(&[("Rated", Node::Table(&[("v", Node::Float(0.1))]))]),
                Node::Table(&[("Count", Node::Int(7))]),
            ]),
        ),
    ]);

    const SAMPLE_TOML: &str = r#"
name = "a"
whole_as_float = 50
count = 3
given = -2
kinds = ["Plain", { Rated = { v = 0.1 } }, { Count = 7 }]
"#;

    /// Integers into floats, options, enums in either form, unknown keys refused: each as
    /// the TOML reader does it.
    #[test]
    fn a_tree_reads_into_a_type_as_its_toml_does() {
        let from_tree: Sample = SAMPLE.read().expect("the tree reads");
        let from_toml: Sample = toml::from_str(SAMPLE_TOML).expect("the TOML reads");
        assert_eq!(from_tree, from_toml);
        assert_eq!(from_tree.whole_as_float, 50.0);
        assert_eq!(from_tree.missing, None);
        static EXTRA: Node = Node::Table(&[("name", Node::Str("a")), ("nmae", Node::Int(1))]);
        let err = EXTRA.read::<Sample>().expect_err("unknown key").to_string();
        assert!(err.contains("unknown field `nmae`"), "{err}");
        static WRONG: Node = Node::Table(&[("count", Node::Float(1.5))]);
        let err = WRONG
            .read::<Sample>()
            .expect_err("a float is no count")
            .to_string();
        assert!(err.contains("floating point `1.5`"), "{err}");
    }
}
