//! The commands: one file each plans, runs and writes one command, on the shared layers
//! below (`plan`, `pipeline`, `audit`, `reference`, `report`). `run` dispatches a parsed
//! command line. Nothing below imports from here (the fuzz harness, `fuzz_checks`, which sits
//! beside the commands, borrows the demo's reference tables).

pub mod adjust;
pub mod audit;
pub mod batch;
pub mod demo;
pub mod lead;
pub mod refs;

use crate::cli::{Cli, Command};
use crate::error::{Error, Result};
use std::io::Write;

/// What a finished command tells `main`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Done, nothing to report.
    Ok,
    /// Done, with findings the caller asked to fail on (exit code 1).
    Findings,
}

/// Runs a parsed command line.
pub fn run(cli: Cli) -> Result<Outcome> {
    match cli.command {
        Command::Adjust(args) => adjust::run(*args),
        Command::Batch(args) => batch::run(&args),
        Command::Refs(args) => refs::refs(&args),
        Command::Catalog(args) => refs::catalog(&args),
        Command::Demo(args) => demo::run(&args),
        Command::Audit(args) => audit::run(&args),
        Command::Lead(args) => lead::run(&args),
    }
}

/// Writes to standard output. When its reader has gone away (`| head`), the tool stops quietly
/// with exit code 0, as command-line tools do.
pub fn write_stdout(text: &str) -> Result<()> {
    write_stdout_with(|out| {
        out.write_all(text.as_bytes())
            .map_err(|e| Error::io("standard output", "write", e))
    })
}

/// Hands `write` standard output, buffered, and flushes it; a reader that has gone away
/// ends the tool quietly (see `write_stdout`), whoever was writing.
pub fn write_stdout_with(write: impl FnOnce(&mut dyn Write) -> Result<()>) -> Result<()> {
    let mut out = QuietPipe(std::io::BufWriter::with_capacity(
        1 << 16,
        std::io::stdout().lock(),
    ));
    write(&mut out)?;
    out.flush()
        .map_err(|e| Error::io("standard output", "write", e))
}

/// Standard output that exits with code 0 when its reader has gone away.
struct QuietPipe<W>(W);

impl<W: Write> QuietPipe<W> {
    fn quiet<T>(result: std::io::Result<T>) -> std::io::Result<T> {
        match result {
            Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => std::process::exit(0),
            other => other,
        }
    }
}

impl<W: Write> Write for QuietPipe<W> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        Self::quiet(self.0.write(buf))
    }

    fn flush(&mut self) -> std::io::Result<()> {
        Self::quiet(self.0.flush())
    }
}
