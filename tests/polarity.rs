//! Polarity: which surfaces are cathodes. The vacuum cathode rows (field emission, Cranberg)
//! take the surfaces where the field points into the metal (SurfaceSample.e_normal < 0). For a
//! sphere inside a grounded sphere the field is radial, E = V·b/(r²(b − a)) (Gauss's law,
//! docs/references.md §10): it points out of the inner sphere for V > 0 and into it for V < 0,
//! so a negative terminal is the cathode and the tank the anode, and the reverse for V > 0.

use holdoff::solve::SolverParams;

fn sphere_in_sphere(volts: &str) -> holdoff::model::Model {
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
    holdoff::design::from_str(&text, "polarity.toml").unwrap()
}

#[test]
fn a_negative_terminal_is_the_cathode_and_a_positive_one_the_anode() {
    for (volts, sign) in [("-100 kV", -1.0), ("100 kV", 1.0)] {
        let model = sphere_in_sphere(volts);
        let fine = holdoff::analysis::analyze(&model, &SolverParams::default(), None).unwrap();
        let ball: Vec<_> = fine.samples.iter().filter(|s| s.conductor == 0).collect();
        assert!(!ball.is_empty());
        for s in &ball {
            assert!(s.e_normal * sign > 0.0, "{volts}: e_normal {}", s.e_normal);
            // The magnitude does not depend on the sign: V·b/(a(b − a)) = 2 MV/m at 100 kV.
            assert!((s.e - 2.0e6).abs() / 2.0e6 < 0.02, "{volts}: |E| {}", s.e);
        }
    }
}
