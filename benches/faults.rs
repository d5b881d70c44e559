//! The full fault set of the demo column (examples/demo_750kv.toml, an invented machine): the
//! unit-potential basis, every resistor open and shorted, the tolerance worst cases, 200
//! seeded tolerance draws and the spark transient, each with its margins.

use criterion::{Criterion, criterion_group, criterion_main};
use holdoff::faults::{ReplayOptions, replay};
use holdoff::mesh::Mesh;
use holdoff::solve::SolverParams;
use std::hint::black_box;
use std::time::Duration;

const DEMO: &str = include_str!("../examples/demo_750kv.toml");

fn demo_fault_set(c: &mut Criterion) {
    let model = holdoff::design::from_str(DEMO, "demo_750kv.toml").expect("valid demo");
    let mesh = Mesh::build(&model).expect("demo meshes");
    let params = SolverParams::default();
    let options = ReplayOptions {
        samples: 200,
        seed: 1,
        ..Default::default()
    };
    let mut group = c.benchmark_group("faults_demo_750kv");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(60));
    group.bench_function("full_set_200_draws", |b| {
        b.iter(|| {
            let r = replay(&model, &mesh, &params, None, &options, &|_| {}).expect("replays");
            black_box(r.scenarios.len())
        })
    });
    group.finish();
}

criterion_group!(benches, demo_fault_set);
criterion_main!(benches);
