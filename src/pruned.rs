//! A serde adaptor that serialises a value with the struct fields of given names left out,
//! at any depth (map keys are data and are always kept). The checks' context uses it to
//! leave out what no shipped check reads (derivation texts, the page's sections, the rule
//! list), which is most of the report by size; see `checks::context_omits`.

use serde::ser::{self, Serialize, Serializer};

/// `value` as it serialises, less every struct field named in `omit`.
pub struct Pruned<'a, T: ?Sized> {
    pub value: &'a T,
    pub omit: &'a [&'static str],
}

impl<T: Serialize + ?Sized> Serialize for Pruned<'_, T> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        self.value.serialize(Pruning {
            inner: serializer,
            omit: self.omit,
        })
    }
}

/// The serializer `Pruned` hands a value: forwards everything to `inner`, wrapping every
/// nested value so that the omission reaches every depth.
struct Pruning<'a, S> {
    inner: S,
    omit: &'a [&'static str],
}

/// A compound opened by `inner`, with the names to omit.
fn nested<'a, C, E>(omit: &'a [&'static str], inner: Result<C, E>) -> Result<Nested<'a, C>, E> {
    inner.map(|inner| Nested { inner, omit })
}

/// A compound being written (sequence, map, struct, ...), with the names to omit.
struct Nested<'a, C> {
    inner: C,
    omit: &'a [&'static str],
}

impl<'a, C> Nested<'a, C> {
    fn wrap<'v, T: ?Sized>(&self, value: &'v T) -> Pruned<'v, T>
    where
        'a: 'v,
    {
        Pruned {
            value,
            omit: self.omit,
        }
    }
}

macro_rules! forward_plain {
    ($($method:ident($ty:ty)),* $(,)?) => {
        $(fn $method(self, v: $ty) -> Result<S::Ok, S::Error> {
            self.inner.$method(v)
        })*
    };
}

impl<'a, S: Serializer> Serializer for Pruning<'a, S> {
    type Ok = S::Ok;
    type Error = S::Error;
    type SerializeSeq = Nested<'a, S::SerializeSeq>;
    type SerializeTuple = Nested<'a, S::SerializeTuple>;
    type SerializeTupleStruct = Nested<'a, S::SerializeTupleStruct>;
    type SerializeTupleVariant = Nested<'a, S::SerializeTupleVariant>;
    type SerializeMap = Nested<'a, S::SerializeMap>;
    type SerializeStruct = Nested<'a, S::SerializeStruct>;
    type SerializeStructVariant = Nested<'a, S::SerializeStructVariant>;

    forward_plain! {
        serialize_bool(bool),
        serialize_i8(i8),
        serialize_i16(i16),
        serialize_i32(i32),
        serialize_i64(i64),
        serialize_i128(i128),
        serialize_u8(u8),
        serialize_u16(u16),
        serialize_u32(u32),
        serialize_u64(u64),
        serialize_u128(u128),
        serialize_f32(f32),
        serialize_f64(f64),
        serialize_char(char),
        serialize_str(&str),
        serialize_bytes(&[u8]),
    }

    fn serialize_none(self) -> Result<S::Ok, S::Error> {
        self.inner.serialize_none()
    }

    fn serialize_some<T: Serialize + ?Sized>(self, value: &T) -> Result<S::Ok, S::Error> {
        let omit = self.omit;
        self.inner.serialize_some(&Pruned { value, omit })
    }

    fn serialize_unit(self) -> Result<S::Ok, S::Error> {
        self.inner.serialize_unit()
    }

    fn serialize_unit_struct(self, name: &'static str) -> Result<S::Ok, S::Error> {
        self.inner.serialize_unit_struct(name)
    }

    fn serialize_unit_variant(
        self,
        name: &'static str,
        index: u32,
        variant: &'static str,
    ) -> Result<S::Ok, S::Error> {
        self.inner.serialize_unit_variant(name, index, variant)
    }

    fn serialize_newtype_struct<T: Serialize + ?Sized>(
        self,
        name: &'static str,
        value: &T,
    ) -> Result<S::Ok, S::Error> {
        let omit = self.omit;
        self.inner
            .serialize_newtype_struct(name, &Pruned { value, omit })
    }

    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        name: &'static str,
        index: u32,
        variant: &'static str,
        value: &T,
    ) -> Result<S::Ok, S::Error> {
        let omit = self.omit;
        self.inner
            .serialize_newtype_variant(name, index, variant, &Pruned { value, omit })
    }

    fn serialize_seq(self, len: Option<usize>) -> Result<Self::SerializeSeq, S::Error> {
        nested(self.omit, self.inner.serialize_seq(len))
    }

    fn serialize_tuple(self, len: usize) -> Result<Self::SerializeTuple, S::Error> {
        nested(self.omit, self.inner.serialize_tuple(len))
    }

    fn serialize_tuple_struct(
        self,
        name: &'static str,
        len: usize,
    ) -> Result<Self::SerializeTupleStruct, S::Error> {
        nested(self.omit, self.inner.serialize_tuple_struct(name, len))
    }

    fn serialize_tuple_variant(
        self,
        name: &'static str,
        index: u32,
        variant: &'static str,
        len: usize,
    ) -> Result<Self::SerializeTupleVariant, S::Error> {
        nested(
            self.omit,
            self.inner
                .serialize_tuple_variant(name, index, variant, len),
        )
    }

    fn serialize_map(self, len: Option<usize>) -> Result<Self::SerializeMap, S::Error> {
        nested(self.omit, self.inner.serialize_map(len))
    }

    fn serialize_struct(
        self,
        name: &'static str,
        len: usize,
    ) -> Result<Self::SerializeStruct, S::Error> {
        nested(self.omit, self.inner.serialize_struct(name, len))
    }

    fn serialize_struct_variant(
        self,
        name: &'static str,
        index: u32,
        variant: &'static str,
        len: usize,
    ) -> Result<Self::SerializeStructVariant, S::Error> {
        nested(
            self.omit,
            self.inner
                .serialize_struct_variant(name, index, variant, len),
        )
    }

    fn is_human_readable(&self) -> bool {
        self.inner.is_human_readable()
    }
}

/// The compounds whose entries are values (`$add` is `serialize_element` or
/// `serialize_field`): each value wrapped, so the omission reaches it.
macro_rules! nested_values {
    ($($trait:ident::$add:ident),* $(,)?) => {
        $(impl<C: ser::$trait> ser::$trait for Nested<'_, C> {
            type Ok = C::Ok;
            type Error = C::Error;

            fn $add<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), C::Error> {
                let value = self.wrap(value);
                self.inner.$add(&value)
            }

            fn end(self) -> Result<C::Ok, C::Error> {
                self.inner.end()
            }
        })*
    };
}

nested_values! {
    SerializeSeq::serialize_element,
    SerializeTuple::serialize_element,
    SerializeTupleStruct::serialize_field,
    SerializeTupleVariant::serialize_field,
}

impl<C: ser::SerializeMap> ser::SerializeMap for Nested<'_, C> {
    type Ok = C::Ok;
    type Error = C::Error;

    fn serialize_key<T: Serialize + ?Sized>(&mut self, key: &T) -> Result<(), C::Error> {
        self.inner.serialize_key(key)
    }

    fn serialize_value<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), C::Error> {
        let value = self.wrap(value);
        self.inner.serialize_value(&value)
    }

    fn end(self) -> Result<C::Ok, C::Error> {
        self.inner.end()
    }
}

/// The compounds whose entries are named fields: a field named in `omit` is skipped.
macro_rules! nested_fields {
    ($($trait:ident),* $(,)?) => {
        $(impl<C: ser::$trait> ser::$trait for Nested<'_, C> {
            type Ok = C::Ok;
            type Error = C::Error;

            fn serialize_field<T: Serialize + ?Sized>(
                &mut self,
                key: &'static str,
                value: &T,
            ) -> Result<(), C::Error> {
                if self.omit.contains(&key) {
                    return self.inner.skip_field(key);
                }
                let value = self.wrap(value);
                self.inner.serialize_field(key, &value)
            }

            fn end(self) -> Result<C::Ok, C::Error> {
                self.inner.end()
            }
        })*
    };
}

nested_fields!(SerializeStruct, SerializeStructVariant);
