//! The text of a design file to a [`RawDesign`]: each table decoded on its own so that every
//! problem is reported, its keys compared with the fields of its serde struct and the nearest
//! valid key suggested for an unknown one.

use super::problem::{Problems, nearest};
use super::schema::*;
use serde::Deserialize;
use serde::de::{self, Deserializer, Visitor};
use serde::forward_to_deserialize_any;
use std::ops::Range;
use toml::Spanned;
use toml::de::{DeTable, DeValue, ValueDeserializer};

/// The field names of a serde struct, read from its derived `Deserialize` (so the list of
/// valid keys has one source).
pub(crate) fn field_names<'de, T: Deserialize<'de>>() -> &'static [&'static str] {
    struct Capture<'a>(&'a mut &'static [&'static str]);
    impl<'de> Deserializer<'de> for Capture<'_> {
        type Error = de::value::Error;
        fn deserialize_any<V: Visitor<'de>>(self, _: V) -> Result<V::Value, Self::Error> {
            Err(de::Error::custom("not a struct"))
        }
        fn deserialize_struct<V: Visitor<'de>>(
            self,
            _name: &'static str,
            fields: &'static [&'static str],
            _visitor: V,
        ) -> Result<V::Value, Self::Error> {
            *self.0 = fields;
            Err(de::Error::custom("fields captured"))
        }
        forward_to_deserialize_any! {
            bool i8 i16 i32 i64 i128 u8 u16 u32 u64 u128 f32 f64 char str string bytes
            byte_buf option unit unit_struct newtype_struct seq tuple tuple_struct map enum
            identifier ignored_any
        }
    }
    let mut fields: &'static [&'static str] = &[];
    let _ = T::deserialize(Capture(&mut fields));
    fields
}

/// Removes and reports every key of `table` that `T` does not know; reports a nested key
/// that must be a table but is not.
fn check_keys<'de, T: Deserialize<'de>>(
    table: &mut DeTable<'_>,
    what: &str,
    path: &str,
    problems: &mut Problems,
) {
    let fields = field_names::<T>();
    let unknown: Vec<(String, Range<usize>)> = table
        .iter()
        .filter(|(k, _)| !fields.contains(&k.get_ref().as_ref()))
        .map(|(k, _)| (k.get_ref().to_string(), k.span()))
        .collect();
    for (key, span) in unknown {
        let near = nearest(&key, fields);
        let help = match near {
            Some(s) => format!("did you mean `{s}`? keys of {what}: {}", fields.join(", ")),
            None => format!("keys of {what}: {}", fields.join(", ")),
        };
        if let Some(s) = near
            && !table.iter().any(|(k, _)| k.get_ref().as_ref() == s)
        {
            problems.suggested(join(path, s));
        }
        problems.push(
            "unknown-key",
            join(path, &key),
            span,
            format!("unknown key `{key}` in {what}"),
            Some(help),
        );
        remove_key(table, &key);
    }
}

fn remove_key(table: &mut DeTable<'_>, key: &str) {
    let old = std::mem::replace(table, DeTable::new());
    for (k, v) in old {
        if k.get_ref().as_ref() != key {
            table.insert(k, v);
        }
    }
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

/// Checks the keys of a nested inline table `key` of `table` against `T`; a value that is not
/// a table is reported and removed.
fn check_nested<'de, T: Deserialize<'de>>(
    table: &mut DeTable<'_>,
    key: &str,
    what: &str,
    path: &str,
    problems: &mut Problems,
) {
    let mut remove = false;
    for (k, v) in table.iter_mut() {
        if k.get_ref().as_ref() != key {
            continue;
        }
        let span = v.span();
        match v.get_mut() {
            DeValue::Table(inner) => check_keys::<T>(inner, what, &join(path, key), problems),
            other => {
                problems.push(
                    "wrong-type",
                    join(path, key),
                    span,
                    format!("`{key}` must be a table, found {}", de_kind(other)),
                    Some(format!(
                        "write it as an inline table with keys {}, e.g. {key} = {{ ... }}",
                        field_names::<T>().join(", ")
                    )),
                );
                remove = true;
            }
        }
    }
    if remove {
        remove_key(table, key);
    }
}

fn de_kind(v: &DeValue<'_>) -> &'static str {
    match v {
        DeValue::String(_) => "a string",
        DeValue::Integer(_) => "an integer",
        DeValue::Float(_) => "a number",
        DeValue::Boolean(_) => "a boolean",
        DeValue::Datetime(_) => "a date",
        DeValue::Array(_) => "an array",
        DeValue::Table(_) => "a table",
    }
}

/// Deserializes one spanned TOML value into `T`, reporting failure as a located problem.
fn decode<T: for<'de> Deserialize<'de>>(
    value: Spanned<DeValue<'_>>,
    path: &str,
    problems: &mut Problems,
) -> Option<T> {
    let span = value.span();
    match T::deserialize(ValueDeserializer::from(value)) {
        Ok(t) => Some(t),
        Err(e) => {
            let at = e.span().unwrap_or(span);
            problems.push(
                "wrong-type",
                path.to_string(),
                at,
                format!("`{path}`: {}", e.message().trim()),
                None,
            );
            None
        }
    }
}

/// Reads a design file into its raw form. Syntax errors end the reading (the rest of the file
/// cannot be trusted); every other problem found here is collected and reading goes on.
pub(crate) fn read(text: &str, problems: &mut Problems) -> Option<RawDesign> {
    let doc = match DeTable::parse(text) {
        Ok(doc) => doc,
        Err(e) => {
            let span = e.span().unwrap_or(0..0);
            problems.push(
                "syntax",
                String::new(),
                span,
                format!("TOML syntax error: {}", e.message().trim()),
                Some("see https://toml.io for the file syntax".to_string()),
            );
            return None;
        }
    };
    let mut root = doc.into_inner();
    check_keys::<RawDesign>(&mut root, "the design file", "", problems);
    let mut raw = RawDesign::default();
    for (key, value) in root {
        let key = key.into_inner();
        let key = key.as_ref();
        match key {
            "title" => raw.title = decode(value, key, problems),
            "tank" => raw.tank = table::<RawTank>(value, key, "[tank]", problems),
            "gas" => raw.gas = table::<RawGas>(value, key, "[gas]", problems),
            "terminal" => raw.terminal = table::<RawTerminal>(value, key, "[terminal]", problems),
            "multiplier" => {
                raw.multiplier = table::<RawMultiplier>(value, key, "[multiplier]", problems)
            }
            "checks" => raw.checks = table::<RawChecks>(value, key, "[checks]", problems),
            "mesh" => raw.mesh = table::<RawMesh>(value, key, "[mesh]", problems),
            "conductor" => {
                raw.conductor = array::<RawConductor>(value, key, problems, |_, _, _| {})
            }
            "dielectric" => {
                raw.dielectric = array::<RawDielectric>(value, key, problems, |_, _, _| {})
            }
            "vacuum" => raw.vacuum = array::<RawVacuum>(value, key, problems, |_, _, _| {}),
            "probe" => raw.probe = array::<RawProbe>(value, key, problems, |_, _, _| {}),
            "column" => {
                raw.column = array::<RawColumn>(value, key, problems, |t, path, problems| {
                    check_nested::<RawTubeElectrode>(
                        t,
                        "tube_electrode",
                        "tube_electrode",
                        path,
                        problems,
                    );
                    check_nested::<RawGrading>(t, "grading", "grading", path, problems);
                    check_nested::<RawProtectiveGap>(
                        t,
                        "protective_gap",
                        "protective_gap",
                        path,
                        problems,
                    );
                })
            }
            // Unknown keys were reported and removed above.
            _ => {}
        }
    }
    Some(raw)
}

/// A `[table]`: its keys checked, then decoded.
fn table<T: for<'de> Deserialize<'de>>(
    mut value: Spanned<DeValue<'_>>,
    key: &str,
    what: &str,
    problems: &mut Problems,
) -> Option<Spanned<T>> {
    let span = value.span();
    match value.get_mut() {
        DeValue::Table(t) => check_keys::<T>(t, what, key, problems),
        other => {
            problems.push(
                "wrong-type",
                key.to_string(),
                span,
                format!("`{key}` must be a table {what}, found {}", de_kind(other)),
                Some(format!("write a {what} section")),
            );
            return None;
        }
    }
    decode(value, key, problems)
}

/// A `[[table]]` array: each entry checked and decoded on its own, so one bad entry does not
/// hide the others.
fn array<T: for<'de> Deserialize<'de>>(
    value: Spanned<DeValue<'_>>,
    key: &str,
    problems: &mut Problems,
    nested: impl Fn(&mut DeTable<'_>, &str, &mut Problems),
) -> Vec<Spanned<T>> {
    let span = value.span();
    let items = match value.into_inner() {
        DeValue::Array(items) => items,
        other => {
            problems.push(
                "wrong-type",
                key.to_string(),
                span,
                format!(
                    "`{key}` must be an array of tables, found {}",
                    de_kind(&other)
                ),
                Some(format!("start each entry with a [[{key}]] header")),
            );
            return Vec::new();
        }
    };
    let what = format!("[[{key}]]");
    let mut out = Vec::new();
    for (k, mut item) in items.into_iter().enumerate() {
        let path = format!("{key}[{}]", k + 1);
        let item_span = item.span();
        match item.get_mut() {
            DeValue::Table(t) => {
                check_keys::<T>(t, &what, &path, problems);
                nested(t, &path, problems);
            }
            other => {
                problems.push(
                    "wrong-type",
                    path,
                    item_span,
                    format!(
                        "each `{key}` entry must be a table, found {}",
                        de_kind(other)
                    ),
                    Some(format!("start each entry with a [[{key}]] header")),
                );
                continue;
            }
        }
        if let Some(t) = decode::<Spanned<T>>(item, &path, problems) {
            out.push(t);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn field_names_come_from_serde() {
        assert_eq!(
            field_names::<RawTank>(),
            &["shape", "inner_radius", "length"]
        );
        assert!(field_names::<RawDesign>().contains(&"conductor"));
    }

    #[test]
    fn reads_spans_of_leaves() {
        let text = "[tank]\ninner_radius = \"550 mm\"\nlength = \"2 m\"\n";
        let mut p = Problems::default();
        let raw = read(text, &mut p).unwrap();
        assert!(p.is_empty());
        let tank = raw.tank.unwrap();
        let ir = tank.get_ref().inner_radius.as_ref().unwrap();
        assert_eq!(&text[ir.span()], "\"550 mm\"");
        assert_eq!(ir.get_ref(), &RawValue::Str("550 mm".into()));
    }

    #[test]
    fn unknown_keys_are_all_reported() {
        let text = "[tank]\ninner_raduis = \"1 m\"\nlenght = \"2 m\"\n[[probe]]\natt = 1\n";
        let mut p = Problems::default();
        let raw = read(text, &mut p).unwrap();
        assert_eq!(p.len(), 3);
        assert_eq!(raw.probe.len(), 1);
        let err = p.into_error(text, "t.toml");
        assert!(err.problems.iter().all(|q| q.code == "unknown-key"));
        assert_eq!(err.problems[0].line, 2);
        assert!(
            err.problems[0]
                .help
                .as_deref()
                .unwrap()
                .contains("`inner_radius`")
        );
    }
}
