//! Time to periodic steady state of a 50-stage ladder (loaded run plus the no-load reference
//! run, default controls: 400 steps per cycle, shooting acceleration). Invented parts: 40 kV
//! peak per phase, 2 nF stages, 35 kHz, 0.5 mA, 1 pF stray on every node.

use criterion::{Criterion, criterion_group, criterion_main};
use holdoff::ladder::{LadderParams, SimControls, Topology, simulate};
use std::hint::black_box;

fn params(topology: Topology) -> LadderParams {
    LadderParams::uniform(topology, 50, 2e-9, 40e3, 35e3, 0.5e-3)
        .expect("valid benchmark parameters")
        .with_uniform_strays(1e-12)
}

fn ladder_50_stages(c: &mut Criterion) {
    let ctl = SimControls::default();
    let mut group = c.benchmark_group("ladder_50_stages");
    group.sample_size(10);
    for (name, topology) in [
        ("half_wave", Topology::HalfWave),
        ("symmetric", Topology::Symmetric),
    ] {
        let p = params(topology);
        let r = simulate(&p, &ctl).expect("benchmark ladder converges");
        eprintln!(
            "{name}: {} + {:?} cycles, output {:.1} kV, drop {:.2} kV, η {:.4}",
            r.convergence.loaded.cycles,
            r.convergence.no_load.as_ref().map(|i| i.cycles),
            r.output.loaded_mean_v / 1e3,
            r.output.drop_v / 1e3,
            r.output.no_load_efficiency
        );
        group.bench_function(name, |b| b.iter(|| simulate(black_box(&p), &ctl)));
    }
    group.finish();
}

criterion_group!(benches, ladder_50_stages);
criterion_main!(benches);
