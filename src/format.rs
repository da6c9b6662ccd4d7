//! Turning frame cells into text: full precision for machine formats, rounded for reading.
//!
//! One rounding rule everywhere: half to even (banker's rounding, the IEEE 754 default), either
//! to a number of decimals (`--decimals`) or to significant digits (`--sig`). Without either,
//! machine formats (csv, json) keep every digit and reader formats (table, md) use the reading
//! rule: no decimals from 100 up, two from 1 up, three significant digits below 1.

use crate::shortest::shortest;
use polars::prelude::*;
use rust_decimal::prelude::FromPrimitive;
use rust_decimal::{Decimal, RoundingStrategy};
use std::str::FromStr;

/// How to round numbers when writing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
pub enum Rounding {
    /// Every digit (shortest text that reads back to the same f64).
    #[default]
    Full,
    /// The reading rule described above.
    Reading,
    Decimals(u32),
    Significant(u32),
}

/// Formats one number; `grouping` adds thousands separators (reader formats only).
pub fn format_number(value: f64, rounding: Rounding, grouping: bool) -> String {
    if !value.is_finite() {
        return String::new();
    }
    let text = match rounding {
        Rounding::Full => {
            let v = if value == 0.0 { 0.0 } else { value };
            shortest(v)
        }
        Rounding::Decimals(dp) => round_dp(value, dp),
        Rounding::Significant(sig) => round_sig(value, sig.max(1)),
        Rounding::Reading => {
            let magnitude = value.abs();
            if magnitude >= 100.0 {
                round_dp(value, 0)
            } else if magnitude >= 1.0 {
                round_dp(value, 2)
            } else {
                round_sig(value, 3)
            }
        }
    };
    if grouping {
        group_thousands(&text)
    } else {
        text
    }
}

/// The decimal a reader sees for `value`: its shortest round-trip text, so that 2.675 rounds as
/// 2.675 and not as the binary 2.67499999...
fn to_decimal(value: f64) -> Option<Decimal> {
    let text = shortest(value);
    Decimal::from_str(&text)
        .ok()
        .or_else(|| Decimal::from_f64(value))
}

/// Digits before the decimal point of `d` (1 for numbers below one).
fn integer_digits(d: Decimal) -> u32 {
    d.abs()
        .trunc()
        .normalize()
        .to_string()
        .trim_start_matches('-')
        .len() as u32
}

fn round_dp(value: f64, dp: u32) -> String {
    // The decimal holds 28 digits in all; beyond that, f64's own formatting (also round half
    // to even on the binary value) serves.
    match to_decimal(value).filter(|d| integer_digits(*d) + dp <= 28) {
        Some(d) => {
            let rounded = d.round_dp_with_strategy(dp, RoundingStrategy::MidpointNearestEven);
            let rounded = if rounded.is_zero() {
                Decimal::ZERO
            } else {
                rounded
            };
            format!("{:.*}", dp as usize, rounded)
        }
        // Beyond Decimal's range: f64's own formatting, which rounds half to even as well.
        None => format!("{:.*}", dp as usize, value),
    }
}

fn round_sig(value: f64, sig: u32) -> String {
    if value == 0.0 {
        return "0".into();
    }
    let exponent = value.abs().log10().floor() as i32;
    let dp = sig as i32 - 1 - exponent;
    if dp >= 0 {
        round_dp(value, dp as u32)
    } else {
        let scale = 10f64.powi(-dp);
        let rounded = match to_decimal(value / scale) {
            Some(d) => d.round_dp_with_strategy(0, RoundingStrategy::MidpointNearestEven),
            None => return format!("{value:.0}"),
        };
        let whole: f64 =
            rust_decimal::prelude::ToPrimitive::to_f64(&rounded).unwrap_or(value) * scale;
        format!("{whole:.0}")
    }
}

fn group_thousands(text: &str) -> String {
    let (sign, rest) = match text.strip_prefix('-') {
        Some(r) => ("-", r),
        None => ("", text),
    };
    let (integer, fraction) = match rest.find('.') {
        Some(i) => (&rest[..i], &rest[i..]),
        None => (rest, ""),
    };
    if integer.len() <= 3 || !integer.bytes().all(|b| b.is_ascii_digit()) {
        return text.to_string();
    }
    let mut grouped = String::new();
    for (i, c) in integer.chars().enumerate() {
        if i > 0 && (integer.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(c);
    }
    format!("{sign}{grouped}{fraction}")
}

/// Text from an input shown to a person: control characters (ESC, BEL, carriage returns and
/// the like, which a terminal would act on) are written as `\u{1b}` escapes. Line breaks are
/// kept; callers that need one line per cell replace them (see `one_line`).
pub fn visible(text: &str) -> std::borrow::Cow<'_, str> {
    if !text.chars().any(|c| c.is_control() && c != '\n') {
        return std::borrow::Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        if c.is_control() && c != '\n' {
            out.push_str(&c.escape_unicode().to_string());
        } else {
            out.push(c);
        }
    }
    std::borrow::Cow::Owned(out)
}

/// A cell for a one-line-per-row format (terminal table, Markdown): control characters
/// escaped and line breaks written as `\n`.
pub fn one_line(text: &str) -> String {
    visible(text).replace('\n', "\\n")
}

/// The one escaping of every string written into HTML or SVG: `& < > " '` as entities, and
/// control characters made visible. The report and the charts cannot write input text by
/// another route.
pub fn html_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in visible(text).chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            other => out.push(other),
        }
    }
    out
}

/// Whether a spreadsheet would take a text cell for a formula: it starts with `=`, `+`, `-`,
/// `@`, a tab or a carriage return, and is not a number or a missing-value mark (`-12`, `+3`
/// and `-` are left as they are).
pub fn runs_as_formula(text: &str) -> bool {
    // The marks are ASCII: the first byte decides (a character of several bytes is none).
    matches!(
        text.as_bytes().first(),
        Some(b'=' | b'+' | b'-' | b'@' | b'\t' | b'\r')
    ) && crate::cells::number::parse_cell(text, Default::default()).is_err()
}

/// A float column's cells (all null when the column is absent).
pub fn floats(frame: &DataFrame, name: &str) -> Vec<Option<f64>> {
    frame
        .column(name)
        .ok()
        .and_then(|c| c.f64().ok().map(|ca| ca.iter().collect()))
        .unwrap_or_else(|| vec![None; frame.height()])
}

/// An integer column's cells as i64 (all null when the column is absent).
pub fn ints(frame: &DataFrame, name: &str) -> Vec<Option<i64>> {
    frame
        .column(name)
        .ok()
        .and_then(|c| c.cast(&DataType::Int64).ok())
        .and_then(|c| c.i64().ok().map(|ca| ca.iter().collect()))
        .unwrap_or_else(|| vec![None; frame.height()])
}

/// A column as text cells (empty for null).
pub fn column_texts(
    frame: &DataFrame,
    name: &str,
    rounding: Rounding,
    grouping: bool,
) -> Vec<String> {
    let Ok(column) = frame.column(name) else {
        return vec![String::new(); frame.height()];
    };
    let series = column.as_materialized_series();
    match series.dtype() {
        DataType::Float64 => series
            .f64()
            .map(|ca| {
                ca.iter()
                    .map(|v| {
                        v.map(|x| format_number(x, rounding, grouping))
                            .unwrap_or_default()
                    })
                    .collect()
            })
            .unwrap_or_default(),
        DataType::String => series
            .str()
            .map(|ca| ca.iter().map(|v| v.unwrap_or("").to_string()).collect())
            .unwrap_or_default(),
        _ => (0..series.len())
            .map(|i| match series.get(i) {
                Ok(AnyValue::Null) | Err(_) => String::new(),
                Ok(v) => v.to_string().trim_matches('"').to_string(),
            })
            .collect(),
    }
}

/// A column as JSON values (numbers stay numbers).
pub fn column_json(frame: &DataFrame, name: &str, rounding: Rounding) -> Vec<serde_json::Value> {
    let Ok(column) = frame.column(name) else {
        return vec![serde_json::Value::Null; frame.height()];
    };
    let series = column.as_materialized_series();
    (0..series.len())
        .map(|i| match series.get(i) {
            Ok(AnyValue::Null) | Err(_) => serde_json::Value::Null,
            Ok(AnyValue::String(s)) => serde_json::Value::String(s.to_string()),
            Ok(AnyValue::Float64(x)) => {
                let text = format_number(x, rounding, false);
                serde_json::from_str::<serde_json::Number>(&text)
                    .map(serde_json::Value::Number)
                    .unwrap_or(serde_json::Value::Null)
            }
            Ok(AnyValue::Int32(x)) => serde_json::Value::from(x),
            Ok(AnyValue::Int64(x)) => serde_json::Value::from(x),
            Ok(AnyValue::UInt32(x)) => serde_json::Value::from(x),
            Ok(AnyValue::UInt64(x)) => serde_json::Value::from(x),
            Ok(AnyValue::Boolean(b)) => serde_json::Value::Bool(b),
            Ok(other) => serde_json::Value::String(other.to_string()),
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hostile_text_is_escaped_for_html_and_terminals() {
        assert_eq!(
            html_escape("<img src=x onerror=alert(1)> & \"'"),
            "&lt;img src=x onerror=alert(1)&gt; &amp; &quot;&#39;"
        );
        assert_eq!(visible("a\u{1b}[31mb\u{7}"), "a\\u{1b}[31mb\\u{7}");
        assert_eq!(one_line("two\nlines"), "two\\nlines");
        assert_eq!(visible("plain"), "plain");
        // Formula injection (OWASP "CSV Injection"): formulas are guarded, numbers are not.
        for formula in [
            "=HYPERLINK(\"http://x\")",
            "@SUM(A1)",
            "+1+2",
            "-2+3",
            "\t=1",
        ] {
            assert!(runs_as_formula(formula), "{formula}");
        }
        for plain in ["-12", "+3", "-", "Chile", "1,234.5", "=", ""] {
            assert_eq!(runs_as_formula(plain), plain == "=", "{plain}");
        }
    }

    #[test]
    fn half_to_even_at_the_requested_decimals() {
        // Round half to even (IEEE 754-2008 roundTiesToEven; common practice in statistics).
        assert_eq!(format_number(2.5, Rounding::Decimals(0), false), "2");
        assert_eq!(format_number(3.5, Rounding::Decimals(0), false), "4");
        assert_eq!(format_number(0.125, Rounding::Decimals(2), false), "0.12");
        assert_eq!(format_number(-0.0001, Rounding::Decimals(2), false), "0.00");
    }

    #[test]
    fn every_allowed_rounding_formats_without_failing() {
        // --decimals 0..=20 and --sig 1..=17 over numbers from tiny to huge never fail.
        for value in [
            0.0,
            0.1,
            -2.5,
            123456789012345.25,
            7.9e28,
            1e300,
            4.9e-324,
            -1e-300,
        ] {
            for dp in 0..=20 {
                let text = format_number(value, Rounding::Decimals(dp), false);
                assert!(!text.is_empty(), "{value} {dp}");
            }
            for sig in 1..=17 {
                let text = format_number(value, Rounding::Significant(sig), true);
                assert!(!text.is_empty(), "{value} {sig}");
            }
        }
        assert_eq!(
            format_number(123456789012345.25, Rounding::Decimals(20), false).len(),
            36
        );
    }

    #[test]
    fn significant_digits() {
        assert_eq!(
            format_number(123456.0, Rounding::Significant(3), false),
            "123000"
        );
        assert_eq!(
            format_number(0.0012345, Rounding::Significant(3), false),
            "0.00123"
        );
        assert_eq!(format_number(1.0, Rounding::Significant(2), false), "1.0");
    }

    #[test]
    fn reading_rule_and_grouping() {
        assert_eq!(
            format_number(1234567.4, Rounding::Reading, true),
            "1,234,567"
        );
        assert_eq!(format_number(12.346, Rounding::Reading, true), "12.35");
        assert_eq!(format_number(2.675, Rounding::Decimals(2), false), "2.68");
        assert_eq!(format_number(0.012345, Rounding::Reading, true), "0.0123");
        assert_eq!(format_number(-1234.5, Rounding::Reading, true), "-1,234");
    }

    #[test]
    fn full_precision_reads_back_to_the_same_number() {
        for v in [0.1, 1.0 / 3.0, 128.5634, 1e-7, 123456789.125] {
            let text = format_number(v, Rounding::Full, false);
            assert_eq!(text.parse::<f64>().unwrap(), v, "{text}");
        }
    }
}
