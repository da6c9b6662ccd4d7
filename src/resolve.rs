//! Resolving the entity text of every canonical row to an entity (ISO 3166-1 country, aggregate
//! or user-defined), and deciding what currency basis each figure is in.
//!
//! Never guesses: a name that matches nothing stops the run with every such name listed (and up
//! to three suggestions each), unless `--allow-unresolved` keeps those rows flagged.

use crate::entity::{Entity, EntityKind, Resolution, Resolver};
use crate::error::{Error, Result, UnresolvedName};
use crate::flags;
use crate::ingest::Ingested;

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
                if lines.last() != Some(&rows.line[row]) {
                    lines.push(rows.line[row]);
                }
                rows.flag(row, flags::UNRESOLVED);
                bases.push(InputBasis::Local);
                columns.at.push(None);
            }
        }
    }
    if !unresolved.is_empty() && !options.allow_unresolved {
        // Suggestions for the names the error shows, searched only now.
        for name in unresolved.iter_mut().take(crate::error::UNRESOLVED_SHOWN) {
            if let Resolution::Unresolved { suggestions } = resolver.resolve(&name.text) {
                name.suggestions = suggestions;
            }
        }
        return Err(Error::Unresolved {
            file: ingested.file.clone(),
            names: unresolved,
        });
    }
    if !unresolved.is_empty() {
        ingested.notes.push(format!(
            "{} entity name(s) unresolved and kept flagged (--allow-unresolved): {}",
            unresolved.len(),
            unresolved
                .iter()
                .take(crate::error::UNRESOLVED_SHOWN)
                .map(|u| format!("\"{}\"", u.text))
                .collect::<Vec<_>>()
                .join(", ")
                + &match unresolved.len().checked_sub(crate::error::UNRESOLVED_SHOWN) {
                    Some(more) if more > 0 => format!(" and {more} more"),
                    _ => String::new(),
                }
        ));
    }
    Ok((columns, bases))
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
}
