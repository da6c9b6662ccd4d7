//! `levelfield catalog DIR`: a draft `datapackage.json` for a folder of downloaded tables, for
//! the user to review. Every file goes through the same table finder as a run; its layout and
//! columns are written as the finder read them, and its kind only where the file itself states
//! what it measures (an indicator name or code such as "PPP conversion factor" or SP.POP.TOTL).
//! A file that does not say is left with an empty kind for the user to fill in, never a guess.

use crate::entity::Resolver;
use crate::error::{Error, Result};
use crate::ingest::layout::{self, Knobs, LayoutChoice, RoleFlags, Shape};
use crate::ingest::table::{self, TextTable};
use crate::reference::{sdmx, CATALOG_FILE};
use serde::Serialize;
use std::path::Path;

/// One resource of the draft.
#[derive(Debug, Clone, Serialize)]
pub struct DraftResource {
    pub name: String,
    pub path: String,
    pub kind: String,
    pub unit: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub layout: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub entity_field: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub year_field: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub value_field: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub format: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub basis: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub vintage: Option<String>,
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub sources: Vec<crate::reference::catalog::SourceRef>,
}

#[derive(Debug, Clone, Serialize)]
struct Draft {
    name: String,
    title: String,
    resources: Vec<DraftResource>,
}

/// The draft and one line per file saying how it was read and what the user must check.
pub struct Drafted {
    pub json: String,
    pub lines: Vec<String>,
}

/// Indicator codes of the World Bank's World Development Indicators and what they measure
/// (from memory of the WDI code list): kind and, for income, its basis.
const KNOWN_CODES: &[(&str, &str, Option<&str>)] = &[
    ("PA.NUS.PPP", "ppp", None),
    ("PA.NUS.PRVT.PP", "ppp", None),
    ("PA.NUS.FCRF", "fx", None),
    ("FP.CPI.TOTL", "cpi", None),
    ("SP.POP.TOTL", "population", None),
    ("NY.GDP.PCAP.CN", "income", Some("lcu")),
    ("NY.GNP.PCAP.CN", "income", Some("lcu")),
    ("NY.GDP.PCAP.CD", "income", Some("usd")),
    ("NY.GNP.PCAP.CD", "income", Some("usd")),
    ("NY.GDP.PCAP.PP.CD", "income", Some("intl")),
    ("NY.GNP.PCAP.PP.CD", "income", Some("intl")),
];

/// Words of an indicator name and the kind they state (common practice of statistical
/// publishers' series names).
const KNOWN_NAMES: &[(&str, &str)] = &[
    ("ppp conversion factor", "ppp"),
    ("purchasing power parit", "ppp"),
    ("exchange rate", "fx"),
    ("consumer price index", "cpi"),
    ("consumer prices (index", "cpi"),
    ("population, total", "population"),
];

pub fn draft(dir: &Path, resolver: &Resolver) -> Result<Drafted> {
    let mut files: Vec<std::path::PathBuf> = std::fs::read_dir(dir)
        .map_err(|e| Error::io(dir.display(), "list the folder", e))?
        .flatten()
        .map(|e| e.path())
        .filter(|p| {
            p.is_file()
                && p.extension().and_then(|e| e.to_str()).is_some_and(|e| {
                    matches!(
                        e.to_ascii_lowercase().as_str(),
                        "csv" | "tsv" | "tab" | "xlsx" | "xlsm" | "xlsb" | "xls" | "ods"
                    )
                })
        })
        .collect();
    files.sort();
    let mut resources = Vec::new();
    let mut lines = Vec::new();
    for path in &files {
        let file_name = path
            .file_name()
            .and_then(|n| n.to_str())
            .unwrap_or("")
            .to_string();
        let label = path.display().to_string();
        let read = crate::source::read_file(path)
            .and_then(|bytes| table::read_bytes(&bytes, &label, &[]))
            .and_then(|t| describe(&t, &file_name, &label, resolver).map(|d| (t, d)));
        match read {
            Ok((t, (resource, note))) => {
                lines.push(format!(
                    "{file_name}: header line {}; {note}",
                    t.header_line
                ));
                resources.push(resource);
            }
            Err(e) => lines.push(format!("{file_name}: not included: {e}")),
        }
    }
    if resources.is_empty() {
        return Err(Error::usage(
            format!(
                "{} holds no table levelfield can read (.csv, .tsv)",
                dir.display()
            ),
            "point the command at the folder of downloaded reference tables",
        ));
    }
    let mut kinds: Vec<&str> = resources
        .iter()
        .map(|r| r.kind.as_str())
        .filter(|k| !k.is_empty())
        .collect();
    kinds.sort();
    for pair in kinds.windows(2).filter(|w| w[0] == w[1]) {
        lines.push(format!(
            "two files state the kind {}: a catalog holds one table of each kind; keep one",
            pair[0]
        ));
    }
    let name = dir
        .canonicalize()
        .ok()
        .and_then(|p| p.file_name().map(|n| n.to_string_lossy().into_owned()))
        .unwrap_or_else(|| "references".into());
    let draft = Draft {
        title: format!("{name} (drafted by levelfield catalog: review every resource)"),
        name,
        resources,
    };
    let json = serde_json::to_string_pretty(&draft).unwrap_or_default() + "\n";
    Ok(Drafted { json, lines })
}

/// The draft resource of one table and a sentence about it.
fn describe(
    t: &TextTable,
    file_name: &str,
    label: &str,
    resolver: &Resolver,
) -> Result<(DraftResource, String)> {
    let stem = Path::new(file_name)
        .file_stem()
        .and_then(|s| s.to_str())
        .unwrap_or(file_name);
    let mut resource = DraftResource {
        name: stem.to_string(),
        path: file_name.to_string(),
        kind: String::new(),
        unit: String::new(),
        layout: None,
        entity_field: None,
        year_field: None,
        value_field: None,
        format: None,
        basis: None,
        vintage: preamble_value(t, "last updated"),
        sources: preamble_value(t, "data source")
            .map(|title| vec![crate::reference::catalog::SourceRef { title, path: None }])
            .unwrap_or_default(),
    };
    let mut layout_text = if sdmx::looks_like_sdmx(&t.headers) {
        resource.format = Some("sdmx-csv".into());
        "SDMX-CSV".to_string()
    } else {
        let flags = RoleFlags {
            knobs: Knobs::Catalog {
                resource: resource.name.clone(),
            },
            layout: LayoutChoice::Auto,
            ..Default::default()
        };
        let roles = layout::assign_roles(t, &flags, label, Some(resolver))?;
        resource.entity_field = Some(t.headers[roles.entity].clone());
        match &roles.shape {
            Shape::Wide { year_columns } => {
                resource.layout = Some("wide".into());
                format!(
                    "wide, {} year column(s), entity column \"{}\"",
                    year_columns.len(),
                    t.headers[roles.entity]
                )
            }
            Shape::Long { value, year, .. } => {
                resource.layout = Some("long".into());
                resource.value_field = Some(t.headers[*value].clone());
                if let layout::YearSource::Column { index, .. } = year {
                    resource.year_field = Some(t.headers[*index].clone());
                }
                format!(
                    "long, entity column \"{}\", value column \"{}\"",
                    t.headers[roles.entity], t.headers[*value]
                )
            }
        }
    };
    if !t.dimensions.is_empty() {
        layout_text.push_str(" (statistics-office TSV: add a \"filter\" if several series remain)");
    }
    match stated_kind(t) {
        Stated::One { kind, basis, unit, from } => {
            resource.kind = kind.to_string();
            resource.basis = basis.map(str::to_string);
            resource.unit = unit;
            Ok((resource, format!("{layout_text}; kind {kind}, from {from}; check the unit")))
        }
        Stated::Several(found) => Ok((resource, format!("{layout_text}; KIND LEFT EMPTY: the file holds several indicators ({}); keep one per file and set \"kind\"", found.join(", ")))),
        Stated::Nothing => Ok((resource, format!("{layout_text}; KIND LEFT EMPTY: the file does not state what it measures; set \"kind\" to fx, ppp, cpi, population or income, and \"unit\""))),
    }
}

enum Stated {
    One {
        kind: &'static str,
        basis: Option<&'static str>,
        unit: String,
        from: String,
    },
    Several(Vec<String>),
    Nothing,
}

/// What the file says it measures, from its indicator or series columns.
fn stated_kind(t: &TextTable) -> Stated {
    let columns: Vec<usize> = t
        .headers
        .iter()
        .enumerate()
        .filter(|(_, h)| {
            let h = h.to_lowercase();
            ["indicator", "series", "measure", "subject", "variable"]
                .iter()
                .any(|w| h.contains(w))
        })
        .map(|(i, _)| i)
        .collect();
    let mut found: Vec<(String, &'static str, Option<&'static str>, String)> = Vec::new();
    for &c in &columns {
        let mut values: Vec<&str> = t
            .records
            .iter()
            .map(|r| r.cells.at(c).trim())
            .filter(|v| !v.is_empty())
            .collect();
        values.sort();
        values.dedup();
        for value in values {
            let lower = value.to_lowercase();
            let by_code = KNOWN_CODES
                .iter()
                .find(|(code, ..)| code.eq_ignore_ascii_case(value));
            let by_name = KNOWN_NAMES.iter().find(|(words, _)| lower.contains(words));
            let unit = value
                .rsplit_once('(')
                .and_then(|(_, u)| u.strip_suffix(')'))
                .unwrap_or("")
                .to_string();
            match (by_code, by_name) {
                (Some((_, kind, basis)), _) => {
                    found.push((value.to_string(), kind, *basis, String::new()))
                }
                (None, Some((_, kind))) => found.push((value.to_string(), kind, None, unit)),
                (None, None) => {}
            }
        }
    }
    let mut kinds: Vec<&str> = found.iter().map(|f| f.1).collect();
    kinds.dedup();
    match kinds.as_slice() {
        [] => Stated::Nothing,
        [kind] => {
            let unit = found
                .iter()
                .map(|f| f.3.clone())
                .find(|u| !u.is_empty())
                .unwrap_or_default();
            let from: Vec<String> = found
                .iter()
                .map(|f| format!("\"{}\"", table::shorten(&f.0)))
                .collect();
            Stated::One {
                kind,
                basis: found[0].2,
                unit,
                from: from.join(" and "),
            }
        }
        _ => Stated::Several(found.iter().map(|f| table::shorten(&f.0)).collect()),
    }
}

/// A value from a preamble line above the header (`"Last Updated Date","2024-06-28"`).
fn preamble_value(t: &TextTable, key: &str) -> Option<String> {
    t.above.iter().find_map(|cells| {
        let first = cells.first()?.to_lowercase();
        let value = cells.get(1)?.trim();
        (first.starts_with(key) && !value.is_empty()).then(|| value.to_string())
    })
}

/// Writes the draft beside the tables (or to `output`), never over an existing catalog unless
/// `force`.
pub fn write(
    dir: &Path,
    output: Option<&Path>,
    force: bool,
    drafted: &Drafted,
) -> Result<std::path::PathBuf> {
    let target = output
        .map(Path::to_path_buf)
        .unwrap_or_else(|| dir.join(CATALOG_FILE));
    if target.exists() && !force {
        return Err(Error::usage(
            format!("{} exists already", target.display()),
            "review and edit it, or pass -o FILE to write the draft elsewhere (or --force to replace it)",
        ));
    }
    crate::staging::write_atomically(&target, &drafted.json)?;
    Ok(target)
}
