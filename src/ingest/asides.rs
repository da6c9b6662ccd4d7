//! What reading a table set aside, read leniently or left unresolved: the facts behind those
//! notes and warnings of the run summary. They are kept as facts, not as sentences, so that a
//! streamed run adds them up over its pieces and words them as the whole file's, with the same
//! words as an in-memory run.

use crate::error::UnresolvedName;
use std::collections::HashMap;

/// How many of the set-aside lines a warning quotes.
const WARNING_SHOWN: usize = 3;
/// How many empty lines inside the table are named.
const EMPTY_LINES_SHOWN: usize = 10;

/// The facts of one table, or of the pieces of one file added up.
#[derive(Debug, Clone, Default)]
pub struct Asides {
    /// The lines set aside above the header and below the table, described, in file order.
    pub lines: Vec<String>,
    /// The empty lines inside the table.
    pub empty_lines: Vec<usize>,
    /// Lines inside an unclosed quote, read as written and flagged (`--lenient`).
    pub unbalanced: usize,
    /// Figures holding a comma read as a thousands separator in a semicolon table read without
    /// `--decimal-comma`.
    pub semicolon_grouped: usize,
    /// Entity names that match nothing, each once, in the order they first appear, with their
    /// lines: kept flagged with `--allow-unresolved`, else the error of a streamed run once
    /// every piece is read (`resolve::unresolved_error`).
    pub unresolved: Vec<UnresolvedName>,
}

impl Asides {
    /// Adds the facts of the piece that follows.
    pub fn add(&mut self, later: &Asides) {
        self.lines.extend(later.lines.iter().cloned());
        self.empty_lines.extend(&later.empty_lines);
        self.unbalanced += later.unbalanced;
        self.semicolon_grouped += later.semicolon_grouped;
        let mut known: HashMap<String, usize> = (self.unresolved.iter().enumerate())
            .map(|(at, name)| (name.text.clone(), at))
            .collect();
        for name in &later.unresolved {
            match known.get(&name.text) {
                Some(&at) => self.unresolved[at].lines.extend(&name.lines),
                None => {
                    known.insert(name.text.clone(), self.unresolved.len());
                    self.unresolved.push(name.clone());
                }
            }
        }
    }

    /// Whether names match nothing and `--allow-unresolved` (`allowed`) was not given: the
    /// run's error.
    pub fn unresolved_refused(&self, allowed: bool) -> bool {
        !allowed && !self.unresolved.is_empty()
    }

    /// Everything set aside, described: the lines, then the empty lines inside as one entry.
    pub fn set_aside(&self) -> Vec<String> {
        let mut all = self.lines.clone();
        if !self.empty_lines.is_empty() {
            let shown: Vec<String> = self
                .empty_lines
                .iter()
                .take(EMPTY_LINES_SHOWN)
                .map(|l| l.to_string())
                .collect();
            all.push(format!(
                "{} empty line(s) inside the table (line {}{})",
                self.empty_lines.len(),
                shown.join(", "),
                if self.empty_lines.len() > EMPTY_LINES_SHOWN {
                    ", ..."
                } else {
                    ""
                }
            ));
        }
        all
    }

    /// The notes on what the finder set aside and read leniently.
    pub fn reading_notes(&self) -> Vec<String> {
        let mut notes = Vec::new();
        let set_aside = self.set_aside();
        if !set_aside.is_empty() {
            notes.push(format!(
                "set aside {} line(s) that are not part of the table: {}",
                set_aside.len(),
                set_aside.join("; ")
            ));
        }
        if self.unbalanced > 0 {
            notes.push(format!(
                "{} line(s) inside an unclosed quote read as written and flagged unbalanced_quote (--lenient)",
                self.unbalanced
            ));
        }
        notes
    }

    /// The note on the names kept unresolved, if any.
    pub fn unresolved_note(&self) -> Option<String> {
        let names = &self.unresolved;
        if names.is_empty() {
            return None;
        }
        let shown = crate::error::UNRESOLVED_SHOWN;
        let quoted: Vec<String> = names
            .iter()
            .take(shown)
            .map(|n| format!("\"{}\"", n.text))
            .collect();
        let more = match names.len().checked_sub(shown) {
            Some(more) if more > 0 => format!(" and {more} more"),
            _ => String::new(),
        };
        Some(format!(
            "{} entity name(s) unresolved and kept flagged (--allow-unresolved): {}{more}",
            names.len(),
            quoted.join(", ")
        ))
    }

    /// What a user must see even with --quiet: lines set aside, figures likely misread.
    pub fn warnings(&self) -> Vec<String> {
        let mut warnings = Vec::new();
        let set_aside = self.set_aside();
        if !set_aside.is_empty() {
            let shown: Vec<&str> = set_aside
                .iter()
                .take(WARNING_SHOWN)
                .map(String::as_str)
                .collect();
            warnings.push(format!(
                "{} line(s) of the input were set aside, not read as rows: {}{}",
                set_aside.len(),
                shown.join("; "),
                if set_aside.len() > WARNING_SHOWN {
                    "; ..."
                } else {
                    ""
                }
            ));
        }
        if self.semicolon_grouped > 0 {
            warnings.push(format!(
                "the table is separated by semicolons and {} figure(s) hold a comma read as a thousands separator (1,500 as 1500): if the comma is a decimal comma, pass --decimal-comma",
                self.semicolon_grouped
            ));
        }
        warnings
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn name(text: &str, lines: &[usize]) -> UnresolvedName {
        UnresolvedName {
            text: text.into(),
            lines: lines.to_vec(),
            suggestions: Vec::new(),
        }
    }

    #[test]
    fn pieces_added_up_are_worded_as_one_table() {
        let mut first = Asides {
            lines: vec!["line 1 above the header: \"Fees\"".into()],
            empty_lines: vec![4],
            unresolved: vec![name("Atlantis", &[5])],
            ..Default::default()
        };
        let later = Asides {
            lines: vec!["line 90 below the table: \"Source\"".into()],
            empty_lines: (50..61).collect(),
            unbalanced: 2,
            semicolon_grouped: 3,
            unresolved: vec![name("Lemuria", &[70]), name("Atlantis", &[80, 81])],
        };
        first.add(&later);
        assert_eq!(
            first.unresolved,
            vec![name("Atlantis", &[5, 80, 81]), name("Lemuria", &[70])]
        );
        assert_eq!(
            first.reading_notes(),
            vec![
                "set aside 3 line(s) that are not part of the table: line 1 above the header: \"Fees\"; line 90 below the table: \"Source\"; 12 empty line(s) inside the table (line 4, 50, 51, 52, 53, 54, 55, 56, 57, 58, ...)",
                "2 line(s) inside an unclosed quote read as written and flagged unbalanced_quote (--lenient)",
            ]
        );
        assert_eq!(
            first.unresolved_note().unwrap(),
            "2 entity name(s) unresolved and kept flagged (--allow-unresolved): \"Atlantis\", \"Lemuria\""
        );
        let warnings = first.warnings();
        assert!(warnings[0].starts_with("3 line(s) of the input were set aside"));
        assert!(warnings[1].contains("3 figure(s) hold a comma"));
        assert_eq!(Asides::default().warnings(), Vec::<String>::new());
        assert_eq!(Asides::default().unresolved_note(), None);
    }
}
