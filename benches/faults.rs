//! The full fault set of a design (default the demo column, examples/demo_750kv.toml, an
//! invented machine; or the design file given as the argument, e.g.
//! `cargo bench --bench faults -- examples/tandem_3mv.toml`): the unit-potential basis, every
//! resistor open and shorted, the tolerance worst cases, 200 seeded tolerance draws and the
//! spark transient, each with its margins.
//!
//! Printed, in one run: the replay on 1 and on 2 threads (wall seconds of the basis and of the
//! scenarios, the fastest of `HOLDOFF_BENCH_REPEATS` runs, default 3) and the ratio of the
//! scenario work 1 thread : 2 threads; then the screened replay against the exhaustive one
//! (every row of every scenario) on 2 threads, with a check that both give the same JSON
//! (skipped with `HOLDOFF_BENCH_EXHAUSTIVE=0`).
//! Both sides of every ratio run on the same thread count, in the same process.

use holdoff::faults::{FaultReplay, ReplayOptions, replay};
use holdoff::mesh::Mesh;
use holdoff::solve::SolverParams;

/// The fastest (basis, scenarios) wall seconds of `repeats` replays on `threads` threads, and
/// the last replay.
fn timed(
    model: &holdoff::model::Model,
    mesh: &Mesh,
    options: &ReplayOptions,
    threads: usize,
    repeats: usize,
) -> (f64, f64, FaultReplay) {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool");
    let params = SolverParams::default();
    let mut best = (f64::INFINITY, f64::INFINITY);
    let mut last = None;
    for _ in 0..repeats.max(1) {
        let r = pool
            .install(|| replay(model, mesh, &params, None, options, &|_| {}))
            .expect("replays");
        best = (best.0.min(r.basis_seconds), best.1.min(r.scenario_seconds));
        last = Some(r);
    }
    (best.0, best.1, last.expect("one run"))
}

fn main() {
    let file = std::env::args()
        .skip(1)
        .find(|a| a.ends_with(".toml"))
        .unwrap_or_else(|| "examples/demo_750kv.toml".to_string());
    let repeats: usize = std::env::var("HOLDOFF_BENCH_REPEATS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(3);
    let text = std::fs::read_to_string(&file).expect("design file");
    let model = holdoff::design::from_str(&text, &file).expect("valid design");
    let mesh = Mesh::build(&model).expect("meshes");
    let options = ReplayOptions::default();
    println!(
        "faults bench: {file}, {} nodes, {} draws, fastest of {repeats} run(s); machine load {}",
        mesh.nodes(),
        options.samples,
        std::fs::read_to_string("/proc/loadavg")
            .map(|l| l.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
            .unwrap_or_else(|_| "unknown".to_string())
    );
    let (b1, s1, _) = timed(&model, &mesh, &options, 1, repeats);
    let (b2, s2, screened) = timed(&model, &mesh, &options, 2, repeats);
    println!("1 thread : basis {b1:8.2} s, scenarios {s1:8.2} s");
    println!("2 threads: basis {b2:8.2} s, scenarios {s2:8.2} s");
    println!(
        "scenario work, 1 thread : 2 threads = {:.2} (basis {:.2})",
        s1 / s2,
        b1 / b2
    );
    if std::env::var("HOLDOFF_BENCH_EXHAUSTIVE").is_ok_and(|v| v == "0") {
        return;
    }
    let full = ReplayOptions {
        exhaustive: true,
        ..ReplayOptions::default()
    };
    let (_, sx, exhaustive) = timed(&model, &mesh, &full, 2, 1);
    let same = serde_json::to_string(&screened).expect("json")
        == serde_json::to_string(&exhaustive).expect("json");
    println!(
        "2 threads: scenarios exhaustive {sx:8.2} s, screened {s2:8.2} s, ratio {:.2}; same JSON: {same}",
        sx / s2
    );
    assert!(same, "the screened replay differs from the exhaustive one");
}
