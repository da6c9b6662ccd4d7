//! Reference tables in SDMX-CSV, the open statistical data exchange standard (ISO 17369) as
//! agencies publish it: version 1 (first column `DATAFLOW`) and version 2 (first columns
//! `STRUCTURE`, `STRUCTURE_ID`, optionally `ACTION`). `REF_AREA` gives the entity,
//! `TIME_PERIOD` the year, `OBS_VALUE` the factor, and `UNIT_MULT` (a power of ten) scales it.
//! Headers and cells may carry labels (`REF_AREA: Reference area`, `FR: France`); the code
//! before the colon is used.
//!
//! The catalog's `filter` keeps the rows whose dimensions have the given codes. If several series
//! remain for one entity and year, the file is ambiguous and the error lists the series found,
//! so the user can add the filter that picks one.

use crate::cells::number::{self, Cell, NumberStyle};
use crate::entity::{Resolution, Resolver};
use crate::error::{Error, Location, Result};
use crate::ingest::table;
use crate::reference::catalog::Resource;
use crate::reference::factors::{
    check_positive, empty_table, insert_factor, several_series, Origins, RefTable,
};

/// Columns that are not dimensions of a series.
const NOT_DIMENSIONS: &[&str] = &[
    "DATAFLOW",
    "STRUCTURE",
    "STRUCTURE_ID",
    "ACTION",
    "REF_AREA",
    "TIME_PERIOD",
    "OBS_VALUE",
    "UNIT_MULT",
    "OBS_STATUS",
    "OBS_FLAG",
    "CONF_STATUS",
    "DECIMALS",
    "OBS_COMMENT",
    "COMMENT",
    "UNIT_MEASURE_LABEL",
    "LAST UPDATE",
    "LAST_UPDATE",
    "GEO",
    "LOCATION",
    "COUNTRY",
    "REPORTING_COUNTRY",
];

/// The code part of a header or cell: `REF_AREA: Reference area` → `REF_AREA`.
fn code(text: &str) -> &str {
    crate::ingest::layout::sdmx_code(text)
}

fn area_column(headers: &[String]) -> Option<usize> {
    crate::ingest::layout::SDMX_AREAS
        .iter()
        .find_map(|name| headers.iter().position(|h| h == name))
}

pub use crate::ingest::layout::looks_like_sdmx;

/// The columns of an observation.
#[derive(Clone, Copy)]
struct Observed {
    time: usize,
    value: usize,
    unit_mult: Option<usize>,
}

/// A record's year and factor (times ten to its UNIT_MULT and the catalog's multiplier), or
/// none when the value is missing; a period that is not a year, a value that is not a number
/// and a factor that is not positive are errors at the record's line.
fn observation(
    record: &crate::ingest::table::TextRecord<'_>,
    columns: &Observed,
    text_table: &table::TextTable,
    file: &str,
    resource: &Resource,
) -> Result<Option<(i32, f64)>> {
    let Observed {
        time,
        value,
        unit_mult,
    } = *columns;
    let period = code(&record.cells[time]);
    let year: i32 = match period.parse() {
        Ok(y) if period.len() == 4 => y,
        _ => return Err(Error::bad_input(
            Location::cell(file, record.line, &text_table.headers[time]),
            format!("TIME_PERIOD \"{period}\" is not a year"),
            "annual observations (TIME_PERIOD such as 2021)",
            "filter the file to its annual frequency (for example \"filter\": {\"FREQ\": \"A\"})",
        )),
    };
    let cell = &record.cells[value];
    let factor = match number::parse_cell(cell, NumberStyle::default()) {
        Ok(Cell::Missing) => return Ok(None),
        Ok(Cell::Number { float, .. }) => float,
        Err(e) => {
            return Err(Error::bad_input(
                Location::cell(file, record.line, &text_table.headers[value]),
                e.reason,
                format!("a {} factor ({})", resource.kind.as_str(), e.hint),
                "fix the file",
            ))
        }
    };
    let power = match unit_mult.map(|i| code(&record.cells[i]).to_string()) {
        None => 0,
        Some(text) if text.is_empty() => 0,
        Some(text) => text.parse::<i32>().map_err(|_| {
            Error::bad_input(
                Location::cell(file, record.line, "UNIT_MULT"),
                format!("UNIT_MULT \"{text}\" is not a power of ten"),
                "an integer such as 0, 3 or 6",
                "fix the file",
            )
        })?,
    };
    let factor = factor * 10f64.powi(power) * resource.multiplier;
    check_positive(
        factor,
        cell,
        resource,
        file,
        record.line,
        &text_table.headers[value],
    )?;
    Ok(Some((year, factor)))
}

/// Refuses a catalog filter on a dimension the file does not have.
fn check_filter_columns(
    headers: &[String],
    resource: &Resource,
    file: &str,
    at: usize,
) -> Result<()> {
    for dimension in resource.filter.keys() {
        if !headers.contains(&dimension.to_uppercase()) {
            return Err(Error::bad_input(
                Location::line(file, at),
                format!("the catalog filters on {dimension}, which is not a column of the file"),
                format!("one of {}", headers.join(", ")),
                format!(
                    "fix \"filter\" on the catalog resource \"{}\"",
                    resource.name
                ),
            ));
        }
    }
    Ok(())
}

/// A reference table from an SDMX-CSV file (version 1 or 2): the rows the catalog's `filter`
/// keeps, one factor per entity and year; several series for one entity-year are an error.
pub fn load_sdmx(
    text_table: &table::TextTable,
    bytes: &[u8],
    file: &str,
    resource: &Resource,
    resolver: &Resolver,
) -> Result<RefTable> {
    let headers: Vec<String> = text_table
        .headers
        .iter()
        .map(|h| code(h).to_uppercase())
        .collect();
    let column = |name: &str| headers.iter().position(|h| h == name);
    let at = text_table.header_line;
    let missing = |name: &str| {
        Error::bad_input(
            Location::line(file, at),
            format!("no {name} column in an SDMX-CSV file"),
            "SDMX-CSV columns REF_AREA (or another reference-area dimension), TIME_PERIOD and OBS_VALUE (version 1 or 2)",
            format!("check the file's layout, or remove \"format\": \"sdmx-csv\" from the catalog resource \"{}\" for a plain table", resource.name),
        )
    };
    let area = area_column(&headers).ok_or_else(|| missing("REF_AREA"))?;
    let time = column("TIME_PERIOD").ok_or_else(|| missing("TIME_PERIOD"))?;
    let value = column("OBS_VALUE").ok_or_else(|| missing("OBS_VALUE"))?;
    let unit_mult = column("UNIT_MULT");
    check_filter_columns(&headers, resource, file, at)?;
    let dimensions: Vec<usize> = (0..headers.len())
        .filter(|&i| !NOT_DIMENSIONS.contains(&headers[i].as_str()))
        .collect();

    let mut loaded = empty_table(bytes, file, resource);
    // First line and series key (the dimension codes) per entity-year, to explain an ambiguity.
    let mut origins = Origins::default();
    for record in &text_table.records {
        let kept = resource.filter.iter().all(|(dimension, wanted)| {
            column(&dimension.to_uppercase()).is_some_and(|i| code(&record.cells[i]) == wanted)
        });
        if !kept {
            continue;
        }
        let area_text = code(&record.cells[area]);
        let entity = match resolver.resolve(area_text) {
            Resolution::Found(e) => e.code.clone(),
            Resolution::Unresolved { .. } => {
                if !loaded.unresolved.iter().any(|(n, _)| n == area_text) {
                    loaded.unresolved.push((area_text.to_string(), record.line));
                }
                continue;
            }
        };
        let Some((year, factor)) = observation(
            &record,
            &Observed {
                time,
                value,
                unit_mult,
            },
            text_table,
            file,
            resource,
        )?
        else {
            continue;
        };
        let series: String = dimensions
            .iter()
            .map(|&i| format!("{}={}", headers[i], code(&record.cells[i])))
            .collect::<Vec<_>>()
            .join(",");
        if let Some((_, first)) = origins.get(&entity, year) {
            return Err(several_series(
                file,
                record.line,
                (&entity, year),
                (first, &series),
                resource,
            ));
        }
        let series_id = origins.series_id(&series);
        insert_factor(
            &mut loaded,
            &mut origins,
            &entity,
            year,
            factor,
            (record.line, series_id),
        )?;
    }
    Ok(loaded)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::catalog::parse_catalog;

    fn load(text: &str, file: &str, r: &Resource, resolver: &Resolver) -> Result<RefTable> {
        let t = table::read_bytes(text.as_bytes(), file, &[])?;
        load_sdmx(&t, text.as_bytes(), file, r, resolver)
    }

    #[test]
    fn recognised_by_the_header_without_a_format_key() {
        let t = table::read_bytes(V1.as_bytes(), "p.csv", &[]).unwrap();
        assert!(looks_like_sdmx(&t.headers));
        let t = table::read_bytes(V2.as_bytes(), "p.csv", &[]).unwrap();
        assert!(looks_like_sdmx(&t.headers));
        assert!(!looks_like_sdmx(&[
            "country".into(),
            "TIME_PERIOD".into(),
            "OBS_VALUE".into()
        ]));
    }

    fn resource(filter: &str) -> Resource {
        let json = format!(
            r#"{{"resources":[{{"name":"p","path":"p.csv","kind":"ppp","format":"sdmx-csv","filter":{filter}}}]}}"#
        );
        parse_catalog(json.as_bytes(), "dp.json")
            .unwrap()
            .resources
            .remove(0)
    }

    // Hand-written in the SDMX-CSV 1.0 layout (DATAFLOW first, dimension columns, TIME_PERIOD,
    // OBS_VALUE, attributes); the figures are made up.
    const V1: &str = "DATAFLOW,FREQ,REF_AREA,MEASURE,TIME_PERIOD,OBS_VALUE,UNIT_MULT\n\
        AGENCY:PPP_TEST(1.0),A,FR,PPP,2021,0.73,0\n\
        AGENCY:PPP_TEST(1.0),A,FR,PLI,2021,85,0\n\
        AGENCY:PPP_TEST(1.0),A,CL,PPP,2021,0.42,3\n";

    // Hand-written in the SDMX-CSV 2.0 layout with labels (STRUCTURE, STRUCTURE_ID, ACTION first;
    // "code: label" headers and cells); the figures are made up.
    const V2: &str = "STRUCTURE,STRUCTURE_ID,ACTION,FREQ: Frequency,REF_AREA: Reference area,UNIT_MEASURE,TIME_PERIOD: Time,OBS_VALUE: Value,UNIT_MULT: Multiplier\n\
        dataflow,AGENCY:POP_TEST(2.0),I,A: Annual,FR: France,PS: Persons,2021,67.7,6: Millions\n\
        dataflow,AGENCY:POP_TEST(2.0),I,A: Annual,CL: Chile,PS: Persons,2021,19493,3: Thousands\n";

    #[test]
    fn version_1_with_a_filter_and_unit_mult_3() {
        let resolver = Resolver::builtin();
        let t = load(V1, "p.csv", &resource(r#"{"MEASURE":"PPP"}"#), &resolver).unwrap();
        assert_eq!(t.lookup("FRA", 2021, 0).unwrap().value, 0.73);
        assert_eq!(t.lookup("CHL", 2021, 0).unwrap().value, 420.0);
    }

    #[test]
    fn version_2_with_labels_and_unit_mult_6() {
        let resolver = Resolver::builtin();
        let mut r = resource("{}");
        r.kind = crate::reference::Kind::Population;
        let t = load(V2, "pop.csv", &r, &resolver).unwrap();
        assert_eq!(t.lookup("FRA", 2021, 0).unwrap().value, 67_700_000.0);
        assert_eq!(t.lookup("CHL", 2021, 0).unwrap().value, 19_493_000.0);
    }

    #[test]
    fn several_series_for_one_entity_year_is_an_error_listing_them() {
        let resolver = Resolver::builtin();
        let err = load(V1, "p.csv", &resource("{}"), &resolver)
            .unwrap_err()
            .to_string();
        assert!(err.contains("several series for FRA in 2021"), "{err}");
        assert!(
            err.contains("MEASURE=PPP") && err.contains("MEASURE=PLI"),
            "{err}"
        );
        assert!(err.contains("filter"), "{err}");
    }
}
