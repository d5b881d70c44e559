//! Margins, hold-off voltage and field lines against outside references: uniform-gap breakdown
//! (docs/references.md §2–3 check values), Peek's corona onset (§5), the concentric-spheres field
//! (§10), and the scaling laws that follow from the linearity of electrostatics. Each test
//! names its source; "from memory" and "common practice" say so where docs/references.md marks a
//! value [M] or [P].

use crate::analysis::{Analysis, analyze};
use crate::breakdown::convert::{ATM_PA, T0_K};
use crate::breakdown::corona::{self, PeekGeometry};
use crate::breakdown::gas::{GasOptions, pure};
use crate::breakdown::{Criterion, LimitKind, uniform};
use crate::field::FieldMap;
use crate::fieldline::{self, LineEnd, TraceParams};
use crate::geometry::Shape;
use crate::margin::{self, Margins, RowMedium, Status};
use crate::model::{Conductor, MeshSpec, Model, Origin, PotentialSpec, Tank, Wall};
use crate::solve::SolverParams;

const DEMO: &str = include_str!("../../examples/demo_750kv.toml");

const CORONA_DEMO: &str = include_str!("../../examples/demo_corona_wire.toml");

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn solve(model: &Model) -> Analysis {
    analyze(model, &SolverParams::default(), None).expect("analysis")
}

fn margins_of(model: &Model) -> (Analysis, Margins) {
    let fine = solve(model);
    let m = margin::evaluate(model, &fine, None).expect("margins");
    (fine, m)
}

/// A uniform gap: the tank floor (earthed) below a plate that fills the tank radius above
/// z = gap, with a zero-normal-field side wall, so that the field is V/gap everywhere.
fn uniform_gap(species: &str, pressure_pa: f64, gap: f64, v: f64) -> Model {
    let radius = 0.02;
    let mut m = Model::new(
        "uniform gap",
        Tank::Cylinder {
            inner_radius: radius,
            length: 2.0 * gap,
        },
        v,
    );
    m.side = Wall::Symmetry;
    m.gas = Some(pure(species, pressure_pa, T0_K));
    m.conductors.push(Conductor {
        name: "plate".into(),
        shape: Shape::RoundedRect {
            r0: 0.0,
            r1: 2.0 * radius,
            z0: gap,
            z1: 4.0 * gap,
            corner_radius: 0.0,
        },
        potential: PotentialSpec::Terminal { fraction: 1.0 },
        origin: Origin::Program,
    });
    m.mesh = MeshSpec::graded(gap / 40.0, gap / 40.0, 1.0);
    m
}

fn row<'a>(m: &'a Margins, item: &str, criterion: Criterion) -> &'a margin::MarginRow {
    m.rows
        .iter()
        .find(|r| r.item == item && r.criterion == criterion)
        .unwrap_or_else(|| panic!("no row {item} / {criterion:?}"))
}

/// A sphere gap in air at 1 atm, 20 °C: two spheres of diameter `d_sphere` on the axis, `gap`
/// apart, the upper at the terminal voltage and the lower earthed, in an earthed tank 2.5
/// diameters clear of them sideways and about 5 diameters above and below.
fn sphere_gap(d_sphere: f64, gap: f64, v: f64) -> Model {
    let r = d_sphere / 2.0;
    let length = 10.0 * d_sphere + gap;
    let mut m = Model::new(
        "sphere gap",
        Tank::Cylinder {
            inner_radius: 5.0 * d_sphere,
            length,
        },
        v,
    );
    m.gas = Some(pure("air", ATM_PA, T0_K));
    let mid = length / 2.0;
    for (name, center_z, potential) in [
        (
            "hv sphere",
            mid + gap / 2.0 + r,
            PotentialSpec::Terminal { fraction: 1.0 },
        ),
        ("earthed sphere", mid - gap / 2.0 - r, PotentialSpec::Ground),
    ] {
        m.conductors.push(Conductor {
            name: name.into(),
            shape: Shape::Sphere {
                center_z,
                radius: r,
            },
            potential,
            origin: Origin::Program,
        });
    }
    m.mesh = MeshSpec::graded(gap / 40.0, r, 1.1);
    m
}

#[test]
fn sphere_gaps_agree_with_the_calibration_tables_by_the_streamer_criterion() {
    // Sphere-gap calibration tables, AC and DC of either polarity, one sphere earthed, standard
    // atmosphere, peak kV (docs/references.md §16): IEC 60052 values as reproduced in a public
    // sphere-gap voltage table ("Sphere Gap Breakdown Voltage Tables", the jimlux HV pages),
    // the same values as docs/references.md §2 [C, secondary], and, where marked, the IEC 60052
    // table as recalled from memory (Kuffel, Zaengl & Kuffel, High Voltage Engineering:
    // Fundamentals, 2nd ed. 2000, Ch. 3 sphere-gap table), cross-checked against the AIEE
    // sphere-gap table (25 °C) as reproduced in a public spark-gap page. Gaps up to half the
    // diameter; the ideal hold-off within 5 % (the tables' own accuracy is 3 %).
    let rows: [(f64, f64, f64, &str); 8] = [
        (
            0.05,
            0.01,
            32.0e3,
            "IEC 60052 via the public table: 5 cm spheres, 1 cm",
        ),
        (
            0.05,
            0.02,
            57.5e3,
            "IEC 60052 via the public table: 5 cm spheres, 2 cm",
        ),
        (
            0.10,
            0.02,
            58.0e3,
            "IEC 60052 via the public table: 10 cm spheres, 2 cm",
        ),
        (
            0.10,
            0.03,
            85.0e3,
            "IEC 60052 via the public table: 10 cm spheres, 3 cm",
        ),
        (
            0.10,
            0.04,
            105.0e3,
            "IEC 60052, recalled from memory (AIEE 105 kV at 25 °C)",
        ),
        (
            0.10,
            0.05,
            123.0e3,
            "IEC 60052 via the public table: 10 cm spheres, 5 cm",
        ),
        (
            0.25,
            0.075,
            195.0e3,
            "IEC 60052, recalled from memory (AIEE 194 kV at 25 °C)",
        ),
        (
            0.25,
            0.10,
            244.0e3,
            "IEC 60052, recalled from memory (AIEE 244 kV at 25 °C)",
        ),
    ];
    for (d_sphere, gap, table, source) in rows {
        let model = sphere_gap(d_sphere, gap, 50e3);
        let (_, m) = margins_of(&model);
        let ideal = m.holdoff_ideal.as_ref().expect("hold-off");
        assert!(
            rel(ideal.voltage_v, table) < 0.05,
            "{source}: hold-off {:.1} kV vs table {:.1} kV",
            ideal.voltage_v / 1e3,
            table / 1e3
        );
        // A gap (d <= 2 local radii): the streamer criterion governs, Peek is a cross-check that
        // stays visible with its number and says why it does not govern.
        let s = row(&m, "hv sphere", Criterion::StreamerIntegral);
        assert!(s.in_holdoff && !s.cross_check);
        assert!(s.note.as_deref().unwrap_or("").contains("governs this gap"));
        let peek = row(&m, "hv sphere", Criterion::PeekCorona);
        assert!(peek.cross_check && !peek.in_holdoff && peek.margin.is_some());
        assert!(
            peek.note
                .as_deref()
                .unwrap_or("")
                .contains("streamer criterion")
        );
        assert!(peek.criterion_name.contains("cross-check"));
        assert_ne!(ideal.criterion, Criterion::PeekCorona, "{source}");
    }
}

/// An N2 gap at 0.15 bar: a rounded disc (radius 40 mm, 20 mm thick, edge radius `edge`)
/// 10 mm above the earthed tank floor, in a tank of radius 120 mm.
fn disc_gap(edge: f64) -> Model {
    let gap = 0.01;
    let mut m = Model::new(
        "disc gap",
        Tank::Cylinder {
            inner_radius: 0.12,
            length: 0.08,
        },
        20e3,
    );
    m.gas = Some(pure("N2", 0.15e5, T0_K));
    m.conductors.push(Conductor {
        name: "disc".into(),
        shape: Shape::RoundedRect {
            r0: 0.0,
            r1: 0.04,
            z0: gap,
            z1: gap + 0.02,
            corner_radius: edge,
        },
        potential: PotentialSpec::Terminal { fraction: 1.0 },
        origin: Origin::Program,
    });
    m.mesh = MeshSpec::graded(0.00025, 0.004, 1.1);
    m
}

#[test]
fn a_small_edge_radius_never_raises_the_holdoff_above_the_flat_gap() {
    // The flat centre of the disc is a 10 mm uniform gap: N2 at 0.15 bar breaks at
    // 0.97 x (24.36 pd + 6.72 sqrt(pd)) kV = 6.07 kV, pd = 0.15 bar·cm (Schumann fit, Kuffel,
    // Zaengl & Kuffel 2000 Ch. 5, from memory; N2 = 0.97 x air from 30.4 kV at 1 cm, 1 atm,
    // docs/references.md §2). A 1 mm edge radius must not give a higher hold-off than a 10 mm
    // one, and neither may exceed the flat gap: the streamer integral runs along field lines
    // from the whole stressed surface, not only from the edge where the peak is.
    let pd: f64 = 0.15;
    let uniform = 0.97 * (24.36 * pd + 6.72 * pd.sqrt()) * 1e3;
    let holdoff = |edge: f64| {
        let (_, m) = margins_of(&disc_gap(edge));
        (m.holdoff_ideal.as_ref().expect("hold-off").voltage_v, m)
    };
    let (small, m_small) = holdoff(0.001);
    let (large, _) = holdoff(0.01);
    assert!(
        small <= large * 1.01,
        "edge 1 mm: {small} V vs 10 mm: {large} V"
    );
    for v in [small, large] {
        assert!(
            v <= uniform * 1.01 && v > 0.9 * uniform,
            "{v} V vs {uniform} V"
        );
    }
    // On the 1 mm edge the line from the peak leaves the fit window (no number, shown) and the
    // worst valid line starts elsewhere on the surface.
    let streamer: Vec<_> = m_small
        .rows
        .iter()
        .filter(|r| r.criterion == Criterion::StreamerIntegral)
        .collect();
    assert!(streamer.iter().any(|r| r.status == Status::OutsideValidity));
    let valid = streamer
        .iter()
        .find(|r| r.margin.is_some())
        .expect("valid line");
    assert!(valid.note.as_deref().unwrap_or("").contains("worst of"));
}

#[test]
fn criteria_are_refused_outside_their_validity_ranges() {
    // Peek's fits hold for relative air densities of about 0.5 (Peek, AIEE 1914: sphere-gap
    // tests from sea level to 18,000 ft) to 1.1 (common practice, no source;
    // docs/references.md §16): at delta = 0.001 the Peek rows give no number and do not pass.
    let mut thin = sphere_gap(0.10, 0.05, 50e3);
    thin.gas = Some(pure("air", 1e-3 * ATM_PA * 298.15 / T0_K, 298.15));
    let (_, m) = margins_of(&thin);
    let peek: Vec<_> = m
        .rows
        .iter()
        .filter(|r| r.criterion == Criterion::PeekCorona)
        .collect();
    assert!(!peek.is_empty());
    for r in peek {
        assert_eq!(r.status, Status::OutsideValidity);
        assert!(r.margin.is_none() && r.limit.is_none());
    }
    // No gas gap breaks down below its minimum sparking potential (Naidu & Kamaraju, from
    // memory: air 327 V, N2 251 V, CO2 420 V; SF6 507 V, Dakin et al., Electra 32, 1974, from
    // memory, unconfirmed; docs/references.md §1): a criterion that would put the breakdown of the
    // field-line gap lower is outside validity. SF6 at 1 mbar: the critical field (361 Td)
    // across a 1 cm uniform gap is 89 V, so that row gives no number.
    let (_, m) = margins_of(&uniform_gap("SF6", 100.0, 0.01, 100.0));
    let crit = row(&m, "plate", Criterion::CriticalField);
    assert_eq!(crit.status, Status::OutsideValidity);
    match &crit.validity {
        crate::breakdown::Validity::OutsideValidity { reason } => {
            assert!(reason.contains("minimum sparking potential"), "{reason}")
        }
        v => panic!("{v:?}"),
    }
    for (species, floor) in [
        ("SF6", 507.0),
        ("air", 327.0),
        ("N2", 251.0),
        ("CO2", 420.0),
    ] {
        let text = DEMO
            .replace("pressure = \"3.0 bar\"", "pressure = \"1 mbar\"")
            .replace("species = \"SF6\"", &format!("species = \"{species}\""));
        let model = crate::design::from_str(&text, "demo at 1 mbar").expect("demo");
        let (_, m) = margins_of(&model);
        if let Some(h) = &m.holdoff_ideal {
            assert!(h.voltage_v >= floor, "{species}: {} V", h.voltage_v);
        }
    }
}

#[test]
fn field_line_between_concentric_spheres_is_radial_with_the_analytic_field() {
    // Concentric spheres a = 0.1 m, b = 0.2 m, 1 MV (docs/references.md §10, check row 24):
    // E(r) = V a b / ((b − a) r²); the field line from the inner sphere runs radially to the
    // tank, length b − a, voltage V.
    let (a, b, v) = (0.1, 0.2, 1.0e6);
    let mut m = Model::new("spheres", Tank::Sphere { inner_radius: b }, v);
    m.conductors.push(Conductor {
        name: "inner".into(),
        shape: Shape::Sphere {
            center_z: b,
            radius: a,
        },
        potential: PotentialSpec::Terminal { fraction: 1.0 },
        origin: Origin::Program,
    });
    let fine = solve(&m);
    let fm = FieldMap::new(&fine.mesh, &m, &fine.solution.phi, &fine.potentials);
    let hot = fine
        .samples
        .iter()
        .filter(|s| s.conductor.conductor_index() == Some(0))
        .max_by(|x, y| x.e.total_cmp(&y.e))
        .expect("samples");
    let line = fieldline::trace(&fm, hot, &TraceParams::default());
    assert_eq!(line.end, LineEnd::Tank);
    assert!(rel(line.length_m, b - a) < 1e-3, "length {}", line.length_m);
    assert!(rel(line.voltage_v, v) < 1e-9);
    // Radial: every sample at distance a + s from the centre.
    for smp in &line.samples {
        let rho = smp.at.r.hypot(smp.at.z - b);
        assert!(
            (rho - (a + smp.s_m)).abs() < 1e-4 * a,
            "{rho} vs {}",
            a + smp.s_m
        );
        if smp.s_m > line.near_surface_m && smp.s_m < b - a - line.near_surface_m {
            let exact = v * a * b / ((b - a) * rho * rho);
            assert!(
                rel(smp.e_v_per_m, exact) < 0.01,
                "E({rho}) = {} vs {exact}",
                smp.e_v_per_m
            );
        }
    }
}

#[test]
fn holdoff_of_a_uniform_sf6_gap_equals_its_breakdown_voltage() {
    // SF6 10 mm at 1 bar and 5 bar: uniform-field breakdown 88.88 kV and 442.9 kV (docs/references.md
    // check rows 14-15 [D], from the from-memory constants of Kuffel et al. 2000 Ch. 5); the
    // ideal hold-off must equal the regime chooser's value within 2 %, and lie within 3 % of the
    // critical-field value 89 kV/(cm·bar) x p x 1 cm (Christophorou & Olthoff 2000, 361 Td,
    // from memory). The as-used hold-off carries the 0.6 large-area derating (common practice).
    for (p, expected) in [(1.0e5, 88.88e3), (5.0e5, 442.9e3)] {
        let gap = 0.01;
        let model = uniform_gap("SF6", p, gap, 50e3);
        let (_, m) = margins_of(&model);
        let ideal = m.holdoff_ideal.as_ref().expect("ideal hold-off");
        let ub =
            uniform::uniform_breakdown(model.gas.as_ref().unwrap(), gap, &GasOptions::default())
                .unwrap();
        assert!(rel(ub.voltage.value, expected) < 1e-3);
        assert!(
            rel(ideal.voltage_v, ub.voltage.value) < 0.02,
            "{p} Pa: hold-off {} vs breakdown {}",
            ideal.voltage_v,
            ub.voltage.value
        );
        assert!(rel(ideal.voltage_v, 89.0e3 * p / 1e5) < 0.03);
        let used = m.holdoff.as_ref().expect("hold-off");
        assert!(rel(used.voltage_v, 0.6 * ideal.voltage_v) < 1e-9);
        // The streamer row reproduces the uniform-field breakdown within 10 %
        // (docs/references.md §4: the integral in a uniform field is the uniform-field criterion).
        let s = row(&m, "plate", Criterion::StreamerIntegral);
        let v_streamer = s.limit_ideal.unwrap() * gap;
        assert!(rel(v_streamer, ub.voltage.value) < 0.10, "{v_streamer}");
        // Every gas row states its derating.
        for r in m.rows.iter().filter(|r| r.medium == RowMedium::Gas) {
            assert_eq!(r.derating.factor, 0.6);
            assert!(r.derating.basis.contains("common practice"));
        }
    }
}

#[test]
fn one_cm_air_gap_holdoff_picks_the_valid_criterion() {
    // 1 cm uniform air gap at 1 atm, 20 °C: Fink & Beatty handbook 31.4 kV peak; IEC 60052
    // sphere gap 31.2-32.0 kV (docs/references.md §2 [C, secondary]); within 3 %. At this pd the
    // two-constant Paschen fit is outside its E/p window (35.5 kV, ~15 % high, check row 5),
    // so the gap row must use the Schumann fit and say so.
    let model = uniform_gap("air", ATM_PA, 0.01, 20e3);
    let (_, m) = margins_of(&model);
    let ideal = m.holdoff_ideal.as_ref().expect("hold-off");
    assert!(rel(ideal.voltage_v, 31.4e3) < 0.03, "{}", ideal.voltage_v);
    let gap = row(&m, "gap plate → tank", Criterion::SchumannAir);
    assert_eq!(gap.kind, LimitKind::Voltage);
    assert!(gap.validity.is_valid());
    assert!(gap.criterion_name.contains("Schumann"));
    assert!(!m.rows.iter().any(|r| r.criterion == Criterion::Paschen));
    // The streamer integral in the uniform field reproduces the same breakdown within 10 %.
    let s = row(&m, "plate", Criterion::StreamerIntegral);
    assert!(rel(s.limit_ideal.unwrap() * 0.01, 31.4e3) < 0.10);
    // The area derating is the one of every gas (0.6, common practice, docs/references.md §16).
    assert_eq!(gap.derating.factor, 0.6);
    assert!(gap.derating.basis.contains("every gas"));
}

#[test]
fn every_gas_is_derated_alike_so_gases_compare_like_for_like() {
    // One area/roughness policy for every gas (docs/references.md §3 for SF6, §16 for the rest:
    // 0.6, common practice): N2 at 12 bar and SF6 at 4 bar (the usual pressures of the two
    // choices, docs/references.md §3) and air at 1 atm, each in a 10 mm uniform gap, carry the
    // same factor on every gas row, so the as-used hold-off is 0.6 x the ideal one for each.
    for (species, p) in [
        ("N2", 12.0e5),
        ("SF6", 4.0e5),
        ("air", ATM_PA),
        ("CO2", 12.0e5),
    ] {
        let model = uniform_gap(species, p, 0.01, 50e3);
        let (_, m) = margins_of(&model);
        let (used, ideal) = (m.holdoff.unwrap(), m.holdoff_ideal.unwrap());
        assert!(
            rel(used.voltage_v, 0.6 * ideal.voltage_v) < 1e-9,
            "{species}: {} vs {}",
            used.voltage_v,
            ideal.voltage_v
        );
        let gas_rows: Vec<_> = m
            .rows
            .iter()
            .filter(|r| r.medium == RowMedium::Gas)
            .collect();
        assert!(!gas_rows.is_empty());
        for r in gas_rows
            .iter()
            .filter(|r| r.criterion != Criterion::PeekCorona)
        {
            assert_eq!(r.derating.factor, 0.6, "{species} {:?}", r.criterion);
            assert!(r.derating.basis.contains("common practice"));
        }
    }
}

#[test]
fn doubling_the_terminal_voltage_halves_every_margin() {
    // Linearity of electrostatics: every field scales with the terminal voltage, so every
    // margin (limit/peak, sqrt(C/(V E)), inception factor) halves and the hold-off voltage stays.
    let model = crate::design::from_str(DEMO, "demo").expect("demo");
    let mut doubled = model.clone();
    doubled.terminal_voltage *= 2.0;
    let (_, a) = margins_of(&model);
    let (_, b) = margins_of(&doubled);
    let mut compared = 0;
    for ra in &a.rows {
        let Some(rb) = b
            .rows
            .iter()
            .find(|r| r.item == ra.item && r.criterion == ra.criterion && r.medium == ra.medium)
        else {
            continue;
        };
        if let (Some(ma), Some(mb)) = (ra.margin, rb.margin) {
            assert!(
                rel(mb, 0.5 * ma) < 1e-4,
                "{} {:?}: {ma} -> {mb}",
                ra.item,
                ra.criterion
            );
            compared += 1;
        }
    }
    assert!(compared > 100, "{compared} rows compared");
    let (ha, hb) = (a.holdoff.unwrap(), b.holdoff.unwrap());
    assert!(rel(hb.voltage_v, ha.voltage_v) < 1e-4);
    assert_eq!(ha.item, hb.item);
}

#[test]
fn raising_the_sf6_pressure_raises_gas_margins_and_leaves_vacuum_rows() {
    // Gas limits grow with density (docs/references.md §1, §3: the fits are functions of N·d); the
    // vacuum criteria do not involve the gas (§6, §7).
    let model = crate::design::from_str(DEMO, "demo").expect("demo");
    let fine = solve(&model);
    let mut higher = model.clone();
    if let Some(g) = higher.gas.as_mut() {
        g.pressure_pa *= 4.0 / 3.0;
    }
    let a = margin::evaluate(&model, &fine, None).unwrap();
    let b = margin::evaluate(&higher, &fine, None).unwrap();
    let (mut gas, mut vac) = (0, 0);
    for ra in &a.rows {
        let rb = b
            .rows
            .iter()
            .find(|r| r.item == ra.item && r.criterion == ra.criterion && r.medium == ra.medium)
            .unwrap_or_else(|| panic!("no row {} {:?} {:?}", ra.item, ra.criterion, ra.medium));
        let (Some(ma), Some(mb)) = (ra.margin, rb.margin) else {
            continue;
        };
        match ra.medium {
            RowMedium::Gas | RowMedium::InsulatorGasSide | RowMedium::TripleJunctionGas => {
                assert!(mb > ma, "{} {:?}: {ma} -> {mb}", ra.item, ra.criterion);
                gas += 1;
            }
            RowMedium::Vacuum
            | RowMedium::InsulatorVacuumSide
            | RowMedium::TripleJunctionVacuum => {
                assert_eq!(ma, mb, "{} {:?}", ra.item, ra.criterion);
                vac += 1;
            }
        }
    }
    assert!(gas > 50 && vac > 50, "{gas} gas, {vac} vacuum rows");
    assert!(b.holdoff.unwrap().voltage_v > a.holdoff.unwrap().voltage_v);
}

#[test]
fn thin_wire_in_air_is_flagged_for_corona() {
    // Peek's law (Peek 1929; coaxial constants 31 kV/cm and 0.308, docs/references.md §5, from
    // memory): E_c = 31 m δ (1 + 0.308/sqrt(δ r)) kV/cm. The demo variant's 1 mm wire ring must
    // fail on it; its limit is Peek's value at the wire radius and the air δ.
    let model = crate::design::from_str(CORONA_DEMO, "corona").expect("variant");
    let (_, m) = margins_of(&model);
    let peek = row(&m, "thin wire ring", Criterion::PeekCorona);
    assert_eq!(peek.status, Status::Fail);
    let delta = corona::peek_delta(ATM_PA, T0_K).unwrap();
    let expected = 31.0 * delta * (1.0 + 0.308 / (delta * 0.1_f64).sqrt()) * 1e5;
    assert!(
        rel(peek.limit.unwrap(), expected) < 0.01,
        "{:?}",
        peek.limit
    );
    let direct = corona::onset_field(PeekGeometry::Coaxial, 1e-3, delta, 1.0).unwrap();
    assert!(rel(peek.limit.unwrap(), direct.value) < 0.01);
    // The streamer integral (air, K = 9) agrees with Peek on the thin wire within 10 %
    // (docs/references.md §4: K ≈ 9.2 reproduced corona inception on wires).
    let s = row(&m, "thin wire ring", Criterion::StreamerIntegral);
    assert!(rel(s.limit_ideal.unwrap(), peek.limit.unwrap()) < 0.10);
    assert!(m.any_fail());
    assert_eq!(m.holdoff.as_ref().unwrap().item, "thin wire ring");
}

#[test]
fn peek_row_at_one_centimetre_radius_matches_the_published_value() {
    // docs/references.md check row 18: Peek coaxial, r = 1 cm, δ = m = 1: 40.55 kV/cm (from memory).
    // A 1 cm minor-radius ring in air at Peek's δ = 1 (76 cmHg, 25 °C).
    let p = 76.0 * 10.0 * crate::breakdown::convert::TORR_PA * 298.0 / 298.15;
    let mut m = Model::new(
        "ring",
        Tank::Cylinder {
            inner_radius: 0.4,
            length: 0.4,
        },
        50e3,
    );
    m.gas = Some(pure("air", p, 298.15));
    m.conductors.push(Conductor {
        name: "ring".into(),
        shape: Shape::Torus {
            center_z: 0.2,
            major_radius: 0.15,
            minor_radius: 0.01,
        },
        potential: PotentialSpec::Terminal { fraction: 1.0 },
        origin: Origin::Program,
    });
    m.mesh = MeshSpec::graded(0.002, 0.016, 1.15);
    let (_, margins) = margins_of(&m);
    let peek = row(&margins, "ring", Criterion::PeekCorona);
    let delta = corona::peek_delta(p, 298.15).unwrap();
    assert!((delta - 1.0).abs() < 1e-3);
    assert!(rel(peek.limit.unwrap(), 40.55e5) < 0.01, "{:?}", peek.limit);
}

#[test]
fn user_overrides_are_flagged() {
    // [checks] overrides replace the built-in limits and every row that uses one says so.
    let text = DEMO.replace(
        "design_factor = 1.5",
        "design_factor = 1.5\ngas_field_limit = \"20 kV/mm\"\narea_derating = 0.5",
    );
    let model = crate::design::from_str(&text, "demo").expect("demo with overrides");
    let (_, m) = margins_of(&model);
    let r = row(&m, "terminal", Criterion::CriticalField);
    assert!(r.user_set);
    assert!(rel(r.limit_ideal.unwrap(), 20e6) < 1e-12);
    assert!(rel(r.limit.unwrap(), 10e6) < 1e-12);
    assert!(r.derating.basis.contains("user-set"));
    assert!(
        m.rows
            .iter()
            .filter(|r| r.medium == RowMedium::Vacuum)
            .all(|r| !r.user_set)
    );
}
