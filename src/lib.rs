//! levelfield: make cross-country tables comparable and say how.
//!
//! Module map (data flows top to bottom, see DEVELOPERS.md):
//! - `cli`: clap definitions (stage one: raw, validated arguments, no file access)
//! - `plan`: the resolved plan (stage two: files read, references loaded, steps ordered)
//! - `cells`: one cell's text: the exact number parser and the words of headers (bottom layer)
//! - `ingest`: reading user tables (encoding, delimiter, long/wide layout, exact numbers)
//! - `entity`: ISO 3166-1, publishers' name variants, aggregates, user alias files
//! - `resolve`: entity and currency basis of every row
//! - `reference`: the reference catalog (datapackage.json), loading, validation, coverage
//! - `attach`: reference factors per entity and year, with their years and flags
//! - `adjust`: the registry of adjustment steps (market, ppp, deflate, per-capita, per-income)
//! - `rank`: standard competition ranks and rank shifts
//! - `uncertainty`: margins of error, rank intervals, ties, poll leads
//! - `tracks`: both tracks as polars expressions, standard errors alongside
//! - `audit`: recomputing a received table's claims and diagnosing discrepancies
//! - `pipeline`: the adjust run from bytes to the output frame and its summary
//! - `report`: terminal table, csv, md, json, atomic writes, the run summary
//! - `recipe`: the adjust settings as a TOML file (read, merged under flags, saved)
//! - `cmd`: one file per command (adjust, audit, refs and catalog, lead, batch, demo) that
//!   plans, runs and writes it; `run` dispatches
//! - `flags`, `error`, `source`: shared vocabulary, typed errors, file access

// Functions stay under clippy's 100 lines (code lines, not comments or blank lines).
#![warn(clippy::too_many_lines)]

pub mod adjust;
pub mod attach;
pub mod audit;
pub mod cells;
pub mod cleanup;
pub mod cli;
pub mod cmd;
pub mod csv_writer;
pub mod entity;
pub mod error;
pub mod flags;
pub mod format;
pub mod frame;
#[doc(hidden)]
pub mod fuzz_checks;
pub mod ingest;
pub mod model;
pub mod output;
pub mod pipeline;
pub mod plan;
pub mod rank;
pub mod recipe;
pub mod reference;
pub mod report;
pub mod resolve;
pub mod shortest;
pub mod source;
pub mod staging;
pub mod streaming;
#[cfg(test)]
pub(crate) mod test_numbers;
pub mod trace;
pub mod tracks;
pub mod uncertainty;
pub mod units;

pub use cmd::{adjust::execute, batch, demo, run, write_stdout, Outcome};
