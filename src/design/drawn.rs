//! The `outline` shape: a closed outline read from a DXF half-section drawing
//! (`drawing::read_outline`), its keys checked and the drawing's problems located at the key
//! that selects what went wrong.

use super::read::{At, Reader};
use super::schema::{RawShape, RawValue};
use crate::drawing;
use crate::geometry::Shape;
use crate::units::Dimension;
use toml::Spanned;

/// An outline read from a DXF drawing (`drawing::read_outline`); the drawing's path is
/// relative to the design file.
pub(super) fn outline(rd: &mut Reader, raw: &RawShape, at: &At) -> Option<Shape> {
    let fv = rd.required(&raw.file, at, "file", "\"drawings/terminal.dxf\"");
    let lv = rd.required(&raw.layer, at, "layer", "\"TERMINAL\"");
    let file = fv.and_then(|v| {
        rd.string(
            v,
            &at.key("file"),
            "the drawing's path in quotes, relative to the design file",
        )
    });
    let layer = lv.and_then(|v| rd.string(v, &at.key("layer"), "the layer's name in quotes"));
    let handle = match &raw.handle {
        Some(v) => Some(rd.string(v, &at.key("handle"), "an entity handle in hex, e.g. \"2F\"")?),
        None => None,
    };
    let index = match &raw.index {
        Some(v) => Some(rd.count(v, &at.key("index"), 1)?),
        None => None,
    };
    if let (Some(_), Some(v)) = (&handle, &raw.index) {
        rd.push(
            "conflicting-keys",
            at.key("index"),
            v.span(),
            format!(
                "`{}` and `{}` both pick a loop",
                at.key("handle"),
                at.key("index")
            ),
            Some("give one of them".to_string()),
        );
        return None;
    }
    let units = match &raw.units {
        Some(v) => Some(drawing_units(rd, v, at)?),
        None => None,
    };
    let frame = frame(rd, raw, at)?;
    let (file, layer, fv, lv) = (file?, layer?, fv?, lv?);
    let path = rd.base.join(&file);
    let bytes = match std::fs::read(&path) {
        Ok(b) => b,
        Err(e) => {
            rd.push(
                "drawing-unreadable",
                at.key("file"),
                fv.span(),
                format!("cannot read the drawing {}: {e}", path.display()),
                Some("the path is relative to the design file".to_string()),
            );
            return None;
        }
    };
    let pick = drawing::Pick {
        layer,
        handle,
        index,
    };
    match drawing::read_outline(&bytes, &file, &pick, units.as_deref(), &frame) {
        Ok(shape) => Some(shape),
        Err(e) => {
            drawing_problem(rd, raw, at, fv, lv, &e);
            None
        }
    }
}

/// How the drawing lies against the model: `axis` ("y", the default, or "x") and `origin`
/// (the drawing point at r = 0, z = 0, default the drawing's origin).
fn frame(rd: &mut Reader, raw: &RawShape, at: &At) -> Option<drawing::Frame> {
    let axis =
        match &raw.axis {
            Some(v) => {
                let name = rd.string(v, &at.key("axis"), "\"y\" or \"x\" in quotes")?;
                let Some(axis) = drawing::Axis::from_name(&name) else {
                    rd.out_of_range(
                    v,
                    &at.key("axis"),
                    format!("`{}` = \"{name}\" is not a drawing direction", at.key("axis")),
                    Some(
                        "accepted: \"y\" (the axis runs along the drawing's y, x is the radius) \
                         or \"x\" (the axis runs along x, y is the radius)"
                            .to_string(),
                    ),
                );
                    return None;
                };
                axis
            }
            None => drawing::Axis::Y,
        };
    let origin = match &raw.origin {
        Some(v) => {
            let [x, y] = rd.pair(v, &at.key("origin"), Dimension::Length)?;
            (x, y)
        }
        None => (0.0, 0.0),
    };
    Some(drawing::Frame { axis, origin })
}

/// `units`: a length unit the drawing reader knows.
fn drawing_units(rd: &mut Reader, v: &Spanned<RawValue>, at: &At) -> Option<String> {
    let u = rd.string(v, &at.key("units"), "a length unit in quotes, e.g. \"mm\"")?;
    if drawing::unit_scale(&u).is_none() {
        let names: Vec<&str> = drawing::UNITS.iter().map(|(n, _)| *n).collect();
        rd.out_of_range(
            v,
            &at.key("units"),
            format!("`{}` = \"{u}\" is not a drawing unit", at.key("units")),
            Some(format!("accepted: {}", names.join(", "))),
        );
        return None;
    }
    Some(u)
}

/// A drawing that gives no outline, reported at the key that selects what went wrong (the
/// file, its units, the layer or the loop) with what to change.
fn drawing_problem(
    rd: &mut Reader,
    raw: &RawShape,
    at: &At,
    fv: &Spanned<RawValue>,
    lv: &Spanned<RawValue>,
    e: &drawing::DrawingError,
) {
    use drawing::DrawingError as E;
    let (code, key, span, help) = match e {
        E::Unreadable { .. } => (
            "drawing-unreadable",
            "file",
            fv.span(),
            "save the drawing as DXF (ASCII or binary)",
        ),
        E::NoUnits { .. } => (
            "drawing-no-units",
            "file",
            fv.span(),
            "add `units = \"mm\"` (or the drawing's unit) to this table, or set the drawing's units",
        ),
        E::OddUnits { .. } => (
            "drawing-no-units",
            "file",
            fv.span(),
            "set the drawing's units to mm, cm, m or in",
        ),
        E::UnitsDisagree { .. } => (
            "drawing-units-disagree",
            "units",
            raw.units.as_ref().map_or(fv.span(), |v| v.span()),
            "remove `units` (the header's unit is used) or correct the drawing",
        ),
        E::MissingLayer { .. } => (
            "drawing-missing-layer",
            "layer",
            lv.span(),
            "name a layer the drawing has",
        ),
        E::Unsupported { .. } => (
            "drawing-unsupported-entity",
            "layer",
            lv.span(),
            "the outline layer holds the outline only",
        ),
        E::OpenLoop { .. } => (
            "drawing-open-loop",
            "layer",
            lv.span(),
            "join the ends in the drawing",
        ),
        E::SelfIntersecting { .. } | E::Branching { .. } => (
            "drawing-self-intersecting",
            "layer",
            lv.span(),
            "draw the outline as one loop that does not cross itself",
        ),
        E::CrossesAxis { .. } => (
            "drawing-crosses-axis",
            "layer",
            lv.span(),
            "draw the half-section on one side of the axis only, or state where the axis lies with `axis` and `origin`",
        ),
        E::SeveralLoops { .. } => (
            "drawing-several-loops",
            "layer",
            lv.span(),
            "add `handle = \"...\"` or `index = 1` to this table",
        ),
        E::NoSuchLoop { .. } => (
            "drawing-no-such-loop",
            if raw.handle.is_some() {
                "handle"
            } else {
                "index"
            },
            raw.handle
                .as_ref()
                .or(raw.index.as_ref())
                .map_or(lv.span(), |v| v.span()),
            "pick one of the loops listed",
        ),
        E::NoArea { .. } => (
            "degenerate-shape",
            "layer",
            lv.span(),
            "the loop must enclose the body's cross-section",
        ),
    };
    rd.push(
        code,
        at.key(key),
        span,
        e.to_string(),
        Some(help.to_string()),
    );
}
