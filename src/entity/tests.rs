//! Unit tests of the resolver: the built-in ISO 3166-1 and ISO 4217 tables against Debian's
//! iso-codes package, publishers' name variants, aggregates and suggestions.

use super::*;
use std::collections::HashSet;

/// The fields of an ISO 3166-1 entry in Debian's iso-codes JSON that name or code a country.
const ISO_3166_FIELDS: [&str; 6] = [
    "alpha_2",
    "alpha_3",
    "numeric",
    "name",
    "official_name",
    "common_name",
];

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
        for field in ISO_3166_FIELDS {
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
            ISO_3166_FIELDS
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
