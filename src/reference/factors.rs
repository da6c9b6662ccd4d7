//! A loaded reference table (entity code → year → factor) and the rules every loader shares:
//! one factor per entity and year, positive factors only, lookups strict or within
//! `--nearest-year N`. The plain-table and SDMX loaders both build on this file.

use crate::error::{Error, Location, Result};
use crate::reference::catalog::Resource;
use polars::prelude::PlHashMap;
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

/// Where each factor of a table being loaded came from: its first line and its series key (the
/// dimension codes of its row), per entity code and year. A loader keeps one while it reads, so
/// that a second factor for the same entity and year is refused with both lines or both series.
/// The code is stored once per entity and the series key once per distinct key, not per cell.
#[derive(Debug, Default)]
pub(crate) struct Origins {
    by_code: PlHashMap<String, PlHashMap<i32, Origin>>,
    series_keys: Vec<String>,
    series_ids: PlHashMap<String, u32>,
}

/// The first line and series key of one factor.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Origin {
    pub line: usize,
    series: u32,
}

impl Origins {
    /// The id of `series`, stored on its first sight.
    pub fn series_id(&mut self, series: &str) -> u32 {
        if let Some(&id) = self.series_ids.get(series) {
            return id;
        }
        let id = self.series_keys.len() as u32;
        self.series_keys.push(series.to_string());
        self.series_ids.insert(series.to_string(), id);
        id
    }

    /// The series key behind `id`.
    pub fn series_key(&self, id: u32) -> &str {
        &self.series_keys[id as usize]
    }

    /// The origin already recorded for `code` in `year`, if any.
    pub fn get(&self, code: &str, year: i32) -> Option<(usize, &str)> {
        let origin = self.by_code.get(code)?.get(&year)?;
        Some((origin.line, self.series_key(origin.series)))
    }

    /// Records `line` and `series` for `code` in `year`, returning the first origin when one
    /// was already there (which is then kept).
    fn record(&mut self, code: &str, year: i32, line: usize, series: u32) -> Option<Origin> {
        let years = match self.by_code.get_mut(code) {
            Some(years) => years,
            None => self.by_code.entry(code.to_string()).or_default(),
        };
        if let Some(first) = years.get(&year) {
            return Some(*first);
        }
        years.insert(year, Origin { line, series });
        None
    }
}

/// Adds one factor of series `series` (an id from `origins`), refusing a second for the same
/// entity and year.
pub(crate) fn insert_factor(
    table: &mut RefTable,
    origins: &mut Origins,
    code: &str,
    year: i32,
    value: f64,
    (line, series): (usize, u32),
) -> Result<()> {
    if let Some(previous) = origins.record(code, year, line, series) {
        return Err(Error::bad_input(
            Location::line(&table.file, line),
            format!(
                "a second {} factor for {code} in {year} (the first is on line {})",
                table.resource.kind.as_str(),
                previous.line
            ),
            "one factor per entity and year",
            "remove the duplicate, or check whether two names in the table mean the same country; if the file holds several series (two indicators or measures), keep one series per file, or use the source's SDMX-CSV download with a \"filter\"",
        ));
    }
    let years = match table.series.get_mut(code) {
        Some(years) => years,
        None => table.series.entry(code.to_string()).or_default(),
    };
    years.insert(year, value);
    table.rows_read += 1;
    Ok(())
}

/// Two series keys for one entity-year, `first` from an earlier line and `this` from `line`
/// (one key when a line repeats it): the catalog must pick one series with a filter.
pub(crate) fn several_series(
    file: &str,
    line: usize,
    (code, year): (&str, i32),
    (first, this): (&str, &str),
    resource: &Resource,
) -> Error {
    let found = if first == this {
        first.to_string()
    } else {
        format!("{first} | {this}")
    };
    Error::bad_input(
        Location::line(file, line),
        format!("several series for {code} in {year}: {found}"),
        "one series per entity and year",
        format!("add a \"filter\" to the catalog resource \"{}\" that picks one series (for example a measure or unit code)", resource.name),
    )
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
