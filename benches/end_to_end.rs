//! The commands a user runs, end to end, as separate processes: the built-in demo, the check
//! and the fault replay of the tandem example, and an 8-point pressure sweep of the demo
//! design. For each, on 1 and on 2 threads (RAYON_NUM_THREADS), the fastest wall time of a
//! few runs and the process's peak resident memory, then the ratio 1 thread : 2 threads in
//! the same run. Run: `cargo bench --bench end_to_end` (`-- --repeats N`, default 2).

use std::process::Command;
use std::time::Instant;

/// One command line of the binary, by its name in the table.
struct Job {
    name: &'static str,
    args: &'static [&'static str],
}

const JOBS: &[Job] = &[
    Job {
        name: "demo (check with grid study)",
        args: &["demo"],
    },
    Job {
        name: "tandem check",
        args: &["check", "examples/tandem_3mv.toml"],
    },
    Job {
        name: "tandem faults",
        args: &["faults", "examples/tandem_3mv.toml"],
    },
    Job {
        name: "demo pressure sweep, 8 points",
        args: &[
            "sweep",
            "examples/demo_750kv.toml",
            "--vary",
            "gas.pressure",
            "--from",
            "3 bar",
            "--to",
            "6 bar",
            "--steps",
            "8",
        ],
    },
];

/// Wall seconds and peak resident memory (MB) of one run of the binary on `threads` threads;
/// None when the process could not be started or waited for.
fn run(args: &[&str], threads: usize) -> Option<(f64, f64)> {
    let start = Instant::now();
    let child = Command::new(env!("CARGO_BIN_EXE_holdoff"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .env("RAYON_NUM_THREADS", threads.to_string())
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .ok()?;
    let pid = libc::pid_t::try_from(child.id()).ok()?;
    let mut status: libc::c_int = 0;
    // SAFETY: rusage is plain data that wait4 fills; the pid is our own unwaited child.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    // SAFETY: as above; wait4 reaps the child, whose handle is not waited on again.
    let got = unsafe { libc::wait4(pid, &mut status, 0, &mut usage) };
    let wall = start.elapsed().as_secs_f64();
    // ru_maxrss is in kilobytes on Linux.
    (got == pid).then(|| (wall, usage.ru_maxrss as f64 / 1024.0))
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let repeats = args
        .iter()
        .position(|a| a == "--repeats")
        .and_then(|k| args.get(k + 1))
        .and_then(|v| v.parse::<usize>().ok())
        .unwrap_or(2)
        .max(1);
    println!(
        "end to end, fastest of {repeats} runs per thread count; logical CPUs {}",
        std::thread::available_parallelism().map_or(0, |n| n.get())
    );
    println!(
        "{:<32} {:>10} {:>9} {:>10} {:>9} {:>12}",
        "command", "1 thread s", "peak MB", "2 threads s", "peak MB", "1 : 2 ratio"
    );
    for job in JOBS {
        let mut best = [(f64::INFINITY, 0.0f64); 2];
        for (slot, threads) in [1usize, 2].into_iter().enumerate() {
            for _ in 0..repeats {
                match run(job.args, threads) {
                    Some((t, mb)) => {
                        best[slot].0 = best[slot].0.min(t);
                        best[slot].1 = best[slot].1.max(mb);
                    }
                    None => println!("{}: could not run the binary", job.name),
                }
            }
        }
        println!(
            "{:<32} {:>10.2} {:>9.0} {:>10.2} {:>9.0} {:>12.2}",
            job.name,
            best[0].0,
            best[0].1,
            best[1].0,
            best[1].1,
            best[0].0 / best[1].0
        );
    }
}
