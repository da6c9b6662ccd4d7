//! The catalog of a reference folder: a `datapackage.json` in the Frictionless Data Package
//! layout (`name`, `resources[]` with `name`, `path`, `sources`) plus properties of ours:
//! `kind`, `unit`, `multiplier`, `base_currency`, `vintage`, `layout`, `entity_field`,
//! `year_field`, `value_field` and, for income tables, `basis`.

use crate::error::{Error, Location, Result};
use crate::ingest::layout::LayoutChoice;
use serde::Deserialize;

/// What a reference table measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Kind {
    Fx,
    Ppp,
    Cpi,
    Population,
    Income,
}

impl Kind {
    pub const ALL: [Kind; 5] = [
        Kind::Fx,
        Kind::Ppp,
        Kind::Cpi,
        Kind::Population,
        Kind::Income,
    ];

    pub fn as_str(self) -> &'static str {
        match self {
            Kind::Fx => "fx",
            Kind::Ppp => "ppp",
            Kind::Cpi => "cpi",
            Kind::Population => "population",
            Kind::Income => "income",
        }
    }

    pub fn describe(self) -> &'static str {
        match self {
            Kind::Fx => {
                "market exchange rate, local currency units per base-currency unit (annual average)"
            }
            Kind::Ppp => "purchasing-power parity, local currency units per international dollar",
            Kind::Cpi => "consumer price index (any base; only ratios are used)",
            Kind::Population => "population (persons, times the table's multiplier)",
            Kind::Income => "income per capita (in the unit given by the table's basis)",
        }
    }

    fn parse(text: &str) -> Option<Kind> {
        Kind::ALL.into_iter().find(|k| k.as_str() == text)
    }
}

/// The currency basis of an income table.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Basis {
    /// Local currency units at current prices.
    Lcu,
    /// The base currency (USD) at market rates.
    Base,
    /// International dollars at current PPPs.
    Intl,
}

#[derive(Debug, Clone, PartialEq, Eq, Deserialize, serde::Serialize)]
pub struct SourceRef {
    #[serde(default)]
    pub title: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub path: Option<String>,
}

/// One resource of the catalog, checked.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Resource {
    pub name: String,
    pub path: String,
    pub kind: Kind,
    pub unit: String,
    pub multiplier: f64,
    pub base_currency: String,
    pub vintage: Option<String>,
    pub sources: Vec<SourceRef>,
    #[serde(skip)]
    pub layout: LayoutChoice,
    pub entity_field: Option<String>,
    pub year_field: Option<String>,
    pub value_field: Option<String>,
    pub basis: Basis,
    /// Column of standard errors (long tables), or of margins at `margin_confidence`.
    pub se_field: Option<String>,
    pub margin_field: Option<String>,
    pub margin_confidence: Option<u32>,
    /// `sdmx-csv` for files in the SDMX-CSV layout (versions 1 and 2); default plain CSV.
    pub format: Option<String>,
    /// SDMX dimensions to keep, code by dimension (for example a measure or unit code).
    pub filter: std::collections::BTreeMap<String, String>,
    /// The table writes numbers with a decimal comma (1.234,5).
    pub decimal_comma: bool,
}

#[derive(Debug, Clone, serde::Serialize)]
pub struct Catalog {
    pub name: String,
    pub title: Option<String>,
    /// Alias files (relative to the catalog) that define the entities the tables use.
    pub aliases: Vec<String>,
    pub resources: Vec<Resource>,
}

#[derive(Deserialize)]
struct RawCatalog {
    #[serde(default)]
    name: String,
    #[serde(default)]
    title: Option<String>,
    #[serde(default)]
    aliases: Vec<String>,
    resources: Vec<RawResource>,
}

#[derive(Deserialize)]
struct RawResource {
    name: Option<String>,
    path: Option<String>,
    kind: Option<String>,
    #[serde(default)]
    unit: String,
    multiplier: Option<f64>,
    base_currency: Option<String>,
    vintage: Option<serde_json::Value>,
    #[serde(default)]
    sources: Vec<SourceRef>,
    layout: Option<String>,
    entity_field: Option<String>,
    year_field: Option<String>,
    value_field: Option<String>,
    basis: Option<String>,
    se_field: Option<String>,
    #[serde(alias = "moe_field")]
    margin_field: Option<String>,
    #[serde(alias = "moe_level")]
    margin_confidence: Option<u32>,
    format: Option<String>,
    #[serde(default)]
    filter: std::collections::BTreeMap<String, String>,
    #[serde(default)]
    decimal_comma: bool,
}

/// One resource of the catalog, its fields checked: a name, a path, a known kind, a positive
/// multiplier, a known layout and basis, and margins only where they may be.
fn resource_of(r: RawResource, index: usize, file: &str) -> Result<Resource> {
    let label = r.name.clone().unwrap_or_else(|| format!("#{}", index + 1));
    let fail = |found: String, expected: &str, fix: &str| {
        Error::bad_input(
            Location::file(format!("{file} (resource {label})")),
            found,
            expected.to_string(),
            fix.to_string(),
        )
    };
    let name = r.name.clone().ok_or_else(|| {
        fail(
            "a resource without a name".into(),
            "a \"name\"",
            "name every resource",
        )
    })?;
    let path = r.path.clone().ok_or_else(|| {
        fail(
            "a resource without a path".into(),
            "a \"path\" to a CSV file",
            "add the path",
        )
    })?;
    let kind_text = r.kind.clone().unwrap_or_default();
    let kind = Kind::parse(&kind_text).ok_or_else(|| {
        fail(
            format!("unknown kind \"{kind_text}\""),
            "one of fx, ppp, cpi, population, income",
            "set \"kind\" to one of the known kinds",
        )
    })?;
    let multiplier = r.multiplier.unwrap_or(1.0);
    if !(multiplier.is_finite() && multiplier > 0.0) {
        return Err(fail(
            format!("multiplier {multiplier}"),
            "a positive multiplier such as 1000",
            "fix \"multiplier\"",
        ));
    }
    let layout = layout_of(r.layout.as_deref())
        .map_err(|found| fail(found, "long or wide", "fix \"layout\" or leave it out"))?;
    let basis = basis_of(r.basis.as_deref())
        .map_err(|found| fail(found, "lcu, usd or intl", "fix \"basis\""))?;
    if let Some((found, expected, fix)) = margin_problem(&r, kind) {
        return Err(fail(found, expected, fix));
    }
    let base_currency = r
        .base_currency
        .clone()
        .unwrap_or_else(|| "USD".into())
        .to_uppercase();
    let vintage = r.vintage.as_ref().map(|v| match v {
        serde_json::Value::String(s) => s.clone(),
        other => other.to_string(),
    });
    Ok(Resource {
        name,
        path,
        kind,
        unit: r.unit,
        multiplier,
        base_currency,
        vintage,
        sources: r.sources,
        layout,
        entity_field: r.entity_field,
        year_field: r.year_field,
        value_field: r.value_field,
        basis,
        se_field: r.se_field,
        margin_field: r.margin_field,
        margin_confidence: r.margin_confidence,
        format: r.format,
        filter: r.filter,
        decimal_comma: r.decimal_comma,
    })
}

/// A resource's layout; the text to show where it is none of long and wide.
fn layout_of(text: Option<&str>) -> std::result::Result<LayoutChoice, String> {
    match text {
        None => Ok(LayoutChoice::Auto),
        Some("long") => Ok(LayoutChoice::Long),
        Some("wide") => Ok(LayoutChoice::Wide),
        Some(other) => Err(format!("layout \"{other}\"")),
    }
}

/// What a resource's figures are in; the text to show where the basis is unknown.
fn basis_of(text: Option<&str>) -> std::result::Result<Basis, String> {
    match text {
        None | Some("lcu") => Ok(Basis::Lcu),
        Some("usd") | Some("base") => Ok(Basis::Base),
        Some("intl") | Some("ppp") => Ok(Basis::Intl),
        Some(other) => Err(format!("basis \"{other}\"")),
    }
}

/// What is wrong with a resource's margin fields (found, expected, fix), if anything: a margin
/// needs its confidence level, and only population and income tables carry margins.
fn margin_problem(r: &RawResource, kind: Kind) -> Option<(String, &'static str, &'static str)> {
    if r.margin_field.is_some() && !matches!(r.margin_confidence, Some(90 | 95 | 99)) {
        return Some((
            "margin_field without a margin_confidence of 90, 95 or 99".into(),
            "the confidence level the margins are stated at",
            "add \"margin_confidence\": 90 (or 95, 99)",
        ));
    }
    if (r.margin_field.is_some() || r.se_field.is_some())
        && !matches!(kind, Kind::Population | Kind::Income)
    {
        return Some((
            format!("margins on a {} table", kind.as_str()),
            "margins only on population and income tables (fx, ppp and cpi are treated as exact)",
            "remove se_field / margin_field from this resource",
        ));
    }
    None
}

/// Parses and checks a catalog; `file` names it in messages.
pub fn parse_catalog(bytes: &[u8], file: &str) -> Result<Catalog> {
    let text = String::from_utf8_lossy(bytes);
    let text = text.trim_start_matches('\u{feff}');
    let raw: RawCatalog = serde_json::from_str(text).map_err(|e| {
        Error::bad_input(
            Location::cell(file, e.line(), format!("character {}", e.column())),
            format!("the catalog is not a valid data package: {e}"),
            "a JSON object with a \"resources\" list (Frictionless Data Package)",
            "fix the JSON at that position; see reference-tables/README.md for the format",
        )
    })?;
    let mut resources = Vec::with_capacity(raw.resources.len());
    for (index, r) in raw.resources.into_iter().enumerate() {
        resources.push(resource_of(r, index, file)?);
    }
    for (i, a) in resources.iter().enumerate() {
        if let Some(b) = resources[..i].iter().find(|b| b.kind == a.kind) {
            return Err(Error::bad_input(
                Location::file(file),
                format!(
                    "two resources of kind {}: \"{}\" and \"{}\"",
                    a.kind.as_str(),
                    b.name,
                    a.name
                ),
                "at most one table of each kind in a catalog",
                "keep one of them in this catalog (put the other in a folder of its own)",
            ));
        }
    }
    Ok(Catalog {
        name: raw.name,
        title: raw.title,
        aliases: raw.aliases,
        resources,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_resources_with_defaults() {
        let json = r#"{"name":"t","resources":[{"name":"rates","path":"fx.csv","kind":"fx","vintage":2024,
            "sources":[{"title":"Invented"}]},{"name":"pop","path":"pop.csv","kind":"population","multiplier":1000}]}"#;
        let c = parse_catalog(json.as_bytes(), "datapackage.json").unwrap();
        assert_eq!(c.resources.len(), 2);
        assert_eq!(c.resources[0].base_currency, "USD");
        assert_eq!(c.resources[0].vintage.as_deref(), Some("2024"));
        assert_eq!(c.resources[1].multiplier, 1000.0);
    }

    #[test]
    fn unknown_kind_and_bad_json_are_errors_that_say_where() {
        let json = r#"{"resources":[{"name":"x","path":"x.csv","kind":"gdp"}]}"#;
        let err = parse_catalog(json.as_bytes(), "dp.json")
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("dp.json (resource x)") && err.contains("unknown kind \"gdp\""),
            "{err}"
        );
        let err = parse_catalog(b"{\"resources\": [\n,]}", "dp.json")
            .unwrap_err()
            .to_string();
        assert!(err.contains("dp.json, line 2"), "{err}");
    }

    #[test]
    fn two_tables_of_one_kind_are_refused() {
        let json = r#"{"resources":[{"name":"a","path":"a.csv","kind":"cpi"},{"name":"b","path":"b.csv","kind":"cpi"}]}"#;
        assert!(parse_catalog(json.as_bytes(), "dp.json").is_err());
    }
}
