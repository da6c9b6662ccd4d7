//! What `levelfield refs [DIR]` shows: every table of a catalog with its kind, unit, vintage,
//! source, entity and year coverage, the gaps inside that coverage, and any validation error.
//! Unlike `load`, a broken table does not stop the listing: each table is checked on its own.

use crate::entity::Resolver;
use crate::error::Result;
use crate::reference::{catalog, table, RefTable, Resource, CATALOG_FILE};
use crate::source::FileSource;
use tabled::settings::Style;

/// One row of the listing.
#[derive(Debug, Clone)]
pub struct TableCoverage {
    pub resource: Resource,
    pub file: String,
    pub entities: usize,
    pub years: Option<(i32, i32)>,
    /// Entity-years missing between the first and last year of the table, by entity.
    pub gaps: Vec<(String, Vec<i32>)>,
    pub warnings: Vec<String>,
    pub error: Option<String>,
    /// How the file was read: header line, layout, entity column, what was set aside.
    pub reading: Vec<String>,
}

pub fn survey(
    source: &dyn FileSource,
    resolver: &Resolver,
) -> Result<(String, Vec<TableCoverage>)> {
    let catalog_file = source.label(CATALOG_FILE);
    let catalog = catalog::parse_catalog(&source.read(CATALOG_FILE)?, &catalog_file)?;
    let mut resolver = resolver.clone();
    crate::reference::add_catalog_aliases(&catalog, source, &mut resolver)?;
    let resolver = &resolver;
    let mut out = Vec::new();
    for resource in &catalog.resources {
        let file = source.label(&resource.path);
        let loaded = source
            .read(&resource.path)
            .and_then(|bytes| table::load_table(&bytes, &file, resource, resolver));
        out.push(match loaded {
            Ok(t) => coverage_of(&t),
            Err(e) => TableCoverage {
                resource: resource.clone(),
                file,
                entities: 0,
                years: None,
                gaps: Vec::new(),
                warnings: Vec::new(),
                error: Some(e.to_string()),
                reading: Vec::new(),
            },
        });
    }
    let title = catalog.title.clone().unwrap_or(catalog.name.clone());
    Ok((title, out))
}

fn coverage_of(t: &RefTable) -> TableCoverage {
    let years = t.years();
    let mut gaps: Vec<(String, Vec<i32>)> = Vec::new();
    if let Some((first, last)) = years {
        let mut codes: Vec<&String> = t.series.keys().collect();
        codes.sort();
        for code in codes {
            let series = &t.series[code];
            let missing: Vec<i32> = (first..=last).filter(|y| !series.contains_key(y)).collect();
            if !missing.is_empty() {
                gaps.push((code.clone(), missing));
            }
        }
    }
    let warnings = t
        .unresolved
        .iter()
        .map(|(name, line)| {
            format!("\"{name}\" (line {line}) matches no country or aggregate; skipped")
        })
        .collect();
    TableCoverage {
        resource: t.resource.clone(),
        file: t.file.clone(),
        entities: t.series.len(),
        years,
        gaps,
        warnings,
        error: None,
        reading: t.notes.clone(),
    }
}

/// The listing as text for a terminal.
pub fn render(title: &str, tables: &[TableCoverage]) -> String {
    let mut builder = tabled::builder::Builder::default();
    builder.push_record([
        "kind", "name", "unit", "vintage", "source", "entities", "years", "gaps", "status",
    ]);
    for t in tables {
        let r = &t.resource;
        builder.push_record([
            r.kind.as_str().to_string(),
            r.name.clone(),
            if r.multiplier != 1.0 {
                format!("{} (x{})", r.unit, r.multiplier)
            } else {
                r.unit.clone()
            },
            r.vintage.clone().unwrap_or_else(|| "-".into()),
            r.sources
                .first()
                .map(|s| s.title.clone())
                .unwrap_or_else(|| "-".into()),
            t.entities.to_string(),
            t.years
                .map(|(a, b)| format!("{a}-{b}"))
                .unwrap_or_else(|| "-".into()),
            t.gaps
                .iter()
                .map(|(_, m)| m.len())
                .sum::<usize>()
                .to_string(),
            if t.error.is_some() {
                "ERROR".into()
            } else {
                "ok".into()
            },
        ]);
    }
    let mut table = builder.build();
    table.with(Style::rounded());
    let mut out = format!("Reference catalog: {title}\n{table}\n");
    for t in tables {
        if !t.reading.is_empty() {
            out.push_str(&format!("\nread {} ({}):\n", t.resource.name, t.file));
            for note in &t.reading {
                out.push_str(&format!("  {note}\n"));
            }
        }
        if let Some(error) = &t.error {
            out.push_str(&format!(
                "\nERROR in {} ({}):\n{error}\n",
                t.resource.name, t.file
            ));
        }
        if !t.gaps.is_empty() {
            let listed: Vec<String> = t
                .gaps
                .iter()
                .take(10)
                .map(|(code, years)| format!("{code} {}", compact_years(years)))
                .collect();
            let more = if t.gaps.len() > 10 {
                format!("; and {} more entities", t.gaps.len() - 10)
            } else {
                String::new()
            };
            out.push_str(&format!(
                "\ngaps in {}: {}{more}\n",
                t.resource.name,
                listed.join("; ")
            ));
        }
        if !t.warnings.is_empty() {
            let shown: Vec<&str> = t.warnings.iter().take(5).map(String::as_str).collect();
            let more = if t.warnings.len() > 5 {
                format!(" (and {} more)", t.warnings.len() - 5)
            } else {
                String::new()
            };
            out.push_str(&format!(
                "\nwarnings in {}: {}{more}\n",
                t.resource.name,
                shown.join("; ")
            ));
        }
    }
    out
}

/// `[2001, 2002, 2003, 2007]` → `2001-2003, 2007`.
pub fn compact_years(years: &[i32]) -> String {
    let mut parts: Vec<String> = Vec::new();
    let mut i = 0;
    while i < years.len() {
        let start = years[i];
        let mut end = start;
        while i + 1 < years.len() && years[i + 1] == end + 1 {
            i += 1;
            end = years[i];
        }
        parts.push(if start == end {
            start.to_string()
        } else {
            format!("{start}-{end}")
        });
        i += 1;
    }
    parts.join(", ")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn compacts_runs_of_years() {
        assert_eq!(compact_years(&[2001, 2002, 2003, 2007]), "2001-2003, 2007");
        assert_eq!(compact_years(&[2010]), "2010");
        assert_eq!(compact_years(&[]), "");
    }
}
