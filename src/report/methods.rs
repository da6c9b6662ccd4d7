//! The methods note: what was adjusted and why, in plain language an editor can paste under a
//! chart, then the detail (steps with formulas, reference tables with vintages, sources and the
//! sha256 of every file read, flagged rows by reason, and the standard cautions).
//!
//! Every step sentence and formula comes from the step registry (`adjust::STEPS`), so the note
//! cannot drift from what the code did. `MethodsNote` is rendered to Markdown here and to HTML
//! by `report::html`.

use crate::pipeline::{PipelineSettings, RunSummary};
use crate::reference::References;
pub use crate::source::sha256_hex;

/// The note's content, independent of its rendering.
#[derive(Debug, Clone, serde::Serialize)]
pub struct MethodsNote {
    pub in_brief: Vec<String>,
    pub steps: Vec<StepLine>,
    pub details: Vec<String>,
    pub files: Vec<FileLine>,
    pub flagged: Vec<(String, usize)>,
    pub cautions: Vec<String>,
    /// The recipe that reproduces the run, quoted (see `RecipeQuote`).
    pub recipe: Option<RecipeQuote>,
}

/// The recipe quoted in the note: the file a run read (with the keys that flags overrode), or
/// the recipe equivalent to a run made with flags.
#[derive(Debug, Clone, serde::Serialize)]
pub struct RecipeQuote {
    /// Where the text comes from, in words.
    pub origin: String,
    pub text: String,
    pub overridden: Vec<String>,
}

impl RecipeQuote {
    /// Where the recipe comes from and which of its keys flags overrode, as one sentence.
    pub fn provenance(&self) -> String {
        if self.overridden.is_empty() {
            format!("{}.", self.origin)
        } else {
            format!(
                "{}; flags on the command line overrode: {}.",
                self.origin,
                self.overridden.join(", ")
            )
        }
    }
}

#[derive(Debug, Clone, serde::Serialize)]
pub struct StepLine {
    pub name: String,
    pub summary: String,
    pub formula: String,
}

#[derive(Debug, Clone, serde::Serialize)]
pub struct FileLine {
    pub role: String,
    pub file: String,
    pub description: String,
    pub sha256: String,
}

/// What the flags mean, grouped for readers.
fn flag_reason(flag: &str) -> String {
    let reason = match flag {
        "missing_value" => "no figure in the input (blank or a missing-value mark)",
        "footnote" => "footnote or status mark removed from the figure (kept)",
        "unparsed" => "the cell was not a number",
        "unresolved" => "entity not recognised",
        "aggregate" => "aggregate (world, region or group) left out of the ranking",
        "currency_mismatch" => {
            "figure in a currency that is neither the country's own nor the base currency"
        }
        "not_ranked" => "not ranked (see the other reasons)",
        "within_uncertainty" => "rank shift within the uncertainty of the figures",
        "no_margin" => "no margin of error given (treated as exact)",
        "asymmetric_ci" => "asymmetric confidence interval (larger half used)",
        other if let Some(meaning) = crate::flags::meaning(other) => meaning,
        other if other.starts_with("no_") => {
            return format!(
                "no reference factor ({})",
                other.trim_start_matches("no_").replace('_', " ")
            )
        }
        other if other.contains("_year_differs") => {
            return format!(
                "reference factor from a neighbouring year ({})",
                other
                    .split("_year_differs")
                    .next()
                    .unwrap_or(other)
                    .replace('_', " ")
            )
        }
        other => other,
    };
    reason.to_string()
}

/// The files a run read, each with what it is and its SHA-256: the input, then the catalog,
/// its alias files and its tables.
fn file_lines(
    summary: &RunSummary,
    references: Option<&References>,
    input_sha256: &str,
) -> Vec<FileLine> {
    let mut files = vec![FileLine {
        role: "input".into(),
        file: summary.input.clone(),
        description: format!("{} row(s)", summary.rows_in),
        sha256: input_sha256.into(),
    }];
    if let Some(refs) = references {
        files.push(FileLine {
            role: "catalog".into(),
            file: refs.catalog_file.clone(),
            description: refs
                .catalog
                .title
                .clone()
                .unwrap_or(refs.catalog.name.clone()),
            sha256: refs.catalog_sha256.clone(),
        });
        for (file, sha256) in &refs.alias_files {
            files.push(FileLine {
                role: "aliases".into(),
                file: file.clone(),
                description: "entity names and user-defined entities".into(),
                sha256: sha256.clone(),
            });
        }
        for t in &refs.tables {
            let r = &t.resource;
            let sources: Vec<String> = r.sources.iter().map(|s| s.title.clone()).collect();
            files.push(FileLine {
                role: r.kind.as_str().into(),
                file: t.file.clone(),
                description: format!(
                    "{} ({}), vintage {}; source: {}",
                    r.name,
                    if r.unit.is_empty() {
                        "unit not stated"
                    } else {
                        &r.unit
                    },
                    r.vintage.as_deref().unwrap_or("not stated"),
                    if sources.is_empty() {
                        "not stated".into()
                    } else {
                        sources.join("; ")
                    }
                ),
                sha256: t.sha256.clone(),
            });
        }
    }
    files
}

pub fn build(
    summary: &RunSummary,
    settings: &PipelineSettings,
    references: Option<&References>,
    input_sha256: &str,
) -> MethodsNote {
    let mut in_brief: Vec<String> = settings
        .steps
        .iter()
        .map(|s| s.explain(&settings.step_settings))
        .collect();
    if settings.steps.is_empty() {
        in_brief.push("The figures were ranked as given, without adjustment.".into());
    } else if settings.steps.iter().any(|s| s.name() == "ppp") {
        in_brief.push(format!(
            "The comparison without the price-level adjustment (\"baseline\") uses the same steps with market exchange rates in place of PPPs: {}. The adjusted figures are in {}.",
            summary.units.baseline.words, summary.units.adjusted.words
        ));
    } else {
        in_brief.push(format!(
            "No step converts at PPPs, so the baseline is the adjusted figures themselves and no rank shift comes from a price-level adjustment. The figures are in {}.",
            summary.units.adjusted.words
        ));
    }
    in_brief.push(format!(
        "Ranks are standard competition ranks within each {}year ({} value first); every row of the input is kept, and {} of {} carry flags explained below.",
        if summary.notes.iter().any(|n| n.contains("group")) { "group and " } else { "" },
        if settings.order == crate::rank::Order::Desc { "highest" } else { "lowest" },
        summary.rows_flagged,
        summary.rows_in
    ));
    let steps = settings
        .steps
        .iter()
        .map(|s| StepLine {
            name: s.name().into(),
            summary: s.summary().into(),
            formula: s.formula().into(),
        })
        .collect();
    let mut details = summary.method_notes.clone();
    if let Some(year) = settings.step_settings.base_year {
        details.push(format!("base year: {year}"));
    }
    let files = file_lines(summary, references, input_sha256);
    let mut flagged: Vec<(String, usize)> = Vec::new();
    for (flag, count) in &summary.flag_counts {
        let reason = flag_reason(flag.trim_end_matches(":YYYY"));
        match flagged.iter_mut().find(|(r, _)| *r == reason) {
            Some(entry) => entry.1 += count,
            None => flagged.push((reason, *count)),
        }
    }
    MethodsNote {
        in_brief,
        steps,
        details,
        files,
        flagged,
        cautions: summary.cautions.clone(),
        recipe: None,
    }
}

pub fn render_markdown(note: &MethodsNote) -> String {
    let mut out = String::from("# Methods\n\n");
    out.push_str(&note.in_brief.join(" "));
    out.push_str("\n\n## Steps, in order\n\n");
    if note.steps.is_empty() {
        out.push_str("No adjustment step: the figures were ranked as given.\n");
    }
    for (i, step) in note.steps.iter().enumerate() {
        out.push_str(&format!(
            "{}. **{}**: {}. `{}`\n",
            i + 1,
            step.name,
            step.summary,
            step.formula
        ));
    }
    if !note.details.is_empty() {
        out.push('\n');
        for detail in &note.details {
            out.push_str(&format!("- {detail}\n"));
        }
    }
    out.push_str("\n## Files read\n\n| role | file | description | sha256 |\n|---|---|---|---|\n");
    for f in &note.files {
        out.push_str(&format!(
            "| {} | {} | {} | `{}` |\n",
            f.role,
            f.file,
            f.description.replace('|', "\\|"),
            f.sha256
        ));
    }
    out.push_str("\n## Flagged rows\n\n");
    if note.flagged.is_empty() {
        out.push_str("No row was flagged.\n");
    } else {
        out.push_str("| reason | rows |\n|---|---:|\n");
        for (reason, count) in &note.flagged {
            out.push_str(&format!("| {reason} | {count} |\n"));
        }
    }
    out.push_str("\n## Cautions\n\n");
    for caution in &note.cautions {
        out.push_str(&format!("- {caution}\n"));
    }
    if let Some(recipe) = &note.recipe {
        out.push_str(&format!(
            "\n## Recipe\n\n{}\n\n```toml\n{}```\n",
            recipe.provenance(),
            recipe.text
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_known_inputs() {
        // FIPS 180-2 test vector: sha256("abc").
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn flags_are_grouped_by_reason() {
        assert_eq!(flag_reason("no_ppp"), "no reference factor (ppp)");
        assert_eq!(
            flag_reason("ppp_year_differs"),
            "reference factor from a neighbouring year (ppp)"
        );
        assert!(flag_reason("aggregate").contains("left out of the ranking"));
    }
}
