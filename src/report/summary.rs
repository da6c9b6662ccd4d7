//! The run summary printed on stderr, and the one-line legend under reader tables that says
//! what "baseline" and "adjusted" are measured in.

use crate::adjust::{IncomeAs, StepSettings};
use crate::pipeline::RunSummary;

/// What a track's final value is measured in, in words.
pub fn describe_track(steps: &[&str], settings: &StepSettings, starts_in_base: bool) -> String {
    let mut currency = if starts_in_base {
        format!("{} as given", settings.base_currency)
    } else {
        "local currency as given".to_string()
    };
    let mut parts: Vec<String> = Vec::new();
    for step in steps {
        match *step {
            "market" => currency = format!("{} at market rates", settings.base_currency),
            "ppp" => currency = "international dollars (PPP)".to_string(),
            "deflate" => parts.push(format!("{} prices", settings.base_year.unwrap_or_default())),
            "per-capita" => parts.push(if settings.per == 1 {
                "per person".into()
            } else {
                format!("per {} people", settings.per)
            }),
            "per-income" => {
                return match settings.income_as {
                    IncomeAs::Share => "share of a year's income per capita (0.05 = 5%)".into(),
                    IncomeAs::Days => "days of average income per capita".into(),
                }
            }
            _ => {}
        }
    }
    let mut text = currency;
    for p in parts {
        text.push_str(", ");
        text.push_str(&p);
    }
    text
}

/// What the baseline is, in a few words for chart legends: the run's own steps with market
/// rates in place of PPPs when it has a PPP step, else the same figures as the adjusted ones.
pub fn baseline_name(summary: &RunSummary) -> String {
    if summary.steps.iter().any(|s| s == "ppp") {
        "baseline, market rates".into()
    } else {
        "baseline, the same steps (no PPP step)".into()
    }
}

pub fn units_line(summary: &RunSummary) -> String {
    format!(
        "baseline: {}; adjusted: {}",
        summary.baseline_unit, summary.adjusted_unit
    )
}

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
