//! The machine-readable flags written in the `flags` column, each with the sentence the README
//! and the run summary use for it. Flags are joined with `;` in the order they were raised.
//! Factor flags are built from the factor kind: `no_<kind>`, `no_<kind>_base_year` and
//! `<kind>_year_differs:YYYY`.

use crate::error::{Error, Result};
use polars::prelude::{Column, DataFrame, IntoColumn, NewChunkedArray, StringChunked};
use std::collections::BTreeMap;

pub const FOOTNOTE: &str = "footnote";
pub const MISSING_VALUE: &str = "missing_value";
pub const UNPARSED: &str = "unparsed";
pub const MISSING_YEAR: &str = "missing_year";
pub const UNPARSED_YEAR: &str = "unparsed_year";
pub const UNKNOWN_CURRENCY: &str = "unknown_currency";
pub const UNRESOLVED: &str = "unresolved";
pub const AGGREGATE: &str = "aggregate";
pub const CURRENCY_MISMATCH: &str = "currency_mismatch";
pub const NOT_RANKED: &str = "not_ranked";
pub const FORMULA_CELL: &str = "formula_cell";
pub const UNBALANCED_QUOTE: &str = "unbalanced_quote";
pub const NO_BASELINE: &str = "no_baseline";
pub const SEVERAL_SERIES: &str = "several_series";
pub const MIXED_CURRENCY: &str = "mixed_currency";
pub const NO_MARGIN: &str = "no_margin";
pub const ASYMMETRIC_CI: &str = "asymmetric_ci";
pub const WITHIN_UNCERTAINTY: &str = "within_uncertainty";

/// Rows flagged and flags by kind (`name:YYYY` flags counted under one key).
#[derive(Debug, Clone, Default)]
pub struct FlagCounts {
    pub rows_flagged: usize,
    pub by_flag: BTreeMap<String, usize>,
}

impl FlagCounts {
    /// The counts of a text column of flags (`flags`, as written).
    pub fn of(frame: &DataFrame) -> Result<FlagCounts> {
        let flag_column = frame
            .column("flags")
            .and_then(|c| c.str().cloned())
            .map_err(Error::engine("counting flags"))?;
        let mut counts = FlagCounts::default();
        for value in flag_column.iter().flatten() {
            counts.add_text(value, 1);
        }
        Ok(counts)
    }

    /// Counts one row's flags (`text`, as written) `rows` times.
    fn add_text(&mut self, text: &str, rows: usize) {
        if text.is_empty() || rows == 0 {
            return;
        }
        self.rows_flagged += rows;
        for flag in text.split(';') {
            let key = match flag.split_once(':') {
                Some((name, _)) => format!("{name}:YYYY"),
                None => flag.to_string(),
            };
            *self.by_flag.entry(key).or_default() += rows;
        }
    }

    pub fn add(&mut self, other: FlagCounts) {
        self.rows_flagged += other.rows_flagged;
        for (flag, n) in other.by_flag {
            *self.by_flag.entry(flag).or_default() += n;
        }
    }
}

/// The flags raised once the ranks are known, in the order they are written after the
/// row's earlier flags.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct LateFlags {
    pub no_baseline: bool,
    pub several_series: bool,
    pub mixed_currency: bool,
    pub not_ranked: bool,
}

impl LateFlags {
    /// The four flags as a number from 0 to 15.
    fn bits(self) -> usize {
        usize::from(self.no_baseline)
            | usize::from(self.several_series) << 1
            | usize::from(self.mixed_currency) << 2
            | usize::from(self.not_ranked) << 3
    }

    fn names(self) -> impl Iterator<Item = &'static str> {
        [
            (self.no_baseline, NO_BASELINE),
            (self.several_series, SEVERAL_SERIES),
            (self.mixed_currency, MIXED_CURRENCY),
            (self.not_ranked, NOT_RANKED),
        ]
        .into_iter()
        .filter_map(|(raised, name)| raised.then_some(name))
    }
}

/// Every row's flags as a place among the distinct flag texts: rows share few combinations,
/// so the column costs four bytes a row, and each text is composed and counted once. The text
/// of a row is its earlier flags (reading, entity, currency, factors), then its late ones,
/// joined with `;` (empty when none).
#[derive(Debug, Clone, Default)]
pub struct FlagColumn {
    ids: Vec<u32>,
    texts: Vec<String>,
}

impl FlagColumn {
    pub fn len(&self) -> usize {
        self.ids.len()
    }

    pub fn is_empty(&self) -> bool {
        self.ids.is_empty()
    }

    /// The flags of row `row`, as written.
    pub fn text(&self, row: usize) -> &str {
        &self.texts[self.ids[row] as usize]
    }

    /// The rows flagged and the flags by kind.
    pub fn counts(&self) -> FlagCounts {
        let mut rows = vec![0usize; self.texts.len()];
        for &id in &self.ids {
            rows[id as usize] += 1;
        }
        let mut counts = FlagCounts::default();
        for (text, n) in self.texts.iter().zip(rows) {
            counts.add_text(text, n);
        }
        counts
    }

    /// The column as text, named `name`.
    pub fn to_column(&self, name: &str) -> Column {
        StringChunked::from_iter_values(name.into(), (0..self.len()).map(|i| self.text(i)))
            .into_column()
    }
}

/// Builds a `FlagColumn` row by row. A row whose earlier flags are one of a few shared texts
/// (a factor key's flags) is placed by that text's number, without composing its text again.
pub struct FlagColumnBuilder {
    column: FlagColumn,
    places: std::collections::HashMap<String, u32>,
    /// For each shared text (and none, at 0) and each set of late flags, the place + 1.
    shared: Vec<u32>,
    scratch: String,
}

impl FlagColumnBuilder {
    /// A builder for `rows` rows whose shared earlier texts are numbered below `shared`.
    pub fn new(rows: usize, shared: usize) -> FlagColumnBuilder {
        FlagColumnBuilder {
            column: FlagColumn {
                ids: Vec::with_capacity(rows),
                texts: Vec::new(),
            },
            places: Default::default(),
            shared: vec![0; (shared + 1) * 16],
            scratch: String::new(),
        }
    }

    /// A row whose earlier flags are shared text number `at` (`text`), or none.
    pub fn push_shared(&mut self, at: Option<u32>, text: Option<&str>, late: LateFlags) {
        let slot = at.map_or(0, |a| a as usize + 1) * 16 + late.bits();
        match self.shared[slot] {
            0 => {
                let id = self.push_own(text.into_iter(), late);
                self.shared[slot] = id + 1;
            }
            known => self.column.ids.push(known - 1),
        }
    }

    /// A row with earlier flags of its own (each part a flag, or several joined with `;`);
    /// returns its place.
    pub fn push_own<'a>(&mut self, earlier: impl Iterator<Item = &'a str>, late: LateFlags) -> u32 {
        self.scratch.clear();
        let late_names = late.names().map(|name| -> &'a str { name });
        for part in earlier.chain(late_names).filter(|p| !p.is_empty()) {
            if !self.scratch.is_empty() {
                self.scratch.push(';');
            }
            self.scratch.push_str(part);
        }
        let id = match self.places.get(self.scratch.as_str()) {
            Some(&id) => id,
            None => {
                // Far fewer distinct texts than rows.
                let id = u32::try_from(self.column.texts.len()).unwrap_or(u32::MAX);
                self.column.texts.push(self.scratch.clone());
                self.places.insert(self.scratch.clone(), id);
                id
            }
        };
        self.column.ids.push(id);
        id
    }

    pub fn finish(self) -> FlagColumn {
        self.column
    }
}

/// Every fixed flag with its meaning, for the README and `--help`. A test checks that each
/// flag raised anywhere in the code is listed here.
pub const FLAG_MEANINGS: &[(&str, &str)] = &[
    (FOOTNOTE, "a footnote or status mark (such as *, e, p) was removed from the cell; the number was kept"),
    (MISSING_VALUE, "the cell was empty or a missing-value mark (.., -, n/a); no value"),
    (UNPARSED, "the cell is not a number (kept because of --lenient); no value"),
    (MISSING_YEAR, "the year cell was empty; the row cannot be matched to reference factors"),
    (UNPARSED_YEAR, "the year cell is not a calendar year (kept because of --lenient)"),
    (UNKNOWN_CURRENCY, "the currency cell is not an ISO 4217 code (kept because of --lenient)"),
    (UNRESOLVED, "the entity matched no country, alias or aggregate (kept because of --allow-unresolved)"),
    (AGGREGATE, "the entity is an aggregate (world, region, income group); not ranked unless --rank-aggregates"),
    (CURRENCY_MISMATCH, "a step converts currencies, and the figure's currency is neither the entity's own nor the reference tables' base currency: not converted"),
    ("no_<kind>", "no reference factor of that kind (fx, ppp, cpi, population, income) for the entity and year"),
    ("no_<kind>_base_year", "no reference factor of that kind for the entity in the base year"),
    ("<kind>_year_differs:YYYY", "the factor of year YYYY was used (allowed by --nearest-year)"),
    (FORMULA_CELL, "the spreadsheet row holds a formula; its stored value was read, never evaluated"),
    (NO_BASELINE, "the reference catalog lacks a table the baseline needs (such as fx); the baseline, its rank and the shift are empty, the adjusted value is ranked"),
    (SEVERAL_SERIES, "another row has the same entity, group and year: the table holds several series; not ranked (pass --group COL to rank each series on its own)"),
    (MIXED_CURRENCY, "the row's group and year hold figures in different currencies and no step converts them: not ranked (add market or ppp, or state one currency with --currency-code; XXX for counts)"),
    (UNBALANCED_QUOTE, "the line sits inside a quote that is never closed; its cells were read as written (kept because of --lenient)"),
    (NO_MARGIN, "the figure has no margin of error; it is treated as exact in rank intervals and ties"),
    (ASYMMETRIC_CI, "the confidence interval is not symmetric; the larger half is used as the margin"),
    (WITHIN_UNCERTAINTY, "the rank shift is within the uncertainty: the baseline and adjusted rank intervals overlap"),
    (NOT_RANKED, "the row has no usable baseline or adjusted value, or is excluded from ranks; see its other flags"),
];

/// The meaning of a fixed flag, if it is one.
pub fn meaning(flag: &str) -> Option<&'static str> {
    FLAG_MEANINGS
        .iter()
        .find(|(name, _)| *name == flag)
        .map(|(_, meaning)| *meaning)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn flag_names_are_unique_and_documented() {
        let mut names: Vec<&str> = FLAG_MEANINGS.iter().map(|(n, _)| *n).collect();
        names.sort();
        let before = names.len();
        names.dedup();
        assert_eq!(before, names.len());
        assert!(FLAG_MEANINGS.iter().all(|(_, m)| !m.is_empty()));
    }
}
