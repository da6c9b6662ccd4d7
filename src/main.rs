//! The `levelfield` binary: parse arguments, run, map the outcome to an exit code
//! (0 done, 1 findings, 2 usage or input error).

use std::process::ExitCode;

#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() -> ExitCode {
    let cli = match levelfield::cli::parse_from(std::env::args_os()) {
        Ok(cli) => cli,
        Err(error) => error.exit(),
    };
    match levelfield::run(cli) {
        Ok(levelfield::Outcome::Ok) => ExitCode::SUCCESS,
        Ok(levelfield::Outcome::Findings) => ExitCode::from(1),
        Err(error) => {
            // Input text in a message is shown with its control characters escaped.
            eprintln!(
                "error: {}",
                levelfield::report::format::visible(&error.to_string())
            );
            ExitCode::from(2)
        }
    }
}
