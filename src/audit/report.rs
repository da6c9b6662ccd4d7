//! The audit's findings for people and tools: a terminal report grouped by severity, a Markdown
//! memo for an editor, and JSON.

use super::{AuditReport, Finding, Severity};
use crate::report::format::{format_number, one_line, Rounding};
use tabled::settings::Style;

fn number(value: Option<f64>) -> String {
    value
        .map(|v| {
            let rounding = if v.fract() == 0.0 {
                Rounding::Decimals(0)
            } else {
                Rounding::Significant(6)
            };
            format_number(v, rounding, true)
        })
        .unwrap_or_default()
}

fn percent(value: Option<f64>) -> String {
    value
        .map(|v| format!("{:+.1}%", v * 100.0))
        .unwrap_or_default()
}

fn headline(report: &AuditReport) -> String {
    let count = |s: Severity| report.findings.iter().filter(|f| f.severity == s).count();
    let claims: Vec<String> = report
        .claims
        .iter()
        .map(|c| {
            format!(
                "{} = \"{}\"{}",
                c.name(),
                c.column,
                if c.assumed {
                    " (assumed from the header; --claim to override)"
                } else {
                    ""
                }
            )
        })
        .collect();
    format!(
        "Audit of {}: {} row(s), {} claimed figure(s) checked; {} error(s), {} warning(s), {} caution(s)\nclaims: {}\n",
        report.input,
        report.rows,
        report.claims_checked,
        count(Severity::Error),
        count(Severity::Warning),
        count(Severity::Caution),
        claims.join("; ")
    )
}

fn rows_of(findings: &[&Finding]) -> Vec<[String; 7]> {
    findings
        .iter()
        .map(|f| {
            [
                f.line.to_string(),
                one_line(&f.entity),
                f.check.clone(),
                number(f.claimed),
                number(f.recomputed),
                percent(f.relative_difference),
                one_line(&f.cause),
            ]
        })
        .collect()
}

const HEADER: [&str; 7] = [
    "line",
    "entity",
    "check",
    "claimed",
    "recomputed",
    "difference",
    "likely cause",
];

const NO_FINDINGS: &str =
    "No findings: every claimed figure matches its recomputation within rounding.\n";

/// The findings grouped by severity, most serious first, empty groups left out.
fn by_severity(report: &AuditReport) -> Vec<(Severity, Vec<&Finding>)> {
    [Severity::Error, Severity::Warning, Severity::Caution]
        .into_iter()
        .map(|s| {
            (
                s,
                report
                    .findings
                    .iter()
                    .filter(|f| f.severity == s)
                    .collect::<Vec<_>>(),
            )
        })
        .filter(|(_, findings)| !findings.is_empty())
        .collect()
}

pub fn render_text(report: &AuditReport) -> String {
    let mut out = headline(report);
    if report.findings.is_empty() {
        out.push_str(NO_FINDINGS);
    }
    for (severity, findings) in by_severity(report) {
        let mut builder = tabled::builder::Builder::default();
        builder.push_record(HEADER);
        for row in rows_of(&findings) {
            builder.push_record(row);
        }
        let mut table = builder.build();
        table.with(Style::sharp());
        out.push_str(&format!(
            "\n{} ({}):\n{table}\n",
            severity.name().to_uppercase(),
            findings.len()
        ));
    }
    for reference in &report.references {
        out.push_str(&format!("reference: {reference}\n"));
    }
    out
}

pub fn render_markdown(report: &AuditReport) -> String {
    let mut out = format!("# Audit memo: {}\n\n", report.input);
    out.push_str(&headline(report).replace('\n', "\n\n"));
    if report.findings.is_empty() {
        out.push_str(NO_FINDINGS);
    }
    for (severity, findings) in by_severity(report) {
        out.push_str(&format!(
            "\n## {} ({})\n\n| {} |\n|---|---|---|---:|---:|---:|---|\n",
            severity.name(),
            findings.len(),
            HEADER.join(" | ")
        ));
        for row in rows_of(&findings) {
            let cells: Vec<String> = row.iter().map(|c| c.replace('|', "\\|")).collect();
            out.push_str(&format!("| {} |\n", cells.join(" | ")));
        }
    }
    out.push_str("\n## References\n\n");
    for reference in &report.references {
        out.push_str(&format!("- {reference}\n"));
    }
    out
}

pub fn render_json(report: &AuditReport) -> String {
    serde_json::to_string_pretty(report).unwrap_or_default() + "\n"
}
