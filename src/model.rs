//! The small model of a run that every layer above the engine shares: the settings the
//! pipeline runs with, and the summary it reports (with the units of both tracks). Renderers
//! depend on this file, not on the pipeline.

use crate::adjust::{Step, StepSettings};
use crate::ingest::IngestOptions;
use crate::rank::Order;
use crate::uncertainty::ranking::IntervalSettings;
use std::collections::BTreeMap;

/// What the pipeline needs beyond the input bytes.
#[derive(Debug, Clone)]
pub struct PipelineSettings {
    pub ingest: IngestOptions,
    pub steps: Vec<&'static dyn Step>,
    pub step_settings: StepSettings,
    pub nearest_year: u32,
    pub allow_unresolved: bool,
    pub rank_aggregates: bool,
    pub order: Order,
    /// Rank intervals and margins, when the figures or the factors carry uncertainty.
    pub intervals: Option<IntervalSettings>,
    /// Plan the tracks as if some row were in the base currency (`--streaming` sets it when
    /// any piece of the file holds such a row, so every piece has the same columns).
    pub assume_base_rows: bool,
    /// Take one kind's row-year factors from this many years away (the audit's
    /// neighbouring-year diagnosis; None for every adjustment).
    pub factor_year_offset: Option<(crate::reference::Kind, i32)>,
}

impl PipelineSettings {
    /// Whether the steps bring every figure to one unit (a currency conversion, or a ratio of
    /// income); without one, figures in different currencies must not be ranked together. The
    /// same steps make each figure's currency matter: a figure in a foreign currency cannot be
    /// converted with its country's factors.
    pub fn converts_currency(&self) -> bool {
        self.steps
            .iter()
            .any(|s| matches!(s.name(), "market" | "ppp" | "per-income"))
    }

    /// Survey shares (margins from sample sizes), counts of people (`--proportion`) and figures
    /// stated as `--currency-code XXX` are not money: they rank together whatever the country.
    pub fn figures_are_not_money(&self) -> bool {
        matches!(
            self.ingest.margins,
            crate::ingest::margins::MarginSpec::SampleSize { .. }
        ) || self.step_settings.proportion
            || self.ingest.currency_code.as_deref() == Some("XXX")
    }

    /// Whether every figure ends in one unit (the mixed-currency rule has nothing to compare).
    pub fn one_unit(&self) -> bool {
        self.converts_currency() || self.figures_are_not_money()
    }
}

impl std::fmt::Debug for dyn Step {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct RunSummary {
    pub input: String,
    pub rows_in: usize,
    pub rows_out: usize,
    pub rows_flagged: usize,
    pub flag_counts: BTreeMap<String, usize>,
    pub steps: Vec<String>,
    pub baseline_steps: Vec<String>,
    pub notes: Vec<String>,
    pub method_notes: Vec<String>,
    pub references: Vec<String>,
    pub warnings: Vec<String>,
    /// The cautions that travel with every publishable output (md, json, HTML, methods note).
    pub cautions: Vec<String>,
    /// What each track's figures are in: the one description every label is written from.
    pub units: crate::units::Units,
    /// A notice that travels with every output of the run (the demo says its data are invented).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub notice: Option<String>,
}

/// The columns of a data file (csv, json, Parquet): every column (the default), the data
/// contract's core, or a list the user names (`--write-columns`).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub enum ColumnSet {
    #[default]
    All,
    Core,
    List(Vec<String>),
}

/// The data contract's core: ids, entity, year, group, value, both tracks, their margins,
/// ranks, rank ranges, the shift and the flags. Stage and factor columns are left out.
pub const CORE_COLUMNS: &[&str] = &[
    "data_notice",
    "row_id",
    "entity_input",
    "entity_code",
    "entity_name",
    "year",
    "group",
    "value",
    "value_baseline",
    "value_adjusted",
    "moe_baseline",
    "moe_adjusted",
    "rank_baseline",
    "rank_adjusted",
    "rank_shift",
    "rank_baseline_low",
    "rank_baseline_high",
    "rank_adjusted_low",
    "rank_adjusted_high",
    "tied_with",
    "flags",
];

impl ColumnSet {
    /// Reads `all`, `core` or a comma-separated list of output column names.
    pub fn parse(text: &str) -> std::result::Result<ColumnSet, String> {
        match text.trim() {
            "all" => Ok(ColumnSet::All),
            "core" => Ok(ColumnSet::Core),
            list => {
                let names: Vec<String> = list
                    .split(',')
                    .map(|n| n.trim().to_string())
                    .filter(|n| !n.is_empty())
                    .collect();
                if names.is_empty() {
                    return Err("name core, all, or output columns separated by commas".into());
                }
                Ok(ColumnSet::List(names))
            }
        }
    }

    /// The columns to write, in the output's order, out of `available`. A named column that
    /// the run does not write is an error naming the ones it does.
    pub fn pick(&self, available: &[String]) -> crate::error::Result<Vec<String>> {
        match self {
            ColumnSet::All => Ok(available.to_vec()),
            ColumnSet::Core => Ok(available
                .iter()
                .filter(|c| CORE_COLUMNS.contains(&c.as_str()))
                .cloned()
                .collect()),
            ColumnSet::List(names) => {
                if let Some(unknown) = names.iter().find(|n| !available.contains(n)) {
                    return Err(crate::error::Error::usage(
                        format!(
                            "--write-columns names \"{unknown}\", which this run does not write"
                        ),
                        format!("name columns among: {}", available.join(", ")),
                    ));
                }
                // Kept in the output's order; the notice of invented data is never dropped.
                Ok(available
                    .iter()
                    .filter(|c| names.contains(c) || c.as_str() == "data_notice")
                    .cloned()
                    .collect())
            }
        }
    }

    /// What the summary says was written.
    pub fn describe(&self, written: usize, available: usize) -> Option<String> {
        match self {
            ColumnSet::All => None,
            ColumnSet::Core => Some(format!(
                "columns: the core set, {written} of {available} (--write-columns all for every stage and factor column)"
            )),
            ColumnSet::List(_) => Some(format!(
                "columns: {written} of {available}, as --write-columns names them"
            )),
        }
    }
}
