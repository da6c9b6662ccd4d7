//! Writing the recipe of a run: the arguments after any recipe was merged, as TOML, with paths
//! rewritten relative to the folder the recipe is saved in so the folder can be handed on.
//! Method keys are always written (so a later change of a default cannot change the result);
//! reading and output keys only where they differ from the defaults.

use super::keys::{self, Key, Kind};
use crate::cli::AdjustArgs;
use crate::error::{Error, Result};
use crate::ingest::margins::MarginSpec;
use clap::parser::ValueSource;
use clap::ArgMatches;
use std::path::{Component, Path, PathBuf};
use toml::{Table, Value};

const HEADER: &str = "# levelfield recipe: run it with `levelfield adjust --recipe FILE`.\n\
# Paths are relative to this file's folder; flags given on the command line override keys.\n\n";

/// What decides whether a key is written, read off the run's flags.
struct Run<'a> {
    matches: &'a ArgMatches,
    margins: bool,
}

impl Run<'_> {
    fn text(&self, id: &str) -> Option<&str> {
        self.matches
            .get_raw(id)
            .and_then(|mut v| v.next())
            .and_then(|v| v.to_str())
    }

    fn given(&self, id: &str) -> bool {
        self.matches.value_source(id) == Some(ValueSource::CommandLine)
    }

    fn steps(&self) -> Vec<String> {
        self.matches
            .get_raw("steps")
            .into_iter()
            .flatten()
            .filter_map(|s| s.to_str())
            .map(|s| s.trim().to_string())
            .filter(|s| !s.is_empty())
            .collect()
    }

    /// Is `key` written? Keys that decide the result are written at their defaults too (so a
    /// later change of a default cannot change what a saved recipe computes); reading and
    /// output keys only when given. Margin keys only for a run with margins.
    fn writes(&self, key: &Key) -> bool {
        if key.kind == Kind::Layout {
            return self.matches.get_flag("wide_years") || self.matches.get_flag("long");
        }
        let given = self.given(&key.id);
        let rank_intervals = self.text("rank_intervals").unwrap_or("");
        match key.id.as_str() {
            "steps" | "per" | "nearest_year" | "order" | "rank_aggregates" | "allow_unresolved" => {
                true
            }
            "income_as" => self.steps().iter().any(|s| s == "per-income"),
            "chunk_mb" => given && self.matches.get_flag("streaming"),
            "rank_intervals" => self.margins,
            "share_unit" => self.margins && (given || self.given("sample_size")),
            "joint_adjustment" => self.margins && (given || rank_intervals == "joint"),
            "draws" | "seed" => self.margins && rank_intervals == "simulate",
            _ if key.section() == "uncertainty" => self.margins && given,
            _ => given,
        }
    }
}

/// The recipe text for `args` (its flags, `args.argv`), to be saved in `folder`.
pub fn recipe_text(args: &AdjustArgs, folder: &Path) -> Result<String> {
    let matches = keys::adjust_command()
        .try_get_matches_from(&args.argv)
        .map_err(|e| Error::usage(format!("the run's flags: {e}"), "report this as a bug"))?;
    let run = Run {
        matches: &matches,
        // A run has margins when plan reads a margin column from its flags (an error there,
        // such as a margin without its level, still means margins were given).
        margins: !matches!(
            crate::plan::margin_spec(&args.uncertainty),
            Ok(MarginSpec::None)
        ),
    };
    let mut top = Table::new();
    let mut sections: Vec<(String, Table)> = Vec::new();
    for key in keys::all() {
        if !run.writes(&key) {
            continue;
        }
        let Some(value) = value_of(&run, &key, folder)? else {
            continue;
        };
        match key.section() {
            "" => {
                top.insert(key.name().to_string(), value);
            }
            section => {
                if sections.last().map(|(s, _)| s.as_str()) != Some(section) {
                    sections.push((section.to_string(), Table::new()));
                }
                if let Some((_, table)) = sections.last_mut() {
                    table.insert(key.name().to_string(), value);
                }
            }
        }
    }
    for (section, table) in sections {
        top.insert(section, Value::Table(table));
    }
    let body = toml::to_string(&top).map_err(|e| {
        Error::usage(
            format!("the recipe could not be written as TOML: {e}"),
            "report this as a bug",
        )
    })?;
    Ok(format!("{HEADER}{body}"))
}

/// The key's value in the run, as TOML of the key's type.
fn value_of(run: &Run, key: &Key, folder: &Path) -> Result<Option<Value>> {
    let id = key.id.as_str();
    let path = |written: &str| -> Result<String> {
        if written == "-" || !key.path {
            return Ok(written.to_string());
        }
        Ok(relative_to(Path::new(written), folder)?
            .to_string_lossy()
            .into_owned())
    };
    let number = |text: &str| text.replace(['_', ','], "");
    Ok(match key.kind {
        Kind::Bool => Some(Value::Boolean(run.matches.get_flag(id))),
        Kind::Layout => Some(Value::String(
            if run.matches.get_flag("wide_years") {
                "wide"
            } else {
                "long"
            }
            .into(),
        )),
        Kind::List => {
            let items: Vec<Value> = if id == "steps" {
                run.steps().into_iter().map(Value::String).collect()
            } else {
                run.matches
                    .get_raw(id)
                    .into_iter()
                    .flatten()
                    .filter_map(|v| v.to_str())
                    .map(|v| path(v).map(Value::String))
                    .collect::<Result<_>>()?
            };
            (id == "steps" || !items.is_empty()).then_some(Value::Array(items))
        }
        Kind::Integer | Kind::NumericChoice => run
            .text(id)
            .and_then(|t| number(t).parse::<i64>().ok())
            .map(Value::Integer),
        Kind::Number => run
            .text(id)
            .and_then(|t| number(t).parse::<f64>().ok())
            .map(Value::Float),
        Kind::Text => match run.text(id) {
            Some(text) => Some(Value::String(path(text)?)),
            None => None,
        },
    })
}

/// `path` written relative to `folder` (both taken from the current directory when relative).
fn relative_to(path: &Path, folder: &Path) -> Result<PathBuf> {
    let absolute = |p: &Path| -> Result<PathBuf> {
        let p = if p.as_os_str().is_empty() {
            Path::new(".")
        } else {
            p
        };
        std::path::absolute(p)
            .map(|p| super::normalize(&p))
            .map_err(|e| Error::io(p.display(), "resolve", e))
    };
    let target = absolute(path)?;
    let base = absolute(folder)?;
    let target_parts: Vec<Component> = target.components().collect();
    let base_parts: Vec<Component> = base.components().collect();
    let common = target_parts
        .iter()
        .zip(&base_parts)
        .take_while(|(a, b)| a == b)
        .count();
    // Sharing only the root (or a drive): an absolute path says more than a row of `..`.
    if common <= 1 {
        return Ok(target);
    }
    let mut out = PathBuf::new();
    for _ in common..base_parts.len() {
        out.push("..");
    }
    for part in &target_parts[common..] {
        out.push(part.as_os_str());
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_become_relative_to_the_recipe_folder() {
        let r = |p: &str, f: &str| relative_to(Path::new(p), Path::new(f)).unwrap();
        assert_eq!(
            r("/d/data/fees.csv", "/d/recipes"),
            PathBuf::from("../data/fees.csv")
        );
        assert_eq!(r("/d/fees.csv", "/d"), PathBuf::from("fees.csv"));
        assert_eq!(r("/d/./a/../fees.csv", "/d/"), PathBuf::from("fees.csv"));
        assert_eq!(
            r("/data/fees.csv", "/tmp/r"),
            PathBuf::from("/data/fees.csv")
        );
    }
}
