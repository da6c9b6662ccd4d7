//! The words of table headers: which header cells name an entity, year or value column, which
//! headers are years, how SDMX-CSV headers look, and how a cell is shortened for a message.
//! The table finder, the layout rules and the number parser all read them from here.

/// A cell or line cut to a length that fits in a message.
pub fn shorten(text: &str) -> String {
    const MAX: usize = 60;
    if text.chars().count() <= MAX {
        text.to_string()
    } else {
        format!("{}…", text.chars().take(MAX).collect::<String>())
    }
}

/// Words in a header that name an entity column (common practice of publishers: World Bank
/// "Country Code", OECD "LOCATION", SDMX "REF_AREA", Eurostat "geo", UN "Country or Area").
pub(crate) const ENTITY_WORDS: &[&str] = &[
    "country", "economy", "entity", "iso", "nation", "ref_area", "geo", "location",
];
/// Whole headers that name an entity column although they hold none of the words above.
pub(crate) const ENTITY_NAMES: &[&str] = &[
    "code",
    "area",
    "reporter",
    "reporter_code",
    "cty",
    "ctry",
    "cntry",
    "state",
    "member",
    "partner",
    "territory",
    "countries",
];
pub(crate) const CODE_WORDS: &[&str] = &["code", "iso", "alpha"];
pub(crate) const VALUE_NAMES: &[&str] = &[
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
pub(crate) const YEAR_NAMES: &[&str] = &["year", "time", "time_period", "period"];

/// The calendar years a table may hold: long historical series start before 1800, and a
/// four-digit header beyond 2200 is more likely a code than a year.
pub const YEARS: std::ops::RangeInclusive<i32> = 1000..=2200;

/// The code part of an SDMX header or cell: `REF_AREA: Reference area` → `REF_AREA`.
pub fn sdmx_code(text: &str) -> &str {
    text.split_once(':').map(|(c, _)| c).unwrap_or(text).trim()
}

/// Reference-area dimensions as agencies name them (SDMX's REF_AREA; Eurostat's geo; OECD's
/// older LOCATION; IMF's COUNTRY), in order of preference.
pub const SDMX_AREAS: &[&str] = &[
    "REF_AREA",
    "GEO",
    "LOCATION",
    "COUNTRY",
    "REPORTING_COUNTRY",
];

/// Whether a header is SDMX-CSV: a DATAFLOW or STRUCTURE/STRUCTURE_ID column, a reference-area
/// dimension, TIME_PERIOD and OBS_VALUE (ISO 17369, SDMX-CSV versions 1 and 2).
pub fn looks_like_sdmx(headers: &[String]) -> bool {
    let codes: Vec<String> = headers
        .iter()
        .map(|h| sdmx_code(h).to_uppercase())
        .collect();
    let has = |name: &str| codes.iter().any(|c| c == name);
    (has("DATAFLOW") || has("STRUCTURE") || has("STRUCTURE_ID"))
        && has("TIME_PERIOD")
        && has("OBS_VALUE")
        && SDMX_AREAS.iter().any(|a| has(a))
}

/// Whether a header cell names a column the way headers do: an entity, year or value word.
pub fn is_role_word(cell: &str) -> bool {
    let lower = cell.trim().to_lowercase();
    ENTITY_WORDS.iter().any(|w| lower.contains(w))
        || ENTITY_NAMES.contains(&lower.as_str())
        || VALUE_NAMES.contains(&lower.as_str())
        || YEAR_NAMES.contains(&lower.as_str())
}

/// Reads a header as a year column: `2019`, ` 2019 `, `2019 [YR2019]`.
/// Also the forms other exports write: `YR2019` (a data bank's API), `Y2019` (FAOSTAT's bulk
/// files) and `2019.0` (a year column saved as a float).
pub fn header_year(header: &str) -> Option<i32> {
    let trimmed = header.trim();
    let trimmed = trimmed
        .strip_prefix("YR")
        .or_else(|| trimmed.strip_prefix('Y'))
        .filter(|rest| rest.starts_with(|c: char| c.is_ascii_digit()))
        .unwrap_or(trimmed);
    let digits: String = trimmed.chars().take_while(|c| c.is_ascii_digit()).collect();
    if digits.len() != 4 {
        return None;
    }
    let rest = trimmed[4..].trim();
    if !(rest.is_empty() || rest == ".0" || (rest.starts_with('[') && rest.ends_with(']'))) {
        return None;
    }
    let year: i32 = digits.parse().ok()?;
    YEARS.contains(&year).then_some(year)
}
