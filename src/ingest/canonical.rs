//! The two ends of ingest: the options a table is read with, and the canonical row each
//! figure becomes (kept apart from `mod.rs` so that the row reader below it can name them).

use super::layout::RoleFlags;
use super::{encoding, margins};
use crate::cells::number::NumberStyle;
use rust_decimal::Decimal;

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

/// One figure of the input.
#[derive(Debug, Clone, PartialEq)]
pub struct CanonicalRow {
    pub row_id: String,
    pub line: usize,
    pub entity_input: String,
    pub year: Option<i32>,
    pub group: Option<String>,
    pub value_input: String,
    pub value: Option<f64>,
    /// Standard error of `value`, in its unit, when margins were given.
    pub se: Option<f64>,
    pub currency: Option<String>,
    pub flags: Vec<String>,
    /// The text of `IngestOptions::extra_columns`, in their order (long tables only).
    pub extra: Vec<String>,
}
