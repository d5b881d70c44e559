//! The raw design file: serde structs that mirror the TOML exactly, every value kept with its
//! byte span.
//!
//! Input: the text of a design file. Output: a [`RawDesign`] (nothing converted, nothing
//! checked beyond the key names and the table structure) plus the problems found so far.
//! Leaves are [`RawValue`]s, so a number where a string is due, or a missing key, is reported
//! by `validate` with a message that knows what the key means, and every such problem is
//! reported, not only the first. Unknown keys are found here: each table's keys are compared
//! with the fields of its serde struct (`deny_unknown_fields` stays on as a safety net), and
//! the nearest valid key is suggested.

use super::problem::{Problems, nearest};
use serde::de::{self, Deserializer, MapAccess, SeqAccess, Visitor};
use serde::{Deserialize, forward_to_deserialize_any};
use std::fmt;
use std::ops::Range;
use toml::Spanned;
use toml::de::{DeTable, DeValue, ValueDeserializer};

/// A value as written, before it is interpreted.
#[derive(Debug, Clone, PartialEq)]
pub enum RawValue {
    Str(String),
    Int(i64),
    Float(f64),
    Bool(bool),
    Array(Vec<Spanned<RawValue>>),
    /// An inline or standard table, with its keys in file order.
    Table(Vec<(Spanned<String>, Spanned<RawValue>)>),
    /// A TOML date or time (never valid in a design file).
    Datetime,
}

impl RawValue {
    /// What kind of TOML value this is, for messages.
    pub fn kind(&self) -> &'static str {
        match self {
            RawValue::Str(_) => "a string",
            RawValue::Int(_) => "an integer",
            RawValue::Float(_) => "a number",
            RawValue::Bool(_) => "a boolean",
            RawValue::Array(_) => "an array",
            RawValue::Table(_) => "a table",
            RawValue::Datetime => "a date",
        }
    }

    /// The value as it might appear in the file, for messages.
    pub fn show(&self) -> String {
        match self {
            RawValue::Str(s) => format!("\"{s}\""),
            RawValue::Int(i) => i.to_string(),
            RawValue::Float(x) => x.to_string(),
            RawValue::Bool(b) => b.to_string(),
            RawValue::Array(items) => {
                let inner: Vec<String> = items.iter().map(|v| v.get_ref().show()).collect();
                format!("[{}]", inner.join(", "))
            }
            RawValue::Table(_) => "{ ... }".to_string(),
            RawValue::Datetime => "a date".to_string(),
        }
    }
}

const DATETIME_KEY: &str = "$__toml_private_datetime";

impl<'de> Deserialize<'de> for RawValue {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawValue;
            fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str("a TOML value")
            }
            fn visit_bool<E: de::Error>(self, v: bool) -> Result<RawValue, E> {
                Ok(RawValue::Bool(v))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawValue, E> {
                Ok(RawValue::Int(v))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawValue, E> {
                Ok(i64::try_from(v).map_or(RawValue::Float(v as f64), RawValue::Int))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<RawValue, E> {
                Ok(RawValue::Float(v))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawValue, E> {
                Ok(RawValue::Str(v.to_string()))
            }
            fn visit_string<E: de::Error>(self, v: String) -> Result<RawValue, E> {
                Ok(RawValue::Str(v))
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<RawValue, A::Error> {
                let mut items = Vec::new();
                while let Some(item) = seq.next_element::<Spanned<RawValue>>()? {
                    items.push(item);
                }
                Ok(RawValue::Array(items))
            }
            fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<RawValue, A::Error> {
                let mut entries = Vec::new();
                while let Some(key) = map.next_key::<Spanned<String>>()? {
                    if key.get_ref() == DATETIME_KEY {
                        let _ignored: de::IgnoredAny = map.next_value()?;
                        return Ok(RawValue::Datetime);
                    }
                    let value = map.next_value::<Spanned<RawValue>>()?;
                    entries.push((key, value));
                }
                Ok(RawValue::Table(entries))
            }
        }
        deserializer.deserialize_any(V)
    }
}

/// An optional leaf value.
pub type Leaf = Option<Spanned<RawValue>>;

/// The whole file. Top-level keys and `[[table]]` arrays, as written.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawDesign {
    pub title: Leaf,
    pub tank: Option<Spanned<RawTank>>,
    pub gas: Option<Spanned<RawGas>>,
    pub terminal: Option<Spanned<RawTerminal>>,
    #[serde(default)]
    pub conductor: Vec<Spanned<RawConductor>>,
    #[serde(default)]
    pub dielectric: Vec<Spanned<RawDielectric>>,
    #[serde(default)]
    pub vacuum: Vec<Spanned<RawVacuum>>,
    #[serde(default)]
    pub column: Vec<Spanned<RawColumn>>,
    pub multiplier: Option<Spanned<RawMultiplier>>,
    pub checks: Option<Spanned<RawChecks>>,
    pub mesh: Option<Spanned<RawMesh>>,
    #[serde(default)]
    pub probe: Vec<Spanned<RawProbe>>,
}

/// `[tank]`: a closed cylinder (`inner_radius`, `length`) or `shape = "sphere"`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawTank {
    pub shape: Leaf,
    pub inner_radius: Leaf,
    pub length: Leaf,
}

/// `[gas]`: species (a name or a mixture table of mole fractions), absolute pressure,
/// temperature, and optionally the lowest temperature the machine sees (`min_temperature`,
/// for the condensation check).
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawGas {
    pub species: Leaf,
    pub pressure: Leaf,
    pub temperature: Leaf,
    pub min_temperature: Leaf,
}

/// `[terminal]`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawTerminal {
    pub voltage: Leaf,
}

/// The keys that describe a shape, shared by conductors, dielectrics and vacuum regions.
#[derive(Debug, Default, Clone)]
pub struct RawShape {
    pub shape: Leaf,
    pub center_z: Leaf,
    pub radius: Leaf,
    pub major_radius: Leaf,
    pub minor_radius: Leaf,
    pub r: Leaf,
    pub z: Leaf,
    pub corner_radius: Leaf,
    pub thickness: Leaf,
    pub points: Leaf,
    pub fillet: Leaf,
    pub file: Leaf,
    pub layer: Leaf,
    pub handle: Leaf,
    pub index: Leaf,
    pub units: Leaf,
    pub axis: Leaf,
    pub origin: Leaf,
}

/// `[[conductor]]`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawConductor {
    pub name: Leaf,
    pub potential: Leaf,
    pub shape: Leaf,
    pub center_z: Leaf,
    pub radius: Leaf,
    pub major_radius: Leaf,
    pub minor_radius: Leaf,
    pub r: Leaf,
    pub z: Leaf,
    pub corner_radius: Leaf,
    pub thickness: Leaf,
    pub points: Leaf,
    pub fillet: Leaf,
    pub file: Leaf,
    pub layer: Leaf,
    pub handle: Leaf,
    pub index: Leaf,
    pub units: Leaf,
    pub axis: Leaf,
    pub origin: Leaf,
}

/// `[[dielectric]]`: `material` from the built-in table, or `eps_r`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawDielectric {
    pub name: Leaf,
    pub material: Leaf,
    pub eps_r: Leaf,
    pub shape: Leaf,
    pub center_z: Leaf,
    pub radius: Leaf,
    pub major_radius: Leaf,
    pub minor_radius: Leaf,
    pub r: Leaf,
    pub z: Leaf,
    pub corner_radius: Leaf,
    pub thickness: Leaf,
    pub points: Leaf,
    pub fillet: Leaf,
    pub file: Leaf,
    pub layer: Leaf,
    pub handle: Leaf,
    pub index: Leaf,
    pub units: Leaf,
    pub axis: Leaf,
    pub origin: Leaf,
}

/// `[[vacuum]]`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawVacuum {
    pub name: Leaf,
    pub shape: Leaf,
    pub center_z: Leaf,
    pub radius: Leaf,
    pub major_radius: Leaf,
    pub minor_radius: Leaf,
    pub r: Leaf,
    pub z: Leaf,
    pub corner_radius: Leaf,
    pub thickness: Leaf,
    pub points: Leaf,
    pub fillet: Leaf,
    pub file: Leaf,
    pub layer: Leaf,
    pub handle: Leaf,
    pub index: Leaf,
    pub units: Leaf,
    pub axis: Leaf,
    pub origin: Leaf,
}

macro_rules! shape_of {
    ($t:ty) => {
        impl $t {
            /// The shape keys of this table.
            pub fn shape_keys(&self) -> RawShape {
                RawShape {
                    shape: self.shape.clone(),
                    center_z: self.center_z.clone(),
                    radius: self.radius.clone(),
                    major_radius: self.major_radius.clone(),
                    minor_radius: self.minor_radius.clone(),
                    r: self.r.clone(),
                    z: self.z.clone(),
                    corner_radius: self.corner_radius.clone(),
                    thickness: self.thickness.clone(),
                    points: self.points.clone(),
                    fillet: self.fillet.clone(),
                    file: self.file.clone(),
                    layer: self.layer.clone(),
                    handle: self.handle.clone(),
                    index: self.index.clone(),
                    units: self.units.clone(),
                    axis: self.axis.clone(),
                    origin: self.origin.clone(),
                }
            }
        }
    };
}
shape_of!(RawConductor);
shape_of!(RawDielectric);
shape_of!(RawVacuum);

/// `[[column]]`: a generator of grading electrodes between two conductors.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawColumn {
    pub name: Leaf,
    pub from: Leaf,
    pub to: Leaf,
    pub electrodes: Leaf,
    pub z_first: Leaf,
    pub pitch: Leaf,
    pub shape: Leaf,
    pub major_radius: Leaf,
    pub minor_radius: Leaf,
    pub tube_electrode: Option<Spanned<RawTubeElectrode>>,
    pub grading: Option<Spanned<RawGrading>>,
    pub protective_gap: Option<Spanned<RawProtectiveGap>>,
    /// Insulator leakage across each gap: "auto" (from the insulators' materials), "none",
    /// or a resistance per gap.
    pub leakage: Leaf,
    /// Current drawn to ground at each electrode (beam loss, corona): one current for every
    /// electrode, or an array with one per electrode.
    pub node_current: Leaf,
}

/// `tube_electrode = { r = [r0, r1], thickness = "..", corner_radius = ".." }`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawTubeElectrode {
    pub r: Leaf,
    pub thickness: Leaf,
    pub corner_radius: Leaf,
}

/// `grading = { resistor = "..", tolerance = "1 %", strings = 1, rating = "..",
/// power_rating = "..", impulse_rating = ".." }`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawGrading {
    pub resistor: Leaf,
    pub tolerance: Leaf,
    pub strings: Leaf,
    /// Voltage rating of one resistor.
    pub rating: Leaf,
    /// Dissipation rating of one resistor.
    pub power_rating: Leaf,
    /// Short-pulse (impulse) voltage rating of one resistor, for the spark transient.
    pub impulse_rating: Leaf,
}

/// `protective_gap = { firing = "..", band = "10 %", span = 1 }`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawProtectiveGap {
    pub firing: Leaf,
    /// Half-width of the firing band.
    pub band: Leaf,
    /// Gaps bridged by each protective gap (1 = one across every gap).
    pub span: Leaf,
    /// Voltage a fired gap falls to before its arc goes out (the arc-sustaining floor).
    pub arc_floor: Leaf,
}

/// `[multiplier]`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawMultiplier {
    pub topology: Leaf,
    pub stages: Leaf,
    pub stage_capacitance: Leaf,
    pub drive_frequency: Leaf,
    pub drive_peak: Leaf,
    pub load_current: Leaf,
    pub stray_capacitance: Leaf,
}

/// `[checks]`: the design factor and overrides of built-in limits.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawChecks {
    pub design_factor: Leaf,
    pub gas_field_limit: Leaf,
    pub area_derating: Leaf,
    pub vacuum_field_limit: Leaf,
    pub cranberg_constant: Leaf,
    pub insulator_vacuum_limit: Leaf,
    pub insulator_gas_fraction: Leaf,
    pub corona_surface_factor: Leaf,
}

/// `[mesh]`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawMesh {
    pub cell: Leaf,
    pub max_cell: Leaf,
    pub growth: Leaf,
    pub accuracy: Leaf,
}

/// `[[probe]]`.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawProbe {
    pub name: Leaf,
    pub at: Leaf,
}

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
