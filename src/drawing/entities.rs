//! The entities of one layer as lines and arcs in the drawing's own frame (metres), each with
//! the entity it came from; entities an outline cannot use are refused by name.

use super::pieces::polyline_pieces;
use super::{At, DrawingError, Seg};
use crate::geometry::{Piece, Point};
use dxf::entities::{Entity, EntityType};

/// What a layer holds: its pieces, how many entities it has, and the other layers that have
/// entities (for the message when the layer is missing).
pub(super) struct Layer {
    pub segs: Vec<Seg>,
    pub entities: usize,
    pub others: Vec<String>,
}

/// Reads every entity of `layer`; `scale` is metres per drawing unit. The pieces are in the
/// drawing's x, y (times the scale), not yet placed in the model's (r, z).
pub(super) fn read_layer(
    drawing: &dxf::Drawing,
    file: &str,
    layer: &str,
    scale: f64,
) -> Result<Layer, Box<DrawingError>> {
    let mut out = Layer {
        segs: Vec::new(),
        entities: 0,
        others: Vec::new(),
    };
    for (k, e) in drawing.entities().enumerate() {
        if e.common.layer != layer {
            if !out.others.contains(&e.common.layer) {
                out.others.push(e.common.layer.clone());
            }
            continue;
        }
        out.entities += 1;
        let handle = format!("{:X}", e.common.handle.0);
        for piece in pieces_of(e, scale).map_err(|(kind, at, hint)| {
            Box::new(DrawingError::Unsupported {
                file: file.into(),
                layer: layer.into(),
                handle: handle.clone(),
                kind,
                at,
                hint: hint.into(),
            })
        })? {
            if piece.length() > 0.0 && piece.length().is_finite() {
                out.segs.push(Seg {
                    piece,
                    entity: k,
                    handle: handle.clone(),
                });
            }
        }
    }
    out.others.sort();
    Ok(out)
}

/// Why an entity cannot be read: its kind, where it is, and what to do.
type Refusal = (String, Option<At>, &'static str);

const OUT_OF_PLANE: &str = "draw the half-section in the x-y plane";

/// The lines and arcs of one entity (drawing x, y in metres).
fn pieces_of(e: &Entity, scale: f64) -> Result<Vec<Piece>, Refusal> {
    let flat = |n: &dxf::Vector| n.x.abs() < 1e-9 && n.y.abs() < 1e-9 && n.z != 0.0;
    let p = |x: f64, y: f64| Point::new(x * scale, y * scale);
    let refuse = |kind: &str, at: Option<At>, hint: &'static str| Err((kind.to_string(), at, hint));
    match &e.specific {
        EntityType::Line(l) => Ok(vec![Piece::Line {
            a: p(l.p1.x, l.p1.y),
            b: p(l.p2.x, l.p2.y),
        }]),
        EntityType::Arc(a) => {
            if !flat(&a.normal) {
                let at = At {
                    x: a.center.x,
                    y: a.center.y,
                };
                return refuse("ARC out of the drawing plane", Some(at), OUT_OF_PLANE);
            }
            let mirror = if a.normal.z < 0.0 { -1.0 } else { 1.0 };
            let mut sweep = (a.end_angle - a.start_angle).rem_euclid(360.0);
            if sweep == 0.0 {
                sweep = 360.0;
            }
            let (a0, sweep) = (a.start_angle.to_radians(), sweep.to_radians());
            // A normal along −z mirrors x (the arbitrary-axis rule of DXF): angles θ → π − θ
            // and the sense of the sweep reverses.
            let (a0, sweep) = if mirror < 0.0 {
                (std::f64::consts::PI - a0, -sweep)
            } else {
                (a0, sweep)
            };
            Ok(vec![Piece::Arc {
                c: p(mirror * a.center.x, a.center.y),
                radius: a.radius * scale,
                a0,
                sweep,
            }])
        }
        EntityType::Circle(c) => {
            if !flat(&c.normal) {
                let at = At {
                    x: c.center.x,
                    y: c.center.y,
                };
                return refuse("CIRCLE out of the drawing plane", Some(at), OUT_OF_PLANE);
            }
            let mirror = if c.normal.z < 0.0 { -1.0 } else { 1.0 };
            Ok(vec![Piece::Arc {
                c: p(mirror * c.center.x, c.center.y),
                radius: c.radius * scale,
                a0: 0.0,
                sweep: std::f64::consts::TAU,
            }])
        }
        EntityType::LwPolyline(l) => {
            if !flat(&l.extrusion_direction) {
                return refuse("LWPOLYLINE out of the drawing plane", None, OUT_OF_PLANE);
            }
            let mirror = if l.extrusion_direction.z < 0.0 {
                -1.0
            } else {
                1.0
            };
            let v: Vec<(f64, f64, f64)> = l
                .vertices
                .iter()
                .map(|v| (mirror * v.x, v.y, mirror * v.bulge))
                .collect();
            Ok(polyline_pieces(&v, l.is_closed(), scale))
        }
        EntityType::Polyline(pl) => {
            if pl.is_3d_polyline() || pl.is_3d_polygon_mesh() || pl.is_polyface_mesh() {
                return refuse(
                    "3-D POLYLINE or mesh",
                    None,
                    "draw the half-section as a 2-D polyline in the x-y plane",
                );
            }
            if !flat(&pl.normal) {
                return refuse("POLYLINE out of the drawing plane", None, OUT_OF_PLANE);
            }
            let mirror = if pl.normal.z < 0.0 { -1.0 } else { 1.0 };
            let v: Vec<(f64, f64, f64)> = pl
                .vertices()
                .map(|v| (mirror * v.location.x, v.location.y, mirror * v.bulge))
                .collect();
            Ok(polyline_pieces(&v, pl.is_closed(), scale))
        }
        EntityType::Spline(s) => {
            let at = s
                .control_points
                .first()
                .or(s.fit_points.first())
                .map(|q| At { x: q.x, y: q.y });
            refuse(
                "SPLINE",
                at,
                "splines are not read: convert the curve to arcs and polylines (most CAD programs can, to a stated tolerance) and draw the outline again",
            )
        }
        EntityType::Ellipse(el) => refuse(
            "ELLIPSE",
            Some(At {
                x: el.center.x,
                y: el.center.y,
            }),
            "ellipses are not read: approximate the curve by arcs (a polyline with bulges)",
        ),
        other => {
            let kind = format!("{other:?}");
            let kind = kind.split(['(', ' ', '{']).next().unwrap_or("entity");
            refuse(
                &kind.to_uppercase(),
                None,
                "an outline layer holds only LINE, ARC, CIRCLE, LWPOLYLINE and POLYLINE; move other entities to another layer (explode blocks)",
            )
        }
    }
}
