//! Why a drawing gives no outline: every message names the file and, where there is one, the
//! layer, the entity handle and the position in drawing units.

use super::{At, short};

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
        "drawing {file}, layer \"{layer}\": entity {handle} crosses the axis: it reaches r = {} drawing units at {at}; the half-section lies at r >= 0, with {radius}",
        short(*r)
    )]
    CrossesAxis {
        file: String,
        layer: String,
        handle: String,
        at: At,
        /// The radius reached, in drawing units (negative).
        r: f64,
        /// How the drawing measures the radius ("r = x of the drawing").
        radius: String,
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
