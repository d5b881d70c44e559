//! `holdoff bench`: solver timings on the standard problem, the machine's memory bandwidth
//! beside the V-cycle's, and the commands end to end with their peak memory.

use anyhow::{Context, Result};
use clap::Args;
use holdoff::benchmark;
use holdoff::solve::Scheme;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

#[derive(Debug, Args)]
pub struct BenchArgs {
    /// Problem sizes in grid nodes.
    #[arg(long, value_delimiter = ',', default_values_t = vec![250_000usize, 1_000_000, 4_000_000])]
    pub sizes: Vec<usize>,
    /// Relative residual to reach.
    #[arg(long, default_value_t = 1e-10)]
    pub tolerance: f64,
    /// Runs of each size and scheme; the fastest is shown (the least disturbed by other work
    /// on the machine), with the median beside it.
    #[arg(long, default_value_t = 3, value_parser = clap::value_parser!(u32).range(1..=50))]
    pub repeat: u32,
    /// Also write the symmetric operator of the first size and its right-hand side to DIR in
    /// the Matrix Market format (operator.mtx, rhs.mtx), for an outside solver.
    #[arg(long, value_name = "DIR")]
    pub export: Option<PathBuf>,
    /// Instead of the solver table: the demo, the tandem check, the tandem fault replay and a
    /// pressure and a voltage sweep of the demo end to end, each in its own process with its peak memory,
    /// then the fault replay's scenario work on 1 and 2 threads in one run.
    #[arg(long)]
    pub end_to_end: bool,
    /// Folder of the example designs for --end-to-end.
    #[arg(long, value_name = "DIR", default_value = "examples")]
    pub examples: PathBuf,
    /// Only the fault replay of FILE on 1 and on 2 threads in one run (unit solves and
    /// scenario work timed apart).
    #[arg(long, value_name = "FILE")]
    pub speedup: Option<PathBuf>,
    /// Internal: run one command line in this process and report its time and peak memory
    /// on stderr (used by --end-to-end).
    #[arg(long, hide = true, num_args = 1.., allow_hyphen_values = true)]
    pub step: Option<Vec<String>>,
}

/// Threads of this process's rayon pool and how they were set.
fn threads_line() -> String {
    format!(
        "holdoff threads: {} (RAYON_NUM_THREADS={})",
        rayon::current_num_threads(),
        std::env::var("RAYON_NUM_THREADS").unwrap_or_else(|_| "unset".into())
    )
}

pub fn run(args: &BenchArgs) -> Result<ExitCode> {
    if let Some(step) = &args.step {
        return run_step(step);
    }
    println!("{}", threads_line());
    if let Some(file) = &args.speedup {
        scenario_speedup(file)?;
        return Ok(ExitCode::SUCCESS);
    }
    if args.end_to_end {
        return end_to_end(&args.examples);
    }
    let triad = benchmark::triad_bandwidth(1 << 24, 5);
    println!(
        "memory bandwidth (STREAM-style triad, {} threads, 3 x 128 MiB): {:.2} GB/s",
        rayon::current_num_threads(),
        triad / 1e9
    );
    println!(
        "{:>16} {:>9} {:>9} {:>5} {:>10} {:>8} {:>8} {:>8} {:>8} {:>12} {:>9} {:>9} {:>9} {:>9} {:>7}",
        "scheme",
        "nodes",
        "unknowns",
        "iter",
        "residual",
        "assem s",
        "setup s",
        "solve s",
        "total s",
        "unknowns/s",
        "B/unknown",
        "median s",
        "cycle s",
        "B/unk/cyc",
        "% triad"
    );
    for &n in &args.sizes {
        for scheme in [Scheme::ShortleyWeller, Scheme::Symmetric] {
            let mut runs = Vec::with_capacity(args.repeat as usize);
            for _ in 0..args.repeat {
                runs.push(benchmark::run(n, scheme, args.tolerance)?);
            }
            runs.sort_by(|a, b| a.seconds_total.total_cmp(&b.seconds_total));
            let median = runs[runs.len() / 2].seconds_total;
            let r = &runs[0];
            println!(
                "{:>16} {:>9} {:>9} {:>5} {:>10.2e} {:>8.3} {:>8.3} {:>8.3} {:>8.3} {:>12.3e} {:>9.0} {:>9.3} {:>9.4} {:>9.0} {:>6.1}%",
                format!("{:?}", r.scheme),
                r.nodes,
                r.unknowns,
                r.iterations,
                r.relative_residual,
                r.seconds_assembly,
                r.seconds_multigrid_setup,
                r.seconds_solve,
                r.seconds_total,
                r.unknowns_per_second,
                r.bytes_per_unknown,
                median,
                r.seconds_per_cycle,
                r.cycle_bytes_per_unknown,
                100.0 * r.cycle_bandwidth / triad
            );
        }
    }
    println!(
        "% triad: the V-cycle's estimated bytes (B/unk/cyc, from the stencils and sweeps of \
         every level) over its measured time, against the triad's bandwidth"
    );
    if let (Some(dir), Some(&n)) = (&args.export, args.sizes.first()) {
        let (rows, files) = benchmark::export_operator(n)
            .map_err(|e| anyhow::anyhow!("cannot form the operator to export: {e}"))?;
        std::fs::create_dir_all(dir)
            .with_context(|| format!("cannot create the folder {}", dir.display()))?;
        for (name, bytes) in &files {
            let path = dir.join(name);
            holdoff::report::write_atomic(&path, bytes)
                .with_context(|| format!("cannot write {}", path.display()))?;
        }
        println!(
            "wrote the symmetric operator ({rows} rows) and its right-hand side to {} ({}, {}, Matrix Market)",
            dir.display(),
            benchmark::EXPORT_MATRIX,
            benchmark::EXPORT_RHS
        );
    }
    Ok(ExitCode::SUCCESS)
}

/// Prefix of the line a step prints on stderr.
const STEP_TAG: &str = "holdoff-bench-step";

/// Runs one command line (`holdoff` plus `words`) here, its output to stdout, then prints the
/// wall-clock seconds and the peak resident memory on stderr.
fn run_step(words: &[String]) -> Result<ExitCode> {
    use clap::Parser;
    let cli = super::Cli::try_parse_from(
        std::iter::once("holdoff".to_string()).chain(words.iter().cloned()),
    )?;
    let t = std::time::Instant::now();
    let code = super::dispatch(cli)?;
    let seconds = t.elapsed().as_secs_f64();
    let peak = benchmark::peak_rss_bytes().map_or(-1.0, |b| b as f64);
    eprintln!("{STEP_TAG} {seconds:.3} {peak:.0}");
    Ok(code)
}

/// The commands end to end, each in a child process (so that each peak memory is its own),
/// with the thread count of this process.
fn end_to_end(examples: &Path) -> Result<ExitCode> {
    let demo = examples.join("demo_750kv.toml");
    let tandem = examples.join("tandem_3mv.toml");
    for f in [&demo, &tandem] {
        anyhow::ensure!(
            f.is_file(),
            "--examples {}: {} not found (give the folder of the example designs)",
            examples.display(),
            f.display()
        );
    }
    let s = |p: &Path| p.display().to_string();
    let steps: Vec<(&str, Vec<String>)> = vec![
        ("demo", vec!["demo".into()]),
        ("tandem check", vec!["check".into(), s(&tandem)]),
        ("tandem faults", vec!["faults".into(), s(&tandem)]),
        (
            "demo pressure sweep, 8 points",
            vec![
                "sweep".into(),
                s(&demo),
                "--vary".into(),
                "gas.pressure".into(),
                "--from".into(),
                "2 bar".into(),
                "--to".into(),
                "4 bar".into(),
                "--steps".into(),
                "8".into(),
            ],
        ),
        (
            "demo voltage sweep, 8 points",
            vec![
                "sweep".into(),
                s(&demo),
                "--vary".into(),
                "terminal.voltage".into(),
                // `=`: a value that starts with a minus sign is otherwise read as an option.
                "--from=-600 kV".into(),
                "--to=-800 kV".into(),
                "--steps".into(),
                "8".into(),
            ],
        ),
    ];
    let exe = std::env::current_exe().context("cannot find the holdoff executable")?;
    println!(
        "{:>32} {:>10} {:>12} {:>5}",
        "step", "seconds", "peak MiB", "exit"
    );
    for (name, words) in steps {
        let out = std::process::Command::new(&exe)
            .arg("bench")
            .arg("--step")
            .args(&words)
            .stdout(std::process::Stdio::null())
            .output()
            .with_context(|| format!("cannot run {name}"))?;
        let err = String::from_utf8_lossy(&out.stderr);
        let figures = err.lines().find_map(|l| {
            let mut w = l.strip_prefix(STEP_TAG)?.split_whitespace();
            Some((
                w.next()?.parse::<f64>().ok()?,
                w.next()?.parse::<f64>().ok()?,
            ))
        });
        let code = out
            .status
            .code()
            .map_or("signal".to_string(), |c| c.to_string());
        match figures {
            Some((sec, peak)) => println!(
                "{name:>32} {sec:>10.2} {:>12} {code:>5}",
                if peak < 0.0 {
                    "unknown".to_string()
                } else {
                    format!("{:.0}", peak / (1024.0 * 1024.0))
                }
            ),
            None => println!(
                "{name:>32} {:>10} {:>12} {code:>5}  {}",
                "failed",
                "-",
                err.trim()
            ),
        }
    }
    scenario_speedup(&tandem)?;
    Ok(ExitCode::SUCCESS)
}

/// The fault replay of `file` on 1 and on 2 threads in this run: the unit solves and the
/// scenario work (every scenario's field and margins, side by side) timed apart.
fn scenario_speedup(file: &Path) -> Result<()> {
    let Some(d) = super::load_design(file)? else {
        anyhow::bail!("{}: the design does not load", file.display());
    };
    let params = holdoff::solve::SolverParams::default();
    let stack = holdoff::stack::analyze_stack(&d.model, &params, &Default::default())?;
    let stage_v = stack.as_ref().map(|s| s.stage_voltages());
    let mesh = holdoff::review::Mesh::build(&d.model)?;
    let options = holdoff::faults::ReplayOptions::default();
    let mut times = Vec::new();
    for threads in [1usize, 2] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()?;
        let r = pool.install(|| {
            holdoff::faults::replay(
                &d.model,
                &mesh,
                &params,
                stage_v.as_deref(),
                &options,
                &|_| {},
            )
        })?;
        println!(
            "{}: fault replay on {threads} thread(s): unit solves {:.2} s, scenarios {:.2} s",
            file.display(),
            r.basis_seconds,
            r.scenario_seconds
        );
        times.push((r.basis_seconds, r.scenario_seconds));
    }
    if let [one, two] = times[..] {
        println!(
            "speed-up 2 threads / 1 thread, same run: unit solves {:.2}x, scenarios {:.2}x",
            one.0 / two.0,
            one.1 / two.1
        );
    }
    Ok(())
}
