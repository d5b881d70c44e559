//! Outlines from DXF drawings of the axisymmetric half-section.
//!
//! Input: the bytes of a DXF drawing (ASCII or binary, read with the `dxf` crate), the layer
//! that holds the outline (and, when the layer holds several closed loops, which one), and the
//! drawing's length unit when its header (`$INSUNITS`) does not give one. The drawing's x is the
//! radius r (r >= 0), its y the axial position z. Output: a `geometry::Shape::Drawn` in metres
//! whose lines and arcs are the drawing's own (arcs stay true arcs), with its source (file,
//! layer, SHA-256 of the bytes, entity count); or a located [`DrawingError`] naming the file,
//! the layer, the entity handle and the position in drawing units.
//!
//! LINE, ARC, CIRCLE, LWPOLYLINE and POLYLINE (with bulges, i.e. arcs between vertices) are
//! read; loose pieces are chained into closed loops where their ends lie within
//! [`CHAIN_TOLERANCE`] of each other. Everything else on the layer is refused by name.

use crate::geometry::{DrawingSource, Piece, Point, Shape};
use dxf::entities::EntityType;
use dxf::enums::Units;
use sha2::{Digest, Sha256};

/// Ends of two pieces closer than this join (metres, 1 µm: far below any drawing's stated
/// precision for an electrode, far above the rounding of coordinates written with 6 or more
/// significant figures; a modelling choice).
pub const CHAIN_TOLERANCE: f64 = 1e-6;

/// Which closed loop of the drawing is the outline.
#[derive(Debug, Clone, PartialEq)]
pub struct Pick {
    pub layer: String,
    /// Handle (hex) of any entity of the loop.
    pub handle: Option<String>,
    /// Number of the loop on the layer, from 1, in the order their first entities appear.
    pub index: Option<usize>,
}

/// A length unit a design file may give for a drawing without `$INSUNITS`: name and metres.
pub const UNITS: &[(&str, f64)] = &[
    ("um", 1e-6),
    ("mm", 1e-3),
    ("cm", 1e-2),
    ("dm", 0.1),
    ("m", 1.0),
    ("in", 0.0254),
    ("ft", 0.3048),
];

/// The metres of one unit named as in [`UNITS`].
pub fn unit_scale(name: &str) -> Option<f64> {
    UNITS.iter().find(|(n, _)| *n == name).map(|(_, s)| *s)
}

/// A position in the drawing, in its own units, for messages.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct At {
    pub x: f64,
    pub y: f64,
}

impl std::fmt::Display for At {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "(x {}, y {})", short(self.x), short(self.y))
    }
}

fn short(x: f64) -> String {
    let s = format!("{x:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.into() }
}

/// Why a drawing gives no outline. Every message names the file and, where there is one, the
/// layer, the entity handle and its position in drawing units.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DrawingError {
    #[error("drawing {file}: cannot be read as DXF: {reason}")]
    Unreadable { file: String, reason: String },
    #[error(
        "drawing {file}: no entities on layer \"{layer}\"; layers with entities: {}",
        if found.is_empty() { "none".to_string() } else { found.join(", ") }
    )]
    MissingLayer {
        file: String,
        layer: String,
        found: Vec<String>,
    },
    #[error(
        "drawing {file}, layer \"{layer}\": entity {handle} is a {kind}{}, which an outline cannot use; {hint}",
        at.map(|a| format!(" at {a}")).unwrap_or_default()
    )]
    Unsupported {
        file: String,
        layer: String,
        handle: String,
        kind: String,
        at: Option<At>,
        hint: String,
    },
    #[error(
        "drawing {file}: its header gives no length unit ($INSUNITS is unset or unitless) and the design gives none"
    )]
    NoUnits { file: String },
    #[error("drawing {file}: its header gives the unit {header} but the design says \"{design}\"")]
    UnitsDisagree {
        file: String,
        header: String,
        design: String,
    },
    #[error(
        "drawing {file}: its header gives the unit {header}, which is not a length for a drawing of electrodes"
    )]
    OddUnits { file: String, header: String },
    #[error(
        "drawing {file}, layer \"{layer}\": the outline is not closed: a gap of {} drawing units between the end of entity {end_handle} at {end_at} and the start of entity {start_handle} at {start_at} (pieces join when their ends are within {} drawing units)",
        short(*gap), short(*tolerance)
    )]
    OpenLoop {
        file: String,
        layer: String,
        gap: f64,
        tolerance: f64,
        end_handle: String,
        end_at: At,
        start_handle: String,
        start_at: At,
    },
    #[error(
        "drawing {file}, layer \"{layer}\": the outline crosses itself: entities {a} and {b} meet at {at}"
    )]
    SelfIntersecting {
        file: String,
        layer: String,
        a: String,
        b: String,
        at: At,
    },
    #[error(
        "drawing {file}, layer \"{layer}\": {count} pieces meet at {at} (entities {}): a loop joins two pieces at each point",
        handles.join(", ")
    )]
    Branching {
        file: String,
        layer: String,
        count: usize,
        handles: Vec<String>,
        at: At,
    },
    #[error(
        "drawing {file}, layer \"{layer}\": entity {handle} crosses the axis: it reaches x = {} at {at}; the half-section lies in x >= 0 (x is the radius)",
        short(at.x)
    )]
    CrossesAxis {
        file: String,
        layer: String,
        handle: String,
        at: At,
    },
    #[error(
        "drawing {file}, layer \"{layer}\" holds {} closed loops ({}); say which with `handle` or `index`",
        loops.len(), loops.join("; ")
    )]
    SeveralLoops {
        file: String,
        layer: String,
        loops: Vec<String>,
    },
    #[error(
        "drawing {file}, layer \"{layer}\": no loop is {wanted}; the loops: {}",
        loops.join("; ")
    )]
    NoSuchLoop {
        file: String,
        layer: String,
        wanted: String,
        loops: Vec<String>,
    },
    #[error(
        "drawing {file}, layer \"{layer}\": the outline starting at entity {handle} encloses no area"
    )]
    NoArea {
        file: String,
        layer: String,
        handle: String,
    },
}

/// One piece of the drawing in metres, with the entity it came from.
#[derive(Debug, Clone)]
struct Seg {
    piece: Piece,
    entity: usize,
    handle: String,
}

/// Reads the outline `pick` from the drawing `bytes`. `file` names the drawing in messages and
/// in the source; `units` is the design's unit name (see [`UNITS`]) for drawings whose header
/// gives none.
pub fn read_outline(
    bytes: &[u8],
    file: &str,
    pick: &Pick,
    units: Option<&str>,
) -> Result<Shape, Box<DrawingError>> {
    let mut cursor = std::io::Cursor::new(bytes);
    let drawing = match std::panic::catch_unwind(move || dxf::Drawing::load(&mut cursor)) {
        Ok(Ok(d)) => d,
        Ok(Err(e)) => {
            return Err(Box::new(DrawingError::Unreadable {
                file: file.into(),
                reason: e.to_string(),
            }));
        }
        Err(_) => {
            return Err(Box::new(DrawingError::Unreadable {
                file: file.into(),
                reason: "the reader gave up on malformed content".into(),
            }));
        }
    };
    let scale = scale_of(&drawing, file, units)?;
    let layer = pick.layer.as_str();
    let err_file = || file.to_string();
    let mut segs = Vec::new();
    let mut found: Vec<String> = Vec::new();
    let mut entities_on_layer = 0usize;
    for (k, e) in drawing.entities().enumerate() {
        if e.common.layer != layer {
            if !found.contains(&e.common.layer) {
                found.push(e.common.layer.clone());
            }
            continue;
        }
        entities_on_layer += 1;
        let handle = format!("{:X}", e.common.handle.0);
        let unsupported = |kind: &str, at: Option<At>, hint: &str| DrawingError::Unsupported {
            file: err_file(),
            layer: layer.into(),
            handle: handle.clone(),
            kind: kind.into(),
            at,
            hint: hint.into(),
        };
        let flat = |n: &dxf::Vector| n.x.abs() < 1e-9 && n.y.abs() < 1e-9 && n.z != 0.0;
        let mut push = |piece: Piece| {
            if piece.length() > 0.0 && piece.length().is_finite() {
                segs.push(Seg {
                    piece,
                    entity: k,
                    handle: handle.clone(),
                });
            }
        };
        let p = |x: f64, y: f64| Point::new(x * scale, y * scale);
        match &e.specific {
            EntityType::Line(l) => push(Piece::Line {
                a: p(l.p1.x, l.p1.y),
                b: p(l.p2.x, l.p2.y),
            }),
            EntityType::Arc(a) => {
                if !flat(&a.normal) {
                    return Err(Box::new(unsupported(
                        "ARC out of the drawing plane",
                        Some(At {
                            x: a.center.x,
                            y: a.center.y,
                        }),
                        "draw the half-section in the x-y plane",
                    )));
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
                push(Piece::Arc {
                    c: p(mirror * a.center.x, a.center.y),
                    radius: a.radius * scale,
                    a0,
                    sweep,
                });
            }
            EntityType::Circle(c) => {
                if !flat(&c.normal) {
                    return Err(Box::new(unsupported(
                        "CIRCLE out of the drawing plane",
                        Some(At {
                            x: c.center.x,
                            y: c.center.y,
                        }),
                        "draw the half-section in the x-y plane",
                    )));
                }
                let mirror = if c.normal.z < 0.0 { -1.0 } else { 1.0 };
                push(Piece::Arc {
                    c: p(mirror * c.center.x, c.center.y),
                    radius: c.radius * scale,
                    a0: 0.0,
                    sweep: std::f64::consts::TAU,
                });
            }
            EntityType::LwPolyline(l) => {
                if !flat(&l.extrusion_direction) {
                    return Err(Box::new(unsupported(
                        "LWPOLYLINE out of the drawing plane",
                        None,
                        "draw the half-section in the x-y plane",
                    )));
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
                for piece in polyline_pieces(&v, l.is_closed(), scale) {
                    push(piece);
                }
            }
            EntityType::Polyline(pl) => {
                if pl.is_3d_polyline() || pl.is_3d_polygon_mesh() || pl.is_polyface_mesh() {
                    return Err(Box::new(unsupported(
                        "3-D POLYLINE or mesh",
                        None,
                        "draw the half-section as a 2-D polyline in the x-y plane",
                    )));
                }
                if !flat(&pl.normal) {
                    return Err(Box::new(unsupported(
                        "POLYLINE out of the drawing plane",
                        None,
                        "draw the half-section in the x-y plane",
                    )));
                }
                let mirror = if pl.normal.z < 0.0 { -1.0 } else { 1.0 };
                let v: Vec<(f64, f64, f64)> = pl
                    .vertices()
                    .map(|v| (mirror * v.location.x, v.location.y, mirror * v.bulge))
                    .collect();
                for piece in polyline_pieces(&v, pl.is_closed(), scale) {
                    push(piece);
                }
            }
            EntityType::Spline(s) => {
                let at = s
                    .control_points
                    .first()
                    .or(s.fit_points.first())
                    .map(|q| At { x: q.x, y: q.y });
                return Err(Box::new(unsupported(
                    "SPLINE",
                    at,
                    "splines are not read: convert the curve to arcs and polylines (most CAD programs can, to a stated tolerance) and draw the outline again",
                )));
            }
            EntityType::Ellipse(el) => {
                return Err(Box::new(unsupported(
                    "ELLIPSE",
                    Some(At {
                        x: el.center.x,
                        y: el.center.y,
                    }),
                    "ellipses are not read: approximate the curve by arcs (a polyline with bulges)",
                )));
            }
            other => {
                let kind = format!("{other:?}");
                let kind = kind.split(['(', ' ', '{']).next().unwrap_or("entity");
                return Err(Box::new(unsupported(
                    &kind.to_uppercase(),
                    None,
                    "an outline layer holds only LINE, ARC, CIRCLE, LWPOLYLINE and POLYLINE; move other entities to another layer (explode blocks)",
                )));
            }
        }
    }
    if entities_on_layer == 0 {
        found.sort();
        return Err(Box::new(DrawingError::MissingLayer {
            file: file.into(),
            layer: layer.into(),
            found,
        }));
    }
    let ctx = Ctx { file, layer, scale };
    let loops = chain(&segs, &ctx)?;
    let summary = |k: usize, l: &Loop| -> String {
        let b = loop_box(&segs, l);
        format!(
            "loop {}: from entity {}, x {} to {}, y {} to {}",
            k + 1,
            seg_of(&segs, l[0]).handle,
            short(b.0 / scale),
            short(b.1 / scale),
            short(b.2 / scale),
            short(b.3 / scale)
        )
    };
    let list = || -> Vec<String> {
        loops
            .iter()
            .enumerate()
            .map(|(k, l)| summary(k, l))
            .collect()
    };
    let chosen = if let Some(h) = &pick.handle {
        let h = h.trim().trim_start_matches("0x").to_uppercase();
        loops
            .iter()
            .find(|l| l.iter().any(|&s| seg_of(&segs, s).handle == h))
            .ok_or_else(|| DrawingError::NoSuchLoop {
                file: file.into(),
                layer: layer.into(),
                wanted: format!("made with entity {h}"),
                loops: list(),
            })?
    } else if let Some(i) = pick.index {
        loops
            .get(i.wrapping_sub(1))
            .ok_or_else(|| DrawingError::NoSuchLoop {
                file: file.into(),
                layer: layer.into(),
                wanted: format!("number {i}"),
                loops: list(),
            })?
    } else if loops.len() == 1 {
        &loops[0]
    } else {
        return Err(Box::new(DrawingError::SeveralLoops {
            file: file.into(),
            layer: layer.into(),
            loops: list(),
        }));
    };
    let pieces = oriented(&segs, chosen);
    check_loop(&segs, chosen, &pieces, &ctx)?;
    let mut entities: Vec<usize> = chosen.iter().map(|&s| seg_of(&segs, s).entity).collect();
    entities.sort_unstable();
    entities.dedup();
    let digest = Sha256::digest(bytes);
    let source = DrawingSource {
        file: file.into(),
        layer: layer.into(),
        sha256: digest.iter().map(|b| format!("{b:02x}")).collect(),
        entities: entities.len(),
        pieces: pieces.len(),
        first_handle: seg_of(&segs, chosen[0]).handle.clone(),
    };
    Ok(Shape::drawn(pieces, source))
}

struct Ctx<'a> {
    file: &'a str,
    layer: &'a str,
    scale: f64,
}

impl Ctx<'_> {
    fn at(&self, p: Point) -> At {
        At {
            x: p.r / self.scale,
            y: p.z / self.scale,
        }
    }
}

/// Metres per drawing unit, from the header or else the design.
fn scale_of(
    drawing: &dxf::Drawing,
    file: &str,
    units: Option<&str>,
) -> Result<f64, Box<DrawingError>> {
    let header = match drawing.header.default_drawing_units {
        Units::Unitless => None,
        Units::Microns => Some(("um", 1e-6)),
        Units::Millimeters => Some(("mm", 1e-3)),
        Units::Centimeters => Some(("cm", 1e-2)),
        Units::Decimeters => Some(("dm", 0.1)),
        Units::Meters => Some(("m", 1.0)),
        Units::Inches | Units::USSurveyInch => Some(("in", 0.0254)),
        Units::Feet | Units::USSurveyFeet => Some(("ft", 0.3048)),
        Units::Mils => Some(("mil", 2.54e-5)),
        other => {
            return Err(Box::new(DrawingError::OddUnits {
                file: file.into(),
                header: format!("{other:?}"),
            }));
        }
    };
    let design = units.and_then(|u| unit_scale(u).map(|s| (u, s)));
    match (header, design) {
        (Some((hn, hs)), Some((dn, ds))) if (hs - ds).abs() > 1e-12 * hs => {
            Err(Box::new(DrawingError::UnitsDisagree {
                file: file.into(),
                header: hn.into(),
                design: dn.into(),
            }))
        }
        (Some((_, hs)), _) => Ok(hs),
        (None, Some((_, ds))) => Ok(ds),
        (None, None) => Err(Box::new(DrawingError::NoUnits { file: file.into() })),
    }
}

/// The pieces of a polyline through `v` (x, y, bulge in drawing units); a bulge b on a vertex
/// makes the segment to the next vertex an arc of included angle 4·atan(b), counter-clockwise
/// for b > 0 (the DXF definition of the bulge).
fn polyline_pieces(v: &[(f64, f64, f64)], closed: bool, scale: f64) -> Vec<Piece> {
    let n = v.len();
    let segs = if closed { n } else { n.saturating_sub(1) };
    let mut out = Vec::with_capacity(segs);
    for k in 0..segs {
        let (x0, y0, bulge) = v[k];
        let (x1, y1, _) = v[(k + 1) % n];
        let a = Point::new(x0 * scale, y0 * scale);
        let b = Point::new(x1 * scale, y1 * scale);
        out.push(bulge_piece(a, b, bulge));
    }
    out
}

/// The line or arc from `a` to `b` with bulge `bulge`.
pub(crate) fn bulge_piece(a: Point, b: Point, bulge: f64) -> Piece {
    let (dr, dz) = (b.r - a.r, b.z - a.z);
    let d = (dr * dr + dz * dz).sqrt();
    if bulge.abs() < 1e-12 || d == 0.0 || !bulge.is_finite() {
        return Piece::Line { a, b };
    }
    let theta = 4.0 * bulge.atan();
    let half = 0.5 * theta;
    // The centre lies on the chord's perpendicular bisector, (d/2)/tan(θ/2) to the left of the
    // chord for a counter-clockwise arc (negative: to the right).
    let h = 0.5 * d / half.tan();
    let (nr, nz) = (-dz / d, dr / d);
    let c = Point::new(0.5 * (a.r + b.r) + h * nr, 0.5 * (a.z + b.z) + h * nz);
    let radius = (0.5 * d / half.sin()).abs();
    Piece::Arc {
        c,
        radius,
        a0: (a.z - c.z).atan2(a.r - c.r),
        sweep: theta,
    }
}

fn dist(a: Point, b: Point) -> f64 {
    (a.r - b.r).hypot(a.z - b.z)
}

/// A loop as indices into the segments in running order; an index `n + k` (for `n` segments)
/// is segment `k` run backwards.
type Loop = Vec<usize>;

/// Chains the segments into closed loops. Each loop lists its segments in order; the sense of
/// each is restored by [`oriented`].
fn chain(segs: &[Seg], ctx: &Ctx) -> Result<Vec<Loop>, Box<DrawingError>> {
    let tol = CHAIN_TOLERANCE;
    // Three or more ends at one point: no unique loop.
    let ends: Vec<(Point, usize)> = segs
        .iter()
        .enumerate()
        .flat_map(|(k, s)| [(s.piece.start(), k), (s.piece.end(), k)])
        .collect();
    for (i, (p, _)) in ends.iter().enumerate() {
        let near: Vec<usize> = ends
            .iter()
            .enumerate()
            .filter(|(j, (q, _))| *j != i && dist(*p, *q) <= tol)
            .map(|(_, (_, s))| *s)
            .collect();
        // A closed piece (a circle) meets itself once.
        let others = near.len() + 1;
        if others > 2 {
            let mut handles: Vec<String> = std::iter::once(ends[i].1)
                .chain(near)
                .map(|s| segs[s].handle.clone())
                .collect();
            handles.dedup();
            return Err(Box::new(DrawingError::Branching {
                file: ctx.file.into(),
                layer: ctx.layer.into(),
                count: others,
                handles,
                at: ctx.at(*p),
            }));
        }
    }
    // The first unused piece with an end at `p`, and whether it runs reversed: a piece that
    // continues a loop from `p` (`from_start`) should start there, one that leads into `p`
    // should end there; meeting `p` with its other end, it is walked backwards.
    let touching = |used: &[bool], p: Point, from_start: bool| {
        (0..segs.len()).find_map(|j| {
            if used[j] {
                return None;
            }
            let (a, b) = (segs[j].piece.start(), segs[j].piece.end());
            let (near, far) = if from_start { (a, b) } else { (b, a) };
            if dist(near, p) <= tol {
                Some((j, false))
            } else if dist(far, p) <= tol {
                Some((j, true))
            } else {
                None
            }
        })
    };
    let mut used = vec![false; segs.len()];
    let mut loops = Vec::new();
    for first in 0..segs.len() {
        if used[first] {
            continue;
        }
        used[first] = true;
        let mut lp: std::collections::VecDeque<(usize, bool)> = [(first, false)].into();
        let end_of = |(s, rev): (usize, bool)| {
            if rev {
                segs[s].piece.start()
            } else {
                segs[s].piece.end()
            }
        };
        let start_of = |(s, rev): (usize, bool)| {
            if rev {
                segs[s].piece.end()
            } else {
                segs[s].piece.start()
            }
        };
        loop {
            let (head, tail) = (lp[0], lp[lp.len() - 1]);
            if dist(end_of(tail), start_of(head)) <= tol {
                break;
            }
            if let Some(n) = touching(&used, end_of(tail), true) {
                used[n.0] = true;
                lp.push_back(n);
                continue;
            }
            if let Some(p) = touching(&used, start_of(head), false) {
                used[p.0] = true;
                lp.push_front(p);
                continue;
            }
            let (e, s) = (end_of(tail), start_of(head));
            return Err(Box::new(DrawingError::OpenLoop {
                file: ctx.file.into(),
                layer: ctx.layer.into(),
                gap: dist(e, s) / ctx.scale,
                tolerance: tol / ctx.scale,
                end_handle: segs[tail.0].handle.clone(),
                end_at: ctx.at(e),
                start_handle: segs[head.0].handle.clone(),
                start_at: ctx.at(s),
            }));
        }
        loops.push(
            lp.into_iter()
                .map(|(s, rev)| if rev { s + segs.len() } else { s })
                .collect(),
        );
    }
    Ok(loops)
}

/// The pieces of a loop in running order, each starting exactly where the one before ends.
fn oriented(segs: &[Seg], lp: &Loop) -> Vec<Piece> {
    let n = segs.len();
    let mut out: Vec<Piece> = lp
        .iter()
        .map(|&i| {
            if i >= n {
                segs[i - n].piece.reversed()
            } else {
                segs[i].piece.clone()
            }
        })
        .collect();
    // Lines start exactly where the piece before ends; points within the tolerance of the axis
    // go onto it.
    let m = out.len();
    for k in 0..m {
        let before = out[(k + m - 1) % m].end();
        if let Piece::Line { a, b } = &mut out[k] {
            *a = before;
            for q in [a, b] {
                if q.r.abs() <= CHAIN_TOLERANCE {
                    q.r = 0.0;
                }
            }
        }
    }
    for k in 0..m {
        let after = out[(k + 1) % m].start();
        if let Piece::Line { b, .. } = &mut out[k] {
            *b = after;
        }
    }
    out
}

fn seg_of(segs: &[Seg], i: usize) -> &Seg {
    &segs[i % segs.len()]
}

fn loop_box(segs: &[Seg], lp: &Loop) -> (f64, f64, f64, f64) {
    let mut b = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for &i in lp {
        let p = &seg_of(segs, i).piece;
        for t in 0..=8 {
            let q = p.at(t as f64 / 8.0);
            b.0 = b.0.min(q.r);
            b.1 = b.1.max(q.r);
            b.2 = b.2.min(q.z);
            b.3 = b.3.max(q.z);
        }
    }
    b
}

/// The outline stays in r >= 0, does not cross itself and encloses an area.
fn check_loop(
    segs: &[Seg],
    lp: &Loop,
    pieces: &[Piece],
    ctx: &Ctx,
) -> Result<(), Box<DrawingError>> {
    let handle = |k: usize| seg_of(segs, lp[k]).handle.clone();
    for (k, p) in pieces.iter().enumerate() {
        let q = leftmost(p);
        if q.r < -CHAIN_TOLERANCE {
            return Err(Box::new(DrawingError::CrossesAxis {
                file: ctx.file.into(),
                layer: ctx.layer.into(),
                handle: handle(k),
                at: ctx.at(q),
            }));
        }
    }
    let n = pieces.len();
    for i in 0..n {
        for j in (i + 1)..n {
            let mut joints = Vec::new();
            if j == i + 1 {
                joints.push(pieces[j].start());
            }
            if i == 0 && j == n - 1 {
                joints.push(pieces[0].start());
            }
            let hit = meeting(&pieces[i], &pieces[j]).into_iter().find(|q| {
                joints
                    .iter()
                    .all(|jt| dist(*q, *jt) > 10.0 * CHAIN_TOLERANCE)
            });
            if let Some(q) = hit {
                return Err(Box::new(DrawingError::SelfIntersecting {
                    file: ctx.file.into(),
                    layer: ctx.layer.into(),
                    a: handle(i),
                    b: handle(j),
                    at: ctx.at(q),
                }));
            }
        }
    }
    let area2: f64 = pieces
        .iter()
        .map(|p| {
            // Shoelace by fine samples of the arcs: only the sign and size against zero matter.
            let steps = if matches!(p, Piece::Arc { .. }) {
                32
            } else {
                1
            };
            (0..steps)
                .map(|s| {
                    let (a, b) = (
                        p.at(s as f64 / steps as f64),
                        p.at((s + 1) as f64 / steps as f64),
                    );
                    a.r * b.z - b.r * a.z
                })
                .sum::<f64>()
        })
        .sum();
    let b = loop_box(segs, lp);
    let size = (b.1 - b.0).max(b.3 - b.2);
    if area2.abs() <= 1e-9 * size * size || !area2.is_finite() {
        return Err(Box::new(DrawingError::NoArea {
            file: ctx.file.into(),
            layer: ctx.layer.into(),
            handle: handle(0),
        }));
    }
    Ok(())
}

/// The point of a piece with the smallest r.
fn leftmost(p: &Piece) -> Point {
    let (s, e) = (p.start(), p.end());
    let mut best = if s.r <= e.r { s } else { e };
    if let Piece::Arc {
        c,
        radius,
        a0,
        sweep,
    } = p
    {
        let rel = ((std::f64::consts::PI - a0) * sweep.signum()).rem_euclid(std::f64::consts::TAU);
        if rel <= sweep.abs() {
            best = Point::new(c.r - radius, c.z);
        }
    }
    best
}

/// Points where two pieces meet: crossings of their lines and circles that lie on both, and
/// ends of one lying on the other (touching or overlapping pieces).
fn meeting(p: &Piece, q: &Piece) -> Vec<Point> {
    let tol = CHAIN_TOLERANCE;
    let mut out: Vec<Point> = Vec::new();
    for (x, y) in [(p, q), (q, p)] {
        for e in [x.start(), x.end()] {
            if on_piece(y, e, tol) {
                out.push(e);
            }
        }
    }
    let candidates = match (p, q) {
        (Piece::Line { a, b }, Piece::Line { a: c, b: d }) => line_line(*a, *b, *c, *d),
        (Piece::Line { a, b }, Piece::Arc { c, radius, .. })
        | (Piece::Arc { c, radius, .. }, Piece::Line { a, b }) => line_circle(*a, *b, *c, *radius),
        (
            Piece::Arc {
                c: c1, radius: r1, ..
            },
            Piece::Arc {
                c: c2, radius: r2, ..
            },
        ) => circle_circle(*c1, *r1, *c2, *r2),
    };
    out.extend(
        candidates
            .into_iter()
            .filter(|x| on_piece(p, *x, tol) && on_piece(q, *x, tol)),
    );
    out
}

fn on_piece(p: &Piece, x: Point, tol: f64) -> bool {
    match p {
        Piece::Line { a, b } => {
            let (dr, dz) = (b.r - a.r, b.z - a.z);
            let l2 = dr * dr + dz * dz;
            let t = (((x.r - a.r) * dr + (x.z - a.z) * dz) / l2).clamp(0.0, 1.0);
            dist(x, Point::new(a.r + t * dr, a.z + t * dz)) <= tol
        }
        Piece::Arc {
            c,
            radius,
            a0,
            sweep,
        } => {
            if (dist(x, *c) - radius).abs() > tol {
                return false;
            }
            let ang = (x.z - c.z).atan2(x.r - c.r);
            let rel = ((ang - a0) * sweep.signum()).rem_euclid(std::f64::consts::TAU);
            rel <= sweep.abs() || dist(x, p.start()) <= tol || dist(x, p.end()) <= tol
        }
    }
}

fn line_line(a: Point, b: Point, c: Point, d: Point) -> Vec<Point> {
    let (r, s) = ((b.r - a.r, b.z - a.z), (d.r - c.r, d.z - c.z));
    let den = r.0 * s.1 - r.1 * s.0;
    if den.abs() < 1e-300 {
        return Vec::new();
    }
    let t = ((c.r - a.r) * s.1 - (c.z - a.z) * s.0) / den;
    vec![Point::new(a.r + t * r.0, a.z + t * r.1)]
}

fn line_circle(a: Point, b: Point, c: Point, radius: f64) -> Vec<Point> {
    let (dr, dz) = (b.r - a.r, b.z - a.z);
    let (fr, fz) = (a.r - c.r, a.z - c.z);
    let qa = dr * dr + dz * dz;
    let qb = 2.0 * (fr * dr + fz * dz);
    let qc = fr * fr + fz * fz - radius * radius;
    let disc = qb * qb - 4.0 * qa * qc;
    if disc < 0.0 || qa == 0.0 {
        return Vec::new();
    }
    let sq = disc.sqrt();
    [(-qb - sq) / (2.0 * qa), (-qb + sq) / (2.0 * qa)]
        .iter()
        .map(|t| Point::new(a.r + t * dr, a.z + t * dz))
        .collect()
}

fn circle_circle(c1: Point, r1: f64, c2: Point, r2: f64) -> Vec<Point> {
    let d = dist(c1, c2);
    if d == 0.0 || d > r1 + r2 || d < (r1 - r2).abs() {
        return Vec::new();
    }
    let a = (r1 * r1 - r2 * r2 + d * d) / (2.0 * d);
    let h = (r1 * r1 - a * a).max(0.0).sqrt();
    let (ur, uz) = ((c2.r - c1.r) / d, (c2.z - c1.z) / d);
    let m = Point::new(c1.r + a * ur, c1.z + a * uz);
    vec![
        Point::new(m.r - h * uz, m.z + h * ur),
        Point::new(m.r + h * uz, m.z - h * ur),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A bulge of 1 is a half circle: tan(π/4) = 1 (the DXF bulge is tan of a quarter of the
    /// included angle).
    #[test]
    fn unit_bulge_is_a_half_circle() {
        let p = bulge_piece(Point::new(0.0, 0.0), Point::new(2.0, 0.0), 1.0);
        let Piece::Arc {
            c, radius, sweep, ..
        } = p
        else {
            panic!("{p:?}")
        };
        assert!((radius - 1.0).abs() < 1e-12);
        assert!(dist(c, Point::new(1.0, 0.0)) < 1e-12);
        assert!((sweep - std::f64::consts::PI).abs() < 1e-12);
        // Counter-clockwise from (0, 0) to (2, 0) about (1, 0) passes below the chord.
        let mid = p.at(0.5);
        assert!((mid.z + 1.0).abs() < 1e-12, "{mid:?}");
        assert!(dist(p.end(), Point::new(2.0, 0.0)) < 1e-12);
    }
}
