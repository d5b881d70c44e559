//! Outlines read from DXF drawings (`shape = "outline"`): the same bodies drawn in DXF and
//! built from primitives give the same fields, a faceted sphere converges to the closed form,
//! and every kind of bad drawing gets its located message. The drawings are written here with
//! the `dxf` crate's writer (ASCII and binary).

mod common;

use common::holdoff;
use dxf::entities::{Arc, Circle, Entity, EntityType, Line, LwPolyline, Spline};
use dxf::enums::{AcadVersion, Units};
use dxf::{Drawing, LwPolylineVertex, Point as DxfPoint};
use holdoff::drawing::{Axis, DrawingError, Frame, Pick, read_outline};
use holdoff::model::{Point, Shape};

fn on(layer: &str, specific: EntityType) -> Entity {
    let mut e = Entity::new(specific);
    e.common.layer = layer.to_string();
    e
}

fn line(x0: f64, y0: f64, x1: f64, y1: f64) -> EntityType {
    EntityType::Line(Line::new(
        DxfPoint::new(x0, y0, 0.0),
        DxfPoint::new(x1, y1, 0.0),
    ))
}

fn vertex(x: f64, y: f64, bulge: f64) -> LwPolylineVertex {
    LwPolylineVertex {
        x,
        y,
        bulge,
        ..Default::default()
    }
}

/// A drawing (R2013, so that `$INSUNITS` is written) of `entities` in `units`.
fn drawing(units: Units, entities: Vec<Entity>) -> Drawing {
    let mut d = Drawing::new();
    d.header.version = AcadVersion::R2013;
    d.header.default_drawing_units = units;
    for e in entities {
        d.add_entity(e);
    }
    d
}

fn ascii(d: &Drawing) -> Vec<u8> {
    let mut out = Vec::new();
    d.save(&mut out).expect("save");
    out
}

fn pick(layer: &str) -> Pick {
    Pick {
        layer: layer.into(),
        handle: None,
        index: None,
    }
}

fn read(d: &Drawing, layer: &str) -> Result<Shape, Box<DrawingError>> {
    read_outline(&ascii(d), "test.dxf", &pick(layer), None, &Frame::default())
}

/// A solid dome r 0..150 mm, z 400..600 mm with its outer corners filleted by 20 mm, as one
/// closed LWPOLYLINE whose bulges tan(90°/4) make quarter circles.
fn dome_drawing() -> Drawing {
    let q = (std::f64::consts::FRAC_PI_2 / 4.0).tan();
    let mut p = LwPolyline::default();
    p.set_is_closed(true);
    p.vertices = vec![
        vertex(0.0, 400.0, 0.0),
        vertex(130.0, 400.0, q),
        vertex(150.0, 420.0, 0.0),
        vertex(150.0, 580.0, q),
        vertex(130.0, 600.0, 0.0),
        vertex(0.0, 600.0, 0.0),
    ];
    drawing(
        Units::Millimeters,
        vec![on("DOME", EntityType::LwPolyline(p))],
    )
}

/// The signed distance of the drawn dome equals the `rounded_cylinder`'s everywhere (both are
/// exact), in ASCII and in binary DXF; the arcs stay arcs (no sharp corner, radius 20 mm).
#[test]
fn bulged_polyline_is_the_rounded_cylinder() {
    let d = dome_drawing();
    let mut binary = Vec::new();
    d.save_binary(&mut binary).expect("binary");
    let rc = Shape::RoundedRect {
        r0: 0.0,
        r1: 0.15,
        z0: 0.4,
        z1: 0.6,
        corner_radius: 0.02,
    };
    for bytes in [ascii(&d), binary] {
        let s = read_outline(&bytes, "dome.dxf", &pick("DOME"), None, &Frame::default())
            .expect("outline");
        let worst = common::largest_distance_difference(&s, &rc);
        assert!(worst < 1e-12, "largest distance difference {worst} m");
        assert!(s.sharp_corners().is_empty());
        assert!((s.min_radius_of_curvature() - 0.02).abs() < 1e-12);
        let (a, b) = (s.bbox(), rc.bbox());
        for (x, y) in [
            (a.r_min, b.r_min),
            (a.r_max, b.r_max),
            (a.z_min, b.z_min),
            (a.z_max, b.z_max),
        ] {
            assert!((x - y).abs() < 1e-15, "{a:?} {b:?}");
        }
    }
}

fn design(shape: &str) -> String {
    format!(
        r#"title = "dome"
[tank]
inner_radius = "400 mm"
length = "1000 mm"
[gas]
species = "SF6"
pressure = "3 bar"
temperature = "20 degC"
[terminal]
voltage = "300 kV"
[[conductor]]
name = "dome"
{shape}
potential = "terminal"
"#
    )
}

/// Runs `holdoff check --json -` on `toml` with the drawing `dxf` beside it as `d.dxf`.
fn run_json(toml: &str, dxf: Option<&Drawing>) -> (i32, serde_json::Value, String) {
    let dir = tempfile::tempdir().expect("tempdir");
    if let Some(d) = dxf {
        std::fs::write(dir.path().join("d.dxf"), ascii(d)).expect("write dxf");
    }
    let path = dir.path().join("d.toml");
    std::fs::write(&path, toml).expect("write");
    let out = holdoff()
        .arg("check")
        .arg(&path)
        .args(["--json", "-"])
        .output()
        .expect("run");
    let stdout = String::from_utf8_lossy(&out.stdout).to_string();
    let v: serde_json::Value = serde_json::from_str(&stdout)
        .unwrap_or_else(|e| panic!("{e}: {stdout} {}", String::from_utf8_lossy(&out.stderr)));
    (out.status.code().unwrap_or(-1), v, stdout)
}

fn peak(v: &serde_json::Value) -> f64 {
    v["conductors"][0]["peak_surface_field_v_per_m"]
        .as_f64()
        .expect("peak")
}

/// The dome through the whole pipeline, drawn and as a `rounded_cylinder` of the same size:
/// the same peak surface field within 0.5 %.
#[test]
fn drawn_dome_peak_equals_rounded_cylinder() {
    let (_, rc, _) = run_json(
        &design(
            "shape = \"rounded_cylinder\"\nr = [\"0 mm\", \"150 mm\"]\nz = [\"400 mm\", \"600 mm\"]\ncorner_radius = \"20 mm\"",
        ),
        None,
    );
    let (_, drawn, _) = run_json(
        &design("shape = \"outline\"\nfile = \"d.dxf\"\nlayer = \"DOME\""),
        Some(&dome_drawing()),
    );
    let (a, b) = (peak(&rc), peak(&drawn));
    assert!(
        (a - b).abs() / a < 0.005,
        "rounded cylinder {a} V/m, drawn {b} V/m"
    );
}

/// A ring drawn as one CIRCLE is the `torus`: the same distance everywhere and the same peak
/// field through the pipeline (within 0.5 %).
#[test]
fn circle_is_the_torus() {
    let d = drawing(
        Units::Millimeters,
        vec![on(
            "RING",
            EntityType::Circle(Circle::new(DxfPoint::new(200.0, 500.0, 0.0), 25.0)),
        )],
    );
    let s = read(&d, "RING").expect("outline");
    let t = Shape::Torus {
        center_z: 0.5,
        major_radius: 0.2,
        minor_radius: 0.025,
    };
    for i in 0..=60 {
        for j in 0..=60 {
            let p = Point::new(0.1 + 0.2 * i as f64 / 60.0, 0.4 + 0.2 * j as f64 / 60.0);
            assert!((s.sdf(p) - t.sdf(p)).abs() < 1e-12, "{p:?}");
        }
    }
    assert_eq!(s.curved_parts(), t.curved_parts());
    let (_, torus, _) = run_json(
        &design(
            "shape = \"torus\"\ncenter_z = \"500 mm\"\nmajor_radius = \"200 mm\"\nminor_radius = \"25 mm\"",
        ),
        None,
    );
    let (_, drawn, _) = run_json(
        &design("shape = \"outline\"\nfile = \"d.dxf\"\nlayer = \"RING\""),
        Some(&d),
    );
    let (a, b) = (peak(&torus), peak(&drawn));
    assert!((a - b).abs() / a < 0.005, "torus {a} V/m, drawn {b} V/m");
}

/// A sphere drawn as many short LINEs (a half circle of chords closed along the axis, the
/// pieces loose and in no order) converges to the concentric-spheres closed form
/// E(a) = V·b/(a·(b − a)) for inner radius a, outer radius b (Gauss's law for the field
/// between concentric spheres; Kuffel, Zaengl & Kuffel, High Voltage Engineering:
/// Fundamentals, 2nd ed., ch. 4) as the chords get shorter, as the polygon of the same points
/// does (tests/polygons.rs).
#[test]
fn many_lines_converge_to_the_sphere() {
    let (a, b, v): (f64, f64, f64) = (0.1, 0.2, 1e6);
    let exact = v * b / (a * (b - a));
    let mut errors = Vec::new();
    for edges in [48usize, 96, 192] {
        let pts: Vec<(f64, f64)> = (0..=edges)
            .map(|k| {
                let t =
                    -std::f64::consts::FRAC_PI_2 + std::f64::consts::PI * k as f64 / edges as f64;
                ((1e3 * a * t.cos()).max(0.0), 1e3 * (b + a * t.sin()))
            })
            .collect();
        // Every other chord reversed, odd ones first: the reader must chain them.
        let mut ents: Vec<Entity> = Vec::new();
        for k in (0..edges)
            .filter(|k| k % 2 == 1)
            .chain((0..edges).step_by(2))
        {
            let (p, q) = (pts[k], pts[k + 1]);
            let l = if k % 3 == 0 {
                line(q.0, q.1, p.0, p.1)
            } else {
                line(p.0, p.1, q.0, q.1)
            };
            ents.push(on("SPHERE", l));
        }
        ents.push(on("SPHERE", line(0.0, pts[0].1, 0.0, pts[edges].1)));
        let shape = read(&drawing(Units::Millimeters, ents), "SPHERE").expect("outline");
        assert!(shape.sharp_corners().is_empty());
        let e = common::peak_in_spherical_tank(shape, b, v);
        errors.push((e - exact).abs() / exact);
    }
    println!("drawn faceted sphere errors (48, 96, 192 lines): {errors:?}");
    // As for the polygon: each joint is a weak singularity whose excess falls about linearly
    // with the chord length.
    for w in errors.windows(2) {
        assert!(w[1] * 1.6 < w[0], "{errors:?}");
    }
    assert!(errors[2] < 0.025, "{errors:?}");
}

/// A square ring of loose LINEs and one ARC, chained: two sharp outer corners reported as
/// singularities exactly where the drawing has them, and none where the arc rounds.
#[test]
fn sharp_corners_are_found_as_for_a_polygon() {
    let d = drawing(
        Units::Meters,
        vec![
            on("R", line(0.1, 0.0, 0.3, 0.0)),
            on("R", line(0.3, 0.0, 0.3, 0.15)),
            on(
                "R",
                EntityType::Arc(Arc::new(DxfPoint::new(0.25, 0.15, 0.0), 0.05, 0.0, 90.0)),
            ),
            on("R", line(0.25, 0.2, 0.1, 0.2)),
            on("R", line(0.1, 0.2, 0.1, 0.0)),
        ],
    );
    let s = read(&d, "R").expect("outline");
    let poly = Shape::polygon(
        vec![
            Point::new(0.1, 0.0),
            Point::new(0.3, 0.0),
            Point::new(0.3, 0.2),
            Point::new(0.1, 0.2),
        ],
        0.0,
    );
    let mut corners = s.sharp_corners();
    corners.sort_by(|a, b| (a.r, a.z).partial_cmp(&(b.r, b.z)).expect("finite"));
    assert_eq!(
        corners,
        vec![
            Point::new(0.1, 0.0),
            Point::new(0.1, 0.2),
            Point::new(0.3, 0.0)
        ]
    );
    assert_eq!(poly.sharp_corners().len(), 4);
    assert_eq!(s.min_radius_of_curvature(), 0.0);
    let (r, z) = s.grid_hints();
    assert!(r.contains(&0.3) && r.contains(&0.1) && z.contains(&0.0) && z.contains(&0.2));
}

// ----------------------------------------------------------------------------------------
// Bad drawings: one test per kind, with its message.

fn message(r: Result<Shape, Box<DrawingError>>) -> String {
    match r {
        Ok(s) => panic!("expected an error, got {s:?}"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn open_loop_gives_the_gap() {
    let d = drawing(
        Units::Millimeters,
        vec![
            on("P", line(10.0, 0.0, 50.0, 0.0)),
            on("P", line(50.0, 0.0, 50.0, 40.0)),
            on("P", line(50.0, 40.0, 10.0, 40.0)),
            on("P", line(10.0, 40.0, 10.0, 0.5)),
        ],
    );
    let m = message(read(&d, "P"));
    assert!(
        m.contains("not closed") && m.contains("gap of 0.5 drawing units"),
        "{m}"
    );
    assert!(m.contains("test.dxf") && m.contains("layer \"P\""), "{m}");
    assert!(
        m.contains("(x 10, y 0.5)") && m.contains("(x 10, y 0)"),
        "{m}"
    );
}

#[test]
fn self_intersection_is_located() {
    // A bow tie: the two slanted edges cross at (30, 20).
    let d = drawing(
        Units::Millimeters,
        vec![
            on("P", line(10.0, 0.0, 50.0, 40.0)),
            on("P", line(50.0, 40.0, 50.0, 0.0)),
            on("P", line(50.0, 0.0, 10.0, 40.0)),
            on("P", line(10.0, 40.0, 10.0, 0.0)),
        ],
    );
    let m = message(read(&d, "P"));
    assert!(
        m.contains("crosses itself") && m.contains("(x 30, y 20)"),
        "{m}"
    );
}

#[test]
fn outline_across_the_axis_is_refused() {
    let d = drawing(
        Units::Millimeters,
        vec![on(
            "P",
            EntityType::Circle(Circle::new(DxfPoint::new(5.0, 100.0, 0.0), 20.0)),
        )],
    );
    let m = message(read(&d, "P"));
    assert!(
        m.contains("crosses the axis") && m.contains("r = -15 drawing units at (x -15, y 100)"),
        "{m}"
    );
    assert!(m.contains("r = x of the drawing"), "{m}");
}

/// The dome of [`dome_drawing`] drawn lying down, as a drawing office often draws a column:
/// the axis along the drawing's x, the radius up its y, and the whole moved so that the axis
/// point z = 0 sits at drawing (x0, y0) mm. Swapping x and y mirrors the drawing, so each
/// bulge changes sign (the arc turns the other way).
fn dome_drawing_lying(x0: f64, y0: f64) -> Drawing {
    let q = (std::f64::consts::FRAC_PI_2 / 4.0).tan();
    let mut p = LwPolyline::default();
    p.set_is_closed(true);
    p.vertices = [
        (0.0, 400.0, 0.0),
        (130.0, 400.0, q),
        (150.0, 420.0, 0.0),
        (150.0, 580.0, q),
        (130.0, 600.0, 0.0),
        (0.0, 600.0, 0.0),
    ]
    .iter()
    .map(|&(r, z, b)| vertex(z + x0, r + y0, -b))
    .collect();
    drawing(
        Units::Millimeters,
        vec![on("DOME", EntityType::LwPolyline(p))],
    )
}

/// The lying dome placed with `axis = x` and its origin is the upright dome: the signed
/// distances agree to 1e-12 m everywhere (the same body built a second way), the arcs stay
/// arcs of 20 mm, and the source says how the drawing was placed. Read upright instead, the
/// same drawing is refused at the axis, with the radius the reader took.
#[test]
fn a_drawing_lying_down_is_placed_by_its_axis_and_origin() {
    let (x0, y0) = (-1000.0, 250.0);
    let d = dome_drawing_lying(x0, y0);
    let frame = Frame {
        axis: Axis::X,
        origin: (x0 * 1e-3, y0 * 1e-3),
    };
    let lying = read_outline(&ascii(&d), "lying.dxf", &pick("DOME"), None, &frame).expect("lying");
    let upright = read(&dome_drawing(), "DOME").expect("upright");
    let worst = common::largest_distance_difference(&lying, &upright);
    assert!(worst < 1e-12, "largest distance difference {worst} m");
    assert!(lying.sharp_corners().is_empty());
    assert!((lying.min_radius_of_curvature() - 0.02).abs() < 1e-12);
    let Shape::Drawn { source, .. } = &lying else {
        panic!("{lying:?}")
    };
    assert!(
        source.frame.contains("axis along the drawing's x")
            && source.frame.contains("r = y − 250.0 mm"),
        "{}",
        source.frame
    );
    let m = message(read(&d, "DOME"));
    assert!(
        m.contains("crosses the axis") && m.contains("r = x of the drawing"),
        "{m}"
    );
}

/// The same through the design file and the pipeline: `axis = "x"` with `origin` gives the
/// peak of the upright drawing (the body is the same to 1e-12 m, so the peaks agree far inside
/// the 0.5 % of the drawn-against-primitive checks); a direction that is neither x nor y is a
/// located problem listing what is accepted.
#[test]
fn axis_and_origin_in_the_design_file() {
    let (_, upright, _) = run_json(
        &design("shape = \"outline\"\nfile = \"d.dxf\"\nlayer = \"DOME\""),
        Some(&dome_drawing()),
    );
    let lying_keys = "shape = \"outline\"\nfile = \"d.dxf\"\nlayer = \"DOME\"\naxis = \"x\"\norigin = [\"-1 m\", \"250 mm\"]";
    let (_, lying, _) = run_json(
        &design(lying_keys),
        Some(&dome_drawing_lying(-1000.0, 250.0)),
    );
    let (a, b) = (peak(&upright), peak(&lying));
    assert!((a - b).abs() / a < 1e-6, "upright {a} V/m, lying {b} V/m");

    let dir = tempfile::tempdir().expect("tempdir");
    std::fs::write(dir.path().join("d.dxf"), ascii(&dome_drawing())).expect("dxf");
    let path = dir.path().join("d.toml");
    std::fs::write(
        &path,
        design("shape = \"outline\"\nfile = \"d.dxf\"\nlayer = \"DOME\"\naxis = \"z\""),
    )
    .expect("write");
    let out = holdoff().arg("check").arg(&path).output().expect("run");
    let text = String::from_utf8_lossy(&out.stderr).to_string();
    assert_eq!(out.status.code(), Some(2), "{text}");
    assert!(
        text.contains("line 16") && text.contains("conductor[1].axis") && text.contains("\"z\""),
        "{text}"
    );
    assert!(
        text.contains("accepted: \"y\"") && text.contains("or \"x\""),
        "{text}"
    );
}

#[test]
fn missing_layer_lists_the_layers() {
    let d = dome_drawing();
    let m = message(read(&d, "TERMINAL"));
    assert!(
        m.contains("no entities on layer \"TERMINAL\"") && m.contains("DOME"),
        "{m}"
    );
}

#[test]
fn spline_is_refused_with_a_way_out() {
    let s = Spline {
        control_points: vec![
            DxfPoint::new(20.0, 10.0, 0.0),
            DxfPoint::new(40.0, 30.0, 0.0),
        ],
        ..Default::default()
    };
    let d = drawing(
        Units::Millimeters,
        vec![
            on("P", EntityType::Spline(s)),
            on("P", line(20.0, 10.0, 40.0, 30.0)),
        ],
    );
    let m = message(read(&d, "P"));
    assert!(
        m.contains("is a SPLINE") && m.contains("(x 20, y 10)"),
        "{m}"
    );
    assert!(m.contains("convert the curve to arcs and polylines"), "{m}");
}

#[test]
fn units_must_be_known() {
    let d = drawing(
        Units::Unitless,
        vec![on(
            "P",
            EntityType::Circle(Circle::new(DxfPoint::new(50.0, 100.0, 0.0), 20.0)),
        )],
    );
    let m = message(read(&d, "P"));
    assert!(m.contains("gives no length unit"), "{m}");
    // The design's unit serves when the header has none, and scales the drawing.
    let s = read_outline(
        &ascii(&d),
        "t.dxf",
        &pick("P"),
        Some("mm"),
        &Frame::default(),
    )
    .expect("with units");
    assert!((s.min_radius_of_curvature() - 0.02).abs() < 1e-15);
    // A design unit that contradicts the header is refused, never silently preferred.
    let d = drawing(Units::Inches, vec![on("P", line(0.0, 0.0, 1.0, 1.0))]);
    let m = message(read_outline(
        &ascii(&d),
        "t.dxf",
        &pick("P"),
        Some("mm"),
        &Frame::default(),
    ));
    assert!(
        m.contains("gives the unit in but the design says \"mm\""),
        "{m}"
    );
}

#[test]
fn several_loops_need_a_pick() {
    let c = |x: f64| {
        on(
            "P",
            EntityType::Circle(Circle::new(DxfPoint::new(x, 100.0, 0.0), 10.0)),
        )
    };
    let d = drawing(Units::Millimeters, vec![c(50.0), c(100.0)]);
    let m = message(read(&d, "P"));
    assert!(
        m.contains("holds 2 closed loops") && m.contains("loop 2: from entity"),
        "{m}"
    );
    let second = read_outline(
        &ascii(&d),
        "t.dxf",
        &Pick {
            layer: "P".into(),
            handle: None,
            index: Some(2),
        },
        None,
        &Frame::default(),
    )
    .expect("index 2");
    assert!((second.bbox().r_min - 0.09).abs() < 1e-12);
    let handle = format!("{:X}", d.entities().next().expect("first").common.handle.0);
    let first = read_outline(
        &ascii(&d),
        "t.dxf",
        &Pick {
            layer: "P".into(),
            handle: Some(handle),
            index: None,
        },
        None,
        &Frame::default(),
    )
    .expect("by handle");
    assert!((first.bbox().r_min - 0.04).abs() < 1e-12);
}

/// The design-file side: a bad drawing is a located problem of the design (key, line), and
/// `check --expand` shows the drawing's source.
#[test]
fn design_file_reports_and_lists_the_drawing() {
    let (code, _, text) = {
        let dir = tempfile::tempdir().expect("tempdir");
        std::fs::write(dir.path().join("d.dxf"), ascii(&dome_drawing())).expect("dxf");
        let path = dir.path().join("d.toml");
        std::fs::write(
            &path,
            design("shape = \"outline\"\nfile = \"d.dxf\"\nlayer = \"TERMINAL\""),
        )
        .expect("write");
        let out = holdoff().arg("check").arg(&path).output().expect("run");
        (
            out.status.code().unwrap_or(-1),
            (),
            String::from_utf8_lossy(&out.stderr).to_string()
                + &String::from_utf8_lossy(&out.stdout),
        )
    };
    assert_eq!(code, 2, "{text}");
    assert!(text.contains("conductor[1].layer"), "{text}");
    assert!(text.contains("layers with entities: DOME"), "{text}");

    let dir = tempfile::tempdir().expect("tempdir");
    let bytes = ascii(&dome_drawing());
    std::fs::write(dir.path().join("d.dxf"), &bytes).expect("dxf");
    let path = dir.path().join("d.toml");
    std::fs::write(
        &path,
        design("shape = \"outline\"\nfile = \"d.dxf\"\nlayer = \"DOME\""),
    )
    .expect("write");
    let out = holdoff()
        .arg("check")
        .arg(&path)
        .arg("--expand")
        .output()
        .expect("run");
    let text = String::from_utf8_lossy(&out.stdout).to_string();
    let sha = holdoff::report::sha256_hex(&String::from_utf8(bytes).expect("ascii"));
    assert!(
        text.contains("outline from d.dxf layer \"DOME\" (1 entities, 6 pieces"),
        "{text}"
    );
    // The whole digest, so that the listing (and the note) proves which drawing was modelled.
    assert!(text.contains(&sha), "{sha} {text}");
    assert!(
        text.contains("axis along the drawing's y at x = 0"),
        "{text}"
    );
}

/// Random bytes, and a valid drawing with random bytes changed, never panic the reader: each
/// gives a shape or an error (a fixed-seed stand-in for the fuzz target fuzz/fuzz_targets/
/// dxf_reader.rs).
#[test]
fn random_bytes_never_panic() {
    let mut seed: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut next = move || {
        // xorshift64* (Vigna, "An experimental exploration of Marsaglia's xorshift generators").
        seed ^= seed >> 12;
        seed ^= seed << 25;
        seed ^= seed >> 27;
        seed.wrapping_mul(0x2545_F491_4F6C_DD1D)
    };
    let valid = ascii(&dome_drawing());
    for round in 0..300 {
        let bytes: Vec<u8> = if round % 3 == 0 {
            (0..(next() % 2000)).map(|_| next() as u8).collect()
        } else {
            let mut b = valid.clone();
            for _ in 0..(1 + next() % 8) {
                let k = (next() as usize) % b.len();
                b[k] = match next() % 3 {
                    0 => next() as u8,
                    1 => b'0' + (next() % 10) as u8,
                    _ => b'\n',
                };
            }
            b
        };
        let _ = read_outline(
            &bytes,
            "fuzz.dxf",
            &pick("DOME"),
            Some("mm"),
            &Frame::default(),
        );
    }
}

/// A drawing whose header holds a creation date past the calendar's range (found by fuzzing
/// the reader, tests/data/dxf/header_date_overflow.dxf): the DXF reader gives up inside, and
/// holdoff reports a located, unreadable drawing with exit code 2 and no panic message.
#[test]
fn a_drawing_that_stops_the_reader_is_a_located_problem() {
    let dir = tempfile::tempdir().expect("tempdir");
    let data = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/dxf/header_date_overflow.dxf");
    std::fs::copy(&data, dir.path().join("d.dxf")).expect("copy");
    let path = dir.path().join("d.toml");
    std::fs::write(
        &path,
        design("shape = \"outline\"\nfile = \"d.dxf\"\nlayer = \"TERMINAL\"\nunits = \"mm\""),
    )
    .expect("write");
    let out = holdoff().arg("check").arg(&path).output().expect("run");
    let text = String::from_utf8_lossy(&out.stderr).to_string();
    assert_eq!(out.status.code(), Some(2), "{text}");
    assert!(!text.contains("panicked"), "{text}");
    assert!(
        text.contains("conductor[1].file") && text.contains("cannot be read as DXF"),
        "{text}"
    );
}
