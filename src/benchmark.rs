//! A standard solver benchmark: a spherical electrode at 1 MV inside a grounded cylindrical
//! tank, on a uniform grid of a chosen size, timed from assembly to converged potential.
//!
//! Used by `holdoff bench`, by `cargo bench`, and by the comparison script in `benches/`,
//! which reads the symmetric operator exported by `export_operator` in Matrix Market form.

use crate::geometry::Shape;
use crate::mesh::{Mesh, MeshError};
use crate::model::{Conductor, MeshSpec, Model, Origin, PotentialSpec, Tank};
use crate::solve::operator::Scheme;
use crate::solve::{SolveError, Solver, SolverParams};
use serde::Serialize;
use std::time::Instant;

/// The benchmark model with about `nodes` grid nodes (tank 0.5 m × 1 m, nr : nz = 1 : 2).
pub fn problem(nodes: usize) -> Model {
    let (radius, length) = (0.5, 1.0);
    let mut m = Model::new(
        "benchmark: sphere in a grounded cylinder",
        Tank::Cylinder {
            inner_radius: radius,
            length,
        },
        1e6,
    );
    m.conductors.push(Conductor {
        name: "sphere".into(),
        shape: Shape::Sphere {
            center_z: 0.5 * length,
            radius: 0.2,
        },
        potential: PotentialSpec::Terminal { fraction: 1.0 },
        origin: Origin::Program,
    });
    // nr * nz = nodes with nz = 2 nr: h = radius / nr.
    let nr = ((nodes as f64) / 2.0).sqrt().max(8.0);
    let cell = radius / nr;
    m.mesh = MeshSpec::graded(cell, cell, 1.0);
    m
}

/// One timed solve.
#[derive(Debug, Clone, Serialize)]
pub struct BenchRow {
    pub scheme: Scheme,
    pub nodes: usize,
    pub unknowns: usize,
    pub iterations: usize,
    pub relative_residual: f64,
    pub seconds_mesh: f64,
    pub seconds_assembly: f64,
    pub seconds_multigrid_setup: f64,
    pub seconds_solve: f64,
    /// Assembly + multigrid setup + solve.
    pub seconds_total: f64,
    pub unknowns_per_second: f64,
    pub bytes_per_unknown: f64,
    /// Seconds of one V-cycle of the preconditioner (the fastest of a few).
    pub seconds_per_cycle: f64,
    /// Bytes a V-cycle moves per unknown (`Multigrid::bytes_per_cycle`, an estimate).
    pub cycle_bytes_per_unknown: f64,
    /// The V-cycle's achieved bandwidth, bytes per second (estimated bytes ÷ measured time).
    pub cycle_bandwidth: f64,
}

#[derive(Debug, thiserror::Error)]
pub enum BenchError {
    #[error(transparent)]
    Mesh(#[from] MeshError),
    #[error(transparent)]
    Solve(#[from] SolveError),
}

/// Builds and solves the benchmark problem of about `nodes` nodes with `scheme`.
pub fn run(nodes: usize, scheme: Scheme, tolerance: f64) -> Result<BenchRow, BenchError> {
    let model = problem(nodes);
    let t0 = Instant::now();
    let mesh = Mesh::build_with(&model, false)?;
    let seconds_mesh = t0.elapsed().as_secs_f64();
    let mut params = SolverParams {
        scheme,
        ..Default::default()
    };
    params.krylov.tolerance = tolerance;
    let mut solver = Solver::new(&mesh, params);
    let sol = solver.solve(&[model.terminal_voltage], None)?;
    let (cycle_s, cycle_bytes) = solver.time_cycle(&[model.terminal_voltage], 5);
    let i = &sol.info;
    let total = i.seconds_assembly + i.seconds_multigrid_setup + i.seconds_solve;
    Ok(BenchRow {
        scheme,
        nodes: i.nodes,
        unknowns: i.unknowns,
        iterations: i.iterations,
        relative_residual: i.relative_residual,
        seconds_mesh,
        seconds_assembly: i.seconds_assembly,
        seconds_multigrid_setup: i.seconds_multigrid_setup,
        seconds_solve: i.seconds_solve,
        seconds_total: total,
        unknowns_per_second: i.unknowns as f64 / total,
        bytes_per_unknown: i.memory_bytes as f64 / i.unknowns as f64,
        seconds_per_cycle: cycle_s,
        cycle_bytes_per_unknown: cycle_bytes / i.unknowns as f64,
        cycle_bandwidth: cycle_bytes / cycle_s,
    })
}

/// The machine's memory bandwidth as a STREAM-style triad a = b + s·c (McCalpin's STREAM
/// counts 24 bytes per element: two loads and one store) on arrays of `len` doubles, run on
/// the current rayon pool; the fastest of `reps` passes, bytes per second.
pub fn triad_bandwidth(len: usize, reps: usize) -> f64 {
    use rayon::prelude::*;
    let b = vec![1.0f64; len];
    let c = vec![2.0f64; len];
    let mut a = vec![0.0f64; len];
    let mut best = f64::INFINITY;
    const CHUNK: usize = 1 << 16;
    for k in 0..reps.max(1) {
        let s = 3.0 + k as f64;
        let t = Instant::now();
        a.par_chunks_mut(CHUNK)
            .zip(b.par_chunks(CHUNK).zip(c.par_chunks(CHUNK)))
            .for_each(|(a, (b, c))| {
                for ((x, y), z) in a.iter_mut().zip(b).zip(c) {
                    *x = y + s * z;
                }
            });
        best = best.min(t.elapsed().as_secs_f64());
        std::hint::black_box(&a);
    }
    24.0 * len as f64 / best
}

/// Peak resident memory of this process so far, bytes (`VmHWM` of /proc/self/status), when
/// the system gives it.
pub fn peak_rss_bytes() -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb * 1024)
}

/// File names `export_operator` writes: the operator and the right-hand side.
pub const EXPORT_MATRIX: &str = "operator.mtx";
pub const EXPORT_RHS: &str = "rhs.mtx";

/// The exported files: name and contents.
pub type ExportFiles = [(&'static str, Vec<u8>); 2];

/// The symmetric operator of the benchmark problem and its right-hand side in the Matrix
/// Market exchange format (Boisvert, Pozo & Remington, "The Matrix Market Exchange Formats:
/// Initial Design", NIST IR 5935, 1996; docs/references.md §18), as the texts of the files
/// [`EXPORT_MATRIX`] (coordinate form: every stored entry, 1-based, written by sprs) and
/// [`EXPORT_RHS`] (array form, one column), with the number of rows. Values are printed in
/// Rust's shortest round-trip form, so a reader gets the same doubles. `holdoff bench
/// --export` writes them, each file whole or not at all.
pub fn export_operator(nodes: usize) -> Result<(usize, ExportFiles), Box<dyn std::error::Error>> {
    let model = problem(nodes);
    let mesh = Mesh::build_with(&model, false)?;
    let op = crate::solve::operator::Operator::assemble(&mesh, Scheme::Symmetric);
    let b = op.rhs(&[model.terminal_voltage]);
    let matrix = op.to_csr();
    let mut text = Vec::with_capacity(32 * matrix.nnz());
    sprs::io::write_matrix_market_to_bufwrite(&mut text, &matrix)?;
    Ok((
        op.rows(),
        [
            (EXPORT_MATRIX, text),
            (EXPORT_RHS, matrix_market_column(&b).into_bytes()),
        ],
    ))
}

/// A column vector in the Matrix Market array form.
pub fn matrix_market_column(v: &[f64]) -> String {
    use std::fmt::Write;
    let mut s = String::with_capacity(24 * v.len() + 64);
    s.push_str("%%MatrixMarket matrix array real general\n");
    let _ = writeln!(s, "{} 1", v.len());
    for x in v {
        let _ = writeln!(s, "{x}");
    }
    s
}

#[cfg(test)]
mod tests {
    #[test]
    #[ignore = "timing run; use `holdoff bench`"]
    fn print_timings() {
        for n in [250_000usize, 1_000_000] {
            for s in [super::Scheme::ShortleyWeller, super::Scheme::Symmetric] {
                let r = super::run(n, s, 1e-10).expect("benchmark problem solves");
                println!("{r:?}");
            }
        }
    }
}
