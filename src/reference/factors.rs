//! A loaded reference table (entity code → year → factor) and the rules every loader shares:
//! one factor per entity and year, positive factors only, lookups strict or within
//! `--nearest-year N`. The plain-table and SDMX loaders both build on this file.

use crate::error::{Error, Location, Result};
use crate::reference::catalog::Resource;
use std::collections::{BTreeMap, HashMap};

/// A loaded reference table: entity code → year → factor (multiplier applied).
#[derive(Debug, Clone)]
pub struct RefTable {
    pub resource: Resource,
    pub file: String,
    pub series: HashMap<String, BTreeMap<i32, f64>>,
    /// Standard errors of the factors, when the catalog names a margin column.
    pub se: HashMap<(String, i32), f64>,
    /// Entity names in the table that resolve to nothing, with their first line.
    pub unresolved: Vec<(String, usize)>,
    pub rows_read: usize,
    /// sha256 of the file as read, so a run can be reproduced.
    pub sha256: String,
    /// How the file was read (header line, layout, columns, what was set aside).
    pub notes: Vec<String>,
}

/// A factor found for an entity and year.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Factor {
    pub value: f64,
    pub year: i32,
}

impl RefTable {
    pub fn has_margins(&self) -> bool {
        self.resource.se_field.is_some() || self.resource.margin_field.is_some()
    }

    /// The standard error of the factor of `code` in `year`.
    pub fn se_of(&self, code: &str, year: i32) -> Option<f64> {
        self.se.get(&(code.to_string(), year)).copied()
    }
}

impl RefTable {
    /// The factor for `code` in `year`, or the nearest year within `tolerance` years (the
    /// earlier year wins a tie, because it is the one already published when the later one is
    /// still an estimate: a convention of ours, stated in the README).
    pub fn lookup(&self, code: &str, year: i32, tolerance: u32) -> Option<Factor> {
        let series = self.series.get(code)?;
        if let Some(&value) = series.get(&year) {
            return Some(Factor { value, year });
        }
        for distance in 1..=tolerance as i32 {
            for candidate in [year - distance, year + distance] {
                if let Some(&value) = series.get(&candidate) {
                    return Some(Factor {
                        value,
                        year: candidate,
                    });
                }
            }
        }
        None
    }

    pub fn years(&self) -> Option<(i32, i32)> {
        let min = self.series.values().filter_map(|s| s.keys().next()).min()?;
        let max = self
            .series
            .values()
            .filter_map(|s| s.keys().next_back())
            .max()?;
        Some((*min, *max))
    }
}

/// Adds one factor, refusing a second for the same entity and year.
pub(crate) fn insert_factor(
    table: &mut RefTable,
    first_line: &mut HashMap<(String, i32), usize>,
    code: &str,
    year: i32,
    value: f64,
    line: usize,
) -> Result<()> {
    if let Some(previous) = first_line.insert((code.to_string(), year), line) {
        return Err(Error::bad_input(
            Location::line(&table.file, line),
            format!(
                "a second {} factor for {code} in {year} (the first is on line {previous})",
                table.resource.kind.as_str()
            ),
            "one factor per entity and year",
            "remove the duplicate, or check whether two names in the table mean the same country; if the file holds several series (two indicators or measures), keep one series per file, or use the source's SDMX-CSV download with a \"filter\"",
        ));
    }
    table
        .series
        .entry(code.to_string())
        .or_default()
        .insert(year, value);
    table.rows_read += 1;
    Ok(())
}

/// An empty table for `resource`, read from `bytes`.
pub(crate) fn empty_table(bytes: &[u8], file: &str, resource: &Resource) -> RefTable {
    RefTable {
        resource: resource.clone(),
        file: file.to_string(),
        series: HashMap::new(),
        se: HashMap::new(),
        sha256: crate::source::sha256_hex(bytes),
        unresolved: Vec::new(),
        rows_read: 0,
        notes: Vec::new(),
    }
}

/// Every kind divides or scales a figure; zero or negative factors have no meaning here.
pub(crate) fn check_positive(
    value: f64,
    cell: &str,
    resource: &Resource,
    file: &str,
    line: usize,
    header: &str,
) -> Result<()> {
    if value <= 0.0 {
        return Err(Error::bad_input(
            Location::cell(file, line, header),
            format!(
                "{} factor \"{cell}\" is not positive",
                resource.kind.as_str()
            ),
            format!("a positive {}", resource.kind.describe()),
            "fix the reference table; mark a missing factor with .. or leave the cell empty",
        ));
    }
    Ok(())
}
