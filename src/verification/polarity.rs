//! Polarity: which surfaces are cathodes. The vacuum cathode rows (field emission, Cranberg)
//! take the surfaces where the field points into the metal (SurfaceSample.e_normal < 0). For a
//! sphere inside a grounded sphere the field is radial, E = V·b/(r²(b − a)) (Gauss's law,
//! docs/references.md §10): it points out of the inner sphere for V > 0 and into it for V < 0,
//! so a negative terminal is the cathode and the tank the anode, and the reverse for V > 0.

use crate::solve::SolverParams;

fn sphere_in_sphere(volts: &str) -> crate::model::Model {
    let text = format!(
        r#"
title = "sphere in a sphere"
[tank]
shape = "sphere"
inner_radius = "200 mm"
[terminal]
voltage = "{volts}"
[[conductor]]
name = "ball"
shape = "sphere"
center_z = "200 mm"
radius = "100 mm"
potential = "terminal"
[mesh]
cell = "4 mm"
"#
    );
    crate::design::from_str(&text, "polarity.toml").unwrap()
}

#[test]
fn a_negative_terminal_is_the_cathode_and_a_positive_one_the_anode() {
    for (volts, sign) in [("-100 kV", -1.0), ("100 kV", 1.0)] {
        let model = sphere_in_sphere(volts);
        let fine = crate::analysis::analyze(&model, &SolverParams::default(), None).unwrap();
        let ball: Vec<_> = fine
            .samples
            .iter()
            .filter(|s| s.conductor.conductor_index() == Some(0))
            .collect();
        assert!(!ball.is_empty());
        for s in &ball {
            assert!(s.e_normal * sign > 0.0, "{volts}: e_normal {}", s.e_normal);
            // The magnitude does not depend on the sign: V·b/(a(b − a)) = 2 MV/m at 100 kV.
            assert!((s.e - 2.0e6).abs() / 2.0e6 < 0.02, "{volts}: |E| {}", s.e);
        }
    }
}

/// The demo column at −800 kV against +800 kV: reversing the polarity mirrors which disc of
/// each vacuum gap is the cathode, so every vacuum gap row still has a number (the bore ends
/// on the ground-end shield's face, where the line from the first disc must end on the
/// shield, not at "the edge of the vacuum region"), and the worst vacuum-gap and cathode
/// margins agree within 1 % (symmetry of the field equation under V → −V; the discs are
/// evenly spaced, so the mirrored gaps are the same gaps).
#[test]
fn the_demo_column_has_the_same_vacuum_margins_at_either_polarity() {
    let text = include_str!("../../examples/demo_750kv.toml");
    assert!(
        text.contains("voltage = \"-800 kV\""),
        "the demo's terminal line"
    );
    let worst = |voltage: &str| {
        let t = text.replace("voltage = \"-800 kV\"", &format!("voltage = \"{voltage}\""));
        let model = crate::design::from_str(&t, "demo").expect("valid demo");
        let r = crate::review::review(&model, &crate::solve::SolverParams::default(), false)
            .expect("review");
        let gaps: Vec<_> = r
            .margins
            .rows
            .iter()
            .filter(|row| row.item.starts_with("vacuum gap"))
            .collect();
        assert!(!gaps.is_empty());
        assert!(
            gaps.iter().all(|row| row.margin.is_some()),
            "{voltage}: a vacuum gap row without a number: {:?}",
            gaps.iter()
                .filter(|row| row.margin.is_none())
                .map(|row| &row.item)
                .collect::<Vec<_>>()
        );
        let gap = gaps
            .iter()
            .filter_map(|row| row.margin)
            .fold(f64::INFINITY, f64::min);
        let cathode = r
            .margins
            .rows
            .iter()
            .filter(|row| row.item.ends_with("(cathode)"))
            .filter_map(|row| row.margin)
            .fold(f64::INFINITY, f64::min);
        let gas = r
            .margins
            .rows
            .iter()
            .filter(|row| row.medium == crate::margin::RowMedium::Gas)
            .filter_map(|row| row.margin)
            .fold(f64::INFINITY, f64::min);
        let holdoff_v = r.margins.holdoff.as_ref().map(|h| h.voltage_v);
        (gap, cathode, gas, holdoff_v)
    };
    let (gp, cp, sp, hp) = worst("800 kV");
    let (gn, cn, sn, hn) = worst("-800 kV");
    assert!((gn / gp - 1.0).abs() < 0.01, "gap margins {gp} / {gn}");
    assert!((cn / cp - 1.0).abs() < 0.01, "cathode margins {cp} / {cn}");
    // The gas criteria carry no polarity term, so the gas rows are the same at either sign
    // (to the solver's reproducibility), and the hold-off is the same magnitude.
    assert!((sn / sp - 1.0).abs() < 1e-6, "gas margins {sp} / {sn}");
    let (hp, hn) = (
        hp.expect("hold-off at +800 kV"),
        hn.expect("hold-off at -800 kV"),
    );
    assert!(hn > 0.0, "the hold-off is a magnitude: {hn}");
    assert!((hn / hp - 1.0).abs() < 0.01, "hold-off {hp} / {hn}");
}
