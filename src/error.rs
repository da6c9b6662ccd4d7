//! The one error type of levelfield. Every variant says where the problem is (file, line,
//! column, step), what was expected, and what the user can do about it. `main.rs` maps every
//! variant to exit code 2; per-row problems are not errors but flags (see `crate::flags`).

use std::fmt;

/// Where in which file a problem sits. `line` is 1-based and counts physical lines of the
/// decoded text (the header is line 1); `column` is the header name when one is known.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Location {
    pub file: String,
    pub line: Option<usize>,
    pub column: Option<String>,
}

impl Location {
    pub fn file(file: impl Into<String>) -> Self {
        Location {
            file: file.into(),
            line: None,
            column: None,
        }
    }

    pub fn line(file: impl Into<String>, line: usize) -> Self {
        Location {
            file: file.into(),
            line: Some(line),
            column: None,
        }
    }

    pub fn cell(file: impl Into<String>, line: usize, column: impl Into<String>) -> Self {
        Location {
            file: file.into(),
            line: Some(line),
            column: Some(column.into()),
        }
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(line) = self.line {
            write!(f, ", line {line}")?;
        }
        if let Some(column) = &self.column {
            write!(f, ", column \"{column}\"")?;
        }
        Ok(())
    }
}

/// One entity name that could not be resolved, with where it occurs and what it might be.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct UnresolvedName {
    pub text: String,
    pub lines: Vec<usize>,
    pub suggestions: Vec<String>,
}

#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// A cell, row or file whose content is not what it must be.
    #[error("{location}: {found}\n  expected: {expected}\n  what to do: {fix}")]
    BadInput {
        location: Box<Location>,
        found: String,
        expected: String,
        fix: String,
    },

    /// Arguments that cannot work together, checked before any file is read.
    #[error("{problem}\n  what to do: {fix}")]
    Usage { problem: String, fix: String },

    /// A recipe or batch manifest key that is unknown, of the wrong type or not allowed.
    #[error("{file}, line {line}, column {column}{}: {problem}\n  what to do: {fix}", if key.is_empty() { String::new() } else { format!(", key `{key}`") })]
    Recipe {
        file: String,
        line: usize,
        column: usize,
        key: String,
        problem: String,
        fix: String,
    },

    /// The operating system refused a read or a write.
    #[error("{path}: cannot {action}: {source}\n  what to do: check that the path exists and is readable (or writable)")]
    Io {
        path: String,
        action: &'static str,
        source: std::io::Error,
    },

    /// Entity names that match no ISO 3166-1 entry, no alias and no aggregate.
    #[error("{}", format_unresolved(file, names))]
    Unresolved {
        file: String,
        names: Vec<UnresolvedName>,
    },

    /// The table engine failed; `stage` says which part of the pipeline was running.
    #[error("table engine error while {stage}: {source}")]
    Engine {
        stage: &'static str,
        source: Box<polars::error::PolarsError>,
    },
}

pub type Result<T, E = Error> = std::result::Result<T, E>;

impl Error {
    pub fn bad_input(
        location: Location,
        found: impl Into<String>,
        expected: impl Into<String>,
        fix: impl Into<String>,
    ) -> Self {
        Error::BadInput {
            location: Box::new(location),
            found: found.into(),
            expected: expected.into(),
            fix: fix.into(),
        }
    }

    pub fn usage(problem: impl Into<String>, fix: impl Into<String>) -> Self {
        Error::Usage {
            problem: problem.into(),
            fix: fix.into(),
        }
    }

    pub fn io(path: impl fmt::Display, action: &'static str, source: std::io::Error) -> Self {
        Error::Io {
            path: path.to_string(),
            action,
            source,
        }
    }

    /// Wraps a polars error with the pipeline stage that was running.
    pub fn engine(stage: &'static str) -> impl FnOnce(polars::error::PolarsError) -> Self {
        move |source| Error::Engine {
            stage,
            source: Box::new(source),
        }
    }
}

/// Unresolved names listed one by one (with suggestions); the others are counted.
pub const UNRESOLVED_SHOWN: usize = 50;

fn format_unresolved(file: &str, names: &[UnresolvedName]) -> String {
    let mut out = format!(
        "{file}: {} entity name(s) match no ISO 3166-1 country, alias or aggregate:",
        names.len()
    );
    for name in names.iter().take(UNRESOLVED_SHOWN) {
        let lines: Vec<String> = name.lines.iter().take(5).map(|l| l.to_string()).collect();
        let more = if name.lines.len() > 5 { ", ..." } else { "" };
        out.push_str(&format!(
            "\n  \"{}\" (line {}{more})",
            name.text,
            lines.join(", ")
        ));
        if name.suggestions.is_empty() {
            out.push_str(": no close match");
        } else {
            out.push_str(&format!(": did you mean {}?", name.suggestions.join(", ")));
        }
    }
    if let Some(first) = names.get(UNRESOLVED_SHOWN) {
        out.push_str(&format!(
            "\n  and {} more, the first \"{}\" (line {}); a column of names that nearly all match nothing is often not the entity column (--entity names it)",
            names.len() - UNRESOLVED_SHOWN,
            first.text,
            first.lines.first().copied().unwrap_or(0)
        ));
    }
    out.push_str(
        "\n  what to do: add the names to an alias file (CSV: name,code) and pass --aliases FILE, \
         or pass --allow-unresolved to keep these rows flagged `unresolved`",
    );
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bad_input_message_names_file_line_column_expectation_and_fix() {
        let err = Error::bad_input(
            Location::cell("fees.csv", 7, "2021"),
            "\"12..5\" is not a number",
            "a number such as 1,234.5",
            "correct the cell or pass --lenient",
        );
        let text = err.to_string();
        assert!(text.starts_with("fees.csv, line 7, column \"2021\": \"12..5\" is not a number"));
        assert!(text.contains("expected: a number"));
        assert!(text.contains("what to do: correct the cell"));
    }

    #[test]
    fn unresolved_message_lists_every_name_with_suggestions() {
        let err = Error::Unresolved {
            file: "in.csv".into(),
            names: vec![
                UnresolvedName {
                    text: "Frnace".into(),
                    lines: vec![3],
                    suggestions: vec!["France (FRA)".into()],
                },
                UnresolvedName {
                    text: "Atlantis".into(),
                    lines: vec![4, 9],
                    suggestions: vec![],
                },
            ],
        };
        let text = err.to_string();
        assert!(text.contains("2 entity name(s)"));
        assert!(text.contains("\"Frnace\" (line 3): did you mean France (FRA)?"));
        assert!(text.contains("\"Atlantis\" (line 4, 9): no close match"));
        assert!(text.contains("--aliases FILE"));
    }

    #[test]
    fn a_long_list_of_unresolved_names_is_shown_in_part_and_counted() {
        let names = (0..UNRESOLVED_SHOWN + 7)
            .map(|i| UnresolvedName {
                text: format!("Place {i}"),
                lines: vec![i + 2],
                suggestions: vec![],
            })
            .collect();
        let text = Error::Unresolved {
            file: "in.csv".into(),
            names,
        }
        .to_string();
        let last_shown = format!(
            "\"Place {}\" (line {})",
            UNRESOLVED_SHOWN - 1,
            UNRESOLVED_SHOWN + 1
        );
        assert!(text.contains(&last_shown), "{text}");
        assert!(!text.contains(&format!("\n  \"Place {}\" (line", UNRESOLVED_SHOWN)));
        let counted = format!(
            "and 7 more, the first \"Place {UNRESOLVED_SHOWN}\" (line {})",
            UNRESOLVED_SHOWN + 2
        );
        assert!(text.contains(&counted), "{text}");
        assert!(text.contains("--entity"));
    }
}
