//! The `holdoff` command line: parse arguments, run one command, map the outcome to an exit
//! code (0 all pass, 1 some check below the design factor, 2 bad input or a failed solve).

mod cli;

use std::process::ExitCode;

fn main() -> ExitCode {
    match cli::run() {
        Ok(code) => code,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::from(2)
        }
    }
}
