//! The benchmark export (`holdoff bench --export`) writes the benchmark operator and its right-hand side in the
//! Matrix Market exchange format (docs/references.md §18); read back, they are the same
//! matrix and vector, bit for bit, and the matrix read back acts on a vector as the operator.

use crate::benchmark::{EXPORT_MATRIX, EXPORT_RHS, export_operator, problem};
use crate::mesh::Mesh;
use crate::solve::operator::{Operator, Scheme};

#[test]
fn exported_operator_reads_back_as_the_same_matrix() {
    let dir = tempfile::tempdir().expect("temporary folder");
    let nodes = 3_000;
    // The files as `holdoff bench --export` writes them.
    let (exported_rows, files) = export_operator(nodes).expect("the operator exports");
    for (name, bytes) in &files {
        crate::report::write_atomic(&dir.path().join(name), bytes).expect("written");
    }
    let model = problem(nodes);
    let mesh = Mesh::build_with(&model, false).expect("benchmark mesh");
    let op = Operator::assemble(&mesh, Scheme::Symmetric);
    let rows = op.rows();
    assert_eq!(exported_rows, rows);

    // The matrix, through sprs's own reader of the format.
    let tri = sprs::io::read_matrix_market::<f64, usize, _>(dir.path().join(EXPORT_MATRIX))
        .expect("operator.mtx reads as Matrix Market");
    let back: sprs::CsMat<f64> = tri.to_csr();
    let csr = op.to_csr();
    assert_eq!(back.shape(), (rows, rows));
    assert_eq!(back.nnz(), csr.nnz());
    for (v, (i, j)) in csr.iter() {
        assert_eq!(
            back.get(i as usize, j as usize),
            Some(v),
            "entry ({i}, {j})"
        );
    }

    // The right-hand side, parsed by hand from the array form.
    let text = std::fs::read_to_string(dir.path().join(EXPORT_RHS)).expect("rhs.mtx reads");
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("%%MatrixMarket matrix array real general")
    );
    assert_eq!(lines.next(), Some(format!("{rows} 1").as_str()));
    let b: Vec<f64> = lines.map(|l| l.parse().expect("a number")).collect();
    assert_eq!(b, op.rhs(&[model.terminal_voltage]));

    // Second way: the matrix read back times a vector equals the stencil product.
    let x: Vec<f64> = (0..rows)
        .map(|k| ((k * 7919) % 101) as f64 - 50.0)
        .collect();
    let mut y = vec![0.0; rows];
    op.apply(&x, &mut y);
    let mut y_back = vec![0.0; rows];
    for (v, (i, j)) in back.iter() {
        y_back[i] += v * x[j];
    }
    for (a, b) in y.iter().zip(&y_back) {
        assert!((a - b).abs() <= 1e-12 * a.abs().max(1.0), "{a} against {b}");
    }
}
