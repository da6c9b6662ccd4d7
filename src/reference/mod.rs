//! Reference tables chosen by the user: the catalog (`catalog`), loading and validation
//! (`table`), and the coverage report behind `levelfield refs` (`coverage`).
//!
//! `References` is what the rest of the pipeline sees: at most one table per kind, each with
//! its catalog metadata and the sha256-free, file-named provenance the summary prints.

pub mod catalog;
pub mod coverage;
pub mod draft;
pub mod factors;
pub mod sdmx;
pub mod table;

use crate::entity::Resolver;
use crate::error::Result;
use crate::source::FileSource;
pub use catalog::{Basis, Catalog, Kind, Resource};
pub use factors::{Factor, RefTable};

pub use crate::source::CATALOG_FILE;

/// Adds the alias files a catalog declares (its `aliases` property) to the resolver.
pub fn add_catalog_aliases(
    catalog: &Catalog,
    source: &dyn FileSource,
    resolver: &mut Resolver,
) -> Result<Vec<(String, String)>> {
    let mut read = Vec::new();
    for path in &catalog.aliases {
        let bytes = source.read(path)?;
        resolver.add_alias_text(&String::from_utf8_lossy(&bytes), &source.label(path))?;
        read.push((source.label(path), crate::source::sha256_hex(&bytes)));
    }
    Ok(read)
}

/// The loaded reference tables of one catalog.
#[derive(Debug, Clone)]
pub struct References {
    pub catalog: Catalog,
    pub catalog_file: String,
    pub catalog_sha256: String,
    /// Alias files the catalog declares: (file, sha256).
    pub alias_files: Vec<(String, String)>,
    pub tables: Vec<RefTable>,
}

impl References {
    pub fn get(&self, kind: Kind) -> Option<&RefTable> {
        self.tables.iter().find(|t| t.resource.kind == kind)
    }

    /// One line per table for the run summary: kind, name, unit, vintage, first source.
    pub fn describe(&self) -> Vec<String> {
        self.tables
            .iter()
            .map(|t| {
                let r = &t.resource;
                let source = r
                    .sources
                    .first()
                    .map(|s| s.title.as_str())
                    .unwrap_or("no source given");
                let filtered = if r.filter.is_empty() {
                    String::new()
                } else {
                    let pairs: Vec<String> =
                        r.filter.iter().map(|(k, v)| format!("{k}={v}")).collect();
                    format!(", SDMX series filtered on {}", pairs.join(", "))
                };
                format!(
                    "{} \"{}\" ({}{}), vintage {}, source: {source}{filtered}",
                    r.kind.as_str(),
                    r.name,
                    if r.unit.is_empty() {
                        "unit not stated"
                    } else {
                        &r.unit
                    },
                    if r.multiplier != 1.0 {
                        format!(", x{}", r.multiplier)
                    } else {
                        String::new()
                    },
                    r.vintage.as_deref().unwrap_or("not stated"),
                )
            })
            .collect()
    }

    /// Warnings for entities in the reference tables that resolve to nothing, listed once.
    pub fn warnings(&self) -> Vec<String> {
        self.tables
            .iter()
            .filter(|t| !t.unresolved.is_empty())
            .map(|t| {
                let names: Vec<String> = t.unresolved.iter().take(8).map(|(n, l)| format!("\"{n}\" (line {l})")).collect();
                let more = if t.unresolved.len() > 8 { format!(" and {} more", t.unresolved.len() - 8) } else { String::new() };
                format!(
                    "{}: {} entity name(s) match no country or aggregate and were skipped: {}{more}",
                    t.file,
                    t.unresolved.len(),
                    names.join(", ")
                )
            })
            .collect()
    }
}

/// Loads the catalog, adds the alias files it declares to `resolver` (so inputs can use the
/// same user-defined entities), and loads every table; the first broken table stops the load.
pub fn load(source: &dyn FileSource, resolver: &mut Resolver) -> Result<References> {
    let catalog_file = source.label(CATALOG_FILE);
    let catalog_bytes = source.read(CATALOG_FILE)?;
    let catalog_sha256 = crate::source::sha256_hex(&catalog_bytes);
    let catalog = catalog::parse_catalog(&catalog_bytes, &catalog_file)?;
    let alias_files = add_catalog_aliases(&catalog, source, resolver)?;
    let resolver: &Resolver = resolver;
    let files: Vec<Result<(String, Vec<u8>)>> = catalog
        .resources
        .iter()
        .map(|resource| Ok((source.label(&resource.path), source.read(&resource.path)?)))
        .collect();
    // The tables are read side by side on polars' thread pool, the largest first so that it
    // does not start last; the first error in catalog order is the one reported, as when they
    // were read one after another.
    let mut order: Vec<usize> = (0..files.len()).collect();
    order.sort_by_key(|&i| std::cmp::Reverse(files[i].as_ref().map_or(0, |(_, b)| b.len())));
    let loaded: Vec<(usize, Result<RefTable>)> = polars_core::runtime::THREAD_POOL.install(|| {
        use rayon::prelude::*;
        order
            .par_iter()
            .filter_map(|&i| {
                let (file, bytes) = files[i].as_ref().ok()?;
                Some((
                    i,
                    table::load_table(bytes, file, &catalog.resources[i], resolver),
                ))
            })
            .collect()
    });
    let mut by_index: Vec<Option<Result<RefTable>>> = (0..files.len()).map(|_| None).collect();
    for (i, table) in loaded {
        by_index[i] = Some(table);
    }
    let mut tables = Vec::with_capacity(files.len());
    for (file, table) in files.into_iter().zip(by_index) {
        file?;
        tables.push(table.expect("every file read is loaded")?);
    }
    Ok(References {
        catalog,
        catalog_file,
        catalog_sha256,
        alias_files,
        tables,
    })
}
