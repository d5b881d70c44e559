//! Built-in material tables and defaults read by several stages: relative permittivities of
//! common high-voltage insulators, their volume resistivities, and the default firing band of a
//! protective gap.
//!
//! Input: a material name from `[[dielectric]] material = "..."`. Output: the ε_r used for the
//! field solution, the published range it stands for, where the value comes from and how sure
//! it is. Values follow the permittivity table of the project's references (docs/references.md §11):
//! where the table gives a typical value that value is used, otherwise the midpoint of the
//! published range, and the range is kept beside it so reports can show it. ε_r depends on
//! frequency and temperature; for long-time DC fields in composite insulation the conductivity
//! ratio, not the permittivity, decides (see the same section), which the reports state.

use std::fmt;

/// Default half-width of the firing band of a protective gap, as a fraction of its nominal
/// firing voltage (common practice, no source: firing drifts with pressure and erosion,
/// docs/practice.md §2.3).
pub const DEFAULT_FIRING_BAND: f64 = 0.1;

/// How far a value can be trusted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// Seen in a public source, named in `source`.
    Confirmed,
    /// Part of the range confirmed, the value itself recalled from memory.
    PartlyFromMemory,
    /// Recalled from memory, not re-read in the source.
    FromMemory,
}

impl fmt::Display for Mark {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Mark::Confirmed => "confirmed",
            Mark::PartlyFromMemory => "partly confirmed, partly from memory",
            Mark::FromMemory => "from memory",
        })
    }
}

/// One material of the built-in table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Material {
    pub name: &'static str,
    pub eps_r: f64,
    /// The published range the value stands for.
    pub range: &'static str,
    pub source: &'static str,
    pub mark: Mark,
}

impl Material {
    /// The text kept in `model::Dielectric::source`.
    pub fn source_text(&self) -> String {
        format!(
            "{}: eps_r {} (range {}); {} [{}]",
            self.name, self.eps_r, self.range, self.source, self.mark
        )
    }
}

const DATA_SHEETS: &str = "manufacturers' data sheets";
const TABLES: &str = "published permittivity tables";

const fn m(
    name: &'static str,
    eps_r: f64,
    range: &'static str,
    source: &'static str,
    mark: Mark,
) -> Material {
    Material {
        name,
        eps_r,
        range,
        source,
        mark,
    }
}

/// The built-in table, alphabetical within groups (ceramics and glasses, polymers, others).
pub static MATERIALS: &[Material] = &[
    m(
        "alumina",
        9.4,
        "8.7-10 for 92-99.5 % alumina at 1 MHz; 96 % typical 9.4",
        DATA_SHEETS,
        Mark::Confirmed,
    ),
    m(
        "alumina-99.5",
        9.8,
        "9.2-10 at 1 MHz; 99.5 % typical 9.8",
        DATA_SHEETS,
        Mark::Confirmed,
    ),
    m(
        "sapphire",
        9.4,
        "9.4 perpendicular to the c axis to 11.5 parallel; value for the perpendicular direction",
        TABLES,
        Mark::PartlyFromMemory,
    ),
    m(
        "fused-silica",
        3.75,
        "3.7-3.8 (midpoint)",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "quartz",
        4.35,
        "4.2-4.5 (midpoint)",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "borosilicate",
        4.6,
        "4.3-5.0, typical 4.6",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "soda-lime-glass",
        7.25,
        "7-7.5 (midpoint)",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "glass-ceramic",
        6.0,
        "6.0 (machinable glass-ceramic)",
        DATA_SHEETS,
        Mark::Confirmed,
    ),
    m(
        "porcelain",
        5.55,
        "5.1-6.0 (midpoint)",
        TABLES,
        Mark::Confirmed,
    ),
    m("mica", 6.2, "5.4-7 (midpoint)", TABLES, Mark::Confirmed),
    m(
        "epoxy",
        3.6,
        "3.6 cast unfilled; filled grades 3.5-5",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "glass-epoxy",
        5.0,
        "about 4.5-5 for glass-fibre laminates",
        "recalled laminate data; the filled-epoxy range 3.5-5 of published tables brackets it",
        Mark::FromMemory,
    ),
    m("ptfe", 2.05, "2.0-2.1 (midpoint)", TABLES, Mark::Confirmed),
    m(
        "polyethylene",
        2.3,
        "2.25-2.4, typical 2.3",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "polypropylene",
        2.25,
        "2.2-2.3 (midpoint)",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "pmma",
        3.6,
        "2.6 at GHz to 3.6 at 60 Hz (tables give 2.7-4.5); the low-frequency value",
        TABLES,
        Mark::PartlyFromMemory,
    ),
    m(
        "polycarbonate",
        2.95,
        "2.9-3.0 (midpoint)",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "polyimide",
        3.3,
        "3.2-3.4 for film (midpoint)",
        TABLES,
        Mark::Confirmed,
    ),
    m(
        "mineral-oil",
        2.2,
        "2.2 (transformer oil)",
        "recalled transformer-oil data",
        Mark::FromMemory,
    ),
];

/// Volume resistivity at room temperature, Ohm·m, of the built-in materials, used for the
/// default insulator leakage of a grading column. Order-of-magnitude values recalled from
/// manufacturers' data sheets (from memory; common practice, no source checked): data sheets
/// quote them in Ohm·cm, 100 times these numbers. Resistivity falls steeply with
/// temperature, moisture and surface contamination, and surface leakage is not included.
pub static VOLUME_RESISTIVITY_OHM_M: &[(&str, f64)] = &[
    ("alumina", 1e12),
    ("alumina-99.5", 1e12),
    ("sapphire", 1e14),
    ("fused-silica", 1e16),
    ("quartz", 1e14),
    ("borosilicate", 1e13),
    ("soda-lime-glass", 1e10),
    ("glass-ceramic", 1e14),
    ("porcelain", 1e11),
    ("mica", 1e13),
    ("epoxy", 1e13),
    ("glass-epoxy", 1e12),
    ("polyethylene", 1e16),
    ("polypropylene", 1e16),
    ("ptfe", 1e16),
    ("pmma", 1e13),
    ("polycarbonate", 1e14),
    ("polyimide", 1e15),
    ("mineral-oil", 1e12),
];

/// The source text of [`VOLUME_RESISTIVITY_OHM_M`], for reports.
pub const RESISTIVITY_SOURCE: &str = "room-temperature volume resistivity, order of magnitude \
     recalled from manufacturers' data sheets (common practice, from memory); surface leakage \
     not included";

/// The volume resistivity of a built-in material, Ohm·m.
pub fn volume_resistivity(name: &str) -> Option<f64> {
    let m = lookup(name)?;
    VOLUME_RESISTIVITY_OHM_M
        .iter()
        .find(|(n, _)| *n == m.name)
        .map(|(_, r)| *r)
}

/// Looks a material up by name (case-insensitive; spaces and underscores read as hyphens).
pub fn lookup(name: &str) -> Option<&'static Material> {
    let key: String = name
        .trim()
        .to_lowercase()
        .chars()
        .map(|c| if c == ' ' || c == '_' { '-' } else { c })
        .collect();
    MATERIALS.iter().find(|m| m.name == key)
}

/// The names of the table, for messages.
pub fn names() -> Vec<&'static str> {
    MATERIALS.iter().map(|m| m.name).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_value_lies_in_a_physical_range() {
        for mat in MATERIALS {
            assert!(mat.eps_r >= 1.0 && mat.eps_r < 20.0, "{}", mat.name);
        }
    }

    #[test]
    fn every_material_has_a_resistivity() {
        for mat in MATERIALS {
            let r = volume_resistivity(mat.name);
            assert!(r.is_some_and(|r| (1e8..1e20).contains(&r)), "{}", mat.name);
        }
        assert_eq!(VOLUME_RESISTIVITY_OHM_M.len(), MATERIALS.len());
    }

    #[test]
    fn lookup_is_forgiving_about_case_and_separators() {
        assert_eq!(lookup("Alumina").map(|m| m.eps_r), Some(9.4));
        assert_eq!(
            lookup("soda lime glass").map(|m| m.name),
            Some("soda-lime-glass")
        );
        assert_eq!(
            lookup("glass_epoxy").map(|m| m.mark),
            Some(Mark::FromMemory)
        );
        assert!(lookup("unobtainium").is_none());
    }
}
