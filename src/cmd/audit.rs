//! `levelfield audit`: recompute a received table's claims with the adjust engine and report
//! what does not hold.

use super::{write_stdout, Outcome};
use crate::cli::{self, AuditArgs};
use crate::error::Result;
use crate::{audit, plan, report};

/// Runs the audit; findings at or above `--fail-on` give exit code 1.
pub fn run(args: &AuditArgs) -> Result<Outcome> {
    let plan = plan::resolve_audit(args)?;
    let report = audit::run_audit(
        &plan.input_bytes,
        &plan.input_label,
        &plan.settings,
        &plan.resolver,
        &plan.references,
    )?;
    let text = match args.format {
        cli::AuditFormat::Table => audit::report::render_text(&report),
        cli::AuditFormat::Md => audit::report::render_markdown(&report),
        cli::AuditFormat::Json => audit::report::render_json(&report),
    };
    match &args.output {
        Some(path) => report::write_atomically(path, &text)?,
        None => write_stdout(&text)?,
    }
    Ok(if report.fails(args.fail_on) {
        Outcome::Findings
    } else {
        Outcome::Ok
    })
}
