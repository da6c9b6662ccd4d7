//! The two ends of ingest: the options a table is read with, and the canonical row each
//! figure becomes (kept apart from `mod.rs` so that the row reader below it can name them).

use super::layout::RoleFlags;
use super::{encoding, margins};
use crate::cells::number::NumberStyle;
use polars::prelude::PlHashSet;
use rust_decimal::Decimal;
use std::sync::Arc;

/// Each distinct text once: the repeated texts of canonical rows share one allocation.
#[derive(Debug, Default)]
pub struct SharedTexts(PlHashSet<Arc<str>>);

impl SharedTexts {
    pub fn get(&mut self, text: &str) -> Arc<str> {
        if let Some(shared) = self.0.get(text) {
            return shared.clone();
        }
        let shared: Arc<str> = text.into();
        self.0.insert(shared.clone());
        shared
    }
}

/// How to read the input.
#[derive(Debug, Clone, Default)]
pub struct IngestOptions {
    pub delimiter: Option<u8>,
    pub encoding: Option<encoding::EncodingChoice>,
    pub roles: RoleFlags,
    pub currency_code: Option<String>,
    pub value_multiplier: Option<Decimal>,
    pub number_style: NumberStyle,
    pub lenient: bool,
    pub margins: margins::MarginSpec,
    /// Columns carried as text (the claimed figures of `audit`); they need a long table.
    pub extra_columns: Vec<String>,
    /// Spreadsheets: the sheet (name or position from 1) and a forced header row.
    pub sheet: Option<String>,
    pub header_row: Option<usize>,
    /// A piece of a larger file (`--streaming`): lines and data rows before this piece.
    pub line_offset: usize,
    pub row_offset: usize,
}

/// Where a figure sits in the input: its data row (from 1), and in a wide table the year of
/// its column. Written `12` or `12:2019`; kept as numbers until the output is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RowId {
    pub data_row: usize,
    pub year_column: Option<i32>,
}

impl std::fmt::Display for RowId {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.year_column {
            None => write!(f, "{}", self.data_row),
            Some(year) => write!(f, "{}:{year}", self.data_row),
        }
    }
}

/// One figure of the input. The entity, group and currency texts repeat down a table, so each
/// distinct one is held once and shared (`Arc<str>`): at 10M rows, 20M fewer allocations.
#[derive(Debug, Clone, PartialEq)]
pub struct CanonicalRow {
    pub row_id: RowId,
    pub line: usize,
    pub entity_input: Arc<str>,
    pub year: Option<i32>,
    pub group: Option<Arc<str>>,
    pub value_input: String,
    pub value: Option<f64>,
    /// Standard error of `value`, in its unit, when margins were given.
    pub se: Option<f64>,
    pub currency: Option<Arc<str>>,
    pub flags: Vec<String>,
    /// The text of `IngestOptions::extra_columns`, in their order (long tables only).
    pub extra: Vec<String>,
}
