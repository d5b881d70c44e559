//! Writes the invented example drawing `examples/drawings/terminal_300kv.dxf` used by
//! `examples/outline_terminal.toml`: the half-section (x = radius, y = axial position, in
//! millimetres) of a small 300 kV terminal in SF6, drawn on three layers.
//!
//! - `TERMINAL`: a solid dome on the axis, a rectangle whose two outer corners are filleted
//!   (one closed LWPOLYLINE with bulges);
//! - `HOOP`: a grading hoop of round section (one CIRCLE);
//! - `POST`: an insulating post from the tank floor to the dome with one round groove in its
//!   side, as loose LINEs and an ARC to be chained.
//!
//! Run with `cargo run --example make_drawing`; the output is the same on every run.

use dxf::entities::{Arc, Circle, Entity, EntityType, Line, LwPolyline};
use dxf::enums::{AcadVersion, Units};
use dxf::{Drawing, LwPolylineVertex, Point};

fn on(layer: &str, specific: EntityType) -> Entity {
    let mut e = Entity::new(specific);
    e.common.layer = layer.to_string();
    e
}

fn vertex(x: f64, y: f64, bulge: f64) -> LwPolylineVertex {
    LwPolylineVertex {
        x,
        y,
        bulge,
        ..Default::default()
    }
}

/// The header values a new drawing would take from the clock and the random generator, fixed
/// so that the drawing (and its SHA-256 in the review note) is the same on every run.
const FIXED_HEADER: &str = "  0\nSECTION\n  2\nHEADER\n  9\n$ACADVER\n  1\nAC1027\n\
  9\n$TDCREATE\n 40\n2461000.5\n  9\n$TDUCREATE\n 40\n2461000.5\n\
  9\n$TDUPDATE\n 40\n2461000.5\n  9\n$TDUUPDATE\n 40\n2461000.5\n\
  9\n$FINGERPRINTGUID\n  2\n{6F1D0000-0000-4000-8000-000000000001}\n\
  9\n$VERSIONGUID\n  2\n{6F1D0000-0000-4000-8000-000000000002}\n  0\nENDSEC\n  0\nEOF\n";

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let fixed = Drawing::load(&mut FIXED_HEADER.as_bytes())?;
    let mut d = Drawing::new();
    d.header.creation_date = fixed.header.creation_date;
    d.header.creation_date_universal = fixed.header.creation_date_universal;
    d.header.update_date = fixed.header.update_date;
    d.header.update_date_universal = fixed.header.update_date_universal;
    d.header.fingerprint_guid = fixed.header.fingerprint_guid;
    d.header.version_guid = fixed.header.version_guid;
    d.header.version = AcadVersion::R2013;
    d.header.default_drawing_units = Units::Millimeters;

    // Dome: r 0..200 mm, z 500..700 mm, outer corners filleted with 40 mm. A bulge of
    // tan(90°/4) makes a quarter circle.
    let q = (std::f64::consts::FRAC_PI_2 / 4.0).tan();
    let mut dome = LwPolyline::default();
    dome.set_is_closed(true);
    dome.vertices = vec![
        vertex(0.0, 500.0, 0.0),
        vertex(160.0, 500.0, q),
        vertex(200.0, 540.0, 0.0),
        vertex(200.0, 660.0, q),
        vertex(160.0, 700.0, 0.0),
        vertex(0.0, 700.0, 0.0),
    ];
    d.add_entity(on("TERMINAL", EntityType::LwPolyline(dome)));

    // Hoop: 12 mm section radius on a 230 mm ring at the dome's lower edge.
    d.add_entity(on(
        "HOOP",
        EntityType::Circle(Circle::new(Point::new(230.0, 520.0, 0.0), 12.0)),
    ));

    // Post: r 0..60 mm from z 0 to 500 mm with a groove of 10 mm radius at z = 300 mm, drawn
    // as loose pieces in no particular order or sense.
    let line = |x0: f64, y0: f64, x1: f64, y1: f64| {
        EntityType::Line(Line::new(Point::new(x0, y0, 0.0), Point::new(x1, y1, 0.0)))
    };
    d.add_entity(on("POST", line(60.0, 500.0, 60.0, 310.0)));
    d.add_entity(on("POST", line(0.0, 0.0, 60.0, 0.0)));
    d.add_entity(on("POST", line(0.0, 500.0, 60.0, 500.0)));
    d.add_entity(on("POST", line(0.0, 0.0, 0.0, 500.0)));
    d.add_entity(on("POST", line(60.0, 0.0, 60.0, 290.0)));
    d.add_entity(on(
        "POST",
        EntityType::Arc(Arc::new(Point::new(60.0, 300.0, 0.0), 10.0, 90.0, 270.0)),
    ));

    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/drawings");
    std::fs::create_dir_all(&dir)?;
    let path = dir.join("terminal_300kv.dxf");
    let tmp = dir.join("terminal_300kv.dxf.tmp");
    d.save_file(&tmp)?;
    std::fs::rename(&tmp, &path)?;
    println!("wrote {}", path.display());
    Ok(())
}
