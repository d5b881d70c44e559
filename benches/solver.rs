//! Solver benchmark: assembly, multigrid setup and solve of the standard problem
//! (`holdoff::benchmark::problem`) at about 0.25 M and 1 M nodes, both boundary schemes.
//! `holdoff bench` prints the same figures at 0.25 M, 1 M and 4 M nodes in one table.

use criterion::{Criterion, criterion_group, criterion_main};
use holdoff::benchmark;
use holdoff::solve::Scheme;
use std::time::Duration;

fn solver(c: &mut Criterion) {
    let mut g = c.benchmark_group("solve");
    g.sample_size(10).measurement_time(Duration::from_secs(20));
    for nodes in [250_000usize, 1_000_000] {
        for scheme in [Scheme::ShortleyWeller, Scheme::Symmetric] {
            let row = benchmark::run(nodes, scheme, 1e-10).expect("benchmark problem solves");
            eprintln!("{row:?}");
            g.bench_function(format!("{scheme:?} {nodes} nodes"), |b| {
                b.iter(|| benchmark::run(nodes, scheme, 1e-10).expect("benchmark problem solves"))
            });
        }
    }
    g.finish();
}

criterion_group!(benches, solver);
criterion_main!(benches);
