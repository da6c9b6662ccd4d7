//! Resolving the entity text of every canonical row to an entity (ISO 3166-1 country, aggregate
//! or user-defined), and deciding what currency basis each figure is in.
//!
//! Never guesses: a name that matches nothing stops the run with every such name listed (and up
//! to three suggestions each), unless `--allow-unresolved` keeps those rows flagged.

use crate::entity::{Entity, EntityKind, Resolution, Resolver};
use crate::error::{Error, Result, UnresolvedName};
use crate::flags;
use crate::ingest::Ingested;
use crate::rank::{partition_key, Numbering};

/// The entity of every row, in input order: each distinct entity once, and per row its place
/// among them (none for an unresolved name). The frame's entity columns are written from this
/// without a string per row.
#[derive(Debug, Clone, Default)]
pub struct EntityColumns {
    pub found: Vec<Entity>,
    pub at: Vec<Option<u32>>,
}

impl EntityColumns {
    /// The entity of row `row`, when its name resolved.
    pub fn of(&self, row: usize) -> Option<&Entity> {
        self.at[row].map(|i| &self.found[i as usize])
    }
}

/// What ranking groups rows by, as one number a row each. Polars groups several key columns by
/// hashing their rows encoded as bytes: at 10M rows, 35% of the pages touched in the first 17 s
/// were touched by that grouping (a page-fault profile, 2026-12-05); one integer column is
/// grouped without the encoding.
pub struct RankingKeys {
    /// Whether the row shares its entity (the resolved code, else the text as given), its
    /// group and its year with another row (`rank::several_series`).
    pub several: Vec<bool>,
    /// Rows share it exactly when they share their group and their year: the rows ranked
    /// together, numbered from 0 (`rank::partition_numbers`).
    pub partition: Vec<u32>,
    /// How many partitions there are.
    pub partitions: usize,
}

/// Each row's `RankingKeys`.
pub fn ranking_keys<'a>(
    rows: &'a crate::ingest::CanonicalRows,
    entities: &'a EntityColumns,
) -> RankingKeys {
    // The entity's text, numbered once for each distinct one: a resolved entity's code, or an
    // unresolved row's text (the same number when the two texts are equal).
    let mut entity_numbers: Numbering<&'a str> = Numbering::default();
    let found: Vec<u32> = entities
        .found
        .iter()
        .map(|e| entity_numbers.number(e.code.as_str()))
        .collect();
    let texts: Vec<u32> = (0..rows.texts.len() as u32)
        .map(|t| entity_numbers.number(rows.texts.get(t)))
        .collect();
    let mut pairs: Numbering<u64> = Numbering::default();
    let mut partitions: Numbering<u128> = Numbering::default();
    let n = rows.line.len();
    let mut series: Vec<u32> = Vec::with_capacity(n);
    let mut partition: Vec<u32> = Vec::with_capacity(n);
    for i in 0..n {
        let entity = match entities.at[i] {
            Some(at) => found[at as usize],
            None => texts[rows.entity_input[i] as usize],
        };
        // A group is a place among the distinct texts: equal texts, equal places (none is
        // `u32::MAX`, a place no text has short of 4 billion distinct texts, some 100 GB).
        let group = rows.group[i];
        series.push(pairs.number(u64::from(entity) << 32 | u64::from(group.unwrap_or(u32::MAX))));
        partition.push(partitions.number(partition_key(group, rows.year[i])));
    }
    RankingKeys {
        several: crate::rank::several_series(&series, &rows.year, pairs.len()),
        partition,
        partitions: partitions.len(),
    }
}

/// The currency a row's figure is in: the one it states, else its entity's.
pub fn row_currency<'a>(
    rows: &'a crate::ingest::CanonicalRows,
    at: usize,
    entity: Option<&'a Entity>,
) -> Option<&'a str> {
    rows.currency_text(at)
        .or_else(|| entity.and_then(|e| e.currency.as_deref()))
}

/// How a figure relates to the reference tables' currencies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InputBasis {
    /// In the entity's own currency (or not stated, which means the same).
    Local,
    /// In the reference tables' base currency (USD), to be taken back to local currency.
    Base,
    /// In some other currency: the row is flagged `currency_mismatch` and not adjusted.
    Mismatch,
}

impl InputBasis {
    pub fn as_str(self) -> &'static str {
        match self {
            InputBasis::Local => "local",
            InputBasis::Base => "base",
            InputBasis::Mismatch => "mismatch",
        }
    }
}

pub struct ResolveOptions<'a> {
    pub allow_unresolved: bool,
    pub rank_aggregates: bool,
    pub base_currency: &'a str,
}

/// Resolves every row. Adds `unresolved` and `aggregate` flags to the rows, and gives each
/// row's currency basis (`currency_mismatch` is the pipeline's, where a step converts).
pub fn resolve_rows(
    ingested: &mut Ingested,
    resolver: &Resolver,
    options: &ResolveOptions,
) -> Result<(EntityColumns, Vec<InputBasis>)> {
    // Each distinct text is resolved once: to its place among the entities found, or to its
    // place among the unresolved.
    let mut cache: Vec<Option<std::result::Result<u32, usize>>> =
        vec![None; ingested.rows.texts.len()];
    let mut unresolved: Vec<UnresolvedName> = Vec::new();
    let n = ingested.rows.len();
    let mut columns = EntityColumns {
        found: Vec::new(),
        at: Vec::with_capacity(n),
    };
    let mut bases = Vec::with_capacity(n);
    let rows = &mut ingested.rows;
    for row in 0..n {
        let text = rows.entity_input[row];
        let outcome = match cache[text as usize] {
            Some(outcome) => outcome,
            None => {
                let outcome = match resolver.resolve_with(rows.texts.get(text), false) {
                    Resolution::Found(entity) => {
                        columns.found.push(entity.clone());
                        Ok(columns.found.len() as u32 - 1)
                    }
                    Resolution::Unresolved { suggestions } => {
                        unresolved.push(UnresolvedName {
                            text: rows.texts.get(text).to_string(),
                            lines: Vec::new(),
                            suggestions,
                        });
                        Err(unresolved.len() - 1)
                    }
                };
                cache[text as usize] = Some(outcome);
                outcome
            }
        };
        match outcome {
            Ok(at) => {
                let entity = &columns.found[at as usize];
                if entity.kind == EntityKind::Aggregate && !options.rank_aggregates {
                    rows.flag(row, flags::AGGREGATE);
                }
                // A mismatch is flagged later, and only where a step converts currencies
                // (`pipeline::row_facts`): without one, figures rank as given.
                bases.push(input_basis(
                    rows.currency_text(row),
                    entity.currency.as_deref(),
                    options.base_currency,
                ));
                columns.at.push(Some(at));
            }
            Err(at) => {
                let lines = &mut unresolved[at].lines;
                if lines.last() != Some(&rows.line(row)) {
                    lines.push(rows.line(row));
                }
                rows.flag(row, flags::UNRESOLVED);
                bases.push(InputBasis::Local);
                columns.at.push(None);
            }
        }
    }
    if !unresolved.is_empty() && !options.allow_unresolved {
        return Err(unresolved_error(&ingested.file, unresolved, resolver));
    }
    ingested.asides.unresolved = unresolved;
    Ok((columns, bases))
}

/// The error for names that match nothing (`names` in the order they first appear, with their
/// lines), with suggestions for those the message shows: one table's, or a streamed file's
/// pieces' added up (`ingest::Asides::add`).
pub fn unresolved_error(file: &str, mut names: Vec<UnresolvedName>, resolver: &Resolver) -> Error {
    for name in names.iter_mut().take(crate::error::UNRESOLVED_SHOWN) {
        if let Resolution::Unresolved { suggestions } = resolver.resolve(&name.text) {
            name.suggestions = suggestions;
        }
    }
    Error::Unresolved {
        file: file.to_string(),
        names,
    }
}

/// A stated currency equal to the entity's own is local; equal to the base currency is base;
/// anything else is a mismatch. An entity whose currency is not known (user-defined entities
/// without one in the alias file) takes any non-base currency as its own, because its
/// reference tables define its unit.
pub fn input_basis(stated: Option<&str>, own: Option<&str>, base: &str) -> InputBasis {
    match (stated, own) {
        (None, _) => InputBasis::Local,
        (Some(s), Some(o)) if s == o => InputBasis::Local,
        (Some(s), _) if s == base => InputBasis::Base,
        (Some(_), None) => InputBasis::Local,
        (Some(_), Some(_)) => InputBasis::Mismatch,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn currency_basis_rules() {
        assert_eq!(input_basis(None, Some("EUR"), "USD"), InputBasis::Local);
        assert_eq!(
            input_basis(Some("EUR"), Some("EUR"), "USD"),
            InputBasis::Local
        );
        assert_eq!(
            input_basis(Some("USD"), Some("EUR"), "USD"),
            InputBasis::Base
        );
        assert_eq!(
            input_basis(Some("USD"), Some("USD"), "USD"),
            InputBasis::Local
        );
        assert_eq!(
            input_basis(Some("GBP"), Some("EUR"), "USD"),
            InputBasis::Mismatch
        );
        assert_eq!(input_basis(Some("XQA"), None, "USD"), InputBasis::Local);
    }

    /// Which of `rows` share a key, as the index of the first row with the same key.
    fn classes(keys: &[u32]) -> Vec<usize> {
        keys.iter()
            .map(|k| keys.iter().position(|other| other == k).unwrap())
            .collect()
    }

    #[test]
    fn rows_share_a_series_and_a_partition_exactly_when_entity_group_and_year_are() {
        // FRA is France's ISO 3166-1 alpha-3 code: the same entity as "France".
        let text = "country,year,item,value\n\
            France,2020,a,1\nFRA,2020,a,2\nFrance,2021,a,3\nFrance,2020,b,4\n\
            France,2020,,5\nNowhere,2020,a,6\nNowhere,2020,a,7\nChile,,a,8\nChile,,a,9\n";
        let options = crate::ingest::IngestOptions {
            roles: crate::ingest::layout::RoleFlags {
                group: Some("item".into()),
                ..Default::default()
            },
            ..Default::default()
        };
        let resolver = Resolver::builtin();
        let mut ingested =
            crate::ingest::ingest(text.as_bytes(), "t.csv", &options, Some(&resolver)).unwrap();
        let options = ResolveOptions {
            allow_unresolved: true,
            rank_aggregates: false,
            base_currency: "USD",
        };
        let (entities, _) = resolve_rows(&mut ingested, &resolver, &options).unwrap();
        let keys = ranking_keys(&ingested.rows, &entities);
        // Rows 0 and 1 are one entity; 5 and 6 one unresolved text; 7 and 8 share a missing
        // year: each pair shares its series and year, the other rows do not.
        let several = vec![true, true, false, false, false, true, true, true, true];
        assert_eq!(keys.several, several);
        // Ranked together: group a in 2020 (whatever the entity), and group a without a year.
        assert_eq!(classes(&keys.partition), vec![0, 0, 2, 3, 4, 0, 0, 7, 7]);
    }
}
