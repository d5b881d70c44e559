//! The `[[column]]` generator: N grading electrodes (tori, optionally with a disc tube
//! electrode on each plane) between two end conductors, expanded into named primitives.
//!
//! Input: the raw `[[column]]` table. Output: a checked [`ColumnSpec`] and, once the end
//! conductors are resolved, the generated `model::Conductor`s ("column electrode 7",
//! "column tube electrode 7"; prefixed with the column's name when there are several
//! columns). Electrode k sits at `z_first + (k - 1) * pitch` and takes node k of the column's
//! grading network; node 0 is the `from` end and node N + 1 the `to` end. A negative pitch
//! lets a column run from its `from` end towards smaller z.

use super::column_grading::{read_grading, read_leakage, read_node_current, read_protective};
use super::read::{At, Reader};
use super::schema::{RawColumn, RawTubeElectrode, RawValue};
use super::shapes;
use crate::geometry::Shape;
use crate::model::{Conductor, LeakageSpec, Origin, PotentialSpec, ProtectiveSpec};
use crate::units::{Dimension, format_si};
use std::ops::Range;
use toml::Spanned;

/// The most electrodes one column may have. Real columns have tens to a few hundred planes;
/// the bound keeps a mistyped count from expanding into millions of primitives.
pub(crate) const MAX_ELECTRODES: usize = 2000;

/// A disc on each electrode plane, on the same node as the torus.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct TubeElectrode {
    pub r0: f64,
    pub r1: f64,
    pub thickness: f64,
    pub corner_radius: f64,
}

/// A checked `[[column]]` table, its end conductors still named.
#[derive(Debug, Clone)]
pub(crate) struct ColumnSpec {
    pub name: String,
    pub from: (String, Range<usize>),
    pub to: (String, Range<usize>),
    pub electrodes: usize,
    pub z_first: f64,
    pub pitch: f64,
    pub major_radius: f64,
    pub minor_radius: f64,
    pub tube: Option<TubeElectrode>,
    pub resistor_ohm: Option<f64>,
    pub tolerance: Option<f64>,
    pub strings: usize,
    pub rating_v: Option<f64>,
    pub power_rating_w: Option<f64>,
    pub impulse_rating_v: Option<f64>,
    pub protective: Option<ProtectiveSpec>,
    pub leakage: LeakageSpec,
    /// Current drawn to ground at each electrode, A (one per electrode).
    pub node_current_a: Vec<f64>,
    pub at: At,
    pub line: usize,
}

fn end(
    rd: &mut Reader,
    v: Option<&Spanned<RawValue>>,
    at: &At,
    key: &str,
) -> Option<(String, Range<usize>)> {
    let Some(v) = v else {
        rd.missing(at, key, "\"ground\" or the name of a conductor");
        return None;
    };
    let name = rd.name(v, &at.key(key))?;
    Some((name, v.span()))
}

/// Reads one `[[column]]` table. `several` says whether the file has more than one column (a
/// name is then required).
pub(crate) fn read_column(
    rd: &mut Reader,
    raw: &RawColumn,
    at: At,
    line: usize,
    several: bool,
) -> Option<ColumnSpec> {
    let name = column_name(rd, raw, &at, several);
    let from = end(rd, raw.from.as_ref(), &at, "from");
    let to = end(rd, raw.to.as_ref(), &at, "to");
    let electrodes = electrode_count(rd, raw, &at);
    let rings = read_rings(rd, raw, &at)?;
    let tube = match &raw.tube_electrode {
        None => Some(None),
        Some(t) => read_tube(rd, t, &at, rings.pitch).map(Some),
    };
    let grading = read_grading(rd, raw, &at);
    let gaps = electrodes.map(|n| n + 1);
    let protective = read_protective(rd, raw, &at, gaps);
    let leakage = read_leakage(rd, raw, &at);
    let node_current = read_node_current(rd, raw, &at, electrodes);
    let grading = grading?;
    let (resistor, tolerance, strings) = (grading.resistor, grading.tolerance, grading.strings);
    if resistor.is_none() {
        absolute_values_need_resistor(rd, raw, &at, &leakage)?;
    }
    Some(ColumnSpec {
        name: name?,
        from: from?,
        to: to?,
        electrodes: electrodes?,
        z_first: rings.z_first?,
        pitch: rings.pitch?,
        major_radius: rings.major?,
        minor_radius: rings.minor?,
        tube: tube?,
        resistor_ohm: resistor,
        tolerance,
        strings,
        rating_v: grading.rating,
        power_rating_w: grading.power,
        impulse_rating_v: grading.impulse,
        protective: protective?,
        leakage: leakage?,
        node_current_a: node_current?,
        at,
        line,
    })
}

/// The column's name: required when the file has several columns, "column" otherwise.
fn column_name(rd: &mut Reader, raw: &RawColumn, at: &At, several: bool) -> Option<String> {
    match &raw.name {
        Some(v) => rd.name(v, &at.key("name")),
        None if several => {
            rd.missing(
                at,
                "name",
                "\"LE\" (a name is needed when there are several columns)",
            );
            None
        }
        None => Some("column".to_string()),
    }
}

/// `electrodes`: a count from 1 to [`MAX_ELECTRODES`].
fn electrode_count(rd: &mut Reader, raw: &RawColumn, at: &At) -> Option<usize> {
    rd.required(&raw.electrodes, at, "electrodes", "24")
        .and_then(|v| {
            let n = rd.count(v, &at.key("electrodes"), 1)?;
            if n > MAX_ELECTRODES {
                rd.out_of_range(
                    v,
                    &at.key("electrodes"),
                    format!("`{}` = {n} is more than {MAX_ELECTRODES} electrodes", at.key("electrodes")),
                    Some("a column of more planes than this is a drawing mistake; split it or check the count".to_string()),
                );
                return None;
            }
            Some(n)
        })
}

/// The electrode planes and rings of a column, each `None` where it has a problem.
struct Rings {
    z_first: Option<f64>,
    pitch: Option<f64>,
    major: Option<f64>,
    minor: Option<f64>,
}

/// `z_first`, `pitch`, `shape`, `major_radius` and `minor_radius`; `None` when the ring
/// cannot be a torus at all (the column is not read further).
fn read_rings(rd: &mut Reader, raw: &RawColumn, at: &At) -> Option<Rings> {
    let z_first = rd.req_quantity(&raw.z_first, at, "z_first", Dimension::Length);
    let pitch = rd.req_quantity(&raw.pitch, at, "pitch", Dimension::Length);
    let pitch = rd.check(
        pitch,
        raw.pitch.as_ref(),
        &at.key("pitch"),
        |p| p != 0.0,
        "is zero: the electrodes would sit on one plane",
    );
    if let Some(v) = &raw.shape
        && let Some(s) = rd.string(v, &at.key("shape"), "\"torus\"")
        && s != "torus"
    {
        rd.push(
            "unknown-shape",
            at.key("shape"),
            v.span(),
            format!("column electrodes of shape \"{s}\" are not available"),
            Some(
                "column electrodes are rings: shape = \"torus\" with major_radius and minor_radius"
                    .to_string(),
            ),
        );
    }
    let major = rd.req_quantity(&raw.major_radius, at, "major_radius", Dimension::Length);
    let major = rd.check(
        major,
        raw.major_radius.as_ref(),
        &at.key("major_radius"),
        |x| x > 0.0,
        "must be greater than zero",
    );
    let minor = rd.req_quantity(&raw.minor_radius, at, "minor_radius", Dimension::Length);
    let minor = rd.check(
        minor,
        raw.minor_radius.as_ref(),
        &at.key("minor_radius"),
        |x| x > 0.0,
        "must be greater than zero",
    );
    if let (Some(a), Some(b)) = (major, minor) {
        shapes::torus_ring(rd, raw.minor_radius.as_ref(), &at.key("minor_radius"), a, b)?;
    }
    if let (Some(p), Some(b), Some(v)) = (pitch, minor, raw.pitch.as_ref())
        && p.abs() <= 2.0 * b
    {
        rd.push(
            "overlap",
            at.key("pitch"),
            v.span(),
            format!(
                "`{}` ({}) is not larger than the ring diameter ({}): neighbouring electrodes touch",
                at.key("pitch"),
                format_si(p.abs(), Dimension::Length),
                format_si(2.0 * b, Dimension::Length)
            ),
            Some("increase the pitch or reduce minor_radius".to_string()),
        );
    }
    Some(Rings {
        z_first,
        pitch,
        major,
        minor,
    })
}

/// `tube_electrode = { r, thickness, corner_radius }`: a disc on each plane that fits the
/// pitch.
fn read_tube(
    rd: &mut Reader,
    t: &Spanned<RawTubeElectrode>,
    at: &At,
    pitch: Option<f64>,
) -> Option<TubeElectrode> {
    let tat = At::new(at.key("tube_electrode"), t.span());
    let t = t.get_ref();
    let r = rd
        .required(&t.r, &tat, "r", "[\"12 mm\", \"70 mm\"]")
        .and_then(|v| {
            let key = tat.key("r");
            let [r0, r1] = rd.pair(v, &key, Dimension::Length)?;
            if r0 < 0.0 || r0 >= r1 {
                rd.push(
                    "bad-interval",
                    key.clone(),
                    v.span(),
                    format!(
                        "`{key} = {}` must be [r0, r1] with 0 <= r0 < r1",
                        v.get_ref().show()
                    ),
                    None,
                );
                return None;
            }
            Some([r0, r1])
        });
    let th = rd.req_quantity(&t.thickness, &tat, "thickness", Dimension::Length);
    let th = rd.check(
        th,
        t.thickness.as_ref(),
        &tat.key("thickness"),
        |x| x > 0.0,
        "must be greater than zero",
    );
    if let (Some(th), Some(p), Some(v)) = (th, pitch, t.thickness.as_ref())
        && th >= p.abs()
    {
        rd.push(
            "overlap",
            tat.key("thickness"),
            v.span(),
            format!(
                "tube electrodes {} thick do not fit a pitch of {}",
                format_si(th, Dimension::Length),
                format_si(p.abs(), Dimension::Length)
            ),
            None,
        );
    }
    let ([r0, r1], th) = (r?, th?);
    match shapes::disc_shape(rd, &t.corner_radius, &tat, r0, r1, 0.0, th)? {
        Shape::RoundedRect { corner_radius, .. } => Some(TubeElectrode {
            r0,
            r1,
            thickness: th,
            corner_radius,
        }),
        _ => None,
    }
}

/// Node currents and an absolute leakage resistance need the grading resistor value
/// (`leakage = "auto"` or `"none"` does not): `None` after reporting the first such key.
fn absolute_values_need_resistor(
    rd: &mut Reader,
    raw: &RawColumn,
    at: &At,
    leakage: &Option<LeakageSpec>,
) -> Option<()> {
    let keyword = matches!(
        leakage,
        Some(LeakageSpec::FromMaterials | LeakageSpec::None)
    );
    let absolute = [
        (raw.node_current.as_ref(), "node_current"),
        (raw.leakage.as_ref().filter(|_| !keyword), "leakage"),
    ];
    for (leaf, key) in absolute {
        if let Some(v) = leaf {
            rd.push(
                "missing-key",
                at.key("grading.resistor"),
                v.span(),
                format!(
                    "`{}` needs the grading resistor value: without it the network only \
                     gives the division, not currents or resistances",
                    at.key(key)
                ),
                Some("add `grading = { resistor = \"1 GOhm\" }` to the column".to_string()),
            );
            return None;
        }
    }
    Some(())
}

/// The name of generated electrode `k` of a column.
pub(crate) fn electrode_name(spec: &ColumnSpec, several: bool, k: usize, tube: bool) -> String {
    let prefix = if several {
        format!("{} ", spec.name)
    } else {
        String::new()
    };
    let what = if tube { "tube electrode" } else { "electrode" };
    format!("{prefix}column {what} {k}")
}

/// The generated conductors of column number `column` (0-based), in order from the `from`
/// end: for each plane the torus, then its tube electrode when there is one. The flag says
/// whether the conductor is the plane's torus.
pub(crate) fn expand(spec: &ColumnSpec, column: usize, several: bool) -> Vec<(Conductor, bool)> {
    let mut out = Vec::with_capacity(spec.electrodes * 2);
    for k in 1..=spec.electrodes {
        let z = spec.z_first + (k - 1) as f64 * spec.pitch;
        let potential = PotentialSpec::Grading { column, node: k };
        let origin = Origin::Column {
            column,
            electrode: k,
            line: Some(spec.line),
        };
        out.push((
            Conductor {
                name: electrode_name(spec, several, k, false),
                shape: Shape::Torus {
                    center_z: z,
                    major_radius: spec.major_radius,
                    minor_radius: spec.minor_radius,
                },
                potential: potential.clone(),
                origin: origin.clone(),
            },
            true,
        ));
        if let Some(t) = &spec.tube {
            out.push((
                Conductor {
                    name: electrode_name(spec, several, k, true),
                    shape: Shape::RoundedRect {
                        r0: t.r0,
                        r1: t.r1,
                        z0: z - 0.5 * t.thickness,
                        z1: z + 0.5 * t.thickness,
                        corner_radius: t.corner_radius,
                    },
                    potential,
                    origin,
                },
                false,
            ));
        }
    }
    out
}
