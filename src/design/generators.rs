//! The `[[column]]` generator: N grading electrodes (tori, optionally with a disc tube
//! electrode on each plane) between two end conductors, expanded into named primitives.
//!
//! Input: the raw `[[column]]` table. Output: a checked [`ColumnSpec`] and, once the end
//! conductors are resolved, the generated `model::Conductor`s ("column electrode 7",
//! "column tube electrode 7"; prefixed with the column's name when there are several
//! columns). Electrode k sits at `z_first + (k - 1) * pitch` and takes node k of the column's
//! grading network; node 0 is the `from` end and node N + 1 the `to` end. A negative pitch
//! lets a column run from its `from` end towards smaller z.

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

/// The keys of a column's `grading` table.
struct GradingKeys {
    resistor: Option<f64>,
    tolerance: Option<f64>,
    strings: usize,
    rating: Option<f64>,
    power: Option<f64>,
    impulse: Option<f64>,
}

/// Reads `grading = { resistor, tolerance, strings, rating, power_rating, impulse_rating }`;
/// every key is optional (no resistor value = equal resistors, the division without
/// currents).
fn read_grading(rd: &mut Reader, raw: &RawColumn, at: &At) -> Option<GradingKeys> {
    let Some(g) = &raw.grading else {
        return Some(GradingKeys {
            resistor: None,
            tolerance: None,
            strings: 1,
            rating: None,
            power: None,
            impulse: None,
        });
    };
    let gat = At::new(at.key("grading"), g.span());
    let g = g.get_ref();
    let mut ok = true;
    let mut positive = |rd: &mut Reader, leaf: &super::schema::Leaf, key: &str, dim| {
        let x = rd.opt_quantity(leaf, &gat, key, dim);
        let x = rd.check(
            x,
            leaf.as_ref(),
            &gat.key(key),
            |x| x > 0.0,
            "must be greater than zero",
        );
        if leaf.is_some() && x.is_none() {
            ok = false;
        }
        x
    };
    let res = positive(rd, &g.resistor, "resistor", Dimension::Resistance);
    let rating = positive(rd, &g.rating, "rating", Dimension::Voltage);
    let power = positive(rd, &g.power_rating, "power_rating", Dimension::Power);
    let impulse = positive(rd, &g.impulse_rating, "impulse_rating", Dimension::Voltage);
    let tol = rd.opt_quantity(&g.tolerance, &gat, "tolerance", Dimension::Ratio);
    let tol = rd.check(
        tol,
        g.tolerance.as_ref(),
        &gat.key("tolerance"),
        |x| (0.0..1.0).contains(&x),
        "must be at least 0 % and below 100 %",
    );
    if g.tolerance.is_some() && tol.is_none() {
        ok = false;
    }
    let strings = match &g.strings {
        Some(v) => rd.count(v, &gat.key("strings"), 1),
        None => Some(1),
    };
    if g.resistor.is_none()
        && let Some(v) = g
            .rating
            .as_ref()
            .or(g.power_rating.as_ref())
            .or(g.impulse_rating.as_ref())
    {
        rd.push(
            "missing-key",
            gat.key("resistor"),
            v.span(),
            format!(
                "`{}` gives resistor ratings but no resistor value, so no resistor voltage or \
                 dissipation can be checked against them",
                gat.path
            ),
            Some("add `resistor = \"1 GOhm\"` (the value of one resistor)".to_string()),
        );
        ok = false;
    }
    let strings = strings?;
    ok.then_some(GradingKeys {
        resistor: res,
        tolerance: tol,
        strings,
        rating,
        power,
        impulse,
    })
}

/// Reads `protective_gap = { firing, band, span }`. `gaps` is the column's gap count when
/// known; a span must divide it, so that every gap is bridged by exactly one protective gap.
fn read_protective(
    rd: &mut Reader,
    raw: &RawColumn,
    at: &At,
    gaps: Option<usize>,
) -> Option<Option<ProtectiveSpec>> {
    let Some(p) = &raw.protective_gap else {
        return Some(None);
    };
    let pat = At::new(at.key("protective_gap"), p.span());
    let p = p.get_ref();
    let f = rd.req_quantity(&p.firing, &pat, "firing", Dimension::Voltage);
    let firing = rd.check(
        f,
        p.firing.as_ref(),
        &pat.key("firing"),
        |x| x > 0.0,
        "must be greater than zero",
    );
    let band = match &p.band {
        None => Some(crate::materials::DEFAULT_FIRING_BAND),
        Some(v) => {
            let b = rd.quantity(v, &pat.key("band"), Dimension::Ratio);
            rd.check(
                b,
                Some(v),
                &pat.key("band"),
                |x| (0.0..0.5).contains(&x),
                "must be at least 0 % and below 50 % (the half-width of the firing band)",
            )
        }
    };
    let span = match &p.span {
        None => Some(1),
        Some(v) => rd.count(v, &pat.key("span"), 1).and_then(|k| match gaps {
            Some(g) if g % k != 0 => {
                let divisors: Vec<String> = (1..=g)
                    .filter(|d| g % d == 0)
                    .map(|d| d.to_string())
                    .collect();
                rd.out_of_range(
                    v,
                    &pat.key("span"),
                    format!(
                        "`{} = {k}` does not divide the column's {g} gaps, so some gaps would \
                         have no protective gap across them",
                        pat.key("span")
                    ),
                    Some(format!("accepted spans: {}", divisors.join(", "))),
                );
                None
            }
            _ => Some(k),
        }),
    };
    let arc_floor = match &p.arc_floor {
        None => Some(None),
        Some(v) => {
            let a = rd.quantity(v, &pat.key("arc_floor"), Dimension::Voltage);
            let below = firing.unwrap_or(f64::INFINITY);
            rd.check(
                a,
                Some(v),
                &pat.key("arc_floor"),
                |x| (0.0..below).contains(&x),
                "must be at least 0 V and below the firing voltage",
            )
            .map(Some)
        }
    };
    Some(Some(ProtectiveSpec {
        firing_v: firing?,
        band: band?,
        span: span?,
        arc_floor_v: arc_floor?,
    }))
}

/// Reads `leakage = "auto" | "none" | "<resistance per gap>"`; absent = "auto".
fn read_leakage(rd: &mut Reader, raw: &RawColumn, at: &At) -> Option<LeakageSpec> {
    let Some(v) = &raw.leakage else {
        return Some(LeakageSpec::FromMaterials);
    };
    let key = at.key("leakage");
    if let RawValue::Str(t) = v.get_ref() {
        match t.trim() {
            "auto" => return Some(LeakageSpec::FromMaterials),
            "none" => return Some(LeakageSpec::None),
            _ => {}
        }
    }
    if !matches!(v.get_ref(), RawValue::Str(t) if t.trim().starts_with(|c: char| c.is_ascii_digit() || c == '.' || c == '+'))
    {
        rd.push(
            "wrong-type",
            key,
            v.span(),
            format!(
                "`{}` must be \"auto\", \"none\" or a resistance per gap, found {}",
                at.key("leakage"),
                v.get_ref().show()
            ),
            Some(
                "write leakage = \"auto\" (from the insulators' materials), \"none\", or \
                 e.g. leakage = \"10 TOhm\""
                    .to_string(),
            ),
        );
        return None;
    }
    let x = rd.quantity(v, &key, Dimension::Resistance);
    rd.check(x, Some(v), &key, |x| x > 0.0, "must be greater than zero")
        .map(LeakageSpec::PerGap)
}

/// Reads `node_current`: one current drawn at every electrode, or one per electrode.
fn read_node_current(
    rd: &mut Reader,
    raw: &RawColumn,
    at: &At,
    electrodes: Option<usize>,
) -> Option<Vec<f64>> {
    let n = electrodes?;
    let Some(v) = &raw.node_current else {
        return Some(vec![0.0; n]);
    };
    let key = at.key("node_current");
    match v.get_ref() {
        RawValue::Array(_) => {
            let items = rd.array_of(v, &key, Dimension::Current, Some(n))?;
            let mut out = Vec::with_capacity(n);
            for (k, item) in items.iter().enumerate() {
                out.push(rd.quantity(item, &format!("{key}[{k}]"), Dimension::Current));
            }
            out.into_iter().collect()
        }
        _ => rd.quantity(v, &key, Dimension::Current).map(|i| vec![i; n]),
    }
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
