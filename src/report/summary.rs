//! The run summary printed on stderr, and the one-line legend under reader tables that says
//! what "baseline" and "adjusted" are measured in.

use crate::pipeline::RunSummary;

/// The summary for stderr, with control characters from the input escaped.
pub fn render(summary: &RunSummary) -> String {
    super::format::visible(&render_plain(summary)).into_owned()
}

fn render_plain(summary: &RunSummary) -> String {
    let mut out = format!(
        "levelfield: {} row(s) in, {} row(s) out, {} flagged\n",
        summary.rows_in, summary.rows_out, summary.rows_flagged
    );
    for note in &summary.notes {
        out.push_str(&format!("  {note}\n"));
    }
    let steps = if summary.steps.is_empty() {
        "none (values ranked as given)".to_string()
    } else {
        summary.steps.join(" → ")
    };
    out.push_str(&format!("  steps (adjusted): {steps}\n"));
    if !summary.steps.is_empty() {
        out.push_str(&format!(
            "  steps (baseline): {}\n",
            if summary.baseline_steps.is_empty() {
                "none".into()
            } else {
                summary.baseline_steps.join(" → ")
            }
        ));
    }
    for note in &summary.method_notes {
        out.push_str(&format!("  method: {note}\n"));
    }
    for reference in &summary.references {
        out.push_str(&format!("  reference: {reference}\n"));
    }
    if !summary.flag_counts.is_empty() {
        let counts: Vec<String> = summary
            .flag_counts
            .iter()
            .map(|(f, n)| format!("{f} {n}"))
            .collect();
        out.push_str(&format!("  flags: {}\n", counts.join(", ")));
    }
    for warning in &summary.warnings {
        out.push_str(&format!("  warning: {warning}\n"));
    }
    out
}
