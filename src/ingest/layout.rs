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
    pub entity_detected: bool,
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

/// The role flags as given on the command line.
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
}

const ENTITY_WORDS: &[&str] = &[
    "country", "economy", "entity", "iso", "nation", "ref_area", "geo", "location",
];
const CODE_WORDS: &[&str] = &["code", "iso", "alpha"];
const VALUE_NAMES: &[&str] = &[
    "value",
    "obs_value",
    "amount",
    "figure",
    "fee",
    "price",
    "wage",
    "count",
    "total",
];
const YEAR_NAMES: &[&str] = &["year", "time", "time_period", "period"];

/// Reads a header as a year column: `2019`, ` 2019 `, `2019 [YR2019]`.
pub fn header_year(header: &str) -> Option<i32> {
    let trimmed = header.trim();
    let digits: String = trimmed.chars().take_while(|c| c.is_ascii_digit()).collect();
    if digits.len() != 4 {
        return None;
    }
    let rest = trimmed[4..].trim();
    if !(rest.is_empty() || (rest.starts_with('[') && rest.ends_with(']'))) {
        return None;
    }
    let year: i32 = digits.parse().ok()?;
    (1800..=2200).contains(&year).then_some(year)
}

pub fn assign_roles(table: &TextTable, flags: &RoleFlags, file: &str) -> Result<Roles> {
    let headers = &table.headers;
    let find = |flag: &str, name: &str| find_column(headers, name, flag, file);
    let year_columns: Vec<(usize, i32)> = headers
        .iter()
        .enumerate()
        .filter_map(|(i, h)| header_year(h).map(|y| (i, y)))
        .collect();

    let wide = match flags.layout {
        LayoutChoice::Wide => {
            if year_columns.is_empty() {
                return Err(Error::bad_input(
                    Location::line(file, 1),
                    "--wide-years was given but no header is a four-digit year",
                    "headers such as 2019, 2020 (or 2019 [YR2019])",
                    "check the header line, or drop --wide-years for a long table",
                ));
            }
            true
        }
        LayoutChoice::Long => false,
        LayoutChoice::Auto => {
            !year_columns.is_empty() && flags.year.is_none() && flags.value.is_none()
        }
    };

    let mut taken: Vec<usize> = Vec::new();
    if wide {
        taken.extend(year_columns.iter().map(|(i, _)| *i));
    }
    let group = flags
        .group
        .as_deref()
        .map(|g| find("--group", g))
        .transpose()?;
    let currency = flags
        .currency
        .as_deref()
        .map(|c| find("--currency", c))
        .transpose()?;
    taken.extend(group);
    taken.extend(currency);
    let reserved = flags
        .reserved
        .iter()
        .map(|r| find("--moe/--se/--ci-low/--ci-high/--sample-size", r))
        .collect::<Result<Vec<_>>>()?;
    taken.extend(reserved.iter().copied());

    let (entity, entity_detected) = match &flags.entity {
        Some(name) => (find("--entity", name)?, false),
        None => (detect_entity(headers, &taken, file)?, true),
    };
    taken.push(entity);

    let shape = if wide {
        Shape::Wide { year_columns }
    } else {
        let year =
            match (&flags.year, flags.year_value) {
                (Some(name), _) => YearSource::Column {
                    index: find("--year", name)?,
                    detected: false,
                },
                (None, Some(year)) => YearSource::Fixed(year),
                (None, None) => match position_named(headers, YEAR_NAMES, &taken) {
                    Some(index) => YearSource::Column {
                        index,
                        detected: true,
                    },
                    None => return Err(Error::bad_input(
                        Location::line(file, 1),
                        format!("no year column among {}", list(headers)),
                        "a column named year (or one column per year, such as 2019, 2020)",
                        "pass --year COL, or --year-value YYYY when the whole table is one year",
                    )),
                },
            };
        if let YearSource::Column { index, .. } = year {
            taken.push(index);
        }
        let (value, value_detected) = match &flags.value {
            Some(name) => (find("--value", name)?, false),
            None => (detect_value(headers, &taken, file)?, true),
        };
        taken.push(value);
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
        group,
        currency,
        reserved,
        shape,
        ignored,
    })
}

fn find_column(headers: &[String], name: &str, flag: &str, file: &str) -> Result<usize> {
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
        Location::line(file, 1),
        format!("{flag} names the column \"{name}\", which is not in the header"),
        format!("one of {}", list(headers)),
        format!("pass {flag} with one of the header names"),
    ))
}

fn detect_entity(headers: &[String], taken: &[usize], file: &str) -> Result<usize> {
    let candidates: Vec<usize> = headers
        .iter()
        .enumerate()
        .filter(|(i, h)| {
            let lower = h.to_lowercase();
            !taken.contains(i) && ENTITY_WORDS.iter().any(|w| lower.contains(w))
        })
        .map(|(i, _)| i)
        .collect();
    // A code column is exact where a name column may be spelled many ways, so it wins.
    let coded = candidates.iter().copied().find(|&i| {
        let lower = headers[i].to_lowercase();
        CODE_WORDS.iter().any(|w| lower.contains(w))
    });
    coded.or(candidates.first().copied()).ok_or_else(|| {
        Error::bad_input(
            Location::line(file, 1),
            format!(
                "no column header names a country, economy, entity or ISO code among {}",
                list(headers)
            ),
            "a column of country names or ISO 3166 codes",
            "pass --entity COL",
        )
    })
}

fn detect_value(headers: &[String], taken: &[usize], file: &str) -> Result<usize> {
    if let Some(i) = position_named(headers, VALUE_NAMES, taken) {
        return Ok(i);
    }
    let free: Vec<usize> = (0..headers.len()).filter(|i| !taken.contains(i)).collect();
    match free.as_slice() {
        [only] => Ok(*only),
        _ => Err(Error::bad_input(
            Location::line(file, 1),
            format!(
                "cannot tell which column holds the figures: {}",
                list(&free.iter().map(|&i| headers[i].clone()).collect::<Vec<_>>())
            ),
            "one column named value (or the only column besides entity, year and group)",
            "pass --value COL",
        )),
    }
}

fn position_named(headers: &[String], names: &[&str], taken: &[usize]) -> Option<usize> {
    headers
        .iter()
        .enumerate()
        .find(|(i, h)| !taken.contains(i) && names.contains(&h.trim().to_lowercase().as_str()))
        .map(|(i, _)| i)
}

fn list(headers: &[String]) -> String {
    let quoted: Vec<String> = headers.iter().map(|h| format!("\"{h}\"")).collect();
    quoted.join(", ")
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
        if (1800..=2200).contains(&year) {
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
        assign_roles(&table, &flags, "t.csv")
    }

    #[test]
    fn year_headers_including_bracketed_codes() {
        assert_eq!(header_year("2019"), Some(2019));
        assert_eq!(header_year(" 2019 "), Some(2019));
        assert_eq!(header_year("2019 [YR2019]"), Some(2019));
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
        assert!(r.entity_detected);
        assert!(
            matches!(r.shape, Shape::Wide { ref year_columns } if year_columns == &vec![(2, 2019), (3, 2020)])
        );
        assert_eq!(r.ignored, vec!["Country Name".to_string()]);
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
