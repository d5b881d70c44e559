//! `holdoff bench`: solver timings on the standard problem.

use anyhow::Result;
use clap::Args;
use holdoff::benchmark;
use holdoff::solve::operator::Scheme;
use std::path::PathBuf;
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
    /// Also write the symmetric operator of the first size to DIR for an outside solver.
    #[arg(long, value_name = "DIR")]
    pub export: Option<PathBuf>,
}

pub fn run(args: &BenchArgs) -> Result<ExitCode> {
    println!(
        "{:>16} {:>9} {:>9} {:>5} {:>10} {:>8} {:>8} {:>8} {:>8} {:>12} {:>9} {:>9}",
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
        "median s"
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
                "{:>16} {:>9} {:>9} {:>5} {:>10.2e} {:>8.3} {:>8.3} {:>8.3} {:>8.3} {:>12.3e} {:>9.0} {:>9.3}",
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
                median
            );
        }
    }
    if let (Some(dir), Some(&n)) = (&args.export, args.sizes.first()) {
        match benchmark::export_operator(n, dir) {
            Ok(rows) => println!(
                "wrote the symmetric operator ({rows} rows) to {}",
                dir.display()
            ),
            Err(e) => anyhow::bail!("cannot export the operator to {}: {e}", dir.display()),
        }
    }
    Ok(ExitCode::SUCCESS)
}
