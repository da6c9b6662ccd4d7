//! Fuzz target: arbitrary bytes as an input table, adjusted with the demo's reference tables.
//! Never a panic; when the run succeeds, every input row is in the output (rows in = rows out).
#![no_main]

use levelfield::adjust::{IncomeAs, StepSettings};
use levelfield::entity::Resolver;
use levelfield::ingest::IngestOptions;
use levelfield::pipeline::{run_adjust, PipelineSettings};
use levelfield::plan::parse_steps;
use levelfield::rank::Order;
use levelfield::reference::{self, Basis, References};
use libfuzzer_sys::fuzz_target;
use std::sync::OnceLock;

static SETUP: OnceLock<(Resolver, References, PipelineSettings)> = OnceLock::new();

fn setup() -> (Resolver, References, PipelineSettings) {
    let mut resolver = Resolver::builtin();
    let references = reference::load(&levelfield::demo::DEMO_REFERENCES, &mut resolver).expect("demo references");
    let settings = PipelineSettings {
        ingest: IngestOptions { lenient: true, ..IngestOptions::default() },
        steps: parse_steps(&["deflate".into(), "ppp".into()]).expect("steps"),
        step_settings: StepSettings {
            base_year: Some(2023),
            deflator: None,
            per: 1,
            income_as: IncomeAs::Share,
            income_basis: Basis::Lcu,
            base_currency: "USD".into(),
            proportion: false,
            uncertain_factors: Default::default(),
        },
        nearest_year: 1,
        allow_unresolved: true,
        rank_aggregates: false,
        order: Order::Desc,
        intervals: None,
        assume_base_rows: false,
        factor_year_offset: None,
    };
    (resolver, references, settings)
}

fuzz_target!(|data: &[u8]| {
    let (resolver, references, settings) = SETUP.get_or_init(setup);
    let Ok(ingested) = levelfield::ingest::ingest(data, "fuzz.csv", &settings.ingest, None) else { return };
    let rows_in = ingested.rows.len();
    if let Ok(out) = run_adjust(data, "fuzz.csv", settings, resolver, Some(references)) {
        assert_eq!(out.frame.height(), rows_in);
        assert_eq!(out.summary.rows_in, out.summary.rows_out);
    }
});
