//! The machine-readable flags written in the `flags` column, each with the sentence the README
//! and the run summary use for it. Flags are joined with `;` in the order they were raised.
//! Factor flags are built from the factor kind: `no_<kind>`, `no_<kind>_base_year` and
//! `<kind>_year_differs:YYYY`.

use crate::error::{Error, Result};
use polars::prelude::DataFrame;
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
    pub fn of(frame: &DataFrame) -> Result<FlagCounts> {
        let flag_column = frame
            .column("flags")
            .and_then(|c| c.str().cloned())
            .map_err(Error::engine("counting flags"))?;
        let mut counts = FlagCounts::default();
        for value in flag_column.iter().flatten() {
            if value.is_empty() {
                continue;
            }
            counts.rows_flagged += 1;
            for flag in value.split(';') {
                let key = match flag.split_once(':') {
                    Some((name, _)) => format!("{name}:YYYY"),
                    None => flag.to_string(),
                };
                *counts.by_flag.entry(key).or_default() += 1;
            }
        }
        Ok(counts)
    }

    pub fn add(&mut self, other: FlagCounts) {
        self.rows_flagged += other.rows_flagged;
        for (flag, n) in other.by_flag {
            *self.by_flag.entry(flag).or_default() += n;
        }
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
