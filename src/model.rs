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
