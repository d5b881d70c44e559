//! Outlines from DXF drawings of the axisymmetric half-section.
//!
//! Input: the bytes of a DXF drawing (ASCII or binary, read with the `dxf` crate), the layer
//! that holds the outline (and, when the layer holds several closed loops, which one), the
//! drawing's length unit when its header (`$INSUNITS`) does not give one, and how the drawing
//! lies against the model's (r, z) half-plane ([`Frame`]: by default the drawing's x is the
//! radius r, its y the axial position z, the axis at x = 0). Output: a `geometry::Shape::Drawn`
//! in metres whose lines and arcs are the drawing's own (arcs stay true arcs), with its source
//! (file, layer, SHA-256 of the bytes, entity count, frame); or a located [`DrawingError`]
//! naming the file, the layer, the entity handle and the position in drawing units.
//!
//! LINE, ARC, CIRCLE, LWPOLYLINE and POLYLINE (with bulges, i.e. arcs between vertices) are
//! read; loose pieces are chained into closed loops where their ends lie within
//! [`CHAIN_TOLERANCE`] of each other. Everything else on the layer is refused by name.

mod chain;
mod checks;
mod entities;
mod error;
mod frame;
mod pieces;

pub use error::DrawingError;
pub use frame::{Axis, Frame};

use crate::geometry::{DrawingSource, Piece, Point, Shape};
use chain::{Loop, chain, loop_box, oriented, seg_of};
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

/// A number in drawing units for messages: at most four decimals, no trailing zeros.
fn short(x: f64) -> String {
    let s = format!("{x:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.into() }
}

/// One piece of the outline in the model's (r, z), metres, with the entity it came from.
#[derive(Debug, Clone)]
struct Seg {
    piece: Piece,
    entity: usize,
    handle: String,
}

/// Reads the outline `pick` from the drawing `bytes`, placed in the model by `frame`. `file`
/// names the drawing in messages and in the source; `units` is the design's unit name (see
/// [`UNITS`]) for drawings whose header gives none.
pub fn read_outline(
    bytes: &[u8],
    file: &str,
    pick: &Pick,
    units: Option<&str>,
    frame: &Frame,
) -> Result<Shape, Box<DrawingError>> {
    let drawing = load(bytes, file)?;
    let scale = scale_of(&drawing, file, units)?;
    let layer = pick.layer.as_str();
    let mut read = entities::read_layer(&drawing, file, layer, scale)?;
    if read.entities == 0 {
        return Err(Box::new(DrawingError::MissingLayer {
            file: file.into(),
            layer: layer.into(),
            found: read.others,
        }));
    }
    for s in &mut read.segs {
        s.piece = frame.place(&s.piece);
    }
    let segs = read.segs;
    let ctx = Ctx {
        file,
        layer,
        scale,
        frame: *frame,
    };
    let loops = chain(&segs, &ctx)?;
    let chosen = choose(&segs, &loops, pick, &ctx)?;
    let pieces = oriented(&segs, chosen);
    checks::check_loop(&segs, chosen, &pieces, &ctx)?;
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
        frame: frame.describe(),
    };
    Ok(Shape::drawn(pieces, source))
}

/// The drawing, or why its bytes are not one. The DXF reader can panic on malformed content
/// (a header date past the calendar's range, for one, found by fuzzing): the panic is caught
/// and becomes the located error, and no panic message reaches the user ([`quietly`]).
fn load(bytes: &[u8], file: &str) -> Result<dxf::Drawing, Box<DrawingError>> {
    let mut cursor = std::io::Cursor::new(bytes);
    let unreadable = |reason: String| {
        Box::new(DrawingError::Unreadable {
            file: file.into(),
            reason,
        })
    };
    match quietly(move || dxf::Drawing::load(&mut cursor)) {
        Ok(Ok(d)) => Ok(d),
        Ok(Err(e)) => Err(unreadable(e.to_string())),
        Err(payload) => {
            let what = payload
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| payload.downcast_ref::<String>().cloned());
            Err(unreadable(match what {
                Some(w) => format!("the reader gave up on malformed content ({w})"),
                None => "the reader gave up on malformed content".into(),
            }))
        }
    }
}

thread_local! {
    /// Set while this thread runs the DXF reader: its panics are caught and reported as
    /// errors, so the panic hook stays silent for them.
    static QUIET: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// Runs `f`, catching a panic, with the panic hook silent for this thread meanwhile. The hook
/// is wrapped once per process; other threads' panics (and this thread's outside `f`) reach
/// the hook that was there before.
fn quietly<T>(f: impl FnOnce() -> T) -> std::thread::Result<T> {
    static WRAP: std::sync::Once = std::sync::Once::new();
    WRAP.call_once(|| {
        let before = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            if !QUIET.with(|q| q.get()) {
                before(info)
            }
        }));
    });
    QUIET.with(|q| q.set(true));
    let out = std::panic::catch_unwind(std::panic::AssertUnwindSafe(f));
    QUIET.with(|q| q.set(false));
    out
}

/// The loop the design picks: by an entity's handle, by number, or the only one.
fn choose<'a>(
    segs: &[Seg],
    loops: &'a [Loop],
    pick: &Pick,
    ctx: &Ctx,
) -> Result<&'a Loop, Box<DrawingError>> {
    let list = || -> Vec<String> {
        loops
            .iter()
            .enumerate()
            .map(|(k, l)| {
                let b = loop_box(segs, l);
                let (lo, hi) = (ctx.at(Point::new(b.0, b.2)), ctx.at(Point::new(b.1, b.3)));
                format!(
                    "loop {}: from entity {}, x {} to {}, y {} to {}",
                    k + 1,
                    seg_of(segs, l[0]).handle,
                    short(lo.x.min(hi.x)),
                    short(lo.x.max(hi.x)),
                    short(lo.y.min(hi.y)),
                    short(lo.y.max(hi.y))
                )
            })
            .collect()
    };
    let no_such = |wanted: String| {
        Box::new(DrawingError::NoSuchLoop {
            file: ctx.file.into(),
            layer: ctx.layer.into(),
            wanted,
            loops: list(),
        })
    };
    if let Some(h) = &pick.handle {
        let h = h.trim().trim_start_matches("0x").to_uppercase();
        loops
            .iter()
            .find(|l| l.iter().any(|&s| seg_of(segs, s).handle == h))
            .ok_or_else(|| no_such(format!("made with entity {h}")))
    } else if let Some(i) = pick.index {
        loops
            .get(i.wrapping_sub(1))
            .ok_or_else(|| no_such(format!("number {i}")))
    } else if loops.len() == 1 {
        Ok(&loops[0])
    } else {
        Err(Box::new(DrawingError::SeveralLoops {
            file: ctx.file.into(),
            layer: ctx.layer.into(),
            loops: list(),
        }))
    }
}

/// What messages need to locate a point: the file, the layer, the unit and the frame.
struct Ctx<'a> {
    file: &'a str,
    layer: &'a str,
    scale: f64,
    frame: Frame,
}

impl Ctx<'_> {
    /// A model point (r, z) in metres as a drawing position in drawing units.
    fn at(&self, p: Point) -> At {
        let (x, y) = self.frame.unplace(p);
        At {
            x: x / self.scale,
            y: y / self.scale,
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
