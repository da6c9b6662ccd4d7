//! Exact parsing of the messy numbers found in published tables.
//!
//! A cell is parsed with `rust_decimal`, never through `f64`, so `0.1` stays `0.1` until the
//! value enters the frame. The parser owns the rules for thousands separators, decimal commas,
//! currency signs, percent signs, footnote marks, accounting negatives, scientific notation and
//! the many ways publishers write "no figure". It knows nothing about files: callers attach the
//! file, line and column to the `NumberError` they get back.

use rust_decimal::prelude::ToPrimitive;
use rust_decimal::Decimal;
use std::str::FromStr;

/// How a cell was read.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// A number; `footnote` is true when a footnote or status mark was removed. `float` is the
    /// f64 nearest to the number as written (correctly rounded from the text, also where the
    /// decimal had to round beyond its 28 places); `value` is exact within those places.
    Number {
        value: Decimal,
        float: f64,
        footnote: bool,
    },
    /// One of the conventional "no figure" marks, or an empty cell.
    Missing,
}

/// Why a cell is not a number, in words a user understands.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NumberError {
    pub reason: String,
    pub hint: String,
}

/// Options that change how a number is read.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct NumberStyle {
    /// `1.234,5` means one thousand two hundred and thirty-four and a half.
    pub decimal_comma: bool,
}

/// Marks that publishers use for "no figure" (common practice: World Bank `..`, Eurostat `:`,
/// OECD and UN `n/a`, `-` and the en and em dashes).
const MISSING_MARKS: &[&str] = &[
    "", "-", "–", "—", "..", "...", "…", ":", "n/a", "na", "n.a.", "n.a", "x",
];

/// Signs that may stand before or after an amount. Multi-character prefixes come first so that
/// `US$` is not read as `US` plus `$`.
const CURRENCY_SIGNS: &[&str] = &[
    "US$", "A$", "C$", "NZ$", "HK$", "S$", "R$", "$", "€", "£", "¥", "₹", "₩", "₽", "₺", "₫", "₦",
    "₱", "฿", "₪", "¢", "₴", "₸", "₲", "₡", "₵", "₭", "₮", "₼", "₾",
];

/// Eurostat and OECD status letters written after a figure (b break, c confidential,
/// d definition differs, e estimated, f forecast, n not significant, p provisional, r revised,
/// s Eurostat estimate, u low reliability, z not applicable). Common practice in statistical
/// publishing; other trailing letters such as `k` or `m` are refused because they may be
/// magnitudes.
const STATUS_LETTERS: &str = "bcdefnprsuz";

/// Footnote symbols removed from the end of a cell.
const FOOTNOTE_SYMBOLS: &[char] = &[
    '*', '†', '‡', '§', '#', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹', '⁰',
];

/// Reads one cell.
pub fn parse_cell(text: &str, style: NumberStyle) -> Result<Cell, NumberError> {
    if let Some(cell) = plain_number(text, style) {
        return Ok(cell);
    }
    let trimmed = trim_spaces(text);
    if is_missing_mark(trimmed) || is_flagged_missing(trimmed) {
        return Ok(Cell::Missing);
    }
    let (body, footnote) = strip_footnote(trimmed);
    let body = trim_spaces(body);
    if body.is_empty() {
        return Err(error(
            format!(
                "\"{}\" holds only a footnote mark",
                crate::cells::words::shorten(text)
            ),
            "a number, or a missing-value mark such as .. or n/a",
        ));
    }
    let (value, float) = parse_amount(body, style).map_err(|mut e| {
        e.reason = format!("\"{}\" {}", crate::cells::words::shorten(text), e.reason);
        e
    })?;
    Ok(Cell::Number {
        value,
        float,
        footnote,
    })
}

/// Reads one cell as a float only, for tables whose exact decimal value is never used (the
/// factors of reference tables): the plain-number fast path without its `Decimal`, otherwise
/// [`parse_cell`]. `None` is a missing-value mark.
pub fn parse_float_cell(text: &str, style: NumberStyle) -> Result<Option<f64>, NumberError> {
    if let Some(float) = plain_float(text, style) {
        return Ok(Some(float));
    }
    match parse_cell(text, style)? {
        Cell::Missing => Ok(None),
        Cell::Number { float, .. } => Ok(Some(float)),
    }
}

/// The fast path for the cells most tables are made of: an optional minus, digits and at most
/// one decimal point (`-1234.5`), at most 28 digits, no spaces, marks or separators. It gives
/// exactly what the general path gives (a unit test compares the two), without its allocations.
fn plain_number(text: &str, style: NumberStyle) -> Option<Cell> {
    let float = plain_float(text, style)?;
    // At most 28 digits always fit a Decimal (its bound is about 7.9e28).
    let value = Decimal::from_str(text).ok()?;
    let value = if value.is_zero() {
        Decimal::ZERO
    } else {
        value.normalize()
    };
    Some(Cell::Number {
        value,
        float,
        footnote: false,
    })
}

/// The float of a plain number (see [`plain_number`]), with -0 read as 0.
fn plain_float(text: &str, style: NumberStyle) -> Option<f64> {
    let bytes = text.as_bytes();
    let digits_from = usize::from(bytes.first() == Some(&b'-'));
    let body = &bytes[digits_from..];
    let mut points = 0;
    let mut digits = 0;
    for b in body {
        match b {
            b'0'..=b'9' => digits += 1,
            b'.' => points += 1,
            _ => return None,
        }
    }
    let point_ok = points == 0 || (points == 1 && !style.decimal_comma);
    let ends_ok =
        body.first().is_some_and(u8::is_ascii_digit) && body.last().is_some_and(u8::is_ascii_digit);
    if !point_ok || !ends_ok || digits > 28 {
        return None;
    }
    let float = text.parse::<f64>().ok()?;
    Some(if float == 0.0 { 0.0 } else { float })
}

/// Reads a cell and converts it to `f64` for the frame. Values beyond `f64` cannot occur because
/// `Decimal` is bounded by about 7.9e28.
pub fn to_f64(value: Decimal) -> f64 {
    let v = value
        .to_string()
        .parse::<f64>()
        .unwrap_or_else(|_| value.to_f64().unwrap_or(f64::NAN));
    // -0 is written as 0 so that output never shows a signed zero.
    if v == 0.0 {
        0.0
    } else {
        v
    }
}

fn error(reason: impl Into<String>, hint: impl Into<String>) -> NumberError {
    NumberError {
        reason: reason.into(),
        hint: hint.into(),
    }
}

fn trim_spaces(text: &str) -> &str {
    text.trim_matches(|c: char| {
        c.is_whitespace() || c == '\u{a0}' || c == '\u{202f}' || c == '\u{2009}'
    })
}

/// A statistics office's missing mark with a status letter: `: c` (confidential), `: z` (not
/// applicable), `:u` (common practice at Eurostat: `:` means not available).
fn is_flagged_missing(text: &str) -> bool {
    text.strip_prefix(':').is_some_and(|rest| {
        let letters = rest.trim();
        (1..=3).contains(&letters.len()) && letters.chars().all(|c| STATUS_LETTERS.contains(c))
    })
}

fn is_missing_mark(text: &str) -> bool {
    let lower = text.to_lowercase();
    MISSING_MARKS.contains(&lower.as_str())
}

/// Removes trailing footnote symbols, bracketed notes (`[1]`, `(e)`) and status letters.
fn strip_footnote(text: &str) -> (&str, bool) {
    let mut body = text;
    let mut found = false;
    loop {
        let before = body;
        body = trim_spaces(body);
        if let Some(stripped) = body.strip_suffix(FOOTNOTE_SYMBOLS) {
            body = stripped;
        } else if body.ends_with(']') {
            if let Some(open) = body.rfind('[') {
                body = &body[..open];
            }
        } else if let Some(stripped) = strip_status_letters(body) {
            body = stripped;
        }
        if body.len() == before.len() {
            break;
        }
        found = true;
    }
    (body, found)
}

/// `12.3e`, `12.3 p`, `12.3 (e)`, `12.3bp`: up to two status letters after a digit, a space or a
/// percent sign. `1.2e5` is scientific notation and is left alone because a digit follows the e.
fn strip_status_letters(text: &str) -> Option<&str> {
    let inner = if text.ends_with(')') {
        let open = text.rfind('(')?;
        let letters = &text[open + 1..text.len() - 1];
        if (1..=2).contains(&letters.len()) && letters.chars().all(|c| STATUS_LETTERS.contains(c)) {
            let before = text[..open].trim_end();
            if before.ends_with(|c: char| c.is_ascii_digit() || c == '%') {
                return Some(before);
            }
        }
        return None;
    } else {
        text
    };
    let letters_len = inner
        .chars()
        .rev()
        .take_while(|c| c.is_ascii_alphabetic())
        .count();
    if !(1..=2).contains(&letters_len) {
        return None;
    }
    let split = inner.len() - letters_len;
    let (before, letters) = inner.split_at(split);
    if !letters.chars().all(|c| STATUS_LETTERS.contains(c)) {
        return None;
    }
    let before_trim = before.trim_end();
    if before_trim.ends_with(|c: char| c.is_ascii_digit() || c == '%') {
        Some(before_trim)
    } else {
        None
    }
}

fn parse_amount(body: &str, style: NumberStyle) -> Result<(Decimal, f64), NumberError> {
    let mut s = body.replace('\u{2212}', "-");
    let mut negative = false;

    // Accounting negatives: (1,234) or (1,234 EUR).
    if s.starts_with('(') && s.ends_with(')') {
        negative = true;
        s = s[1..s.len() - 1].trim().to_string();
    }
    if let Some(rest) = s.strip_prefix('-') {
        negative = !negative;
        s = rest.trim_start().to_string();
    } else if let Some(rest) = s.strip_prefix('+') {
        s = rest.trim_start().to_string();
    }

    s = strip_currency(&s)?;
    // A sign may also follow the currency sign: $-12, € -12.
    if let Some(rest) = s.strip_prefix('-') {
        negative = !negative;
        s = rest.trim_start().to_string();
    }
    if let Some(rest) = s.strip_suffix('%') {
        s = rest.trim_end().to_string();
    }

    if s.is_empty() {
        return Err(error(
            "has a sign but no digits",
            "a number such as 1,234.5",
        ));
    }
    let lower = s.to_lowercase();
    if lower == "nan" || lower.starts_with("inf") {
        return Err(error(
            "is not a finite number",
            "a finite number, or a missing-value mark such as .. or n/a",
        ));
    }

    let plain = remove_grouping(&s, style)?;
    let value = if plain.contains(['e', 'E']) {
        Decimal::from_scientific(&plain)
            .ok()
            .or_else(|| {
                // Smaller than the decimal's 28 places: keep the nearest decimal; the float
                // below still comes from the text.
                let f = plain.parse::<f64>().ok().filter(|f| f.is_finite() && f.abs() < 1.0)?;
                Some(rust_decimal::prelude::FromPrimitive::from_f64(f).unwrap_or(Decimal::ZERO))
            })
            .ok_or_else(|| {
            error(
                "is outside the range of exact decimals (about ±7.9e28) or badly formed",
                "a number in plain or scientific notation such as 1.5e6; for very large totals state the table in millions and pass --value-multiplier",
            )
        })?
    } else {
        Decimal::from_str(&plain).map_err(|_| {
            if plain.bytes().filter(u8::is_ascii_digit).count() > 28
                && plain.bytes().all(|b| b.is_ascii_digit() || b == b'.')
            {
                error(
                    "is a number beyond the range of exact decimals (about 7.9e28, or 28 significant digits)",
                    "a figure of at most 28 digits; state very large totals in millions and pass --value-multiplier",
                )
            } else {
                error(
                    "is not a number",
                    "a number such as 1,234.5 (or 1.234,5 with --decimal-comma)",
                )
            }
        })?
    };
    let value = if negative { -value } else { value };
    let value = if value.is_zero() {
        Decimal::ZERO
    } else {
        value.normalize()
    };
    // The float comes from the text, which Rust's parser rounds correctly, so a figure beyond
    // the decimal's 28 places still reaches its nearest f64.
    let float = plain
        .parse::<f64>()
        .map(|f| if negative { -f } else { f })
        .unwrap_or_else(|_| to_f64(value));
    // A figure too small for a double would silently become 0 or lose its digits.
    let nonzero = plain
        .bytes()
        .take_while(|b| *b != b'e' && *b != b'E')
        .any(|b| (b'1'..=b'9').contains(&b));
    if nonzero && (float == 0.0 || float.abs() < f64::MIN_POSITIVE) {
        return Err(error(
            "is smaller than a double holds (below about 2.2e-308): it would become 0 or lose digits",
            "a figure in a larger unit (state it in thousandths and pass --value-multiplier 0.001)",
        ));
    }
    Ok((value, if float == 0.0 { 0.0 } else { float }))
}

/// Removes one currency sign or ISO 4217-looking code before or after the amount; two signs are
/// an error because the cell then says two different things.
fn strip_currency(s: &str) -> Result<String, NumberError> {
    let mut rest = s.to_string();
    let mut found = 0;
    for sign in CURRENCY_SIGNS {
        if let Some(r) = rest.strip_prefix(sign) {
            rest = r.trim_start().to_string();
            found += 1;
            break;
        }
    }
    for sign in CURRENCY_SIGNS {
        if let Some(r) = rest.strip_suffix(sign) {
            rest = r.trim_end().to_string();
            found += 1;
            break;
        }
    }
    // Three capital letters and a space (`EUR 12`, `12 EUR`).
    let bytes = rest.as_bytes();
    if bytes.len() > 4 && bytes[..3].iter().all(u8::is_ascii_uppercase) && bytes[3] == b' ' {
        rest = rest[4..].trim_start().to_string();
        found += 1;
    }
    let bytes = rest.as_bytes();
    let n = bytes.len();
    if n > 4 && bytes[n - 3..].iter().all(u8::is_ascii_uppercase) && bytes[n - 4] == b' ' {
        rest = rest[..n - 4].trim_end().to_string();
        found += 1;
    }
    if found > 1 {
        return Err(error(
            "carries two currency signs",
            "one amount with at most one currency sign; state the currency with --currency or --currency-code",
        ));
    }
    Ok(rest)
}

/// Removes thousands separators after checking that they group digits the way publishers do:
/// threes (1,234,567) or the Indian lakh pattern (12,34,567). Spaces, narrow spaces and
/// apostrophes (Swiss style) also separate thousands.
fn remove_grouping(s: &str, style: NumberStyle) -> Result<String, NumberError> {
    let (group_sep, decimal_sep) = if style.decimal_comma {
        ('.', ',')
    } else {
        (',', '.')
    };
    let mut cleaned = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            ' ' | '\u{a0}' | '\u{202f}' | '\u{2009}' | '\'' | '’' => cleaned.push(group_sep),
            _ => cleaned.push(c),
        }
    }
    let (mantissa, exponent) = match cleaned.find(['e', 'E']) {
        Some(i) => (&cleaned[..i], &cleaned[i..]),
        None => (cleaned.as_str(), ""),
    };
    let mut parts = mantissa.splitn(2, decimal_sep);
    let integer = parts.next().unwrap_or("");
    let fraction = parts.next();
    if let Some(fraction) = fraction {
        if fraction.contains(group_sep) || fraction.contains(decimal_sep) {
            return Err(misplaced_separator(style));
        }
    }
    if integer.contains(group_sep) {
        let groups: Vec<&str> = integer.split(group_sep).collect();
        if !valid_grouping(&groups) {
            return Err(misplaced_separator(style));
        }
    }
    let mut plain: String = integer.chars().filter(|&c| c != group_sep).collect();
    if let Some(fraction) = fraction {
        plain.push('.');
        plain.push_str(fraction);
    }
    plain.push_str(exponent);
    if !plain
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | 'e' | 'E' | '-' | '+'))
    {
        return Err(error(
            "is not a number",
            "a number such as 1,234.5; remove words and units from the cell, or pass --lenient to keep the row flagged `unparsed`",
        ));
    }
    Ok(plain)
}

fn valid_grouping(groups: &[&str]) -> bool {
    let all_digits = groups
        .iter()
        .all(|g| !g.is_empty() && g.bytes().all(|b| b.is_ascii_digit()));
    // A leading zero group (0,800 or 00,800) groups no thousands: it is a decimal comma.
    if !all_digits || groups.len() < 2 || groups[0].len() > 3 || groups[0].starts_with('0') {
        return false;
    }
    let tail = &groups[1..];
    let threes = tail.iter().all(|g| g.len() == 3);
    let lakh = tail.len() >= 2
        && tail[tail.len() - 1].len() == 3
        && tail[..tail.len() - 1].iter().all(|g| g.len() == 2)
        && groups[0].len() <= 2;
    threes || lakh
}

fn misplaced_separator(style: NumberStyle) -> NumberError {
    if style.decimal_comma {
        error(
            "has separators in places a decimal-comma number cannot have them",
            "a number such as 1.234,5 (decimal comma); drop --decimal-comma if the table uses a decimal point",
        )
    } else {
        error(
            "has separators in places a decimal-point number cannot have them",
            "a number such as 1,234.5; if the table writes 1.234,5, pass --decimal-comma",
        )
    }
}

#[cfg(test)]
mod tests {

    #[test]
    fn the_fast_path_gives_what_the_general_path_gives() {
        // Every plain form, including the edge cases of signs, zeros and 28 digits.
        let cases = [
            "0",
            "-0",
            "0.0",
            "-0.0",
            "7",
            "007",
            "-12",
            "12.50",
            "1234567.891",
            "0.1",
            "0.30000000000000004",
            "9999999999999999999999999999",
            "1.000000000000000000000000001",
            "-79228162514264337593543950335",
            "123.",
            ".5",
            "1.2.3",
            "--1",
            "1e5",
            "12,5",
            "9007199254740993",
            "2.2250738585072014",
            "-",
        ];
        for style in [
            NumberStyle::default(),
            NumberStyle {
                decimal_comma: true,
            },
        ] {
            for case in cases {
                let general = {
                    let trimmed = trim_spaces(case);
                    if is_missing_mark(trimmed) {
                        None
                    } else {
                        parse_amount(trimmed, style).ok()
                    }
                };
                match plain_number(case, style) {
                    Some(Cell::Number { value, float, .. }) => {
                        let (v, f) =
                            general.unwrap_or_else(|| panic!("{case}: general path fails"));
                        assert_eq!(value, v, "{case}");
                        assert_eq!(value.to_string(), v.to_string(), "{case}");
                        assert_eq!(float.to_bits(), f.to_bits(), "{case}");
                    }
                    Some(other) => panic!("{case}: {other:?}"),
                    None => {}
                }
            }
        }
        assert!(plain_number(
            "12.5",
            NumberStyle {
                decimal_comma: true
            }
        )
        .is_none());
        assert!(plain_number("1234", NumberStyle::default()).is_some());
    }

    #[test]
    fn the_float_reader_gives_the_float_of_the_cell_reader() {
        let cases = [
            "0",
            "-0",
            "-0.0",
            "12.50",
            "0.30000000000000004",
            "9999999999999999999999999999",
            "-79228162514264337593543950335",
            "9007199254740993",
            "1,234.5",
            "1.234,5",
            "..",
            "n/a",
            "",
            " 12 ",
            "12 p",
            "3.5*",
            "1e5",
            "abc",
            "-",
            "(12)",
        ];
        for style in [
            NumberStyle::default(),
            NumberStyle {
                decimal_comma: true,
            },
        ] {
            for case in cases {
                let float = parse_float_cell(case, style).map_err(|e| e.reason);
                let cell = parse_cell(case, style).map_err(|e| e.reason);
                match (float, cell) {
                    (Ok(Some(f)), Ok(Cell::Number { float, .. })) => {
                        assert_eq!(f.to_bits(), float.to_bits(), "{case}")
                    }
                    (Ok(None), Ok(Cell::Missing)) => {}
                    (Err(a), Err(b)) => assert_eq!(a, b, "{case}"),
                    (a, b) => panic!("{case}: {a:?} against {b:?}"),
                }
            }
        }
    }

    use super::*;

    fn num(text: &str) -> Decimal {
        match parse_cell(text, NumberStyle::default()) {
            Ok(Cell::Number { value, .. }) => value,
            other => panic!("{text:?} gave {other:?}"),
        }
    }

    fn comma(text: &str) -> Decimal {
        match parse_cell(
            text,
            NumberStyle {
                decimal_comma: true,
            },
        ) {
            Ok(Cell::Number { value, .. }) => value,
            other => panic!("{text:?} gave {other:?}"),
        }
    }

    fn dec(s: &str) -> Decimal {
        Decimal::from_str(s).unwrap()
    }

    #[test]
    fn underflow_and_numbers_beyond_the_decimal_are_refused_with_the_reason() {
        let reason = |text: &str| parse_cell(text, NumberStyle::default()).unwrap_err().reason;
        assert!(
            reason("1e-400").contains("smaller than a double holds"),
            "{}",
            reason("1e-400")
        );
        assert!(reason("4.9e-324").contains("smaller than a double holds"));
        assert!(reason("99999999999999999999999999999999")
            .contains("beyond the range of exact decimals"));
        assert_eq!(num("0e-400"), dec("0"));
    }

    #[test]
    fn a_leading_zero_group_is_not_a_thousands_grouping() {
        // "0,800" is 0.8 with a decimal comma; read as 800 it would be off by a thousand.
        assert!(parse_cell("0,800", NumberStyle::default()).is_err());
        assert!(parse_cell("00,800", NumberStyle::default()).is_err());
        assert_eq!(comma("0,800"), dec("0.8"));
        assert_eq!(num("1,800"), dec("1800"));
    }

    #[test]
    fn plain_grouped_and_signed_numbers() {
        assert_eq!(num("1234.5"), dec("1234.5"));
        assert_eq!(num("1,234.5"), dec("1234.5"));
        assert_eq!(num("1,234,567"), dec("1234567"));
        assert_eq!(num(" -12 "), dec("-12"));
        assert_eq!(num("+12"), dec("12"));
        assert_eq!(num("−7"), dec("-7"));
        assert_eq!(num("1 234 567"), dec("1234567"));
        assert_eq!(num("1'234.5"), dec("1234.5"));
        assert_eq!(num("0.1"), dec("0.1"));
    }

    #[test]
    fn decimal_comma_on_request_only() {
        assert_eq!(comma("1.234,5"), dec("1234.5"));
        assert_eq!(comma("12,5"), dec("12.5"));
        let err = parse_cell("1.234,5", NumberStyle::default()).unwrap_err();
        assert!(err.hint.contains("--decimal-comma"), "{err:?}");
    }

    #[test]
    fn indian_lakh_grouping_is_read() {
        // Indian numbering groups by two above the thousands (common practice).
        assert_eq!(num("12,34,567"), dec("1234567"));
        assert!(parse_cell("1,23,4", NumberStyle::default()).is_err());
    }

    #[test]
    fn currency_percent_and_accounting_negatives() {
        assert_eq!(num("$1,200"), dec("1200"));
        assert_eq!(num("US$ 3.5"), dec("3.5"));
        assert_eq!(num("12 €"), dec("12"));
        assert_eq!(num("EUR 40"), dec("40"));
        assert_eq!(num("12.5%"), dec("12.5"));
        assert_eq!(num("(1,234)"), dec("-1234"));
        assert_eq!(num("($1,234)"), dec("-1234"));
        let err = parse_cell("$12€", NumberStyle::default()).unwrap_err();
        assert!(err.reason.contains("two currency signs"));
    }

    #[test]
    fn footnote_marks_are_removed_and_reported() {
        for text in [
            "1,234.5*", "12.3e", "12.3 p", "12.3 (e)", "7†", "7[1]", "7²", "12.3bp",
        ] {
            match parse_cell(text, NumberStyle::default()) {
                Ok(Cell::Number { footnote: true, .. }) => {}
                other => panic!("{text:?} gave {other:?}"),
            }
        }
        assert_eq!(num("1,234.5*"), dec("1234.5"));
        assert!(
            parse_cell("12k", NumberStyle::default()).is_err(),
            "k may be a magnitude"
        );
    }

    #[test]
    fn scientific_notation() {
        assert_eq!(num("1.5e3"), dec("1500"));
        assert_eq!(num("2E-2"), dec("0.02"));
        assert!(parse_cell("1e400", NumberStyle::default()).is_err());
    }

    #[test]
    fn missing_marks_are_missing_not_errors() {
        for text in ["", "  ", "-", "–", "—", "..", "n/a", "NA", "N/A", "…"] {
            assert_eq!(
                parse_cell(text, NumberStyle::default()),
                Ok(Cell::Missing),
                "{text:?}"
            );
        }
    }

    #[test]
    fn non_numbers_are_errors_with_a_hint() {
        for text in ["abc", "NaN", "inf", "12..5", "1.2.3", "twelve", "*"] {
            let err = parse_cell(text, NumberStyle::default()).unwrap_err();
            assert!(!err.hint.is_empty(), "{text:?}");
        }
    }

    #[test]
    fn negative_zero_is_plain_zero() {
        assert_eq!(num("-0"), Decimal::ZERO);
        assert_eq!(to_f64(num("-0")).to_string(), "0");
    }

    #[test]
    fn exact_decimal_reaches_nearest_f64() {
        assert_eq!(to_f64(num("0.1")), 0.1);
        assert_eq!(to_f64(num("304.702")), 304.702);
        // Beyond the decimal's 28 places the float still comes from the text as written.
        match parse_cell("7.107842037167992e-20", NumberStyle::default()) {
            Ok(Cell::Number { float, .. }) => assert_eq!(float, 7.107842037167992e-20),
            other => panic!("{other:?}"),
        }
    }
}
