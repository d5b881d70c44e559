//! Solver behaviour: multigrid iterations under refinement, residuals, both schemes.

use crate::benchmark;
use crate::mesh::Mesh;
use crate::solve::operator::{Operator, Scheme};
use crate::solve::{Solver, SolverParams};

/// Iterations to 1e-10 relative residual grow by at most 2 from the coarsest to the finest of
/// four refinements (each halving the spacing), for both boundary schemes.
#[test]
fn multigrid_iterations_stay_flat_under_refinement() {
    for scheme in [Scheme::ShortleyWeller, Scheme::Symmetric] {
        let mut its = Vec::new();
        for nodes in [5_000usize, 20_000, 80_000, 320_000] {
            let row = benchmark::run(nodes, scheme, 1e-10).expect("benchmark problem solves");
            assert!(row.relative_residual <= 1e-10);
            its.push(row.iterations);
        }
        assert!(
            its.last().unwrap() - its.first().unwrap() <= 2,
            "{scheme:?}: iterations {its:?}"
        );
    }
}

/// A warm start of another length than the mesh is refused with both lengths named, never
/// silently replaced by a zero start; a start that is already the solution needs no
/// iteration (its residual is the converged one).
#[test]
fn a_warm_start_of_the_wrong_length_is_an_error() {
    let model = benchmark::problem(5_000);
    let mesh = Mesh::build_with(&model, false).expect("mesh");
    let mut solver = Solver::new(&mesh, SolverParams::default());
    let sol = solver.solve(&[1e6], None).expect("solve");
    let short = &sol.phi[..sol.phi.len() - 1];
    match solver.solve(&[1e6], Some(short)) {
        Err(crate::solve::SolveError::GuessLength { expected, got }) => {
            assert_eq!(expected, sol.phi.len());
            assert_eq!(got, sol.phi.len() - 1);
        }
        other => panic!("expected a length error, got {:?}", other.map(|s| s.info)),
    }
    let again = solver.solve(&[1e6], Some(&sol.phi)).expect("warm solve");
    assert_eq!(again.info.iterations, 0);
}

/// The reported residual is the true one: ‖b − Aφ‖/‖b‖ recomputed from the operator.
#[test]
fn reported_residual_is_the_true_residual() {
    let model = benchmark::problem(40_000);
    let mesh = Mesh::build_with(&model, false).expect("mesh");
    for scheme in [Scheme::ShortleyWeller, Scheme::Symmetric] {
        let mut solver = Solver::new(
            &mesh,
            SolverParams {
                scheme,
                ..Default::default()
            },
        );
        let sol = solver.solve(&[1e6], None).expect("solve");
        let op = Operator::assemble(&mesh, scheme);
        let b = op.rhs(&[1e6]);
        let mut ax = vec![0.0; b.len()];
        op.apply(&sol.phi, &mut ax);
        let rn: f64 = ax
            .iter()
            .zip(&b)
            .map(|(x, y)| (x - y) * (x - y))
            .sum::<f64>()
            .sqrt();
        let bn: f64 = b.iter().map(|x| x * x).sum::<f64>().sqrt();
        assert!(rn / bn <= sol.info.relative_residual * 1.01 + 1e-15);
        assert!(sol.info.relative_residual <= 1e-10);
    }
}

/// The symmetric scheme's matrix is symmetric (so conjugate gradients apply to it).
#[test]
fn symmetric_scheme_matrix_is_symmetric() {
    let model = benchmark::problem(5_000);
    let mesh = Mesh::build_with(&model, false).expect("mesh");
    let op = Operator::assemble(&mesh, Scheme::Symmetric);
    let a = op.to_csr();
    let t = a.transpose_view().to_csr();
    for (row, vec) in a.outer_iterator().enumerate() {
        for (col, &v) in vec.iter() {
            let w = t.get(row, col).copied().unwrap_or(0.0);
            assert!(
                (v - w).abs() <= 1e-12 * v.abs().max(1.0),
                "({row}, {col}): {v} vs {w}"
            );
        }
    }
}

/// A strip of gas one node thick between a rounded conductor and the tank floor (the demo's
/// ground shield) leaves coarse interpolation columns nearly dependent; the hierarchy must
/// still give a convergent preconditioner for both schemes.
#[test]
fn thin_gas_strip_next_to_the_tank_floor_solves() {
    let text = std::fs::read_to_string("examples/demo_750kv.toml").expect("demo file");
    let model = crate::design::from_str(&text, "demo_750kv.toml").expect("valid demo");
    let mesh = Mesh::build(&model).expect("mesh");
    let pots = crate::grading::potentials(&model, None).expect("potentials");
    for scheme in [Scheme::ShortleyWeller, Scheme::Symmetric] {
        let mut solver = Solver::new(
            &mesh,
            SolverParams {
                scheme,
                ..Default::default()
            },
        );
        let sol = solver.solve(&pots, None).expect("converges");
        assert!(sol.info.relative_residual <= 1e-10);
        assert!(
            sol.info.iterations <= 20,
            "{scheme:?}: {} iterations",
            sol.info.iterations
        );
    }
}

/// The stencil product equals the product of the same matrix in CSR form (sprs), for both
/// schemes, on a mesh with conductor cuts and edge rows.
#[test]
fn stencil_product_equals_the_csr_product() {
    let model = benchmark::problem(20_000);
    let mesh = Mesh::build_with(&model, false).expect("mesh");
    for scheme in [Scheme::Symmetric, Scheme::ShortleyWeller] {
        let op = Operator::assemble(&mesh, scheme);
        let a = op.to_csr();
        let n = op.rows();
        let x: Vec<f64> = (0..n)
            .map(|k| ((k * 7919) % 1000) as f64 / 1000.0 - 0.5)
            .collect();
        let mut y = vec![0.0; n];
        op.apply(&x, &mut y);
        let xv = sprs::CsVecI::<f64, u32>::new(n, (0..n as u32).collect(), x.clone());
        let ys = &a * &xv;
        let mut dense = vec![0.0; n];
        for (k, v) in ys.iter() {
            dense[k] = *v;
        }
        for k in 0..n {
            assert!(
                (y[k] - dense[k]).abs() <= 1e-12 * (1.0 + dense[k].abs()),
                "{scheme:?} row {k}: {} vs {}",
                y[k],
                dense[k]
            );
        }
    }
}

/// Parallel work never changes the numbers: a solve large enough that every kernel of the
/// hierarchy and of the Krylov iteration runs in parallel gives the same bits on 1 and on 2
/// threads, for both boundary schemes (every element written by one task, reductions over
/// fixed chunks added in order).
#[test]
fn one_and_two_threads_give_the_same_bits() {
    let model = benchmark::problem(150_000);
    let mesh = Mesh::build_with(&model, false).expect("mesh");
    for scheme in [Scheme::ShortleyWeller, Scheme::Symmetric] {
        let solve = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .expect("thread pool");
            pool.install(|| {
                let params = SolverParams {
                    scheme,
                    ..Default::default()
                };
                Solver::new(&mesh, params)
                    .solve(&[1e6], None)
                    .expect("solve")
            })
        };
        let (one, two) = (solve(1), solve(2));
        assert_eq!(one.info.iterations, two.info.iterations, "{scheme:?}");
        let differ = one
            .phi
            .iter()
            .zip(&two.phi)
            .filter(|(a, b)| a.to_bits() != b.to_bits())
            .count();
        assert_eq!(
            differ, 0,
            "{scheme:?}: {differ} potentials differ in their bits"
        );
    }
}

/// A solve started from the solution of the same design on another grid (the grid study's
/// coarser solves start from the fine one, a refinement round from the round before)
/// changes only the iterations: on the small fault column, the coarser grid's potential and
/// peak surface fields equal those of a solve from nothing within the solver's tolerance, in
/// fewer iterations.
#[test]
fn a_start_from_another_grid_changes_only_the_iterations() {
    use crate::analysis::{analyze, analyze_from};
    let m = crate::design::from_str(&super::common::small_fault_column(), "small.toml")
        .expect("valid design");
    let params = SolverParams::default();
    let fine = analyze(&m, &params, None).expect("fine solve");
    let mut coarser = m.clone();
    coarser.mesh = m.mesh.scaled(crate::study::RATIO);
    let cold = analyze(&coarser, &params, None).expect("solve from nothing");
    let warm = analyze_from(&coarser, &params, None, Some((&m, &fine))).expect("started solve");
    let (ic, iw) = (cold.solution.info.iterations, warm.solution.info.iterations);
    println!("iterations from nothing {ic}, from the finer grid {iw}");
    assert!(iw < ic, "{iw} vs {ic}");
    let scale = cold
        .solution
        .phi
        .iter()
        .fold(0.0_f64, |a, x| a.max(x.abs()));
    let diff = cold
        .solution
        .phi
        .iter()
        .zip(&warm.solution.phi)
        .fold(0.0_f64, |a, (x, y)| a.max((x - y).abs()));
    println!("max |Δφ| / max |φ| = {:.2e}", diff / scale);
    assert!(diff / scale < 5e-8, "{}", diff / scale);
    for (a, b) in cold.peaks.iter().zip(&warm.peaks) {
        let (ea, eb) = (a.peak_surface_field_v_per_m, b.peak_surface_field_v_per_m);
        assert!((ea - eb).abs() <= 1e-7 * ea, "{}: {ea} vs {eb}", a.name);
    }
}
