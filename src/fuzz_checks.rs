//! The properties the fuzz targets (fuzz/fuzz_targets) assert, as functions of the input bytes,
//! so that `cargo test` replays every committed fuzz corpus file through the same checks
//! (tests/cli/fuzz_replay.rs). Each panics when its property fails.

use crate::cells::number::{parse_cell, Cell, NumberStyle};
use crate::entity::{Resolution, Resolver};
use crate::pipeline::{run_adjust, PipelineSettings};
use crate::reference::{self, References};
use crate::report::format::{format_number, Rounding};
use std::sync::OnceLock;

/// The number parser never panics, and every number it accepts is finite and reads back from
/// the writer's full-precision text to the same float.
pub fn number_parser(data: &[u8]) {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    for decimal_comma in [false, true] {
        if let Ok(Cell::Number { float, .. }) = parse_cell(text, NumberStyle { decimal_comma }) {
            assert!(float.is_finite(), "{text:?} gave {float}");
            let written = format_number(float, Rounding::Full, false);
            match parse_cell(&written, NumberStyle::default()) {
                Ok(Cell::Number { float: back, .. }) => {
                    assert_eq!(back, float, "{text:?} -> {written:?}")
                }
                other => panic!("{written:?} (from {text:?}) gave {other:?}"),
            }
        }
    }
}

/// The entity resolver never panics, and whatever it finds resolves again from the entity's
/// own code and name to the same entity (no name means two things).
pub fn entity_resolver(data: &[u8]) {
    static RESOLVER: OnceLock<Resolver> = OnceLock::new();
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let resolver = RESOLVER.get_or_init(Resolver::builtin);
    if let Resolution::Found(entity) = resolver.resolve(text) {
        for again in [entity.code.as_str(), entity.name.as_str()] {
            match resolver.resolve(again) {
                Resolution::Found(other) => {
                    assert_eq!(other.code, entity.code, "{text:?} -> {again:?}")
                }
                Resolution::Unresolved { .. } => panic!(
                    "{text:?} found {} but {again:?} does not resolve",
                    entity.code
                ),
            }
        }
    }
    let mut with_aliases = resolver.clone();
    let _ = with_aliases.add_alias_text(text, "fuzz.csv");
}

/// Arbitrary bytes as an input table, adjusted with the demo's reference tables: never a
/// panic, and when the run succeeds every input row is in the output (rows in = rows out).
pub fn ingest_adjust(data: &[u8]) {
    static SETUP: OnceLock<(Resolver, References, PipelineSettings)> = OnceLock::new();
    let (resolver, references, settings) = SETUP.get_or_init(|| {
        let mut resolver = Resolver::builtin();
        let references = reference::load(&crate::cmd::demo::DEMO_REFERENCES, &mut resolver)
            .expect("demo references");
        let settings = crate::plan::settings_from_words(
            &[
                "--steps",
                "deflate,ppp",
                "--base-year",
                "2023",
                "--nearest-year",
                "1",
                "--allow-unresolved",
                "--lenient",
            ],
            Some(&references),
        )
        .expect("settings");
        (resolver, references, settings)
    });
    let Ok(ingested) = crate::ingest::ingest(data, "fuzz.csv", &settings.ingest, None) else {
        return;
    };
    let rows_in = ingested.rows.len();
    if let Ok(out) = run_adjust(data, "fuzz.csv", settings, resolver, Some(references)) {
        assert_eq!(out.table.height(), rows_in);
        assert_eq!(out.summary.rows_in, out.summary.rows_out);
    }
}
