//! Entity resolution: turns the country and aggregate names or codes found in a publisher's
//! table into one code per entity (ISO 3166-1 alpha-3 for countries, World Bank codes for
//! aggregates, user-assigned codes for whatever the user defines), with that entity's
//! currency. It owns the built-in tables, the matching rules and the public API; name
//! folding lives in `normalize`, user alias files in `aliases`.
//!
//! Matching is exact on codes and on normalised names, never fuzzy: a wrong country is far
//! worse than no country. String similarity only ranks suggestions for names that did not
//! resolve. A normalised name that would mean two entities is kept as ambiguous and never
//! resolves.
//!
//! # Built-in data (`data/`)
//! - `iso3166.csv`: all 249 entries of ISO 3166-1 (alpha-2, alpha-3, numeric, short name,
//!   official name, common name) as shipped by Debian's `iso-codes` package 4.15
//!   (`/usr/share/iso-codes/json/iso_3166-1.json`), written by `generate_iso3166.py`.
//! - `iso4217.csv`: the ISO 4217 currency codes from the same package (`iso_4217.json`),
//!   written by the same script. Tests compare both files with the system JSON.
//! - `variants.csv`: the other spellings publishers use (World Bank WDI names such as
//!   "Korea, Rep.", IMF forms such as "Korea, Rep. of" or "China, P.R.: Mainland", UN forms
//!   such as "Iran (Islamic Republic of)", OECD's "Chinese Taipei", and everyday English
//!   names such as "Ivory Coast"), written by hand from memory of how these publishers
//!   spell names. Left out on purpose, because each could mean more than one thing:
//!   "Korea" (either Korea), "Micronesia" (also a UN region), "Virgin Islands" (British or
//!   U.S.), "Saint Martin" (the whole island), "Republic of China" (easily taken for the
//!   People's Republic), "America" (the continent), "England" and "Holland" (parts of a
//!   country), "Channel Islands" (a World Bank economy with no ISO code), and historic
//!   names such as "Zaire" or "Netherlands Antilles". Users add them in an alias file.
//! - `aggregates.csv`: World Bank aggregate codes and names as commonly published in the
//!   World Development Indicators (from memory): World, regions with their "excluding high
//!   income" and "IDA & IBRD" forms, income groups, lending groups, EU, euro area, OECD
//!   members and a few others.
//! - `currencies.csv`: the ISO 4217 currency of each country as of 2024 (from memory).
//!   Left out where one answer would be a guess: Antarctica, Western Sahara, South Georgia
//!   and the South Sandwich Islands, and Zimbabwe (whose 2024 currency, ZWG, is not yet in
//!   the ISO 4217 list shipped with iso-codes 4.15).
//!
//! Publishers' own codes are read where they name one entity beyond doubt (from memory of
//! their conventions): Our World in Data's `OWID_WRL` (World) and `OWID_KOS` (Kosovo), and
//! Eurostat's `EU27_2020`, `EU28`, `EA20` and `EA19`, kept as aggregates of their own.
//!
//! Kosovo (XKX) is the one country outside ISO 3166-1: the EU and the World Bank give it
//! XKX, a code in the user-assigned range, and XK as its alpha-2 (common practice).

// Every fallible function here returns the crate's shared error type, whose size is set by
// error.rs for the whole crate; boxing it in this module alone would buy nothing.

pub mod aliases;
mod normalize;

use std::collections::HashMap;
use std::sync::OnceLock;

pub use normalize::normalize;

const ISO3166_CSV: &str = include_str!("data/iso3166.csv");
const ISO4217_CSV: &str = include_str!("data/iso4217.csv");
const VARIANTS_CSV: &str = include_str!("data/variants.csv");
const AGGREGATES_CSV: &str = include_str!("data/aggregates.csv");
const CURRENCIES_CSV: &str = include_str!("data/currencies.csv");

/// Countries that publishers list but ISO 3166-1 does not: (alpha-3, alpha-2, name).
const EXTRA_COUNTRIES: &[(&str, &str, &str)] = &[("XKX", "XK", "Kosovo")];

/// Alpha-2 codes that ISO 3166/MA keeps exceptionally reserved for a country at the request of
/// an international body, as Eurostat publishes them: EL for Greece, UK for the United Kingdom
/// (from memory of the ISO 3166 reserved-code list).
const EXCEPTIONAL_ALPHA2: &[(&str, &str)] = &[("EL", "GRC"), ("UK", "GBR")];

/// Jaro-Winkler similarity a known name must reach to be offered as a suggestion. Typos
/// of one or two letters ("Frnace") score above 0.9; unrelated names of similar length
/// score around 0.6 to 0.8.
const SUGGESTION_THRESHOLD: f64 = 0.88;
const MAX_SUGGESTIONS: usize = 3;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EntityKind {
    Country,
    Aggregate,
    User,
}

impl EntityKind {
    pub fn as_str(&self) -> &'static str {
        match self {
            EntityKind::Country => "country",
            EntityKind::Aggregate => "aggregate",
            EntityKind::User => "user",
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Entity {
    pub code: String,
    pub name: String,
    pub kind: EntityKind,
    /// ISO 4217 code for countries; any three-letter unit label for user entities.
    pub currency: Option<String>,
}

impl Entity {
    /// "Name (CODE)", the form used in suggestions and messages.
    pub fn label(&self) -> String {
        format!("{} ({})", self.name, self.code)
    }
}

#[derive(Debug, Clone, PartialEq)]
pub enum Resolution<'a> {
    Found(&'a Entity),
    Unresolved { suggestions: Vec<String> },
}

/// Where a name in the index came from, so that a clash can say what it clashes with.
#[derive(Debug, Clone, PartialEq, Eq)]
enum Origin {
    Builtin,
    User { file: String, line: usize },
}

/// Every entity a normalised name was given for. More than one target means the name is
/// ambiguous; it is kept that way rather than letting the later entry win.
#[derive(Debug, Clone, Default)]
struct NameEntry {
    targets: Vec<(usize, Origin)>,
}

#[derive(Debug, Clone)]
pub struct Resolver {
    entities: Vec<Entity>,
    /// Alpha-3, aggregate and user codes, upper case.
    codes: HashMap<String, usize>,
    alpha2: HashMap<String, usize>,
    /// Zero-padded to three digits.
    numeric: HashMap<String, usize>,
    names: HashMap<String, NameEntry>,
}

impl Resolver {
    /// ISO 3166-1, publishers' variants, World Bank aggregates and currencies, parsed once
    /// from the embedded data and cloned on each call.
    pub fn builtin() -> Resolver {
        static BUILTIN: OnceLock<Resolver> = OnceLock::new();
        BUILTIN
            .get_or_init(|| parse_builtin().unwrap_or_else(|e| panic!("embedded entity data: {e}")))
            .clone()
    }

    pub fn resolve(&self, text: &str) -> Resolution<'_> {
        self.resolve_with(text, true)
    }

    /// As `resolve`; with `suggest` false a name that matches nothing gets no suggestions (the
    /// search for them is most of the cost of a table full of unknown names).
    pub fn resolve_with(&self, text: &str, suggest: bool) -> Resolution<'_> {
        let text = text.trim();
        if let Some(idx) = self.code_index(text) {
            return Resolution::Found(&self.entities[idx]);
        }
        let key = normalize(text);
        if key.is_empty() {
            return Resolution::Unresolved {
                suggestions: Vec::new(),
            };
        }
        match self.names.get(&key) {
            Some(entry) if entry.targets.len() == 1 => {
                Resolution::Found(&self.entities[entry.targets[0].0])
            }
            Some(entry) => Resolution::Unresolved {
                suggestions: entry
                    .targets
                    .iter()
                    .map(|(i, _)| self.entities[*i].label())
                    .collect(),
            },
            None => Resolution::Unresolved {
                suggestions: if suggest {
                    self.suggest(&key)
                } else {
                    Vec::new()
                },
            },
        }
    }

    /// The entity with this alpha-3, aggregate or user code (case-insensitive).
    pub fn by_code(&self, code: &str) -> Option<&Entity> {
        self.codes
            .get(&code.trim().to_ascii_uppercase())
            .map(|&i| &self.entities[i])
    }

    /// Whether `code` is an ISO 4217 currency code (upper case, as the standard writes it).
    pub fn is_valid_currency_code(code: &str) -> bool {
        static CODES: OnceLock<Vec<&'static str>> = OnceLock::new();
        let codes = CODES.get_or_init(|| {
            let mut codes: Vec<&str> = ISO4217_CSV.lines().skip(1).map(str::trim).collect();
            codes.retain(|c| !c.is_empty());
            codes.sort_unstable();
            codes
        });
        code.len() == 3
            && code.bytes().all(|b| b.is_ascii_uppercase())
            && codes.binary_search(&code).is_ok()
    }

    pub fn entities(&self) -> &[Entity] {
        &self.entities
    }

    /// Index of the entity `text` names as a code: alpha-3 / aggregate / user code,
    /// alpha-2, or ISO numeric (which spreadsheets often strip of its leading zeros).
    fn code_index(&self, text: &str) -> Option<usize> {
        let all_letters = text.bytes().all(|b| b.is_ascii_alphabetic());
        match text.len() {
            3 if all_letters => self.codes.get(&text.to_ascii_uppercase()).copied(),
            2 if all_letters => self.alpha2.get(&text.to_ascii_uppercase()).copied(),
            1..=3 if text.bytes().all(|b| b.is_ascii_digit()) => {
                let number: u16 = text.parse().ok()?;
                self.numeric.get(&format!("{number:03}")).copied()
            }
            _ => None,
        }
    }

    /// Records that normalised `key` names entity `idx`. A second, different entity for the
    /// same key makes the key ambiguous instead of overwriting it.
    fn insert_name(&mut self, key: String, idx: usize, origin: Origin) -> bool {
        let entry = self.names.entry(key).or_default();
        if entry.targets.iter().any(|(i, _)| *i == idx) {
            return false;
        }
        entry.targets.push((idx, origin));
        true
    }

    fn add_entity(&mut self, entity: Entity) -> usize {
        let idx = self.entities.len();
        self.codes.insert(entity.code.clone(), idx);
        self.entities.push(entity);
        idx
    }

    fn suggest(&self, key: &str) -> Vec<String> {
        let mut best: HashMap<usize, f64> = HashMap::new();
        for (name, entry) in &self.names {
            let score = strsim::jaro_winkler(key, name);
            if score < SUGGESTION_THRESHOLD {
                continue;
            }
            for (idx, _) in &entry.targets {
                let slot = best.entry(*idx).or_insert(score);
                *slot = slot.max(score);
            }
        }
        let mut ranked: Vec<(usize, f64)> = best.into_iter().collect();
        ranked.sort_by(|a, b| {
            b.1.total_cmp(&a.1)
                .then_with(|| self.entities[a.0].code.cmp(&self.entities[b.0].code))
        });
        ranked
            .into_iter()
            .take(MAX_SUGGESTIONS)
            .map(|(i, _)| self.entities[i].label())
            .collect()
    }
}

/// ISO 3166-1 user-assigned alpha-3 ranges (AAA–AAZ, QMA–QZZ, XAA–XZZ, ZZA–ZZZ), which the
/// standard leaves free for users and which will never name an ISO country. Case-insensitive.
pub fn is_user_assigned_alpha3(code: &str) -> bool {
    let bytes = code.as_bytes();
    if bytes.len() != 3 || !bytes.iter().all(u8::is_ascii_alphabetic) {
        return false;
    }
    let [a, b, _] = [
        bytes[0].to_ascii_uppercase(),
        bytes[1].to_ascii_uppercase(),
        bytes[2].to_ascii_uppercase(),
    ];
    matches!(
        (a, b),
        (b'A', b'A') | (b'Q', b'M'..=b'Z') | (b'X', _) | (b'Z', b'Z')
    )
}

fn data_rows(text: &'static str, file: &str) -> Result<Vec<csv::StringRecord>, String> {
    csv::ReaderBuilder::new()
        .from_reader(text.as_bytes())
        .records()
        .collect::<Result<_, _>>()
        .map_err(|e| format!("{file}: {e}"))
}

fn parse_builtin() -> Result<Resolver, String> {
    let mut r = Resolver {
        entities: Vec::new(),
        codes: HashMap::new(),
        alpha2: HashMap::new(),
        numeric: HashMap::new(),
        names: HashMap::new(),
    };

    for row in data_rows(ISO3166_CSV, "iso3166.csv")? {
        let [alpha2, alpha3, numeric, name, official, common] =
            std::array::from_fn(|i| row.get(i).unwrap_or("").to_string());
        let idx = r.add_entity(Entity {
            code: alpha3,
            name: name.clone(),
            kind: EntityKind::Country,
            currency: None,
        });
        r.alpha2.insert(alpha2, idx);
        r.numeric.insert(numeric, idx);
        for n in [name, official, common] {
            let key = normalize(&n);
            if !key.is_empty() {
                r.insert_name(key, idx, Origin::Builtin);
            }
        }
    }

    for (alpha3, alpha2, name) in EXTRA_COUNTRIES {
        let idx = r.add_entity(Entity {
            code: alpha3.to_string(),
            name: name.to_string(),
            kind: EntityKind::Country,
            currency: None,
        });
        r.alpha2.insert(alpha2.to_string(), idx);
        r.insert_name(normalize(name), idx, Origin::Builtin);
    }

    for (alpha2, alpha3) in EXCEPTIONAL_ALPHA2 {
        let idx = *r.codes.get(*alpha3).ok_or(format!(
            "reserved alpha-2 {alpha2}: unknown country {alpha3}"
        ))?;
        r.alpha2.insert(alpha2.to_string(), idx);
    }

    for row in data_rows(AGGREGATES_CSV, "aggregates.csv")? {
        let code = row.get(0).unwrap_or("").to_string();
        if r.codes.contains_key(&code) {
            return Err(format!("aggregates.csv: code {code} is already taken"));
        }
        let name = row.get(1).unwrap_or("").to_string();
        let aliases = row.get(2).unwrap_or("").to_string();
        let idx = r.add_entity(Entity {
            code,
            name: name.clone(),
            kind: EntityKind::Aggregate,
            currency: None,
        });
        for n in std::iter::once(name.as_str()).chain(aliases.split('|')) {
            let key = normalize(n);
            if !key.is_empty() {
                r.insert_name(key, idx, Origin::Builtin);
            }
        }
    }

    for row in data_rows(VARIANTS_CSV, "variants.csv")? {
        let (name, code) = (row.get(0).unwrap_or(""), row.get(1).unwrap_or(""));
        let idx = match r.codes.get(code) {
            Some(&i) if r.entities[i].kind == EntityKind::Country => i,
            _ => {
                return Err(format!(
                    "variants.csv: \"{name}\" names unknown country {code}"
                ))
            }
        };
        let key = normalize(name);
        if key.is_empty() {
            return Err(format!("variants.csv: \"{name}\" has no letters"));
        }
        r.insert_name(key, idx, Origin::Builtin);
    }

    for row in data_rows(CURRENCIES_CSV, "currencies.csv")? {
        let (code, currency) = (row.get(0).unwrap_or(""), row.get(1).unwrap_or(""));
        let idx = *r
            .codes
            .get(code)
            .ok_or(format!("currencies.csv: unknown country {code}"))?;
        if r.entities[idx]
            .currency
            .replace(currency.to_string())
            .is_some()
        {
            return Err(format!("currencies.csv: {code} listed twice"));
        }
    }
    Ok(r)
}

/// The version of Debian's iso-codes package the built-in ISO 3166-1 and ISO 4217 tables
/// were generated from and checked against.
#[cfg(test)]
pub(crate) const ISO_CODES_CHECKED: &str = "4.15.0-1";

/// Reads one of Debian's iso-codes JSON files, the outside reference the tests check
/// against. Missing file is a failure, not a skip: without it nothing is checked.
#[cfg(test)]
pub(crate) fn iso_codes_json(file: &str, key: &str) -> Vec<HashMap<String, String>> {
    let path = format!("/usr/share/iso-codes/json/{file}");
    // The tests say which version they found; the built-in tables were checked against
    // ISO_CODES_CHECKED. A newer version may add or rename entries: the tests then fail with
    // the version named, and generate_iso3166.py is rerun.
    let found = std::process::Command::new("dpkg-query")
        .args(["-W", "-f=${Version}", "iso-codes"])
        .output()
        .ok()
        .map(|o| String::from_utf8_lossy(&o.stdout).into_owned())
        .filter(|v| !v.is_empty())
        .unwrap_or_else(|| "unknown (dpkg-query gave none)".into());
    eprintln!("{file}: iso-codes {found} found; the built-in tables were checked against {ISO_CODES_CHECKED}");
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| {
        panic!("{path}: {e}\n  the entity tests check against it: run `apt-get install iso-codes`")
    });
    let value: serde_json::Value = serde_json::from_str(&text).expect("iso-codes JSON parses");
    value[key]
        .as_array()
        .unwrap_or_else(|| panic!("{path}: no \"{key}\" list"))
        .iter()
        .map(|entry| {
            entry
                .as_object()
                .expect("entries are objects")
                .iter()
                .filter_map(|(k, v)| v.as_str().map(|s| (k.clone(), s.to_string())))
                .collect()
        })
        .collect()
}

#[cfg(test)]
mod tests;
