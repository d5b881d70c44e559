//! The last guard before a report is rendered or written: no NaN or infinity may reach a
//! table or a JSON file.
//!
//! Input: any `Serialize` value (the `Report`). Output: `Ok(())`, or [`NotFinite`] with the
//! path of every non-finite number (`conductors[3].peak_surface_field_v_per_m`). The value is
//! walked through its own `Serialize` implementation, the same one the JSON writer uses, so a
//! field added to the report later is covered without change here. (Serialising to a
//! `serde_json::Value` first would not do: serde_json writes NaN and infinity as `null`, which
//! cannot be told apart from an absent optional value.)

use serde::Serialize;
use serde::ser::{self, Impossible};
use std::fmt;

/// Numbers in a report that are not finite, by path.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error(
    "the report is withheld: {} {} not finite ({}); this is a fault in the computation, not in the design file",
    paths.len(),
    if paths.len() == 1 { "value is" } else { "values are" },
    paths.join(", ")
)]
pub struct NotFinite {
    pub paths: Vec<String>,
}

/// Refuses `value` when any number in it is NaN or infinite.
pub fn ensure_finite<T: Serialize + ?Sized>(value: &T) -> Result<(), NotFinite> {
    let mut paths = Vec::new();
    let walked = value.serialize(Walker {
        path: String::new(),
        bad: &mut paths,
    });
    if let Err(e) = walked {
        // The walker itself never fails; a value whose `Serialize` does is reported as such.
        paths.push(format!("(value could not be walked: {e})"));
    }
    if paths.is_empty() {
        Ok(())
    } else {
        Err(NotFinite { paths })
    }
}

#[derive(Debug)]
struct WalkError(String);

impl fmt::Display for WalkError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for WalkError {}

impl ser::Error for WalkError {
    fn custom<T: fmt::Display>(msg: T) -> Self {
        WalkError(msg.to_string())
    }
}

/// Serialises nothing; records the path of every non-finite float.
struct Walker<'a> {
    path: String,
    bad: &'a mut Vec<String>,
}

impl<'a> Walker<'a> {
    fn float(self, v: f64) -> Result<(), WalkError> {
        if !v.is_finite() {
            let path = if self.path.is_empty() {
                "(top level)".to_string()
            } else {
                self.path
            };
            self.bad.push(format!("{path} = {v}"));
        }
        Ok(())
    }

    fn compound(self) -> Compound<'a> {
        Compound {
            path: self.path,
            bad: self.bad,
            index: 0,
            key: None,
        }
    }
}

fn join(path: &str, field: &str) -> String {
    if path.is_empty() {
        field.to_string()
    } else {
        format!("{path}.{field}")
    }
}

/// A sequence, map or struct being walked.
struct Compound<'a> {
    path: String,
    bad: &'a mut Vec<String>,
    index: usize,
    key: Option<String>,
}

impl Compound<'_> {
    fn element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
        let path = format!("{}[{}]", self.path, self.index);
        self.index += 1;
        value.serialize(Walker {
            path,
            bad: self.bad,
        })
    }

    fn field<T: Serialize + ?Sized>(&mut self, name: &str, value: &T) -> Result<(), WalkError> {
        value.serialize(Walker {
            path: join(&self.path, name),
            bad: self.bad,
        })
    }
}

macro_rules! ok_scalars {
    ($($name:ident: $ty:ty),* $(,)?) => {
        $(fn $name(self, _v: $ty) -> Result<(), WalkError> { Ok(()) })*
    };
}

impl<'a> ser::Serializer for Walker<'a> {
    type Ok = ();
    type Error = WalkError;
    type SerializeSeq = Compound<'a>;
    type SerializeTuple = Compound<'a>;
    type SerializeTupleStruct = Compound<'a>;
    type SerializeTupleVariant = Compound<'a>;
    type SerializeMap = Compound<'a>;
    type SerializeStruct = Compound<'a>;
    type SerializeStructVariant = Compound<'a>;

    ok_scalars!(
        serialize_bool: bool,
        serialize_i8: i8,
        serialize_i16: i16,
        serialize_i32: i32,
        serialize_i64: i64,
        serialize_i128: i128,
        serialize_u8: u8,
        serialize_u16: u16,
        serialize_u32: u32,
        serialize_u64: u64,
        serialize_u128: u128,
        serialize_char: char,
        serialize_str: &str,
        serialize_bytes: &[u8],
    );

    fn serialize_f32(self, v: f32) -> Result<(), WalkError> {
        self.float(f64::from(v))
    }

    fn serialize_f64(self, v: f64) -> Result<(), WalkError> {
        self.float(v)
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

    fn serialize_unit_struct(self, _name: &'static str) -> Result<(), WalkError> {
        Ok(())
    }

    fn serialize_unit_variant(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
    ) -> Result<(), WalkError> {
        Ok(())
    }

    fn serialize_newtype_struct<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        value: &T,
    ) -> Result<(), WalkError> {
        value.serialize(self)
    }

    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        value: &T,
    ) -> Result<(), WalkError> {
        value.serialize(Walker {
            path: join(&self.path, variant),
            bad: self.bad,
        })
    }

    fn serialize_seq(self, _len: Option<usize>) -> Result<Compound<'a>, WalkError> {
        Ok(self.compound())
    }

    fn serialize_tuple(self, _len: usize) -> Result<Compound<'a>, WalkError> {
        Ok(self.compound())
    }

    fn serialize_tuple_struct(
        self,
        _name: &'static str,
        _len: usize,
    ) -> Result<Compound<'a>, WalkError> {
        Ok(self.compound())
    }

    fn serialize_tuple_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        _len: usize,
    ) -> Result<Compound<'a>, WalkError> {
        let path = join(&self.path, variant);
        Ok(Walker {
            path,
            bad: self.bad,
        }
        .compound())
    }

    fn serialize_map(self, _len: Option<usize>) -> Result<Compound<'a>, WalkError> {
        Ok(self.compound())
    }

    fn serialize_struct(self, _name: &'static str, _len: usize) -> Result<Compound<'a>, WalkError> {
        Ok(self.compound())
    }

    fn serialize_struct_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        _len: usize,
    ) -> Result<Compound<'a>, WalkError> {
        let path = join(&self.path, variant);
        Ok(Walker {
            path,
            bad: self.bad,
        }
        .compound())
    }
}

impl ser::SerializeSeq for Compound<'_> {
    type Ok = ();
    type Error = WalkError;
    fn serialize_element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
        self.element(value)
    }
    fn end(self) -> Result<(), WalkError> {
        Ok(())
    }
}

impl ser::SerializeTuple for Compound<'_> {
    type Ok = ();
    type Error = WalkError;
    fn serialize_element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
        self.element(value)
    }
    fn end(self) -> Result<(), WalkError> {
        Ok(())
    }
}

impl ser::SerializeTupleStruct for Compound<'_> {
    type Ok = ();
    type Error = WalkError;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
        self.element(value)
    }
    fn end(self) -> Result<(), WalkError> {
        Ok(())
    }
}

impl ser::SerializeTupleVariant for Compound<'_> {
    type Ok = ();
    type Error = WalkError;
    fn serialize_field<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
        self.element(value)
    }
    fn end(self) -> Result<(), WalkError> {
        Ok(())
    }
}

impl ser::SerializeMap for Compound<'_> {
    type Ok = ();
    type Error = WalkError;
    fn serialize_key<T: Serialize + ?Sized>(&mut self, key: &T) -> Result<(), WalkError> {
        let mut name = None;
        key.serialize(KeyName(&mut name))?;
        self.key = Some(name.unwrap_or_else(|| format!("<key {}>", self.index)));
        self.index += 1;
        Ok(())
    }
    fn serialize_value<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), WalkError> {
        let name = self.key.take().unwrap_or_default();
        self.field(&name, value)
    }
    fn end(self) -> Result<(), WalkError> {
        Ok(())
    }
}

impl ser::SerializeStruct for Compound<'_> {
    type Ok = ();
    type Error = WalkError;
    fn serialize_field<T: Serialize + ?Sized>(
        &mut self,
        key: &'static str,
        value: &T,
    ) -> Result<(), WalkError> {
        self.field(key, value)
    }
    fn end(self) -> Result<(), WalkError> {
        Ok(())
    }
}

impl ser::SerializeStructVariant for Compound<'_> {
    type Ok = ();
    type Error = WalkError;
    fn serialize_field<T: Serialize + ?Sized>(
        &mut self,
        key: &'static str,
        value: &T,
    ) -> Result<(), WalkError> {
        self.field(key, value)
    }
    fn end(self) -> Result<(), WalkError> {
        Ok(())
    }
}

/// Reads a map key as text (strings, numbers, characters and unit variants); other keys are
/// named by their position.
struct KeyName<'a>(&'a mut Option<String>);

macro_rules! key_as_text {
    ($($name:ident: $ty:ty),* $(,)?) => {
        $(fn $name(self, v: $ty) -> Result<(), WalkError> {
            *self.0 = Some(v.to_string());
            Ok(())
        })*
    };
}

impl ser::Serializer for KeyName<'_> {
    type Ok = ();
    type Error = WalkError;
    type SerializeSeq = Impossible<(), WalkError>;
    type SerializeTuple = Impossible<(), WalkError>;
    type SerializeTupleStruct = Impossible<(), WalkError>;
    type SerializeTupleVariant = Impossible<(), WalkError>;
    type SerializeMap = Impossible<(), WalkError>;
    type SerializeStruct = Impossible<(), WalkError>;
    type SerializeStructVariant = Impossible<(), WalkError>;

    key_as_text!(
        serialize_bool: bool,
        serialize_i8: i8,
        serialize_i16: i16,
        serialize_i32: i32,
        serialize_i64: i64,
        serialize_i128: i128,
        serialize_u8: u8,
        serialize_u16: u16,
        serialize_u32: u32,
        serialize_u64: u64,
        serialize_u128: u128,
        serialize_f32: f32,
        serialize_f64: f64,
        serialize_char: char,
        serialize_str: &str,
    );

    fn serialize_bytes(self, _v: &[u8]) -> Result<(), WalkError> {
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
    fn serialize_unit_struct(self, _name: &'static str) -> Result<(), WalkError> {
        Ok(())
    }
    fn serialize_unit_variant(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
    ) -> Result<(), WalkError> {
        *self.0 = Some(variant.to_string());
        Ok(())
    }
    fn serialize_newtype_struct<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        value: &T,
    ) -> Result<(), WalkError> {
        value.serialize(self)
    }
    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _name: &'static str,
        _index: u32,
        variant: &'static str,
        _value: &T,
    ) -> Result<(), WalkError> {
        *self.0 = Some(variant.to_string());
        Ok(())
    }
    fn serialize_seq(self, _len: Option<usize>) -> Result<Self::SerializeSeq, WalkError> {
        Err(ser::Error::custom("a sequence as a map key"))
    }
    fn serialize_tuple(self, _len: usize) -> Result<Self::SerializeTuple, WalkError> {
        Err(ser::Error::custom("a tuple as a map key"))
    }
    fn serialize_tuple_struct(
        self,
        _name: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeTupleStruct, WalkError> {
        Err(ser::Error::custom("a tuple struct as a map key"))
    }
    fn serialize_tuple_variant(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeTupleVariant, WalkError> {
        Err(ser::Error::custom("a tuple variant as a map key"))
    }
    fn serialize_map(self, _len: Option<usize>) -> Result<Self::SerializeMap, WalkError> {
        Err(ser::Error::custom("a map as a map key"))
    }
    fn serialize_struct(
        self,
        _name: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeStruct, WalkError> {
        Err(ser::Error::custom("a struct as a map key"))
    }
    fn serialize_struct_variant(
        self,
        _name: &'static str,
        _index: u32,
        _variant: &'static str,
        _len: usize,
    ) -> Result<Self::SerializeStructVariant, WalkError> {
        Err(ser::Error::custom("a struct variant as a map key"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::collections::BTreeMap;

    #[derive(Serialize)]
    struct Row {
        name: String,
        peak: f64,
        at: [f64; 2],
        error: Option<f64>,
    }

    #[derive(Serialize)]
    enum Kind {
        Fit { slope: f32 },
        Pair(f64, f64),
    }

    #[derive(Serialize)]
    struct Doc {
        rows: Vec<Row>,
        by_name: BTreeMap<String, f64>,
        kind: Kind,
        other: Kind,
        count: usize,
    }

    fn doc() -> Doc {
        Doc {
            rows: vec![
                Row {
                    name: "a".into(),
                    peak: 1.0,
                    at: [0.0, 1.0],
                    error: None,
                },
                Row {
                    name: "b".into(),
                    peak: 2.0,
                    at: [0.5, 1.5],
                    error: Some(0.1),
                },
            ],
            by_name: BTreeMap::from([("x".to_string(), 1.0)]),
            kind: Kind::Fit { slope: 2.0 },
            other: Kind::Pair(1.0, 2.0),
            count: 3,
        }
    }

    #[test]
    fn finite_values_pass() {
        assert_eq!(ensure_finite(&doc()), Ok(()));
    }

    #[test]
    fn every_non_finite_number_is_named_by_its_path() {
        let mut d = doc();
        d.rows[1].peak = f64::NAN;
        d.rows[0].at[1] = f64::INFINITY;
        d.rows[1].error = Some(f64::NEG_INFINITY);
        d.by_name.insert("y".into(), f64::NAN);
        d.kind = Kind::Fit { slope: f32::NAN };
        d.other = Kind::Pair(1.0, f64::INFINITY);
        let e = ensure_finite(&d).unwrap_err();
        assert_eq!(
            e.paths,
            [
                "rows[0].at[1] = inf",
                "rows[1].peak = NaN",
                "rows[1].error = -inf",
                "by_name.y = NaN",
                "kind.Fit.slope = NaN",
                "other.Pair[1] = inf",
            ]
        );
        assert!(e.to_string().contains("6 values are not finite"), "{e}");
    }

    #[test]
    fn a_bare_number_is_checked_too() {
        assert!(ensure_finite(&f64::NAN).is_err());
        assert!(ensure_finite(&1.0).is_ok());
    }
}
