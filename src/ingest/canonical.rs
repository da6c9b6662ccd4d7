//! The two ends of ingest: the options a table is read with, and the canonical row each
//! figure becomes (kept apart from `mod.rs` so that the row reader below it can name them).

use super::layout::RoleFlags;
pub use super::record::TextColumn;
use super::record::TooLarge;
use super::{encoding, margins};
use crate::cells::number::NumberStyle;
use polars::prelude::PlHashMap;
use rust_decimal::Decimal;
use std::collections::BTreeMap;
use std::sync::Arc;

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

/// Each distinct text once (entity, group and currency texts repeat down a table): a row holds
/// the text's place here.
#[derive(Debug, Clone, Default)]
pub struct Texts {
    all: Vec<Arc<str>>,
    places: PlHashMap<Arc<str>, u32>,
}

impl Texts {
    /// The place of `text`, added if it is new.
    pub fn place(&mut self, text: &str) -> u32 {
        if let Some(&at) = self.places.get(text) {
            return at;
        }
        let shared: Arc<str> = text.into();
        // 4 billion distinct texts would take some 100 GB here, far past any table this
        // holds in memory (a streamed file's pieces each have their own).
        let at = u32::try_from(self.all.len()).unwrap_or(u32::MAX);
        self.all.push(shared.clone());
        self.places.insert(shared, at);
        at
    }

    pub fn get(&self, at: u32) -> &str {
        &self.all[at as usize]
    }

    pub fn len(&self) -> usize {
        self.all.len()
    }

    pub fn is_empty(&self) -> bool {
        self.all.is_empty()
    }
}

/// The rows' ids, held as the rule that gives them (`RowIds::follow`): a long table's rows
/// are its data rows in turn, a wide table's rows each data row's year columns in turn. A row
/// pushed with another id turns the rule into a list.
#[derive(Debug, Clone)]
enum RowIds {
    Rule { offset: usize, years: Vec<i32> },
    Listed(Vec<RowId>),
}

impl Default for RowIds {
    fn default() -> Self {
        RowIds::Listed(Vec::new())
    }
}

impl RowIds {
    fn rule(offset: usize, years: &[i32], at: usize) -> RowId {
        match years.len() {
            0 => RowId {
                data_row: at + 1 + offset,
                year_column: None,
            },
            n => RowId {
                data_row: at / n + 1 + offset,
                year_column: Some(years[at % n]),
            },
        }
    }

    fn get(&self, at: usize) -> RowId {
        match self {
            RowIds::Rule { offset, years } => RowIds::rule(*offset, years, at),
            RowIds::Listed(ids) => ids[at],
        }
    }

    /// Row `at` gets `id`.
    fn push(&mut self, at: usize, id: RowId) {
        if let RowIds::Rule { offset, years } = self {
            if RowIds::rule(*offset, years, at) == id {
                return;
            }
            let listed = (0..at).map(|i| RowIds::rule(*offset, years, i)).collect();
            *self = RowIds::Listed(listed);
        }
        if let RowIds::Listed(ids) = self {
            ids.push(id);
        }
    }
}

/// The figures of the input, one row each, held as columns: at 10M rows a row costs about 60
/// bytes here (by the sizes of its fields), where a struct per row with its own strings cost
/// about 200. Row ids are a rule, not a column; entity, group and currency texts are places in
/// `texts`; flags are kept only for the rows that have any, in the order they were raised.
#[derive(Debug, Clone, Default)]
pub struct CanonicalRows {
    row_ids: RowIds,
    pub line: Vec<u32>,
    pub entity_input: Vec<u32>,
    pub year: Vec<Option<i32>>,
    pub group: Vec<Option<u32>>,
    pub value_input: TextColumn,
    pub value: Vec<Option<f64>>,
    /// Standard errors of `value`, in its unit: empty when no margins were given.
    se: Vec<Option<f64>>,
    pub currency: Vec<Option<u32>>,
    flags: BTreeMap<usize, Vec<&'static str>>,
    /// The text of `IngestOptions::extra_columns`, one column each (long tables only).
    extra: Vec<TextColumn>,
    pub texts: Texts,
}

/// One row as `CanonicalRows::push` takes it.
pub struct RowParts<'a> {
    pub row_id: RowId,
    pub line: usize,
    pub entity_input: u32,
    pub year: Option<i32>,
    pub group: Option<u32>,
    /// None when the caller sets the whole `value_input` column afterwards.
    pub value_input: Option<&'a str>,
    pub value: Option<f64>,
    pub currency: Option<u32>,
    pub flags: Vec<&'static str>,
}

impl CanonicalRows {
    pub fn with_capacity(rows: usize) -> CanonicalRows {
        CanonicalRows {
            line: Vec::with_capacity(rows),
            entity_input: Vec::with_capacity(rows),
            year: Vec::with_capacity(rows),
            group: Vec::with_capacity(rows),
            value_input: TextColumn::with_capacity(rows),
            value: Vec::with_capacity(rows),
            currency: Vec::with_capacity(rows),
            ..CanonicalRows::default()
        }
    }

    pub fn len(&self) -> usize {
        self.line.len()
    }

    pub fn is_empty(&self) -> bool {
        self.line.is_empty()
    }

    /// The ids rows will be pushed with, from the table's first data row after `offset` data
    /// rows: one row a data row, or (a wide table) one a year column in `years`, in turn.
    pub fn expect_ids(&mut self, offset: usize, years: &[i32]) {
        if self.is_empty() {
            self.row_ids = RowIds::Rule {
                offset,
                years: years.to_vec(),
            };
        }
    }

    /// Row `at`'s id.
    pub fn row_id(&self, at: usize) -> RowId {
        self.row_ids.get(at)
    }

    /// Row `at`'s line, as the table finder counted it.
    pub fn line(&self, at: usize) -> usize {
        self.line[at] as usize
    }

    pub fn push(&mut self, row: RowParts) -> Result<(), TooLarge> {
        let at = self.len();
        if let Some(text) = row.value_input {
            self.value_input.push(text)?;
        }
        self.row_ids.push(at, row.row_id);
        // A table's lines are counted in `u32` (`Records`), so a row's line fits.
        self.line
            .push(u32::try_from(row.line).map_err(|_| TooLarge)?);
        self.entity_input.push(row.entity_input);
        self.year.push(row.year);
        self.group.push(row.group);
        self.value.push(row.value);
        self.currency.push(row.currency);
        self.add_flags(at, row.flags);
        Ok(())
    }

    /// Adds the rows of `other` (read from the records after this one's) after this one's:
    /// their texts placed among this one's, their row ids kept, their flags with them.
    pub fn append(&mut self, other: CanonicalRows) -> Result<(), TooLarge> {
        let base = self.len();
        let places: Vec<u32> = (0..other.texts.len() as u32)
            .map(|t| self.texts.place(other.texts.get(t)))
            .collect();
        for at in 0..other.len() {
            self.row_ids.push(base + at, other.row_id(at));
        }
        let place = |t: u32| places[t as usize];
        self.line.extend(&other.line);
        self.entity_input
            .extend(other.entity_input.iter().map(|&t| place(t)));
        self.year.extend(&other.year);
        self.group.extend(other.group.iter().map(|g| g.map(place)));
        self.value_input.append(&other.value_input)?;
        self.value.extend(&other.value);
        self.currency
            .extend(other.currency.iter().map(|c| c.map(place)));
        if !other.se.is_empty() {
            self.se.resize(base, None);
            self.se.extend(&other.se);
        }
        if self.extra.len() < other.extra.len() {
            self.extra
                .resize_with(other.extra.len(), TextColumn::default);
        }
        for (column, more) in self.extra.iter_mut().zip(&other.extra) {
            while column.len() < base {
                column.push("")?;
            }
            column.append(more)?;
        }
        for (at, flags) in other.flags {
            self.flags.insert(base + at, flags);
        }
        Ok(())
    }

    /// Sets the margin-derived standard error and carried texts of the last row pushed (long
    /// tables, with margins or extra columns), with the flags the margins raised.
    pub fn finish_last(
        &mut self,
        se: Option<f64>,
        extra: &[&str],
        flags: Vec<&'static str>,
    ) -> Result<(), TooLarge> {
        let at = self.len() - 1;
        if self.se.len() < at {
            self.se.resize(at, None);
        }
        self.se.push(se);
        if self.extra.len() < extra.len() {
            self.extra.resize_with(extra.len(), TextColumn::default);
        }
        for (column, text) in self.extra.iter_mut().zip(extra) {
            column.push(text)?;
        }
        self.add_flags(at, flags);
        Ok(())
    }

    fn add_flags(&mut self, at: usize, flags: Vec<&'static str>) {
        if !flags.is_empty() {
            self.flags.entry(at).or_default().extend(flags);
        }
    }

    /// Raises `flag` on row `at`, after those it has.
    pub fn flag(&mut self, at: usize, flag: &'static str) {
        self.flags.entry(at).or_default().push(flag);
    }

    /// The flags of row `at`, in the order they were raised.
    pub fn flags(&self, at: usize) -> &[&'static str] {
        self.flags.get(&at).map(Vec::as_slice).unwrap_or(&[])
    }

    pub fn se(&self, at: usize) -> Option<f64> {
        self.se.get(at).copied().flatten()
    }

    /// The text of extra column `k` in row `at` (empty where there is none).
    pub fn extra(&self, at: usize, k: usize) -> &str {
        match self.extra.get(k) {
            Some(column) if at < column.len() => column.get(at),
            _ => "",
        }
    }

    pub fn entity_text(&self, at: usize) -> &str {
        self.texts.get(self.entity_input[at])
    }

    pub fn group_text(&self, at: usize) -> Option<&str> {
        self.group[at].map(|g| self.texts.get(g))
    }

    pub fn currency_text(&self, at: usize) -> Option<&str> {
        self.currency[at].map(|c| self.texts.get(c))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rows_read_back_as_pushed_with_flags_in_order() {
        let mut rows = CanonicalRows::with_capacity(2);
        let mut parts = |data_row, value_input: &'static str, flags| {
            let entity_input = rows.texts.place("France");
            rows.push(RowParts {
                row_id: RowId {
                    data_row,
                    year_column: None,
                },
                line: data_row + 1,
                entity_input,
                year: Some(2020),
                group: None,
                value_input: Some(value_input),
                value: value_input.parse().ok(),
                currency: None,
                flags,
            })
            .unwrap();
        };
        parts(1, "1.5", vec![]);
        parts(2, "", vec!["missing_value"]);
        rows.flag(1, "aggregate");
        rows.flag(0, "unresolved");
        assert_eq!(rows.len(), 2);
        assert_eq!((rows.entity_text(1), rows.texts.len()), ("France", 1));
        assert_eq!(rows.value_input.iter().collect::<Vec<_>>(), vec!["1.5", ""]);
        assert_eq!(rows.row_id(1).to_string(), "2");
        assert_eq!(rows.flags(0), &["unresolved"]);
        assert_eq!(rows.flags(1), &["missing_value", "aggregate"]);
        assert_eq!((rows.se(1), rows.extra(1, 0)), (None, ""));
    }

    #[test]
    fn row_ids_follow_the_rule_until_a_row_breaks_it() {
        let push = |rows: &mut CanonicalRows, data_row, year_column| {
            let entity_input = rows.texts.place("Chile");
            rows.push(RowParts {
                row_id: RowId {
                    data_row,
                    year_column,
                },
                line: data_row + 1,
                entity_input,
                year: year_column,
                group: None,
                value_input: Some(""),
                value: None,
                currency: None,
                flags: vec![],
            })
            .unwrap();
        };
        let ids = |rows: &CanonicalRows| -> Vec<String> {
            (0..rows.len())
                .map(|i| rows.row_id(i).to_string())
                .collect()
        };
        // A wide table of two year columns, after 10 data rows.
        let mut rows = CanonicalRows::default();
        rows.expect_ids(10, &[2019, 2020]);
        for (data_row, year) in [(11, 2019), (11, 2020), (12, 2019), (12, 2020)] {
            push(&mut rows, data_row, Some(year));
        }
        assert!(matches!(rows.row_ids, RowIds::Rule { .. }));
        assert_eq!(ids(&rows), vec!["11:2019", "11:2020", "12:2019", "12:2020"]);
        // A row the rule does not give: the ids become a list, the same ones.
        push(&mut rows, 20, None);
        assert!(matches!(rows.row_ids, RowIds::Listed(_)));
        assert_eq!(
            ids(&rows),
            vec!["11:2019", "11:2020", "12:2019", "12:2020", "20"]
        );
    }

    #[test]
    fn rows_appended_equal_the_same_rows_pushed_in_one() {
        // Rows 0..6 of a long table after 10 data rows: (entity, group, flags, margin).
        type Row = (
            &'static str,
            Option<&'static str>,
            &'static [&'static str],
            Option<f64>,
        );
        let spec: [Row; 6] = [
            ("Chile", Some("a"), &[], Some(0.5)),
            ("Peru", None, &["footnote"], None),
            ("Chile", Some("b"), &[], Some(1.5)),
            ("Peru", Some("a"), &[], None),
            ("Bolivia", Some("c"), &["missing_value"], Some(2.5)),
            ("Chile", Some("a"), &[], None),
        ];
        let read = |range: std::ops::Range<usize>| {
            let mut rows = CanonicalRows::default();
            rows.expect_ids(10 + range.start, &[]);
            for at in range {
                let (entity, group, flags, se) = spec[at];
                let entity_input = rows.texts.place(entity);
                let group = group.map(|g| rows.texts.place(g));
                rows.push(RowParts {
                    row_id: RowId {
                        data_row: 11 + at,
                        year_column: None,
                    },
                    line: 12 + at,
                    entity_input,
                    year: Some(2020),
                    group,
                    value_input: Some("1"),
                    value: Some(at as f64),
                    currency: None,
                    flags: flags.to_vec(),
                })
                .unwrap();
                // As `rows::push_margins` does for every row of a table with margins.
                rows.finish_last(se, &[entity], vec![]).unwrap();
            }
            rows
        };
        let whole = read(0..6);
        let mut joined = read(0..3);
        joined.append(read(3..6)).unwrap();
        assert_eq!(joined.len(), whole.len());
        assert!(matches!(joined.row_ids, RowIds::Rule { .. }));
        for at in 0..6 {
            assert_eq!(joined.row_id(at), whole.row_id(at));
            assert_eq!(joined.entity_text(at), whole.entity_text(at));
            assert_eq!(joined.group_text(at), whole.group_text(at));
            assert_eq!(joined.flags(at), whole.flags(at));
            assert_eq!(joined.se(at), whole.se(at));
            assert_eq!(joined.extra(at, 0), whole.extra(at, 0));
            assert_eq!(joined.value[at], whole.value[at]);
            assert_eq!(joined.line(at), whole.line(at));
        }
        // Each text is held once, in the order the whole read first saw it.
        assert_eq!(joined.texts.len(), whole.texts.len());
        assert!((0..whole.texts.len() as u32).all(|t| joined.texts.get(t) == whole.texts.get(t)));
    }

    #[test]
    fn margins_and_extra_texts_belong_to_their_rows() {
        let mut rows = CanonicalRows::default();
        for (i, se) in [(1, Some(0.5)), (2, None)] {
            let entity_input = rows.texts.place("Chile");
            rows.push(RowParts {
                row_id: RowId {
                    data_row: i,
                    year_column: None,
                },
                line: i + 1,
                entity_input,
                year: None,
                group: None,
                value_input: Some("3"),
                value: Some(3.0),
                currency: None,
                flags: vec![],
            })
            .unwrap();
            rows.finish_last(
                se,
                &["claimed", "note"],
                if se.is_none() {
                    vec!["no_margin"]
                } else {
                    vec![]
                },
            )
            .unwrap();
        }
        assert_eq!((rows.se(0), rows.se(1)), (Some(0.5), None));
        assert_eq!(
            (rows.extra(0, 1), rows.extra(1, 0), rows.extra(1, 2)),
            ("note", "claimed", "")
        );
        assert_eq!(rows.flags(1), &["no_margin"]);
    }
}
