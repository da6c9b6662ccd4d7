//! Giving the columns of a text table their roles (entity, year, value, group, currency) and
//! turning long or wide tables into one canonical row per figure.
//!
//! Wide tables (one column per year) are melted here: headers that are four-digit years, alone
//! or followed by a bracketed code as in `2019 [YR2019]`, become rows. Every figure keeps its
//! input line and the column it came from in `row_id`.

use crate::error::{Error, Location, Result};
use crate::ingest::table::TextTable;

/// What the user said about the layout.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize)]
pub enum LayoutChoice {
    #[default]
    Auto,
    Long,
    Wide,
}

/// Which columns play which role, after detection. Indices point into `TextTable::headers`.
#[derive(Debug, Clone)]
pub struct Roles {
    pub entity: usize,
    pub entity_detected: EntityFound,
    /// A name column beside a detected code column: rows whose code is empty (regions in some
    /// publishers' tables) are read by their name.
    pub entity_fallback: Option<usize>,
    pub group: Option<usize>,
    pub currency: Option<usize>,
    pub reserved: Vec<usize>,
    pub shape: Shape,
    pub ignored: Vec<String>,
}

#[derive(Debug, Clone)]
pub enum Shape {
    /// One row per figure: a value column and a year column (or one year for the table).
    Long {
        value: usize,
        value_detected: bool,
        year: YearSource,
    },
    /// One column per year: (column index, year).
    Wide { year_columns: Vec<(usize, i32)> },
}

#[derive(Debug, Clone)]
pub enum YearSource {
    Column { index: usize, detected: bool },
    Fixed(i32),
}

/// The role flags as given on the command line (or as a catalog resource's fields).
#[derive(Debug, Clone, Default)]
pub struct RoleFlags {
    pub entity: Option<String>,
    pub value: Option<String>,
    pub year: Option<String>,
    pub year_value: Option<i32>,
    pub group: Option<String>,
    pub currency: Option<String>,
    pub layout: LayoutChoice,
    /// Columns used for something else (margins of error), kept out of detection.
    pub reserved: Vec<String>,
    /// Where the roles are set, so that an error names the flag or catalog key that fixes it.
    pub knobs: Knobs,
}

impl RoleFlags {
    /// Every column the user named: the header is the line that names them.
    pub fn named_columns(&self) -> Vec<String> {
        [
            &self.entity,
            &self.value,
            &self.year,
            &self.group,
            &self.currency,
        ]
        .into_iter()
        .flatten()
        .chain(self.reserved.iter())
        .cloned()
        .collect()
    }
}

/// Who sets the roles: command-line flags, or the fields of a catalog resource.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub enum Knobs {
    #[default]
    Flags,
    Catalog {
        resource: String,
    },
}

/// A role a column can play, for messages.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Role {
    Entity,
    Value,
    Year,
    Group,
    Currency,
    Reserved,
    Wide,
}

impl Knobs {
    /// The flag or key that sets `role`, as named in messages.
    pub fn name(&self, role: Role) -> String {
        match self {
            Knobs::Flags => match role {
                Role::Entity => "--entity",
                Role::Value => "--value",
                Role::Year => "--year",
                Role::Group => "--group",
                Role::Currency => "--currency",
                Role::Reserved => "--moe/--se/--ci-low/--ci-high/--sample-size",
                Role::Wide => "--wide-years",
            }
            .to_string(),
            Knobs::Catalog { resource } => format!(
                "\"{}\" of the catalog resource \"{resource}\"",
                Self::catalog_key(role)
            ),
        }
    }

    fn catalog_key(role: Role) -> &'static str {
        match role {
            Role::Entity => "entity_field",
            Role::Value => "value_field",
            Role::Year => "year_field",
            Role::Reserved => "se_field/margin_field",
            Role::Wide => "layout",
            Role::Group | Role::Currency => "filter",
        }
    }

    /// What to do so that `role` finds its column.
    pub fn fix(&self, role: Role) -> String {
        match self {
            Knobs::Flags => match role {
                Role::Wide => "check the header line, or drop --wide-years for a long table".into(),
                _ => format!("pass {} COL with one of the header names", self.name(role)),
            },
            Knobs::Catalog { resource } => match role {
                Role::Wide => format!("set \"layout\": \"long\" on the catalog resource \"{resource}\", or check the header line"),
                _ => format!(
                    "set \"{}\": \"COL\" on the catalog resource \"{resource}\" (datapackage.json), with one of the header names",
                    Self::catalog_key(role)
                ),
            },
        }
    }
}

pub use crate::cells::words::{
    header_year, is_role_word, looks_like_sdmx, sdmx_code, SDMX_AREAS, YEARS,
};
use crate::cells::words::{CODE_WORDS, ENTITY_NAMES, ENTITY_WORDS, VALUE_NAMES, YEAR_NAMES};

pub fn assign_roles(
    table: &TextTable,
    flags: &RoleFlags,
    file: &str,
    resolver: Option<&crate::entity::Resolver>,
) -> Result<Roles> {
    let headers = &table.headers;
    let at = table.header_line;
    let knobs = &flags.knobs;
    let find = |role: Role, name: &str| find_column(headers, name, role, knobs, file, at);
    let year_columns: Vec<(usize, i32)> = headers
        .iter()
        .enumerate()
        .filter_map(|(i, h)| header_year(h).map(|y| (i, y)))
        .collect();

    let wide = reads_wide(flags, &year_columns, file, at)?;

    let mut taken: Taken = Taken::default();
    if wide {
        taken.extend(year_columns.iter().map(|(i, _)| *i));
    }
    let group = flags
        .group
        .as_deref()
        .map(|g| find(Role::Group, g))
        .transpose()?;
    let currency = flags
        .currency
        .as_deref()
        .map(|c| find(Role::Currency, c))
        .transpose()?;
    taken.extend(group);
    taken.extend(currency);
    let reserved = flags
        .reserved
        .iter()
        .map(|r| find(Role::Reserved, r))
        .collect::<Result<Vec<_>>>()?;
    taken.extend(reserved.iter().copied());

    let (entity, entity_detected, entity_fallback) = match &flags.entity {
        Some(name) => (find(Role::Entity, name)?, EntityFound::Given, None),
        None => detect_entity(table, &taken, knobs, file, resolver)?,
    };
    taken.insert(entity);
    taken.extend(entity_fallback);

    let shape = if wide {
        Shape::Wide { year_columns }
    } else {
        let year = year_source(table, flags, &taken, file)?;
        if let YearSource::Column { index, .. } = year {
            taken.insert(index);
        }
        let (value, value_detected) = match &flags.value {
            Some(name) => (find(Role::Value, name)?, false),
            None => (detect_value(headers, &taken, knobs, file, at)?, true),
        };
        taken.insert(value);
        Shape::Long {
            value,
            value_detected,
            year,
        }
    };
    let ignored = headers
        .iter()
        .enumerate()
        .filter(|(i, _)| !taken.contains(i))
        .map(|(_, h)| h.clone())
        .collect();
    Ok(Roles {
        entity,
        entity_detected,
        entity_fallback,
        group,
        currency,
        reserved,
        shape,
        ignored,
    })
}

/// Whether the table is read wide (one column per year): as the layout option says, or, left
/// to us, when some headers are years and neither a year nor a value column is named.
fn reads_wide(
    flags: &RoleFlags,
    year_columns: &[(usize, i32)],
    file: &str,
    at: usize,
) -> Result<bool> {
    let knobs = &flags.knobs;
    Ok(match flags.layout {
        LayoutChoice::Wide => {
            if year_columns.is_empty() {
                return Err(Error::bad_input(
                    Location::line(file, at),
                    format!(
                        "{} says the table is wide, but no header is a four-digit year",
                        knobs.name(Role::Wide)
                    ),
                    "headers such as 2019, 2020 (or 2019 [YR2019])",
                    knobs.fix(Role::Wide),
                ));
            }
            true
        }
        LayoutChoice::Long => false,
        LayoutChoice::Auto => {
            !year_columns.is_empty() && flags.year.is_none() && flags.value.is_none()
        }
    })
}

/// Where a long table's rows take their year: the named column, the one year of the whole
/// table, or a column named like a year among those not `taken`.
fn year_source(
    table: &TextTable,
    flags: &RoleFlags,
    taken: &Taken,
    file: &str,
) -> Result<YearSource> {
    let headers = &table.headers;
    let at = table.header_line;
    let knobs = &flags.knobs;
    Ok(match (&flags.year, flags.year_value) {
        (Some(name), _) => YearSource::Column {
            index: find_column(headers, name, Role::Year, knobs, file, at)?,
            detected: false,
        },
        (None, Some(year)) => YearSource::Fixed(year),
        (None, None) => {
            match position_named(headers, YEAR_NAMES, taken) {
                Some(index) => YearSource::Column {
                    index,
                    detected: true,
                },
                None => return Err(Error::bad_input(
                    Location::line(file, at),
                    format!("no year column among {}", list(headers)),
                    "a column named year (or one column per year, such as 2019, 2020)",
                    match knobs {
                        Knobs::Flags => {
                            "pass --year COL, or --year-value YYYY when the whole table is one year"
                                .to_string()
                        }
                        Knobs::Catalog { .. } => knobs.fix(Role::Year),
                    },
                )),
            }
        }
    })
}

fn find_column(
    headers: &[String],
    name: &str,
    role: Role,
    knobs: &Knobs,
    file: &str,
    at: usize,
) -> Result<usize> {
    if let Some(i) = headers.iter().position(|h| h == name) {
        return Ok(i);
    }
    let wanted = name.trim().to_lowercase();
    if let Some(i) = headers
        .iter()
        .position(|h| h.trim().to_lowercase() == wanted)
    {
        return Ok(i);
    }
    Err(Error::bad_input(
        Location::line(file, at),
        format!(
            "{} names the column \"{}\", which is not in the header",
            knobs.name(role),
            crate::cells::words::shorten(name)
        ),
        format!("one of {}", list(headers)),
        knobs.fix(role),
    ))
}

/// Columns given a role so far (a set, so that tables with many columns stay linear).
type Taken = std::collections::HashSet<usize>;

/// How the entity column was found.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EntityFound {
    Given,
    Header,
    Content,
}

fn detect_entity(
    table: &TextTable,
    taken: &Taken,
    knobs: &Knobs,
    file: &str,
    resolver: Option<&crate::entity::Resolver>,
) -> Result<(usize, EntityFound, Option<usize>)> {
    let headers = &table.headers;
    let candidates: Vec<usize> = headers
        .iter()
        .enumerate()
        .filter(|(i, h)| {
            let lower = h.trim().to_lowercase();
            !taken.contains(i)
                && (ENTITY_WORDS.iter().any(|w| lower.contains(w))
                    || ENTITY_NAMES.contains(&lower.as_str()))
        })
        .map(|(i, _)| i)
        .collect();
    // A code column whose header says whose code it is ("Country Code", "iso3") is exact where
    // a name column may be spelled many ways, so it wins, and the name column beside it serves
    // the rows whose code is empty. A bare "code" or "area" header only stands in when no
    // header names a country: it may hold item codes.
    let lower = |i: usize| headers[i].trim().to_lowercase();
    let bare = |i: usize| ENTITY_NAMES.contains(&lower(i).as_str());
    let is_code = |i: usize| !bare(i) && CODE_WORDS.iter().any(|w| lower(i).contains(w));
    let coded = candidates.iter().copied().find(|&i| is_code(i));
    let named = candidates
        .iter()
        .copied()
        .find(|&i| !is_code(i) && !bare(i));
    let fallback = candidates.iter().copied().find(|&i| bare(i));
    // A bare code column beside a name column wins only when its cells are entity codes.
    let codes_resolve = |i: usize| {
        resolver.is_some_and(|r| {
            share_resolving(table, i, r).is_some_and(|(found, n)| found * 10 >= n * 9)
        })
    };
    match (coded, named, fallback) {
        (Some(code), name, _) => return Ok((code, EntityFound::Header, name)),
        (None, Some(name), Some(code)) if codes_resolve(code) => {
            return Ok((code, EntityFound::Header, Some(name)))
        }
        (None, Some(name), _) => return Ok((name, EntityFound::Header, None)),
        (None, None, Some(only)) => return Ok((only, EntityFound::Header, None)),
        (None, None, None) => {}
    }
    if let Some(i) = resolver.and_then(|r| entity_by_content(table, taken, r)) {
        return Ok((i, EntityFound::Content, None));
    }
    Err(Error::bad_input(
        Location::line(file, table.header_line),
        format!(
            "no column header names a country, economy, entity or ISO code among {}, and no column's cells are country names or codes",
            list(headers)
        ),
        "a column of country names or ISO 3166 codes",
        knobs.fix(Role::Entity),
    ))
}

/// The column whose cells resolve as entities: of its first 100 filled cells (words, not
/// numbers), at least 90% name a country, aggregate or alias. Numbers are left out because a
/// small number is also an ISO numeric code.
fn entity_by_content(
    table: &TextTable,
    taken: &Taken,
    resolver: &crate::entity::Resolver,
) -> Option<usize> {
    let mut best: Option<(usize, usize)> = None;
    // The first few hundred free columns: an entity column sits near the left of a table.
    for column in (0..table.headers.len())
        .filter(|i| !taken.contains(i))
        .take(200)
    {
        let Some((found, n)) = share_resolving(table, column, resolver) else {
            continue;
        };
        if found * 10 >= n * 9 && best.is_none_or(|(_, b)| found > b) {
            best = Some((column, found));
        }
    }
    best.map(|(column, _)| column)
}

/// Of a column's first 100 filled cells (words, not numbers): how many name an entity, and how
/// many there are. None when a cell holds no letter (a small number is also an ISO numeric
/// code, so numbers never choose a column).
fn share_resolving(
    table: &TextTable,
    column: usize,
    resolver: &crate::entity::Resolver,
) -> Option<(usize, usize)> {
    let cells: Vec<&str> = table
        .records
        .iter()
        .map(|r| r.cells.at(column).trim())
        .filter(|c| !c.is_empty())
        .take(100)
        .collect();
    if cells.is_empty() || !cells.iter().all(|c| c.chars().any(char::is_alphabetic)) {
        return None;
    }
    let found = cells
        .iter()
        .filter(|c| matches!(resolver.resolve(c), crate::entity::Resolution::Found(_)))
        .count();
    Some((found, cells.len()))
}

fn detect_value(
    headers: &[String],
    taken: &Taken,
    knobs: &Knobs,
    file: &str,
    at: usize,
) -> Result<usize> {
    if let Some(i) = position_named(headers, VALUE_NAMES, taken) {
        return Ok(i);
    }
    let free: Vec<usize> = (0..headers.len()).filter(|i| !taken.contains(i)).collect();
    match free.as_slice() {
        [only] => Ok(*only),
        _ => Err(Error::bad_input(
            Location::line(file, at),
            format!(
                "cannot tell which column holds the figures: {}",
                list(&free.iter().map(|&i| headers[i].clone()).collect::<Vec<_>>())
            ),
            "one column named value (or the only column besides entity, year and group)",
            knobs.fix(Role::Value),
        )),
    }
}

fn position_named(headers: &[String], names: &[&str], taken: &Taken) -> Option<usize> {
    headers
        .iter()
        .enumerate()
        .find(|(i, h)| !taken.contains(i) && names.contains(&sdmx_code(h).to_lowercase().as_str()))
        .map(|(i, _)| i)
}

/// The headers for a message: at most a few dozen, then how many more.
pub fn list(headers: &[String]) -> String {
    const SHOWN: usize = 24;
    let quoted: Vec<String> = headers
        .iter()
        .take(SHOWN)
        .map(|h| format!("\"{}\"", crate::cells::words::shorten(h)))
        .collect();
    let more = headers.len().saturating_sub(SHOWN);
    if more > 0 {
        format!("{} and {more} more", quoted.join(", "))
    } else {
        quoted.join(", ")
    }
}

/// Reads a year cell of a long table. Fiscal-year labels (`2019/20`, `FY2021`) are refused:
/// which calendar year's reference factor fits them depends on the publisher, and guessing
/// would silently shift every factor.
pub fn parse_year_cell(text: &str) -> std::result::Result<Option<i32>, String> {
    let trimmed = text.trim();
    if trimmed.is_empty() || matches!(trimmed, ".." | "-" | "n/a" | "NA") {
        return Ok(None);
    }
    let digits = trimmed.strip_suffix(".0").unwrap_or(trimmed);
    if digits.len() == 4 && digits.bytes().all(|b| b.is_ascii_digit()) {
        let year: i32 = digits.parse().map_err(|_| trimmed.to_string())?;
        if YEARS.contains(&year) {
            return Ok(Some(year));
        }
    }
    Err(trimmed.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::table::read_table;

    fn roles(text: &str, flags: RoleFlags) -> Result<Roles> {
        let table = read_table(text, b',', "t.csv").unwrap();
        assign_roles(&table, &flags, "t.csv", None)
    }

    #[test]
    fn year_headers_including_bracketed_codes() {
        assert_eq!(header_year("2019"), Some(2019));
        assert_eq!(header_year(" 2019 "), Some(2019));
        assert_eq!(header_year("2019 [YR2019]"), Some(2019));
        assert_eq!(header_year("YR2019"), Some(2019));
        assert_eq!(header_year("Y2019"), Some(2019));
        assert_eq!(header_year("2019.0"), Some(2019));
        assert_eq!(header_year("Year"), None);
        assert_eq!(header_year("2019a"), None);
        assert_eq!(header_year("Country"), None);
        assert_eq!(header_year("0042"), None);
    }

    #[test]
    fn wide_table_is_detected_and_code_column_preferred() {
        let r = roles(
            "Country Name,Country Code,2019,2020\nFrance,FRA,1,2\n",
            RoleFlags::default(),
        )
        .unwrap();
        assert_eq!(r.entity, 1);
        assert_eq!(r.entity_detected, EntityFound::Header);
        assert!(
            matches!(r.shape, Shape::Wide { ref year_columns } if year_columns == &vec![(2, 2019), (3, 2020)])
        );
        assert_eq!(r.entity_fallback, Some(0));
        assert!(r.ignored.is_empty());
    }

    #[test]
    fn a_bare_code_column_does_not_beat_a_country_column() {
        let r = roles(
            "country,code,year,value\nChile,X1,2020,1\n",
            RoleFlags::default(),
        )
        .unwrap();
        assert_eq!(r.entity, 0);
        let r = roles("code,year,value\nCHL,2020,1\n", RoleFlags::default()).unwrap();
        assert_eq!(r.entity, 0);
    }

    #[test]
    fn long_table_roles_by_name_and_by_flag() {
        let r = roles("country,year,value\nFrance,2020,1\n", RoleFlags::default()).unwrap();
        assert!(matches!(
            r.shape,
            Shape::Long {
                value: 2,
                year: YearSource::Column { index: 1, .. },
                ..
            }
        ));
        let flags = RoleFlags {
            entity: Some("place".into()),
            value: Some("fee".into()),
            year_value: Some(2021),
            ..Default::default()
        };
        let r = roles("place,fee,note\nFrance,1,x\n", flags).unwrap();
        assert!(matches!(
            r.shape,
            Shape::Long {
                value: 1,
                year: YearSource::Fixed(2021),
                ..
            }
        ));
        assert_eq!(r.ignored, vec!["note".to_string()]);
    }

    #[test]
    fn missing_roles_are_errors_that_say_which_flag_to_pass() {
        let err = roles("name,a,b\nx,1,2\n", RoleFlags::default())
            .unwrap_err()
            .to_string();
        assert!(err.contains("--entity"), "{err}");
        let err = roles("country,a,b\nx,1,2\n", RoleFlags::default())
            .unwrap_err()
            .to_string();
        assert!(err.contains("--year"), "{err}");
        let flags = RoleFlags {
            entity: Some("nope".into()),
            ..Default::default()
        };
        let err = roles("country,year,value\nx,1,2\n", flags)
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("\"nope\"") && err.contains("\"country\""),
            "{err}"
        );
    }

    #[test]
    fn fiscal_year_labels_are_refused() {
        assert_eq!(parse_year_cell("2019"), Ok(Some(2019)));
        assert_eq!(parse_year_cell("2019.0"), Ok(Some(2019)));
        assert_eq!(parse_year_cell(""), Ok(None));
        assert!(parse_year_cell("2019/20").is_err());
        assert!(parse_year_cell("FY2021").is_err());
    }
}
