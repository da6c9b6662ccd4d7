//! The `levelfield` binary: parse arguments, run, map the outcome to an exit code
//! (0 done, 1 findings, 2 usage or input error).

use std::process::ExitCode;

#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// Large pages from mimalloc for large inputs (`source::fit_pages_to_input`): it then maps its
/// memory with a request for huge pages (`madvise`), so a big table faults its memory in 2 MiB
/// pages instead of 4 KiB ones.
fn allow_large_pages() {
    // SAFETY: mi_option_set stores an option's value; mimalloc reads it at its next mapping.
    unsafe { libmimalloc_sys::mi_option_set(libmimalloc_sys::mi_option_large_os_pages, 1) }
}

fn main() -> ExitCode {
    levelfield::trace::phase("start");
    levelfield::source::on_large_input(allow_large_pages);
    let cli = match levelfield::cli::parse_from(std::env::args_os()) {
        Ok(cli) => cli,
        Err(error) => error.exit(),
    };
    let outcome = levelfield::run(cli);
    // An interruption being cleaned up ends the process (130) before an error it caused is told.
    levelfield::cleanup::wait_for_interruption();
    match outcome {
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
