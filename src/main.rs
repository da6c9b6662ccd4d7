//! The `levelfield` binary: parse arguments, run, map the outcome to an exit code
//! (0 done, 1 findings, 2 usage or input error).

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = levelfield::cli::Cli::parse();
    match levelfield::run(cli) {
        Ok(levelfield::Outcome::Ok) => ExitCode::SUCCESS,
        Ok(levelfield::Outcome::Findings) => ExitCode::from(1),
        Err(error) => {
            eprintln!("error: {error}");
            ExitCode::from(2)
        }
    }
}
