//! Attaching reference factors: for every distinct (entity, year) of the input, the factors the
//! steps asked for (`FactorNeed`), each with the year it came from, and the flags that say which
//! factor was missing or taken from a neighbouring year.
//!
//! The lookup is done once per distinct key, not per row, and its small columns are gathered
//! onto the (possibly large) input frame by each row's key.

use crate::adjust::{At, FactorNeed, Whose};
use crate::error::{Error, Result};
use crate::reference::References;
use polars::prelude::*;
use std::collections::BTreeSet;

pub struct AttachSettings {
    pub base_year: Option<i32>,
    pub nearest_year: u32,
    pub base_currency: String,
    /// One kind's row-year factors are taken this many years from the row's year (None but in
    /// the audit's neighbouring-year diagnosis).
    pub year_offset: Option<(crate::reference::Kind, i32)>,
}

/// The entity whose CPI stands for the base currency. The euro has no single country, so its
/// index is the euro area aggregate's.
pub fn base_currency_home(currency: &str) -> Option<&'static str> {
    match currency {
        "USD" => Some("USA"),
        "EUR" => Some("EMU"),
        "GBP" => Some("GBR"),
        "JPY" => Some("JPN"),
        "CHF" => Some("CHE"),
        _ => None,
    }
}

/// The factors of every entity-year in `keys`, in that order: for each need `<prefix>_used`,
/// `<prefix>_year` (and `<prefix>_se` where the table states margins), and each key's flags
/// joined with `;` (none when there is nothing to say). A need in `optional` (the baseline's,
/// or a derived column's) whose table the catalog lacks gets empty columns instead of
/// stopping the run.
pub fn lookup_frame(
    keys: &[(&str, i32)],
    needs: &BTreeSet<FactorNeed>,
    optional: &BTreeSet<FactorNeed>,
    references: Option<&References>,
    settings: &AttachSettings,
) -> Result<Lookup> {
    let n = keys.len();
    let mut columns: Vec<Column> = Vec::new();
    let mut flags: Vec<Vec<String>> = vec![Vec::new(); n];
    for need in needs {
        if optional.contains(need) && references.and_then(|r| r.get(need.kind)).is_none() {
            columns.push(Column::full_null(
                need.used_column().into(),
                n,
                &DataType::Float64,
            ));
            columns.push(Column::full_null(
                need.year_column().into(),
                n,
                &DataType::Int32,
            ));
            continue;
        }
        let table = references.and_then(|r| r.get(need.kind)).ok_or_else(|| {
            Error::usage(
                format!("the steps need a {} table, and the reference catalog has none", need.kind.as_str()),
                format!("add a resource with \"kind\": \"{}\" to the catalog (datapackage.json; see reference-tables/README.md), or drop the step that needs it", need.kind.as_str()),
            )
        })?;
        let home = match need.whose {
            Whose::Entity => None,
            Whose::BaseCurrency => Some(base_currency_home(&settings.base_currency).ok_or_else(|| {
                Error::usage(
                    format!("no price index is known for the base currency {}", settings.base_currency),
                    "use --deflator own (deflate before converting), or reference tables based on USD",
                )
            })?),
        };
        columns.extend(need_columns(need, table, home, keys, settings, &mut flags));
    }
    let flags = flags
        .into_iter()
        .map(|f| (!f.is_empty()).then(|| f.join(";")))
        .collect();
    Ok(Lookup { columns, flags })
}

/// The factors of a list of entity-years, one row each (see `lookup_frame`).
pub struct Lookup {
    pub columns: Vec<Column>,
    pub flags: Vec<Option<String>>,
}

/// One need's columns over `keys`: the factor used, its year and (where the table
/// states margins) its standard error; a flag in `flags` for each key whose factor is missing
/// or from another year. `home` is the entity whose factors every key takes (the base
/// currency's home), or None for each key's own.
fn need_columns(
    need: &FactorNeed,
    table: &crate::reference::RefTable,
    home: Option<&str>,
    keys: &[(&str, i32)],
    settings: &AttachSettings,
    flags: &mut [Vec<String>],
) -> Vec<Column> {
    let n = keys.len();
    let with_se = table.has_margins() && need.whose == Whose::Entity;
    let mut ses: Vec<Option<f64>> = Vec::with_capacity(if with_se { n } else { 0 });
    let mut used: Vec<Option<f64>> = Vec::with_capacity(n);
    let mut years: Vec<Option<i32>> = Vec::with_capacity(n);
    let offset = match settings.year_offset {
        Some((kind, d)) if kind == need.kind => d,
        _ => 0,
    };
    for (i, (code, row_year)) in keys.iter().enumerate() {
        let year = match need.at {
            At::RowYear => *row_year + offset,
            At::BaseYear => settings.base_year.unwrap_or(*row_year),
        };
        let entity = home.unwrap_or(code);
        match table.lookup(entity, year, settings.nearest_year) {
            Some(factor) => {
                if factor.year != year {
                    flags[i].push(need.year_differs_flag(factor.year));
                }
                if with_se {
                    // A factor without a stated margin is taken as exact.
                    ses.push(Some(table.se_of(entity, factor.year).unwrap_or(0.0)));
                }
                used.push(Some(factor.value));
                years.push(Some(factor.year));
            }
            None => {
                flags[i].push(need.missing_flag());
                if with_se {
                    ses.push(None);
                }
                used.push(None);
                years.push(None);
            }
        }
    }
    let mut columns = vec![
        Column::new(need.used_column().into(), used),
        Column::new(need.year_column().into(), years),
    ];
    if with_se {
        columns.push(Column::new(need.se_column().into(), ses));
    }
    columns
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn base_currency_homes() {
        assert_eq!(base_currency_home("USD"), Some("USA"));
        assert_eq!(base_currency_home("XXX"), None);
    }
}
