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
mod tests {
    use super::*;
    use std::collections::HashSet;

    fn code_of(r: &Resolver, text: &str) -> Option<String> {
        match r.resolve(text) {
            Resolution::Found(e) => Some(e.code.clone()),
            Resolution::Unresolved { .. } => None,
        }
    }

    fn suggestions_for(r: &Resolver, text: &str) -> Vec<String> {
        match r.resolve(text) {
            Resolution::Found(e) => panic!("{text:?} should not resolve, got {}", e.code),
            Resolution::Unresolved { suggestions } => suggestions,
        }
    }

    fn iso_alpha3_codes() -> HashSet<String> {
        iso_codes_json("iso_3166-1.json", "3166-1")
            .into_iter()
            .map(|e| e["alpha_3"].clone())
            .collect()
    }

    #[test]
    fn every_iso_3166_entry_resolves_by_each_code_and_name() {
        // Source: ISO 3166-1 as shipped by Debian's iso-codes package.
        let r = Resolver::builtin();
        let entries = iso_codes_json("iso_3166-1.json", "3166-1");
        assert!(
            entries.len() >= 249,
            "ISO 3166-1 has 249 entries, file has {}",
            entries.len()
        );
        for e in &entries {
            let alpha3 = &e["alpha_3"];
            let fields = [
                "alpha_2",
                "alpha_3",
                "numeric",
                "name",
                "official_name",
                "common_name",
            ];
            for field in fields {
                if let Some(text) = e.get(field) {
                    assert_eq!(code_of(&r, text).as_ref(), Some(alpha3), "{field} {text:?}");
                }
            }
            let entity = r.by_code(alpha3).expect("by_code finds every alpha-3");
            assert_eq!(entity.kind, EntityKind::Country);
            assert_eq!(&entity.name, &e["name"]);
        }
    }

    #[test]
    fn embedded_iso_tables_match_the_system_files() {
        // Source: Debian iso-codes JSON; a mismatch means generate_iso3166.py must be rerun.
        let entries = iso_codes_json("iso_3166-1.json", "3166-1");
        let mut expected: Vec<Vec<String>> = entries
            .iter()
            .map(|e| {
                [
                    "alpha_2",
                    "alpha_3",
                    "numeric",
                    "name",
                    "official_name",
                    "common_name",
                ]
                .iter()
                .map(|f| e.get(*f).cloned().unwrap_or_default())
                .collect()
            })
            .collect();
        expected.sort_by(|a, b| a[1].cmp(&b[1]));
        let embedded: Vec<Vec<String>> = data_rows(ISO3166_CSV, "iso3166.csv")
            .unwrap()
            .iter()
            .map(|row| row.iter().map(str::to_string).collect())
            .collect();
        assert_eq!(embedded, expected);

        let mut currencies: Vec<String> = iso_codes_json("iso_4217.json", "4217")
            .into_iter()
            .map(|e| e["alpha_3"].clone())
            .collect();
        currencies.sort();
        let embedded: Vec<String> = ISO4217_CSV.lines().skip(1).map(str::to_string).collect();
        assert_eq!(embedded, currencies);
    }

    #[test]
    fn every_country_currency_is_an_iso_4217_code() {
        // Source: ISO 4217 as shipped by Debian's iso-codes package.
        let iso4217: HashSet<String> = iso_codes_json("iso_4217.json", "4217")
            .into_iter()
            .map(|e| e["alpha_3"].clone())
            .collect();
        let r = Resolver::builtin();
        for row in data_rows(CURRENCIES_CSV, "currencies.csv").unwrap() {
            assert!(
                iso4217.contains(&row[1]),
                "{} has currency {} outside ISO 4217",
                &row[0],
                &row[1]
            );
            assert!(Resolver::is_valid_currency_code(&row[1]));
            assert_eq!(
                r.by_code(&row[0]).unwrap().currency.as_deref(),
                Some(&row[1])
            );
        }
        for code in &iso4217 {
            assert!(Resolver::is_valid_currency_code(code), "{code}");
        }
        // "ABC" is three upper-case letters that ISO 4217 does not assign (checked here).
        assert!(!iso4217.contains("ABC"));
        assert!(!Resolver::is_valid_currency_code("ABC"));
        assert!(!Resolver::is_valid_currency_code("eur"));
        assert!(!Resolver::is_valid_currency_code("EURO"));
    }

    #[test]
    fn countries_left_without_currency_are_the_documented_ones() {
        // Keeps the module doc honest: these four are named there with the reason.
        let r = Resolver::builtin();
        let missing: Vec<&str> = r
            .entities()
            .iter()
            .filter(|e| e.kind == EntityKind::Country && e.currency.is_none())
            .map(|e| e.code.as_str())
            .collect();
        assert_eq!(missing, ["ATA", "ESH", "SGS", "ZWE"]);
    }

    #[test]
    fn publishers_variant_names_resolve() {
        let r = Resolver::builtin();
        #[rustfmt::skip]
        let cases = [
            // World Bank WDI country names (from memory).
            ("Korea, Rep.", "KOR"), ("Korea, Dem. People's Rep.", "PRK"),
            ("Iran, Islamic Rep.", "IRN"), ("Egypt, Arab Rep.", "EGY"), ("Yemen, Rep.", "YEM"),
            ("Venezuela, RB", "VEN"), ("Gambia, The", "GMB"), ("Bahamas, The", "BHS"),
            ("Congo, Dem. Rep.", "COD"), ("Congo, Rep.", "COG"), ("Micronesia, Fed. Sts.", "FSM"),
            ("St. Lucia", "LCA"), ("St. Kitts and Nevis", "KNA"),
            ("St. Vincent and the Grenadines", "VCT"), ("St. Martin (French part)", "MAF"),
            ("Slovak Republic", "SVK"), ("Kyrgyz Republic", "KGZ"), ("Lao PDR", "LAO"),
            ("Hong Kong SAR, China", "HKG"), ("Macao SAR, China", "MAC"),
            ("West Bank and Gaza", "PSE"), ("Kosovo", "XKX"), ("Turkiye", "TUR"),
            ("Viet Nam", "VNM"), ("Curacao", "CUW"), ("Sint Maarten (Dutch part)", "SXM"),
            ("Virgin Islands (U.S.)", "VIR"), ("Taiwan, China", "TWN"),
            ("Brunei Darussalam", "BRN"),
            // UN and IMF country names (from memory).
            ("Iran (Islamic Republic of)", "IRN"), ("Bolivia (Plurinational State of)", "BOL"),
            ("Venezuela (Bolivarian Republic of)", "VEN"), ("United Republic of Tanzania", "TZA"),
            ("Republic of Korea", "KOR"), ("China, Hong Kong SAR", "HKG"), ("Lao P.D.R.", "LAO"),
            ("Türkiye", "TUR"), ("Taiwan Province of China", "TWN"), ("Korea, Rep. of", "KOR"),
            ("China, P.R.: Mainland", "CHN"), ("China, P.R.: Hong Kong", "HKG"),
            ("Chinese Taipei", "TWN"),
            // Everyday English and former names (common practice).
            ("South Korea", "KOR"), ("North Korea", "PRK"), ("Turkey", "TUR"), ("Czechia", "CZE"),
            ("Czech Republic", "CZE"), ("Côte d'Ivoire", "CIV"), ("Cote d'Ivoire", "CIV"),
            ("Ivory Coast", "CIV"), ("Vietnam", "VNM"), ("Laos", "LAO"), ("Hong Kong", "HKG"),
            ("Macau", "MAC"), ("Russia", "RUS"), ("Russian Federation", "RUS"), ("DRC", "COD"),
            ("Syria", "SYR"), ("Tanzania", "TZA"), ("Bolivia", "BOL"), ("Moldova", "MDA"),
            ("Brunei", "BRN"), ("Cabo Verde", "CPV"), ("Cape Verde", "CPV"), ("Eswatini", "SWZ"),
            ("Swaziland", "SWZ"), ("North Macedonia", "MKD"), ("Macedonia", "MKD"), ("UK", "GBR"),
            ("United Kingdom", "GBR"), ("Great Britain", "GBR"), ("Britain", "GBR"),
            ("US", "USA"), ("USA", "USA"), ("United States", "USA"),
            ("United States of America", "USA"), ("U.S.", "USA"), ("UAE", "ARE"),
            ("Taiwan", "TWN"), ("Palestine", "PSE"), ("Curaçao", "CUW"), ("Myanmar", "MMR"),
            ("Burma", "MMR"), ("Timor-Leste", "TLS"), ("East Timor", "TLS"), ("Holy See", "VAT"),
            ("Vatican", "VAT"),
        ];
        for (text, code) in cases {
            assert_eq!(code_of(&r, text).as_deref(), Some(code), "{text:?}");
        }
        assert_eq!(r.by_code("XKX").unwrap().kind, EntityKind::Country);
    }

    #[test]
    fn every_variant_in_the_data_file_resolves_to_its_code() {
        // Fails if a variant is ambiguous or hidden behind another entity's code.
        let r = Resolver::builtin();
        for row in data_rows(VARIANTS_CSV, "variants.csv").unwrap() {
            assert_eq!(
                code_of(&r, &row[0]).as_deref(),
                Some(&row[1]),
                "{:?}",
                &row[0]
            );
        }
    }

    #[test]
    fn case_accents_punctuation_and_word_order_do_not_matter() {
        // ISO 3166-1 short names "Côte d'Ivoire" and "Korea, Republic of" (Debian iso-codes).
        let r = Resolver::builtin();
        for text in ["cote divoire", "CÔTE D’IVOIRE", "  Cote d'Ivoire  "] {
            assert_eq!(code_of(&r, text).as_deref(), Some("CIV"), "{text:?}");
        }
        for text in ["Korea, Republic of", "republic of korea", "KOREA, REP."] {
            assert_eq!(code_of(&r, text).as_deref(), Some("KOR"), "{text:?}");
        }
        // World Bank "Gambia, The" (from memory) and the two other ways it is written.
        for text in ["Gambia, The", "The Gambia", "gambia"] {
            assert_eq!(code_of(&r, text).as_deref(), Some("GMB"), "{text:?}");
        }
    }

    #[test]
    fn codes_resolve_in_any_case_and_numeric_codes_without_leading_zeros() {
        // ISO 3166-1: Australia is AU / AUS / 036, Afghanistan 004 (Debian iso-codes).
        let r = Resolver::builtin();
        for text in ["AUS", "aus", "AU", "au", "036", "36"] {
            assert_eq!(code_of(&r, text).as_deref(), Some("AUS"), "{text:?}");
        }
        assert_eq!(code_of(&r, "4").as_deref(), Some("AFG"));
        // XK is the alpha-2 the EU uses for Kosovo (common practice).
        assert_eq!(code_of(&r, "XK").as_deref(), Some("XKX"));
        assert_eq!(code_of(&r, "9999"), None);
        assert_eq!(code_of(&r, "000"), None);
    }

    #[test]
    fn aggregates_resolve_as_aggregates() {
        // World Bank aggregate names and codes as published in WDI (from memory).
        let r = Resolver::builtin();
        let cases = [
            ("World", "WLD"),
            ("WLD", "WLD"),
            ("East Asia & Pacific", "EAS"),
            ("Sub-Saharan Africa", "SSF"),
            ("Sub-Saharan Africa (excluding high income)", "SSA"),
            ("High income", "HIC"),
            ("Low & middle income", "LMY"),
            ("Euro area", "EMU"),
            ("European Union", "EUU"),
            ("OECD members", "OED"),
            ("Latin America & Caribbean", "LCN"),
        ];
        for (text, code) in cases {
            match r.resolve(text) {
                Resolution::Found(e) => {
                    assert_eq!(
                        (e.code.as_str(), e.kind),
                        (code, EntityKind::Aggregate),
                        "{text:?}"
                    )
                }
                other => panic!("{text:?}: {other:?}"),
            }
        }
    }

    #[test]
    fn aggregate_codes_are_not_iso_country_codes() {
        // Source: ISO 3166-1 as shipped by Debian's iso-codes package.
        let iso = iso_alpha3_codes();
        for row in data_rows(AGGREGATES_CSV, "aggregates.csv").unwrap() {
            assert!(!iso.contains(&row[0]), "{} is an ISO 3166-1 code", &row[0]);
            assert!(
                !is_user_assigned_alpha3(&row[0]),
                "{} is user-assigned",
                &row[0]
            );
        }
    }

    #[test]
    fn every_aggregate_code_name_and_alias_in_the_data_file_resolves() {
        // Fails if an aggregate name is ambiguous or hidden behind a country code.
        let r = Resolver::builtin();
        for row in data_rows(AGGREGATES_CSV, "aggregates.csv").unwrap() {
            let names = [&row[0], &row[1]].into_iter().chain(row[2].split('|'));
            for text in names.filter(|t| !t.is_empty()) {
                match r.resolve(text) {
                    Resolution::Found(e) => {
                        assert_eq!((e.code.as_str(), e.kind), (&row[0], EntityKind::Aggregate))
                    }
                    other => panic!("{text:?}: {other:?}"),
                }
            }
        }
    }

    #[test]
    fn unknown_names_get_near_suggestions_only() {
        let r = Resolver::builtin();
        assert_eq!(suggestions_for(&r, "Atlantis"), Vec::<String>::new());
        let frnace = suggestions_for(&r, "Frnace");
        assert_eq!(
            frnace.first().map(String::as_str),
            Some("France (FRA)"),
            "{frnace:?}"
        );
        assert!(suggestions_for(&r, "Germny").contains(&"Germany (DEU)".to_string()));
        assert!(suggestions_for(&r, "").is_empty());
    }

    #[test]
    fn korea_alone_is_not_guessed() {
        // Both Koreas are "Korea" in everyday speech (common practice); only suggest.
        let r = Resolver::builtin();
        let s = suggestions_for(&r, "Korea");
        assert!(
            s.iter().any(|x| x.ends_with("(KOR)")) && s.iter().any(|x| x.ends_with("(PRK)")),
            "{s:?}"
        );
    }

    #[test]
    fn no_builtin_name_is_ambiguous() {
        let r = Resolver::builtin();
        let ambiguous: Vec<(&String, Vec<&str>)> = r
            .names
            .iter()
            .filter(|(_, e)| e.targets.len() > 1)
            .map(|(k, e)| {
                (
                    k,
                    e.targets
                        .iter()
                        .map(|(i, _)| r.entities[*i].code.as_str())
                        .collect(),
                )
            })
            .collect();
        assert!(ambiguous.is_empty(), "{ambiguous:?}");
    }

    #[test]
    fn an_ambiguous_key_resolves_to_nothing_and_suggests_both() {
        let mut r = Resolver::builtin();
        let (fra, deu) = (r.codes["FRA"], r.codes["DEU"]);
        let key = normalize("Testland");
        assert!(r.insert_name(key.clone(), fra, Origin::Builtin));
        assert!(r.insert_name(key, deu, Origin::Builtin));
        let s = suggestions_for(&r, "testland");
        assert_eq!(s, ["France (FRA)", "Germany (DEU)"]);
    }

    #[test]
    fn user_assigned_ranges() {
        // ISO 3166-1 reserves AAA-AAZ, QMA-QZZ, XAA-XZZ and ZZA-ZZZ for users (from memory).
        for code in [
            "AAA", "AAZ", "QMA", "QQQ", "QZZ", "XAA", "XKX", "XZZ", "ZZA", "ZZZ", "xab",
        ] {
            assert!(is_user_assigned_alpha3(code), "{code}");
        }
        for code in [
            "ABA", "QLZ", "QAA", "WZZ", "YAA", "ZYZ", "BAD", "ZZ1", "XA", "XAAA",
        ] {
            assert!(!is_user_assigned_alpha3(code), "{code}");
        }
        // Cross-check against the standard itself: no assigned code falls in those ranges.
        let iso = iso_alpha3_codes();
        assert!(iso.iter().all(|c| !is_user_assigned_alpha3(c)));
    }

    #[test]
    fn kind_names() {
        let kinds = [EntityKind::Country, EntityKind::Aggregate, EntityKind::User];
        assert_eq!(kinds.map(|k| k.as_str()), ["country", "aggregate", "user"]);
    }
}
