//! Loading one reference table (long or wide), validating it, and looking factors up by entity
//! and year, strictly or within `--nearest-year N`.
//!
//! Validation stops at the first broken cell with its file, line and column: a reference table
//! with a bad factor would silently bend every figure that uses it. Entities that do not resolve
//! are not errors (reference tables carry many aggregates and territories) but warnings listed
//! once.

use crate::cells::number::{self, Cell, NumberStyle};
use crate::entity::{Resolution, Resolver};
use crate::error::{Error, Location, Result};
use crate::ingest::layout::{self, Knobs, RoleFlags, Shape, YearSource};
use crate::ingest::table;
use crate::reference::catalog::Resource;
use crate::reference::factors::{
    check_positive, empty_table, insert_factor, several_series, Origins,
};
pub use crate::reference::factors::{Factor, RefTable};
use polars::prelude::PlHashMap;

/// Loads one reference table through the same table finder as inputs. SDMX-CSV is recognised by
/// its header (a DATAFLOW or STRUCTURE column, a reference-area dimension, TIME_PERIOD and
/// OBS_VALUE) whether or not the catalog says `"format": "sdmx-csv"`.
pub fn load_table(
    bytes: &[u8],
    file: &str,
    resource: &Resource,
    resolver: &Resolver,
) -> Result<RefTable> {
    let hints: Vec<String> = [
        &resource.entity_field,
        &resource.year_field,
        &resource.value_field,
        &resource.se_field,
        &resource.margin_field,
    ]
    .into_iter()
    .flatten()
    .cloned()
    .collect();
    let text_table = table::read_bytes(bytes, file, &hints)?;
    let is_sdmx = super::sdmx::looks_like_sdmx(&text_table.headers);
    let mut notes = crate::ingest::reading_notes(&text_table);
    let mut loaded = match resource.format.as_deref() {
        Some("sdmx-csv") => super::sdmx::load_sdmx(&text_table, bytes, file, resource, resolver)?,
        None if is_sdmx => {
            notes.push("layout: SDMX-CSV (recognised by its header)".into());
            super::sdmx::load_sdmx(&text_table, bytes, file, resource, resolver)?
        }
        None | Some("csv") => {
            if !resource.filter.is_empty() && text_table.dimensions.is_empty() {
                return Err(Error::bad_input(
                    Location::file(format!("{file} (catalog resource \"{}\")", resource.name)),
                    "a \"filter\" on a table that is neither SDMX-CSV nor a statistics-office TSV with dimension codes",
                    "a filter only on tables whose columns are SDMX dimensions (REF_AREA, TIME_PERIOD, OBS_VALUE, ...) or on a dimensioned TSV (freq,unit,geo\\TIME_PERIOD)",
                    format!("remove \"filter\" from the catalog resource \"{}\", or point it at the SDMX file", resource.name),
                ));
            }
            load_plain(&text_table, bytes, file, resource, resolver, &mut notes)?
        }
        Some(other) => {
            return Err(Error::bad_input(
                Location::file(format!("{file} (catalog resource \"{}\")", resource.name)),
                format!("format \"{other}\""),
                "csv or sdmx-csv (or no format: the layout is recognised)",
                format!(
                    "fix \"format\" on the catalog resource \"{}\", or remove it",
                    resource.name
                ),
            ))
        }
    };
    notes.push(format!(
        "{} factor(s) for {} entit(ies){}",
        loaded.rows_read,
        loaded.series.len(),
        loaded
            .years()
            .map(|(a, b)| format!(", years {a}-{b}"))
            .unwrap_or_default()
    ));
    loaded.notes = notes;
    if loaded.series.is_empty() && !text_table.records.is_empty() {
        return Err(Error::bad_input(
            Location::file(format!("{file} (catalog resource \"{}\")", resource.name)),
            format!(
                "no factor could be read: {} data line(s), but no entity resolves or every cell is missing{}",
                text_table.records.len(),
                if loaded.unresolved.is_empty() { String::new() } else {
                    format!(" (unresolved: {})", loaded.unresolved.iter().take(5).map(|(n, _)| format!("\"{}\"", table::shorten(n))).collect::<Vec<_>>().join(", "))
                }
            ),
            "a column of country names or ISO 3166 codes and cells with figures",
            format!("set \"entity_field\" (and \"year_field\"/\"value_field\" or \"layout\") on the catalog resource \"{}\" to the right columns", resource.name),
        ));
    }
    Ok(loaded)
}

fn load_plain(
    text_table: &table::TextTable,
    bytes: &[u8],
    file: &str,
    resource: &Resource,
    resolver: &Resolver,
    notes: &mut Vec<String>,
) -> Result<RefTable> {
    let roles = plain_roles(text_table, file, resource, resolver)?;
    notes.push(describe_roles(text_table, &roles));
    let marks = crate::ingest::RecordMarks::find(text_table, &roles);
    notes.extend(marks.describe(text_table));
    let dimensions: Vec<usize> = text_table
        .dimensions
        .iter()
        .copied()
        .filter(|&d| d != roles.entity)
        .collect();
    let filter = dimension_filter(text_table, resource, file)?;
    let mut loaded = empty_table(bytes, file, resource);
    let mut origins = Origins::default();
    let mut codes: PlHashMap<String, Option<String>> = PlHashMap::default();
    for record in &text_table.records {
        if !filter
            .iter()
            .all(|(i, wanted)| record.cells[*i].trim() == wanted)
        {
            continue;
        }
        let entity_text = match roles.entity_fallback {
            Some(name) if record.cells[roles.entity].trim().is_empty() => record.cells[name].trim(),
            _ => record.cells[roles.entity].trim(),
        };
        let code = match codes.get(entity_text) {
            Some(code) => code.clone(),
            None => {
                let code = match resolver.resolve(entity_text) {
                    Resolution::Found(entity) => Some(entity.code.clone()),
                    Resolution::Unresolved { .. } => None,
                };
                codes.insert(entity_text.to_string(), code.clone());
                code
            }
        };
        let Some(code) = code else {
            if !loaded.unresolved.iter().any(|(n, _)| n == entity_text) {
                loaded
                    .unresolved
                    .push((entity_text.to_string(), record.line));
            }
            continue;
        };
        let series = dimensions
            .iter()
            .map(|&i| format!("{}={}", text_table.headers[i], record.cells[i].trim()))
            .collect::<Vec<_>>()
            .join(",");
        let series_id = origins.series_id(&series);
        let power = marks
            .multiplier(&record, None, file)?
            .map_or(1.0, crate::cells::number::to_f64);
        for (year, column) in year_cells(text_table, &roles, &record, file)? {
            let header = &text_table.headers[column];
            let cell = &record.cells[column];
            let Some(value) = factor_cell(cell, resource, file, record.line, header)? else {
                continue;
            };
            if let Some((_, previous)) = origins.get(&code, year) {
                if previous != series {
                    return Err(several_series(
                        file,
                        record.line,
                        (&code, year),
                        (previous, &series),
                        resource,
                    ));
                }
            }
            insert_factor(
                &mut loaded,
                &mut origins,
                &code,
                year,
                value * power * resource.multiplier,
                (record.line, series_id),
            )?;
            if let Some(&margin_column) = roles.reserved.first() {
                if let Some(se) = margin_se(&record.cells[margin_column], resource) {
                    loaded.se.insert((code.clone(), year), se);
                }
            }
        }
    }
    Ok(loaded)
}

/// The roles of a plain reference table's columns, from the catalog's fields; refused where a
/// margin column sits in a wide table or a wide table's headers are not all years.
fn plain_roles(
    text_table: &table::TextTable,
    file: &str,
    resource: &Resource,
    resolver: &Resolver,
) -> Result<layout::Roles> {
    let flags = RoleFlags {
        entity: resource.entity_field.clone(),
        value: resource.value_field.clone(),
        year: resource.year_field.clone(),
        layout: resource.layout,
        reserved: resource
            .se_field
            .iter()
            .chain(resource.margin_field.iter())
            .cloned()
            .collect(),
        knobs: Knobs::Catalog {
            resource: resource.name.clone(),
        },
        ..Default::default()
    };
    let roles = layout::assign_roles(text_table, &flags, file, Some(resolver))?;
    if !roles.reserved.is_empty() && matches!(roles.shape, Shape::Wide { .. }) {
        return Err(Error::bad_input(
            Location::file(file),
            "a margin column in a wide table",
            "a long table (entity, year, value, margin) when the catalog names se_field or margin_field",
            "reshape the table to long form, or remove the margin property from the catalog",
        ));
    }
    check_wide_headers(text_table, &roles, file, resource)?;
    Ok(roles)
}

/// The (year, column) cells of one record: every year column of a wide table, or the value
/// column at the record's year.
fn year_cells(
    text_table: &table::TextTable,
    roles: &layout::Roles,
    record: &table::TextRecord<'_>,
    file: &str,
) -> Result<Vec<(i32, usize)>> {
    Ok(match &roles.shape {
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
                                format!(
                                    "\"{}\" is not a calendar year",
                                    table::shorten(&record.cells[*index])
                                ),
                                "a four-digit year",
                                "fix the reference table",
                            ))
                        }
                    }
                }
            };
            vec![(year, *value)]
        }
    })
}

/// A factor cell: None for a missing mark, an error for anything that is not a positive number.
fn factor_cell(
    cell: &str,
    resource: &Resource,
    file: &str,
    line: usize,
    header: &str,
) -> Result<Option<f64>> {
    let style = NumberStyle {
        decimal_comma: resource.decimal_comma,
    };
    let value = match number::parse_float_cell(cell, style) {
        Ok(None) => return Ok(None),
        Ok(Some(float)) => float,
        Err(e) => {
            // The number parser speaks of flags; a reference table is set by catalog keys.
            let hint = e.hint.replace(
                "pass --decimal-comma",
                &format!(
                    "set \"decimal_comma\": true on the catalog resource \"{}\"",
                    resource.name
                ),
            );
            let hint = hint
                .replace(
                    "; drop --decimal-comma if the table uses a decimal point",
                    "",
                )
                .replace(", or pass --lenient to keep the row flagged `unparsed`", "");
            return Err(Error::bad_input(
                Location::cell(file, line, header),
                e.reason,
                format!("a {} factor ({hint})", resource.kind.as_str()),
                "fix the reference table; mark a missing factor with .. or leave the cell empty",
            ));
        }
    };
    check_positive(value, cell, resource, file, line, header)?;
    Ok(Some(value))
}

/// The standard error from a margin cell (a margin at the catalog's level, or an SE).
fn margin_se(cell: &str, resource: &Resource) -> Option<f64> {
    let Ok(Cell::Number { float: margin, .. }) = number::parse_cell(cell, NumberStyle::default())
    else {
        return None;
    };
    let margin = margin * resource.multiplier;
    Some(
        match (resource.margin_field.is_some(), resource.margin_confidence) {
            (true, Some(level)) => {
                margin / crate::uncertainty::normal::two_sided_critical(level as f64 / 100.0)
            }
            _ => margin,
        },
    )
}

/// The catalog's `filter` as (dimension column, code) of a dimensioned TSV.
fn dimension_filter(
    text_table: &table::TextTable,
    resource: &Resource,
    file: &str,
) -> Result<Vec<(usize, String)>> {
    resource
        .filter
        .iter()
        .map(|(dimension, code)| {
            text_table
                .dimensions
                .iter()
                .copied()
                .find(|&i| text_table.headers[i].eq_ignore_ascii_case(dimension))
                .map(|i| (i, code.clone()))
                .ok_or_else(|| {
                    let names: Vec<String> = text_table
                        .dimensions
                        .iter()
                        .map(|&i| text_table.headers[i].clone())
                        .collect();
                    Error::bad_input(
                        Location::file(format!("{file} (catalog resource \"{}\")", resource.name)),
                        format!("the catalog filters on {dimension}, which is not a dimension of the file"),
                        format!("one of {}", names.join(", ")),
                        format!("fix \"filter\" on the catalog resource \"{}\"", resource.name),
                    )
                })
        })
        .collect()
}

/// Wide reference tables: a header that holds digits but is not a year is most likely a year
/// written another way (`2023e`, `Y2023`), and dropping its column would lose factors silently.
fn check_wide_headers(
    text_table: &table::TextTable,
    roles: &layout::Roles,
    file: &str,
    resource: &Resource,
) -> Result<()> {
    let Shape::Wide { year_columns } = &roles.shape else {
        return Ok(());
    };
    let years: std::collections::HashSet<usize> = year_columns.iter().map(|(c, _)| *c).collect();
    let odd = text_table.headers.iter().enumerate().find(|(i, h)| {
        !years.contains(i)
            && *i != roles.entity
            && h.chars().any(|c| c.is_ascii_digit())
            && !h.starts_with("column_")
    });
    match odd {
        None => Ok(()),
        Some((_, header)) => Err(Error::bad_input(
            Location::cell(file, text_table.header_line, header.clone()),
            format!("the header \"{}\" is neither a year nor a descriptive field", table::shorten(header)),
            "year columns headed by four-digit years (2019, or 2019 [YR2019]) beside descriptive columns",
            format!("rename the column to its year (or remove it) in the file; if the table is long, set \"layout\": \"long\" with \"year_field\" and \"value_field\" on the catalog resource \"{}\"", resource.name),
        )),
    }
}

/// One line for `levelfield refs`: the columns the table was read by.
fn describe_roles(text_table: &table::TextTable, roles: &layout::Roles) -> String {
    let entity = &text_table.headers[roles.entity];
    let how = match roles.entity_detected {
        layout::EntityFound::Given => "entity_field",
        layout::EntityFound::Header => "detected from its header",
        layout::EntityFound::Content => "detected: its cells are country names or codes",
    };
    let shape = match &roles.shape {
        Shape::Wide { year_columns } => format!(
            "wide, {} year column(s) {}-{}",
            year_columns.len(),
            year_columns.iter().map(|(_, y)| *y).min().unwrap_or(0),
            year_columns.iter().map(|(_, y)| *y).max().unwrap_or(0)
        ),
        Shape::Long { value, year, .. } => format!(
            "long, value column \"{}\"{}",
            text_table.headers[*value],
            match year {
                YearSource::Column { index, .. } =>
                    format!(", year column \"{}\"", text_table.headers[*index]),
                YearSource::Fixed(y) => format!(", every row {y}"),
            }
        ),
    };
    let mut text = format!("layout: {shape}; entity column \"{entity}\" ({how})");
    if !roles.ignored.is_empty() {
        text.push_str(&format!(
            "; columns not used: {}",
            layout::list(&roles.ignored)
        ));
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::catalog::parse_catalog;

    fn ppp_resource(extra: &str) -> Resource {
        let json =
            format!(r#"{{"resources":[{{"name":"p","path":"p.csv","kind":"ppp"{extra}}}]}}"#);
        parse_catalog(json.as_bytes(), "dp.json")
            .unwrap()
            .resources
            .remove(0)
    }

    fn load_file(text: &str, file: &str, resource: &Resource) -> Result<RefTable> {
        load_table(text.as_bytes(), file, resource, &Resolver::builtin())
    }

    fn load(text: &str, resource: &Resource) -> Result<RefTable> {
        load_file(text, "p.csv", resource)
    }

    // The tables below are invented (made-up factors for real ISO 3166 codes).

    #[test]
    fn a_second_factor_for_one_entity_and_year_names_both_lines() {
        let text = "country,year,ppp\nFRA,2021,0.72\nDEU,2021,0.75\nFrance,2021,0.73\n";
        let err = load(text, &ppp_resource("")).unwrap_err().to_string();
        assert!(
            err.contains("p.csv, line 4") && err.contains("a second ppp factor for FRA in 2021"),
            "{err}"
        );
        assert!(err.contains("the first is on line 2"), "{err}");
    }

    #[test]
    fn two_series_for_one_entity_and_year_are_named_both() {
        // The statistics-office TSV layout, whose dimension columns tell series apart.
        let text = "freq,unit,geo\\TIME_PERIOD\t2020 \t2021 \nA,PPS,FR\t0.71 \t0.72 \nA,EUR,FR\t0.9 \t0.91 \n";
        let err = load_file(text, "p.tsv", &ppp_resource(""))
            .unwrap_err()
            .to_string();
        assert!(
            err.contains(
                "line 3: several series for FRA in 2020: freq=A,unit=PPS | freq=A,unit=EUR"
            ),
            "{err}"
        );
    }

    #[test]
    fn a_word_in_a_factor_cell_is_refused_without_naming_an_input_flag() {
        let text = "country,year,ppp\nFRA,2021,abc\n";
        let err = load(text, &ppp_resource("")).unwrap_err().to_string();
        assert!(err.contains("p.csv, line 2, column \"ppp\""), "{err}");
        assert!(
            err.contains("a ppp factor (a number such as 1,234.5"),
            "{err}"
        );
        assert!(!err.contains("--lenient"), "{err}");
    }

    #[test]
    fn every_factor_of_a_wide_table_is_kept_once_per_entity() {
        let text = "country,2020,2021\nFRA,0.71,0.72\nDEU,0.74,0.75\n";
        let table = load(text, &ppp_resource("")).unwrap();
        assert_eq!(table.rows_read, 4);
        assert_eq!(table.series.len(), 2);
        assert_eq!(table.lookup("DEU", 2020, 0).unwrap().value, 0.74);
        assert_eq!(table.lookup("FRA", 2021, 0).unwrap().value, 0.72);
    }
}
