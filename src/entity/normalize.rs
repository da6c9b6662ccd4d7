//! Name normalisation for entity matching: turns a country or aggregate name as a publisher
//! wrote it into the key that the resolver's name index is built on. Two spellings that a
//! reader would call "the same name" must give the same key; two different names must not.
//!
//! The steps, in order: compatibility decomposition with accents dropped (plus a few letters
//! that do not decompose, such as ß and ø), lower case, apostrophes and periods removed,
//! `&` read as "and", hyphens, brackets and other punctuation read as spaces, a name with
//! exactly one comma read inverted ("Korea, Republic of" is "Republic of Korea"), the word
//! "the" dropped wherever it stands, and whitespace collapsed.

use unicode_normalization::char::is_combining_mark;
use unicode_normalization::UnicodeNormalization;

/// The matching key of `text`. Empty when `text` holds no letter or digit (or only "the").
pub fn normalize(text: &str) -> String {
    let folded = fold(text);
    let parts: Vec<&str> = folded
        .split(',')
        .map(str::trim)
        .filter(|p| !p.is_empty())
        .collect();
    // Publishers invert names to sort them by the distinctive word ("Korea, Rep.",
    // "Gambia, The"); undoing one inversion makes those equal to the natural order. With
    // two or more commas the name is a list ("A, B and C"), which must not be reordered.
    let ordered = if parts.len() == 2 {
        format!("{} {}", parts[1], parts[0])
    } else {
        parts.join(" ")
    };
    // "The" never tells two countries apart, but publishers add and drop it freely
    // ("The Gambia", "Republic of the Congo" / "Republic of Congo").
    ordered
        .split_whitespace()
        .filter(|w| *w != "the")
        .collect::<Vec<_>>()
        .join(" ")
}

/// Folds case, accents and punctuation; keeps commas so the caller can undo an inversion.
fn fold(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    // NFKD rather than NFD so that full-width letters and ligatures copied from PDFs fold
    // to plain letters too.
    for c in text.nfkd() {
        if is_combining_mark(c) {
            continue;
        }
        if let Some(replacement) = letter_without_decomposition(c) {
            out.push_str(replacement);
            continue;
        }
        match c {
            // Apostrophes of every shape vanish, so "Côte d'Ivoire" and "Cote dIvoire" agree.
            '\'' | '\u{2019}' | '\u{2018}' | '\u{02BC}' | '\u{02BB}' | '`' | '\u{00B4}'
            | '\u{2032}' => {}
            // Periods only mark abbreviations here ("U.S.", "St.", "Rep.").
            '.' => {}
            '&' => out.push_str(" and "),
            ',' => out.push(','),
            c if c.is_alphanumeric() => out.extend(c.to_lowercase()),
            // Hyphens, dashes, brackets, slashes and all other marks separate words.
            _ => out.push(' '),
        }
    }
    out
}

/// Latin letters that Unicode does not decompose into a base letter plus a mark, spelled
/// the way English-language publishers transliterate them (common practice).
fn letter_without_decomposition(c: char) -> Option<&'static str> {
    Some(match c {
        'ß' | 'ẞ' => "ss",
        'æ' | 'Æ' => "ae",
        'œ' | 'Œ' => "oe",
        'ø' | 'Ø' => "o",
        'ł' | 'Ł' => "l",
        'đ' | 'Đ' => "d",
        'ð' | 'Ð' => "d",
        'þ' | 'Þ' => "th",
        'ı' => "i",
        'ħ' | 'Ħ' => "h",
        _ => return None,
    })
}

#[cfg(test)]
mod tests {
    use super::normalize;

    fn same(a: &str, b: &str) {
        assert_eq!(
            normalize(a),
            normalize(b),
            "{a:?} and {b:?} should share a key"
        );
    }

    fn different(a: &str, b: &str) {
        assert_ne!(
            normalize(a),
            normalize(b),
            "{a:?} and {b:?} must not share a key"
        );
    }

    #[test]
    fn case_accents_and_apostrophes_are_ignored() {
        // ISO 3166-1 short name "Côte d'Ivoire" (Debian iso-codes) against the unaccented,
        // apostrophe-free and typographic-apostrophe spellings publishers use (common practice).
        same("Côte d'Ivoire", "cote divoire");
        same("Côte d'Ivoire", "CÔTE D’IVOIRE");
        same("Côte d'Ivoire", "Cote d`Ivoire");
        // ISO 3166-1 "Curaçao", "Réunion", "Åland Islands", "Saint Barthélemy" (Debian iso-codes).
        same("Curaçao", "CURACAO");
        same("Réunion", "Reunion");
        same("Åland Islands", "aland islands");
        same("Saint Barthélemy", "Saint Barthelemy");
    }

    #[test]
    fn letters_that_do_not_decompose_are_transliterated() {
        // German ß is written "ss" without the letter (Duden rule, from memory); Danish and
        // Norwegian ø as "o", Polish ł as "l" in English-language tables (common practice).
        same("Großbritannien", "Grossbritannien");
        same("Færøerne", "Faeroerne");
        same("Łódź", "Lodz");
    }

    #[test]
    fn one_comma_inversion_is_undone() {
        // ISO 3166-1 "Korea, Republic of" and UN "Republic of Korea" (common practice).
        same("Korea, Republic of", "Republic of Korea");
        same("Korea, Republic of", "republic of korea");
        // World Bank WDI "Gambia, The" (from memory) and ISO 3166-1 "Gambia".
        same("Gambia, The", "The Gambia");
        same("Gambia, The", "Gambia");
        // ISO 3166-1 "Congo, The Democratic Republic of the" (Debian iso-codes).
        same(
            "Congo, The Democratic Republic of the",
            "Democratic Republic of the Congo",
        );
        same(
            "Congo, The Democratic Republic of the",
            "Democratic Republic of Congo",
        );
    }

    #[test]
    fn a_list_with_two_commas_is_not_reordered() {
        // Two commas mean a list of parts, not an inversion (common practice); reordering
        // it would invent a name nobody writes.
        let key = normalize("Bonaire, Sint Eustatius, and Saba");
        assert!(key.starts_with("bonaire"), "{key}");
    }

    #[test]
    fn punctuation_variants_agree() {
        // "U.S." / "US" and "St." / "St" are the same abbreviation (common practice).
        same("Virgin Islands (U.S.)", "Virgin Islands US");
        same("St. Lucia", "St Lucia");
        // "&" is how World Bank aggregate names spell "and" ("East Asia & Pacific", from memory).
        same("East Asia & Pacific", "East Asia and Pacific");
        same("Guinea-Bissau", "Guinea Bissau");
        same("Timor–Leste", "Timor Leste");
        same("  United   Kingdom ", "United Kingdom");
    }

    #[test]
    fn distinct_names_stay_distinct() {
        // ISO 3166-1 lists each pair as separate countries (Debian iso-codes).
        different("Niger", "Nigeria");
        different("Dominica", "Dominican Republic");
        different("Congo", "Congo, The Democratic Republic of the");
        different("Sudan", "South Sudan");
        different("Guinea", "Equatorial Guinea");
        different("Samoa", "American Samoa");
        different("Virgin Islands, British", "Virgin Islands, U.S.");
    }

    #[test]
    fn text_without_letters_has_an_empty_key() {
        assert!(normalize("  ").is_empty());
        assert!(normalize("...").is_empty());
        assert!(normalize("The").is_empty());
    }
}
