//! Capacitance from Gauss's law on unit-potential solves, against closed forms
//! (docs/references.md §10).

use super::common::conductor;
use crate::capacitance::{capacitance_matrix, electrodes};
use crate::field::EPSILON_0;
use crate::geometry::Shape;
use crate::mesh::Mesh;
use crate::model::{MeshSpec, Model, Tank};
use crate::solve::SolverParams;
use std::f64::consts::PI;

/// Concentric spheres: C = 4πε₀ab/(b − a) (check row 24: a = 0.1 m, b = 0.2 m → 22.25 pF),
/// within 1 %.
#[test]
fn concentric_spheres() {
    let (a, b) = (0.1, 0.2);
    let mut m = Model::new("spheres", Tank::Sphere { inner_radius: b }, 1e6);
    m.conductors.push(conductor(
        "inner",
        Shape::Sphere {
            center_z: b,
            radius: a,
        },
        1e6,
    ));
    let mesh = Mesh::build(&m).expect("mesh");
    let c = capacitance_matrix(&m, &mesh, &SolverParams::default()).expect("solves");
    let exact = 4.0 * PI * EPSILON_0 * a * b / (b - a);
    assert!((exact - 22.25e-12).abs() < 0.01e-12, "check row 24");
    let err = (c.c_f[0][0] - exact).abs() / exact;
    println!(
        "concentric spheres: C = {:.4e} F, relative error {err:.2e}",
        c.c_f[0][0]
    );
    assert!(err < 0.01, "{} vs {exact}", c.c_f[0][0]);
}

/// Coaxial line: C' = 2πε₀/ln(b/a) (check row 23: a = 1 cm, b = 5 cm → 34.566 pF/m), within
/// 1 %, from a length L of an infinitely long line (zero-normal-field ends).
#[test]
fn coaxial_line_per_length() {
    let (a, b, len): (f64, f64, f64) = (0.01, 0.05, 0.02);
    let m = super::common::coax(a, b, len, 1e5);
    let mesh = Mesh::build(&m).expect("mesh");
    let c = capacitance_matrix(&m, &mesh, &SolverParams::default()).expect("solves");
    let exact = 2.0 * PI * EPSILON_0 / (b / a).ln();
    assert!((exact - 34.566e-12).abs() < 0.001e-12, "check row 23");
    let per_length = c.c_f[0][0] / len;
    assert!(
        (per_length - exact).abs() / exact < 0.01,
        "{per_length} vs {exact}"
    );
}

/// Reciprocity (Green's reciprocity theorem: C_ij = C_ji) and the sign structure of a Maxwell
/// matrix (positive diagonal, negative off-diagonal, rows dominated by the diagonal) for three
/// spheres in a grounded cylinder; and conductors on one potential node form one electrode.
#[test]
fn maxwell_matrix_is_reciprocal() {
    let mut m = Model::new(
        "three spheres",
        Tank::Cylinder {
            inner_radius: 0.4,
            length: 1.0,
        },
        1e5,
    );
    for (k, z) in [0.3, 0.5, 0.7].into_iter().enumerate() {
        m.conductors.push(conductor(
            &format!("sphere {k}"),
            Shape::Sphere {
                center_z: z,
                radius: 0.06,
            },
            1e5 * (k + 1) as f64,
        ));
    }
    m.mesh = MeshSpec::graded(0.002, 0.016, 1.15);
    assert_eq!(electrodes(&m).len(), 3);
    let mesh = Mesh::build(&m).expect("mesh");
    let c = capacitance_matrix(&m, &mesh, &SolverParams::default()).expect("solves");
    assert!(c.asymmetry < 0.01, "asymmetry {}", c.asymmetry);
    for i in 0..3 {
        assert!(c.c_f[i][i] > 0.0);
        let off: f64 = (0..3).filter(|&j| j != i).map(|j| c.c_f[i][j]).sum();
        assert!(off < 0.0 && -off < c.c_f[i][i]);
        assert!(c.to_ground(i) > 0.0);
    }
}
