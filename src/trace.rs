//! Where a run's time and memory go: with `LEVELFIELD_TRACE=1` in the environment, each phase
//! of a run prints to standard error the seconds since the process started, the process's
//! resident memory and its user and system time so far (from `/proc/self`), so a developer
//! can see which phase a change moved without a profiler. Without the variable nothing is
//! printed and a phase costs one check of a flag.

use std::sync::OnceLock;
use std::time::Instant;

/// The start of the process (the first phase asked about) and whether tracing is on.
fn started() -> Option<&'static Instant> {
    static START: OnceLock<Option<Instant>> = OnceLock::new();
    START
        .get_or_init(|| std::env::var_os("LEVELFIELD_TRACE").map(|_| Instant::now()))
        .as_ref()
}

/// Marks the end of phase `name`.
pub fn phase(name: &str) {
    let Some(start) = started() else {
        return;
    };
    let status = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    let rss_kb: u64 = status
        .lines()
        .find_map(|l| l.strip_prefix("VmRSS:"))
        .and_then(|v| v.split_whitespace().next())
        .and_then(|v| v.parse().ok())
        .unwrap_or(0);
    let stat = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
    // Fields 14 and 15 (user and system time in clock ticks) come after the command's name,
    // which ends with the last `)`.
    let ticks: Vec<f64> = stat
        .rsplit_once(')')
        .map(|(_, rest)| rest.split_whitespace().skip(11).take(2))
        .into_iter()
        .flatten()
        .filter_map(|t| t.parse().ok())
        .collect();
    let (user, system) = match ticks[..] {
        [u, s] => (u / 100.0, s / 100.0),
        _ => (0.0, 0.0),
    };
    eprintln!(
        "levelfield trace: {:8.3} s {:>7} MB  user {user:7.2} s  sys {system:7.2} s  {name}",
        start.elapsed().as_secs_f64(),
        rss_kb / 1024
    );
}
