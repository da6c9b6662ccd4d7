//! Loading one reference table (long or wide), validating it, and looking factors up by entity
//! and year, strictly or within `--nearest-year N`.
//!
//! Validation stops at the first broken cell with its file, line and column: a reference table
//! with a bad factor would silently bend every figure that uses it. Entities that do not resolve
//! are not errors (reference tables carry many aggregates and territories) but warnings listed
//! once.

use crate::entity::{Resolution, Resolver};
use crate::error::{Error, Location, Result};
use crate::ingest::layout::{self, RoleFlags, Shape, YearSource};
use crate::ingest::number::{self, Cell, NumberStyle};
use crate::ingest::table;
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
}

/// A factor found for an entity and year.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Factor {
    pub value: f64,
    pub year: i32,
}

impl RefTable {
    pub fn has_margins(&self) -> bool {
        self.resource.se_field.is_some() || self.resource.moe_field.is_some()
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

pub fn load_table(
    bytes: &[u8],
    file: &str,
    resource: &Resource,
    resolver: &Resolver,
) -> Result<RefTable> {
    match resource.format.as_deref() {
        Some("sdmx-csv") => super::sdmx::load_sdmx(bytes, file, resource, resolver),
        None | Some("csv") => load_plain(bytes, file, resource, resolver),
        Some(other) => Err(Error::bad_input(
            Location::file(file),
            format!("format \"{other}\""),
            "csv or sdmx-csv",
            "fix the resource's \"format\" in the catalog",
        )),
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
            "remove the duplicate, or check whether two names in the table mean the same country",
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
        sha256: crate::report::methods::sha256_hex(bytes),
        unresolved: Vec::new(),
        rows_read: 0,
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

fn load_plain(
    bytes: &[u8],
    file: &str,
    resource: &Resource,
    resolver: &Resolver,
) -> Result<RefTable> {
    let text_table = table::read_bytes(bytes, file)?;
    let flags = RoleFlags {
        entity: resource.entity_field.clone(),
        value: resource.value_field.clone(),
        year: resource.year_field.clone(),
        layout: resource.layout,
        reserved: resource
            .se_field
            .iter()
            .chain(resource.moe_field.iter())
            .cloned()
            .collect(),
        ..Default::default()
    };
    let roles = layout::assign_roles(&text_table, &flags, file)?;
    if !roles.reserved.is_empty() && matches!(roles.shape, Shape::Wide { .. }) {
        return Err(Error::bad_input(
            Location::file(file),
            "a margin column in a wide table",
            "a long table (entity, year, value, margin) when the catalog names se_field or moe_field",
            "reshape the table to long form, or remove the margin property from the catalog",
        ));
    }
    let mut loaded = empty_table(bytes, file, resource);
    let mut first_line: HashMap<(String, i32), usize> = HashMap::new();
    for record in &text_table.records {
        let entity_text = record.cells[roles.entity].trim();
        let code = match resolver.resolve(entity_text) {
            Resolution::Found(entity) => entity.code.clone(),
            Resolution::Unresolved { .. } => {
                if !loaded.unresolved.iter().any(|(n, _)| n == entity_text) {
                    loaded
                        .unresolved
                        .push((entity_text.to_string(), record.line));
                }
                continue;
            }
        };
        let cells: Vec<(i32, usize)> = match &roles.shape {
            Shape::Wide { year_columns } => year_columns.iter().map(|&(c, y)| (y, c)).collect(),
            Shape::Long { value, year, .. } => {
                let year = match year {
                    YearSource::Fixed(y) => *y,
                    YearSource::Column { index, .. } => {
                        match layout::parse_year_cell(&record.cells[*index]) {
                            Ok(Some(y)) => y,
                            _ => {
                                return Err(Error::bad_input(
                                    Location::cell(file, record.line, &text_table.headers[*index]),
                                    format!("\"{}\" is not a calendar year", &record.cells[*index]),
                                    "a four-digit year",
                                    "fix the reference table",
                                ))
                            }
                        }
                    }
                };
                vec![(year, *value)]
            }
        };
        for (year, column) in cells {
            let header = &text_table.headers[column];
            let cell = &record.cells[column];
            let value = match number::parse_cell(cell, NumberStyle::default()) {
                Ok(Cell::Missing) => continue,
                Ok(Cell::Number { float, .. }) => float,
                Err(e) => {
                    return Err(Error::bad_input(
                        Location::cell(file, record.line, header),
                        e.reason,
                        format!("a {} factor ({})", resource.kind.as_str(), e.hint),
                        "fix the reference table; mark a missing factor with .. or leave the cell empty",
                    ))
                }
            };
            check_positive(value, cell, resource, file, record.line, header)?;
            insert_factor(
                &mut loaded,
                &mut first_line,
                &code,
                year,
                value * resource.multiplier,
                record.line,
            )?;
            if let Some(&margin_column) = roles.reserved.first() {
                let margin_cell = &record.cells[margin_column];
                if let Ok(Cell::Number { float: margin, .. }) =
                    number::parse_cell(margin_cell, NumberStyle::default())
                {
                    let margin = margin * resource.multiplier;
                    let se = match (resource.moe_field.is_some(), resource.moe_level) {
                        (true, Some(level)) => {
                            margin
                                / crate::uncertainty::normal::two_sided_critical(
                                    level as f64 / 100.0,
                                )
                        }
                        _ => margin,
                    };
                    loaded.se.insert((code.clone(), year), se);
                }
            }
        }
    }
    Ok(loaded)
}
