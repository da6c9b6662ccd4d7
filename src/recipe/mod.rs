//! Recipes: everything the `adjust` flags hold, in a TOML file a desk can keep beside its data
//! and hand to a colleague. `levelfield adjust --recipe FILE` runs one; flags given on the
//! command line override its keys (the run summary names them); `--save-recipe FILE` writes the
//! recipe of a run made with flags.
//!
//! Reading is strict: unknown keys and wrong types are errors naming the key, line and column
//! (serde's `deny_unknown_fields` and the spans that the `toml` crate keeps), and so are values
//! that the flags would refuse. Paths in a recipe are relative to the recipe's own folder.

pub mod apply;
pub mod save;

use crate::cli::AdjustArgs;
use crate::error::{Error, Result};
use crate::plan::AdjustPlan;
use crate::report::methods::{sha256_hex, RecipeQuote};
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};
use toml::Spanned;

/// A value with the place it was written, so an error can point at it.
pub type At<T> = Option<Spanned<T>>;

/// The recipe file. Top-level keys hold the method; the sections hold how the input is read,
/// its margins of error and the outputs.
#[derive(Debug, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct Recipe {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub input: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub refs: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub steps: At<Vec<String>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub base_year: At<i32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub deflator: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub per: At<u32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub income_as: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub nearest_year: At<u32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub order: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rank_aggregates: At<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub aliases: At<Vec<String>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub allow_unresolved: At<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub streaming: At<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub chunk_mb: At<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub columns: Option<ColumnsSection>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub uncertainty: Option<UncertaintySection>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub output: Option<OutputSection>,
}

/// `[columns]`: which columns hold what, and how the file is read.
#[derive(Debug, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct ColumnsSection {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub entity: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub value: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub year: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub year_value: At<i32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub group: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub currency: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub currency_code: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub value_multiplier: At<String>,
    /// auto, long or wide.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub layout: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub delimiter: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub encoding: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub decimal_comma: At<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub lenient: At<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sheet: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub header_row: At<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_input_mb: At<u64>,
}

/// `[uncertainty]`: the margins of the figures and how rank intervals are drawn.
#[derive(Debug, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct UncertaintySection {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub moe: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub se: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ci_low: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ci_high: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sample_size: At<String>,
    /// 90, 95 or 99.
    #[serde(skip_serializing_if = "Option::is_none")]
    #[serde(alias = "moe_level")]
    pub margin_confidence: At<u32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub share_unit: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub proportion: At<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rank_intervals: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub joint_adjustment: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub draws: At<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub seed: At<u64>,
}

/// `[output]`: what is written where.
#[derive(Debug, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct OutputSection {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub format: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub file: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub decimals: At<u32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sig: At<u32>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quiet: At<bool>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub methods: At<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub report: At<String>,
    /// `--write-columns`: all, core, or column names separated by commas.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub write_columns: At<String>,
}

/// A recipe read from disk, with what errors need to point into it.
#[derive(Debug)]
pub struct LoadedRecipe {
    pub recipe: Recipe,
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
    mut args: AdjustArgs,
    finish: impl FnOnce(&mut AdjustArgs) -> Result<()>,
) -> Result<(AdjustArgs, AdjustPlan)> {
    let mut quote = None;
    let mut file = None;
    if let Some(path) = args.recipe.clone() {
        let loaded = load(&path)?;
        let given = args.given.clone();
        let used = apply::merge(&loaded, &mut args, &given)?;
        apply::check_merged(&loaded, &used, &args)?;
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

/// Parses recipe text; `folder` is where its relative paths start.
pub fn parse(text: &str, label: &str, folder: &Path) -> Result<LoadedRecipe> {
    let recipe: Recipe = toml::from_str(text).map_err(|e| {
        let (line, column) = e
            .span()
            .map(|span| line_column(text, span.start))
            .unwrap_or((1, 1));
        let key = e
            .span()
            .map(|span| key_at(text, span.start))
            .unwrap_or_default();
        Error::Recipe {
            file: label.to_string(),
            line,
            column,
            key,
            problem: e.message().trim().to_string(),
            fix: "correct the key or value (see `levelfield adjust --help` for what each key means; keys are the flag names with _ for -)".into(),
        }
    })?;
    Ok(LoadedRecipe {
        recipe,
        label: label.to_string(),
        folder: folder.to_path_buf(),
        text: text.to_string(),
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
            "input = \"fees.csv\"\nsteps = [\"deflate\", \"ppp\"]\nbase_year = 2023\n\n[columns]\nentity = \"country\"\n\n[uncertainty]\nmoe = \"moe\"\nmargin_confidence = 90\n\n[output]\nfile = \"out.csv\"\n",
        )
        .unwrap();
        let r = &loaded.recipe;
        assert_eq!(r.steps.as_ref().unwrap().get_ref(), &["deflate", "ppp"]);
        assert_eq!(*r.base_year.as_ref().unwrap().get_ref(), 2023);
        assert_eq!(
            r.columns
                .as_ref()
                .unwrap()
                .entity
                .as_ref()
                .unwrap()
                .get_ref(),
            "country"
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
