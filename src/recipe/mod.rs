//! Recipes: everything the `adjust` flags hold, in a TOML file a desk can keep beside its data
//! and hand to a colleague. `levelfield adjust --recipe FILE` runs one; flags given on the
//! command line override its keys (the run summary names them); `--save-recipe FILE` writes the
//! recipe of a run made with flags.
//!
//! Reading is strict: unknown keys and wrong types are errors naming the key, line and column
//! (from the spans that the `toml` crate keeps), and so are values that the flags would refuse
//! (`apply`). The keys are the flags' own (`keys`). Paths in a recipe are relative to the
//! recipe's own folder.

pub mod apply;
pub mod keys;
pub mod save;

use crate::cli::AdjustArgs;
use crate::error::{Error, Result};
use crate::plan::AdjustPlan;
use crate::report::methods::{sha256_hex, RecipeQuote};
use keys::{Key, Kind};
use std::ops::Range;
use std::path::{Path, PathBuf};
use toml::de::{DeTable, DeValue};
use toml::Spanned;

/// A value as the recipe wrote it.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    Text(String),
    Integer(i64),
    Float(f64),
    Bool(bool),
    List(Vec<String>),
}

/// One key of a recipe file, with the flag behind it and where it was written.
#[derive(Debug, Clone)]
pub struct Entry {
    pub key: Key,
    pub value: Value,
    /// Where the value was written.
    pub span: Range<usize>,
}

/// A recipe read from disk, with what errors need to point into it.
#[derive(Debug)]
pub struct LoadedRecipe {
    /// The keys in the order they were written.
    pub entries: Vec<Entry>,
    /// The path as the user gave it.
    pub label: String,
    /// The folder its relative paths start from.
    pub folder: PathBuf,
    pub text: String,
}

impl LoadedRecipe {
    /// Line and column (1-based, in characters) of a byte offset.
    pub fn line_column(&self, offset: usize) -> (usize, usize) {
        line_column(&self.text, offset)
    }

    /// An error about the value written at `span`.
    pub fn error_at(
        &self,
        key: &str,
        span: std::ops::Range<usize>,
        problem: impl Into<String>,
        fix: impl Into<String>,
    ) -> Error {
        let (line, column) = self.line_column(span.start);
        Error::Recipe {
            file: self.label.clone(),
            line,
            column,
            key: key.to_string(),
            problem: problem.into(),
            fix: fix.into(),
        }
    }

    /// A path written in the recipe, taken from the recipe's folder.
    pub fn path(&self, written: &str) -> String {
        if written == "-" || Path::new(written).is_absolute() {
            return written.to_string();
        }
        normalize(&self.folder.join(written))
            .to_string_lossy()
            .into_owned()
    }
}

/// Removes `.` and folds `name/..` without touching the file system (a leading `..` stays).
pub use crate::source::normalize;

/// Merges the recipe named by `--recipe` (if any) into `args`, resolves the plan, and records
/// the recipe for the methods note: the file read, or the recipe equivalent to the flags.
pub fn resolve(args: AdjustArgs) -> Result<(AdjustArgs, AdjustPlan)> {
    resolve_with(args, |_| Ok(()))
}

/// As `resolve`, with `finish` given the merged arguments before the plan is resolved (batch
/// runs use it to place outputs).
pub fn resolve_with(
    args: AdjustArgs,
    finish: impl FnOnce(&mut AdjustArgs) -> Result<()>,
) -> Result<(AdjustArgs, AdjustPlan)> {
    let mut quote = None;
    let mut file = None;
    let mut args = args;
    if let Some(path) = args.recipe.clone() {
        let loaded = load(&path)?;
        let (merged, used) = apply::merge(&loaded, args)?;
        apply::check_merged(&loaded, &used, &merged)?;
        args = merged;
        file = Some((loaded.label.clone(), sha256_hex(loaded.text.as_bytes())));
        quote = Some(RecipeQuote {
            origin: format!("Read from {}", loaded.label),
            text: loaded.text,
            overridden: used.overridden,
        });
    }
    finish(&mut args)?;
    let mut plan = crate::plan::resolve_adjust(&args)?;
    if quote.is_none() {
        quote = Some(RecipeQuote {
            origin: "The recipe equivalent to this run's flags (paths relative to the working folder; `--save-recipe FILE` writes it)".into(),
            text: save::recipe_text(&args, Path::new("."))?,
            overridden: Vec::new(),
        });
    }
    plan.recipe = quote;
    plan.recipe_file = file;
    Ok((args, plan))
}

/// Writes the recipe of `args` to `path`, with paths relative to its folder.
pub fn save_to(args: &AdjustArgs, path: &Path) -> Result<()> {
    let folder = path.parent().unwrap_or(Path::new(""));
    let text = save::recipe_text(args, folder)?;
    crate::report::write_atomically(path, &text)
}

pub fn line_column(text: &str, offset: usize) -> (usize, usize) {
    let offset = offset.min(text.len());
    let before = &text[..text.floor_char_boundary(offset)];
    let line = before.matches('\n').count() + 1;
    let column = before.rsplit('\n').next().unwrap_or("").chars().count() + 1;
    (line, column)
}

/// Reads and parses a recipe file; type and key errors point at their line.
pub fn load(path: &Path) -> Result<LoadedRecipe> {
    let bytes = crate::source::read_file(path)?;
    let label = path.display().to_string();
    let text = String::from_utf8(bytes).map_err(|e| {
        let (line, column) = line_column(
            &String::from_utf8_lossy(e.as_bytes()),
            e.utf8_error().valid_up_to(),
        );
        Error::Recipe {
            file: label.clone(),
            line,
            column,
            key: String::new(),
            problem: "the file is not UTF-8 text".into(),
            fix: "save the recipe as UTF-8 (TOML files are always UTF-8)".into(),
        }
    })?;
    parse(&text, &label, path.parent().unwrap_or(Path::new("")))
}

/// Parses recipe text; `folder` is where its relative paths start. Every key must be a flag's
/// key (see `keys`) holding a value of the flag's type.
pub fn parse(text: &str, label: &str, folder: &Path) -> Result<LoadedRecipe> {
    let error_at = |offset: usize, key: String, problem: String| {
        let (line, column) = line_column(text, offset);
        Error::Recipe {
            file: label.to_string(),
            line,
            column,
            key,
            problem,
            fix: "correct the key or value (see `levelfield adjust --help` for what each key means; keys are the flag names with _ for -)".into(),
        }
    };
    let table = DeTable::parse(text).map_err(|e| {
        let offset = e.span().map_or(0, |s| s.start);
        let key = e.span().map(|s| key_at(text, s.start)).unwrap_or_default();
        error_at(offset, key, e.message().trim().to_string())
    })?;
    let known = keys::all();
    let mut entries = Vec::new();
    let mut items: Vec<(&Spanned<std::borrow::Cow<str>>, &Spanned<DeValue>)> =
        table.get_ref().iter().collect();
    items.sort_by_key(|(k, _)| k.span().start);
    for (name, value) in items {
        let name_text = name.get_ref().as_ref();
        let is_section = known.iter().any(|k| k.section() == name_text);
        match (value.get_ref(), is_section) {
            (DeValue::Table(section), true) => {
                let mut inner: Vec<_> = section.iter().collect();
                inner.sort_by_key(|(k, _)| k.span().start);
                for (inner_name, inner_value) in inner {
                    let dotted = format!("{name_text}.{}", inner_name.get_ref());
                    entries.push(read_entry(
                        &known,
                        &dotted,
                        inner_name,
                        inner_value,
                        error_at,
                    )?);
                }
            }
            (other, true) => {
                return Err(error_at(
                    value.span().start,
                    name_text.to_string(),
                    format!(
                        "invalid type: {}, expected a table (the section [{name_text}])",
                        other.type_str()
                    ),
                ))
            }
            (_, false) => entries.push(read_entry(&known, name_text, name, value, error_at)?),
        }
    }
    for (i, later) in entries.iter().enumerate() {
        if entries[..i].iter().any(|e| e.key.key == later.key.key) {
            return Err(error_at(
                later.span.start,
                later.key.key.clone(),
                format!("{} is written twice (under two names)", later.key.key),
            ));
        }
    }
    Ok(LoadedRecipe {
        entries,
        label: label.to_string(),
        folder: folder.to_path_buf(),
        text: text.to_string(),
    })
}

/// One key as written (`name`, its `dotted` form with the section) and its value; errors point
/// at the key when it is unknown and at the value when it has the wrong type.
fn read_entry(
    known: &[Key],
    dotted: &str,
    name: &Spanned<std::borrow::Cow<str>>,
    value: &Spanned<DeValue>,
    error_at: impl Fn(usize, String, String) -> Error,
) -> Result<Entry> {
    let written = name.get_ref().to_string();
    let key = find_key(known, dotted, &written)
        .map_err(|p| error_at(name.span().start, written.clone(), p))?;
    let typed_value =
        typed(key.kind, value.get_ref()).map_err(|p| error_at(value.span().start, written, p))?;
    Ok(Entry {
        key,
        value: typed_value,
        span: value.span(),
    })
}

/// The key `dotted` (or one of its aliases), or an error naming the keys of its section.
fn find_key(known: &[Key], dotted: &str, written: &str) -> std::result::Result<Key, String> {
    if let Some(key) = known
        .iter()
        .find(|k| k.key == dotted || k.aliases.iter().any(|a| a == dotted))
    {
        return Ok(key.clone());
    }
    let section = dotted.rsplit_once('.').map_or("", |(s, _)| s);
    let mut names: Vec<String> = known
        .iter()
        .filter(|k| k.section() == section)
        .map(|k| format!("`{}`", k.name()))
        .collect();
    if section.is_empty() {
        let mut sections: Vec<String> = known
            .iter()
            .map(|k| k.section().to_string())
            .filter(|s| !s.is_empty())
            .collect();
        sections.dedup();
        names.extend(sections.into_iter().map(|s| format!("`{s}`")));
    }
    Err(format!(
        "unknown field `{written}`, expected one of {}",
        names.join(", ")
    ))
}

/// The value in the type the key's flag takes.
fn typed(kind: Kind, value: &DeValue) -> std::result::Result<Value, String> {
    let wrong = || {
        let found = match value {
            DeValue::String(s) => format!("string \"{s}\""),
            DeValue::Integer(i) => format!("integer `{i}`"),
            DeValue::Float(f) => format!("floating point `{f}`"),
            DeValue::Boolean(b) => format!("boolean `{b}`"),
            other => other.type_str().to_string(),
        };
        format!("invalid type: {found}, expected {}", kind.expected())
    };
    let integer = |i: &toml::de::DeInteger| {
        i64::from_str_radix(&i.as_str().replace('_', ""), i.radix()).map_err(|_| wrong())
    };
    Ok(match (kind, value) {
        (Kind::Text | Kind::Layout, DeValue::String(s)) => Value::Text(s.to_string()),
        (Kind::Integer | Kind::NumericChoice | Kind::Number, DeValue::Integer(i)) => {
            Value::Integer(integer(i)?)
        }
        (Kind::Number, DeValue::Float(f)) => Value::Float(
            f.as_str()
                .replace('_', "")
                .parse::<f64>()
                .map_err(|_| wrong())?,
        ),
        (Kind::Bool, DeValue::Boolean(b)) => Value::Bool(*b),
        (Kind::List, DeValue::Array(items)) => Value::List(
            items
                .iter()
                .map(|item| match item.get_ref() {
                    DeValue::String(s) => Ok(s.to_string()),
                    _ => Err(format!(
                        "invalid type: {} in the array, expected a string",
                        item.get_ref().type_str()
                    )),
                })
                .collect::<std::result::Result<_, _>>()?,
        ),
        _ => return Err(wrong()),
    })
}

/// The key written on the line holding `offset` (for messages), or the section header.
fn key_at(text: &str, offset: usize) -> String {
    let offset = text.floor_char_boundary(offset.min(text.len()));
    let start = text[..offset].rfind('\n').map_or(0, |i| i + 1);
    let line = text[start..].lines().next().unwrap_or("").trim();
    match line.split_once('=') {
        Some((key, _)) => key.trim().to_string(),
        None => line.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse_text(text: &str) -> Result<LoadedRecipe> {
        parse(text, "r.toml", Path::new("/data"))
    }

    fn message(text: &str) -> String {
        parse_text(text).unwrap_err().to_string()
    }

    #[test]
    fn reads_every_section() {
        let loaded = parse_text(
            "input = \"fees.csv\"\nsteps = [\"deflate\", \"ppp\"]\nbase_year = 2023\n\n[columns]\nentity = \"country\"\n\n[uncertainty]\nmoe = \"moe\"\nmoe_level = 90\n\n[output]\nfile = \"out.csv\"\n",
        )
        .unwrap();
        let found: Vec<(&str, &Value)> = loaded
            .entries
            .iter()
            .map(|e| (e.key.key.as_str(), &e.value))
            .collect();
        assert_eq!(
            found,
            [
                ("input", &Value::Text("fees.csv".into())),
                ("steps", &Value::List(vec!["deflate".into(), "ppp".into()])),
                ("base_year", &Value::Integer(2023)),
                ("columns.entity", &Value::Text("country".into())),
                ("uncertainty.moe", &Value::Text("moe".into())),
                ("uncertainty.margin_confidence", &Value::Integer(90)),
                ("output.file", &Value::Text("out.csv".into())),
            ]
        );
        assert_eq!(loaded.path("fees.csv"), "/data/fees.csv");
        assert_eq!(loaded.path("/abs/x.csv"), "/abs/x.csv");
        assert_eq!(loaded.path("../x.csv"), "/x.csv");
        assert_eq!(
            normalize(Path::new("r/../../a/./b.csv")),
            PathBuf::from("../a/b.csv")
        );
    }

    #[test]
    fn a_section_or_a_list_of_the_wrong_type_is_an_error() {
        assert!(message("columns = 3\n").contains("expected a table"));
        assert!(message("steps = [1]\n").contains("expected a string"));
        assert!(message("[output]\nquiet = \"yes\"\n").contains("expected a boolean"));
        assert!(message("[colums]\nentity = \"c\"\n").contains("unknown field `colums`"));
        assert!(message("recipe = \"x.toml\"\n").contains("unknown field `recipe`"));
        assert!(
            message("[uncertainty]\nmargin_confidence = 90\nmoe_level = 95\n")
                .starts_with("r.toml, line 3")
        );
    }

    #[test]
    fn unknown_key_names_key_and_line() {
        let text = message("steps = [\"ppp\"]\nbase_yaer = 2023\n");
        assert!(
            text.starts_with("r.toml, line 2, column 1, key `base_yaer`"),
            "{text}"
        );
        assert!(text.contains("unknown field"), "{text}");
    }

    #[test]
    fn unknown_key_in_a_section_names_its_line() {
        let text = message("[columns]\nentity = \"c\"\ncolour = \"red\"\n");
        assert!(
            text.starts_with("r.toml, line 3, column 1, key `colour`"),
            "{text}"
        );
    }

    #[test]
    fn wrong_type_names_key_and_line() {
        let text = message("steps = [\"deflate\"]\n\nbase_year = \"2023\"\n");
        assert!(text.starts_with("r.toml, line 3"), "{text}");
        assert!(text.contains("key `base_year`"), "{text}");
        assert!(text.contains("invalid type"), "{text}");
    }

    #[test]
    fn line_and_column_count_characters() {
        assert_eq!(line_column("a\nbé = 1", 5), (2, 3));
        assert_eq!(line_column("", 0), (1, 1));
    }
}
