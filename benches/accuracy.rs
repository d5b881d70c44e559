//! The cost of the accuracy target: each design reviewed with the grid study, once as written
//! (a hand-set `[mesh] cell` where it has one) and once with the cell removed so the mesh
//! follows the geometry and refines to the 0.5 % target. Prints unknowns of the first and
//! final fine grid, refinement rounds, whether the target was reached, the worst estimated
//! error of the counted peaks and the wall time, with the thread count of the run.
//! Run: `cargo bench --bench accuracy` (set RAYON_NUM_THREADS to pin the threads).

use holdoff::review::review;
use holdoff::solve::SolverParams;
use std::time::Instant;

const DESIGNS: [(&str, &str); 3] = [
    ("demo_750kv", include_str!("../examples/demo_750kv.toml")),
    ("stack_300kv", include_str!("../examples/stack_300kv.toml")),
    ("tandem_3mv", include_str!("../examples/tandem_3mv.toml")),
];

fn main() {
    println!(
        "threads {} (rayon); times are wall seconds of one review with the grid study",
        rayon::current_num_threads()
    );
    println!(
        "{:<12} {:<16} {:>10} {:>10} {:>7} {:>8} {:>10} {:>8}",
        "design", "mesh", "unknowns0", "unknowns", "rounds", "reached", "worst %", "s"
    );
    for (name, text) in DESIGNS {
        let auto: String = text
            .lines()
            .filter(|l| !l.trim_start().starts_with("cell ="))
            .map(|l| format!("{l}\n"))
            .collect();
        let variants = [("as written", text.to_string()), ("accuracy 0.5 %", auto)];
        for (label, t) in variants {
            let model = holdoff::design::from_str(&t, name).expect("valid example");
            let start = Instant::now();
            let r = review(&model, &SolverParams::default(), true).expect("review");
            let secs = start.elapsed().as_secs_f64();
            let a = r
                .study
                .as_ref()
                .and_then(|s| s.accuracy.clone())
                .expect("the study reports the accuracy");
            println!(
                "{:<12} {:<16} {:>10} {:>10} {:>7} {:>8} {:>10.2} {:>8.2}",
                name,
                if model.mesh.adaptive() {
                    label
                } else {
                    "hand-set cell"
                },
                a.unknowns.first().copied().unwrap_or(0),
                a.unknowns.last().copied().unwrap_or(0),
                a.refinements,
                if a.reached { "yes" } else { "no" },
                100.0 * a.worst_relative_error,
                secs
            );
        }
    }
}
