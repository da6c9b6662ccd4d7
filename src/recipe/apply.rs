//! Merging a recipe into the `adjust` arguments. A recipe is a set of flags written as keys:
//! each key becomes its flag (`base_year = 2023` is `--base-year=2023`), and the recipe's flags
//! followed by the command line's are parsed by the same clap definition as any command line,
//! so a recipe can say nothing a flag cannot, with the flags' own parsers and defaults.
//!
//! A key whose flag (or a flag that excludes it, such as `--year-value` for `year`) was given
//! on the command line is dropped and reported as overridden. Each key is first parsed on its
//! own, so that a refused value is an error at the key's line; keys the flags refuse together
//! are an error at the later one.

use super::keys::{self, Kind, LAYOUT_VALUES};
use super::{Entry, LoadedRecipe, Value};
use crate::cli::AdjustArgs;
use crate::error::{Error, Result};
use clap::error::{ContextKind, ContextValue, ErrorKind};
use clap::{Command, FromArgMatches};
use std::collections::BTreeSet;
use std::ffi::OsString;

/// What the merge did, for the run summary and the methods note.
#[derive(Debug, Clone, Default)]
pub struct RecipeUse {
    pub label: String,
    pub text: String,
    /// Recipe keys whose values a command-line flag replaced.
    pub overridden: Vec<String>,
}

/// The arguments of a run of `loaded` with the command line of `args` (its `argv` and `given`).
pub fn merge(loaded: &LoadedRecipe, args: AdjustArgs) -> Result<(AdjustArgs, RecipeUse)> {
    let command = keys::adjust_command();
    let excluded = excluded_by(&command, &args.given);
    let mut kept: Vec<bool> = loaded
        .entries
        .iter()
        .map(|e| !flag_ids(e).iter().any(|id| excluded.contains(id)))
        .collect();
    // Each kept key as command-line words; a key the command line replaces is neither turned
    // into words nor checked (its value is not used).
    let mut words: Vec<Option<Vec<OsString>>> = Vec::with_capacity(kept.len());
    let mut needs = Vec::with_capacity(kept.len());
    for (entry, keep) in loaded.entries.iter().zip(&kept) {
        if *keep {
            let entry_words = tokens_of(loaded, entry, &command, args.allow_outside)?;
            needs.push(check_alone(loaded, entry, &entry_words, &command)?);
            words.push(Some(entry_words));
        } else {
            needs.push(Vec::new());
            words.push(None);
        }
    }
    check_together(loaded, &command, &needs)?;
    // A key that needs a dropped key goes with it (`ci_high` when the command line gave --moe).
    let given_longs: Vec<String> = args
        .given
        .iter()
        .filter_map(|id| long_of(&command, id))
        .collect();
    loop {
        let present: BTreeSet<&str> = loaded
            .entries
            .iter()
            .zip(&kept)
            .filter(|(_, k)| **k)
            .filter_map(|(e, _)| e.key.long.as_deref())
            .chain(given_longs.iter().map(String::as_str))
            .collect();
        let lost = (0..kept.len())
            .find(|&i| kept[i] && needs[i].iter().any(|n| !present.contains(n.as_str())));
        match lost {
            Some(i) => kept[i] = false,
            None => break,
        }
    }
    let mut tokens: Vec<OsString> = Vec::new();
    let mut input = None;
    let mut overridden = Vec::new();
    for ((entry, keep), entry_words) in loaded.entries.iter().zip(&kept).zip(words) {
        match entry_words.filter(|_| *keep) {
            None => overridden.push(entry.key.key.clone()),
            Some(mut w) if entry.key.id == "input" => input = w.pop(),
            Some(w) => tokens.extend(w),
        }
    }
    tokens.extend(args.argv.iter().cloned());
    if let Some(input) = input {
        tokens.extend(["--".into(), input]);
    }
    let matches = command.try_get_matches_from(&tokens).map_err(|e| {
        Error::usage(
            format!(
                "{}: the recipe's keys and the command line together: {}",
                loaded.label,
                first_line(&e)
            ),
            "drop the key or the flag",
        )
    })?;
    let mut merged = AdjustArgs::from_arg_matches(&matches)
        .map_err(|e| Error::usage(first_line(&e), "report this as a bug"))?;
    merged.given = args.given;
    merged.argv = tokens;
    let used = RecipeUse {
        label: loaded.label.clone(),
        text: loaded.text.clone(),
        overridden,
    };
    Ok((merged, used))
}

/// The clap ids of the flags an entry sets (both layout flags for `columns.layout`).
fn flag_ids(entry: &Entry) -> Vec<String> {
    match entry.key.kind {
        Kind::Layout => LAYOUT_VALUES
            .iter()
            .filter_map(|(_, flag)| flag.map(str::to_string))
            .collect(),
        _ => vec![entry.key.id.clone()],
    }
}

/// The ids given on the command line and every id they exclude.
fn excluded_by(command: &Command, given: &BTreeSet<String>) -> BTreeSet<String> {
    let mut excluded = given.clone();
    for arg in command.get_arguments() {
        let id = arg.get_id().as_str();
        if given.contains(id) {
            excluded.extend(
                command
                    .get_arg_conflicts_with(arg)
                    .iter()
                    .map(|a| a.get_id().to_string()),
            );
        } else if command
            .get_arg_conflicts_with(arg)
            .iter()
            .any(|a| given.contains(a.get_id().as_str()))
        {
            excluded.insert(id.to_string());
        }
    }
    excluded
}

/// The flags an entry stands for, as command-line words.
fn tokens_of(
    loaded: &LoadedRecipe,
    entry: &Entry,
    command: &Command,
    allow_outside: bool,
) -> Result<Vec<OsString>> {
    let key = &entry.key;
    let long = key.long.clone().unwrap_or_default();
    let place = |written: &str| -> Result<String> {
        if key.is_output() {
            output_path(loaded, entry, written, allow_outside)
        } else if key.path {
            Ok(loaded.path(written))
        } else {
            Ok(written.to_string())
        }
    };
    let flag = |value: String| -> OsString {
        if key.long.is_some() {
            format!("{long}={value}").into()
        } else {
            value.into()
        }
    };
    Ok(match &entry.value {
        Value::Text(v) if key.kind == Kind::Layout => {
            match LAYOUT_VALUES.iter().find(|(name, _)| name == v) {
                Some((_, Some(id))) => long_of(command, id)
                    .map(OsString::from)
                    .into_iter()
                    .collect(),
                Some((_, None)) => Vec::new(),
                None => {
                    return Err(loaded.error_at(
                        &key.key,
                        entry.span.clone(),
                        format!("\"{v}\" is not a layout"),
                        "use auto, long or wide",
                    ))
                }
            }
        }
        Value::Text(v) => vec![flag(place(v)?)],
        Value::Bool(true) => vec![long.into()],
        Value::Bool(false) => Vec::new(),
        Value::Integer(i) => vec![flag(i.to_string())],
        Value::Float(x) => vec![flag(x.to_string())],
        Value::List(items) => items
            .iter()
            .map(|item| Ok(flag(place(item)?)))
            .collect::<Result<_>>()?,
    })
}

/// An output path of the recipe: it must lie inside the recipe's folder, so that a recipe
/// from someone else cannot write elsewhere, unless the command line allows it.
fn output_path(
    loaded: &LoadedRecipe,
    entry: &Entry,
    written: &str,
    allow_outside: bool,
) -> Result<String> {
    if !allow_outside && !crate::source::stays_inside(&loaded.folder, written) {
        return Err(loaded.error_at(
            &entry.key.key,
            entry.span.clone(),
            format!("\"{written}\" is outside the recipe's folder"),
            "write the outputs of a recipe inside its folder, or pass --allow-outside on the command line to let this recipe write there",
        ));
    }
    Ok(loaded.path(written))
}

/// The long flag (`--wide-years`) of a clap id.
fn long_of(command: &Command, id: &str) -> Option<String> {
    command
        .get_arguments()
        .find(|a| a.get_id().as_str() == id)
        .and_then(|a| a.get_long())
        .map(|l| format!("--{l}"))
}

/// Parses one entry's flags on their own: a value its flag refuses is an error at the key.
/// Gives the flags (`--ci-high`) the entry needs beside it.
fn check_alone(
    loaded: &LoadedRecipe,
    entry: &Entry,
    words: &[OsString],
    command: &Command,
) -> Result<Vec<String>> {
    let mut argv: Vec<OsString> = vec!["--recipe=recipe".into()];
    if entry.key.long.is_none() {
        argv.push("--".into());
    }
    argv.extend(words.iter().cloned());
    let Err(error) = command.clone().try_get_matches_from(&argv) else {
        return Ok(Vec::new());
    };
    let key = &entry.key;
    if error.kind() == ErrorKind::MissingRequiredArgument {
        return Ok(context_flags(&error, ContextKind::InvalidArg));
    }
    let (problem, fix) = if !key.possible.is_empty() {
        let written = match &entry.value {
            Value::Text(v) => v.clone(),
            Value::Integer(i) => i.to_string(),
            other => format!("{other:?}"),
        };
        (
            format!("\"{written}\" is not a value of {}", key.key),
            format!("use one of: {}", key.possible.join(", ")),
        )
    } else {
        let problem = std::error::Error::source(&error)
            .map(|s| s.to_string())
            .unwrap_or_else(|| first_line(&error));
        (problem, format!("{}: {}", key.key, key.help))
    };
    Err(loaded.error_at(&key.key, entry.span.clone(), problem, fix))
}

/// Keys the flags refuse together: a pair that excludes each other (error at the later key),
/// and a key without the key it needs.
fn check_together(loaded: &LoadedRecipe, command: &Command, needs: &[Vec<String>]) -> Result<()> {
    let arg_of = |entry: &Entry| {
        command
            .get_arguments()
            .find(|a| a.get_id().as_str() == entry.key.id)
    };
    let entries = &loaded.entries;
    for (j, later) in entries.iter().enumerate() {
        let Some(later_arg) = arg_of(later) else {
            continue;
        };
        for earlier in &entries[..j] {
            let Some(earlier_arg) = arg_of(earlier) else {
                continue;
            };
            let excludes = |a: &clap::Arg, b: &clap::Arg| {
                command
                    .get_arg_conflicts_with(a)
                    .iter()
                    .any(|c| c.get_id() == b.get_id())
            };
            if excludes(later_arg, earlier_arg) || excludes(earlier_arg, later_arg) {
                return Err(loaded.error_at(
                    &later.key.key,
                    later.span.clone(),
                    format!("{} cannot be used with {}", later.key.key, earlier.key.key),
                    format!("keep one of {}, {}", earlier.key.key, later.key.key),
                ));
            }
        }
    }
    let longs: BTreeSet<&str> = entries
        .iter()
        .filter_map(|e| e.key.long.as_deref())
        .collect();
    let all = keys::all();
    for (entry, needed) in entries.iter().zip(needs) {
        if let Some(missing) = needed.iter().find(|n| !longs.contains(n.as_str())) {
            let other = all
                .iter()
                .find(|k| k.long.as_deref() == Some(missing))
                .map_or(missing.clone(), |k| k.key.clone());
            return Err(loaded.error_at(
                &entry.key.key,
                entry.span.clone(),
                format!("{} without {other}", entry.key.key),
                format!("give both, {} and {other}", entry.key.key),
            ));
        }
    }
    Ok(())
}

/// The long flags a clap error names in one of its contexts (`--ci-high <COL>` → `--ci-high`).
fn context_flags(error: &clap::Error, kind: ContextKind) -> Vec<String> {
    let words = match error.get(kind) {
        Some(ContextValue::String(s)) => vec![s.clone()],
        Some(ContextValue::Strings(s)) => s.clone(),
        _ => Vec::new(),
    };
    words
        .iter()
        .filter_map(|w| w.split_whitespace().next())
        .filter(|w| w.starts_with("--"))
        .map(str::to_string)
        .collect()
}

/// A clap error's message without its `error:` prefix and usage lines.
fn first_line(error: &clap::Error) -> String {
    let text = error.render().to_string();
    text.lines()
        .next()
        .unwrap_or("")
        .trim_start_matches("error: ")
        .to_string()
}

/// Checks what only the merged arguments can show (such as `deflate` without a base year)
/// and points the error at the recipe key it concerns when the recipe set that key.
pub fn check_merged(loaded: &LoadedRecipe, used: &RecipeUse, args: &AdjustArgs) -> Result<()> {
    let span_of = |key: &str| {
        loaded
            .entries
            .iter()
            .find(|e| e.key.key == key && !used.overridden.iter().any(|o| o == key))
            .map(|e| e.span.clone())
    };
    let relocate = |error: Error, key: &str| match (&error, span_of(key)) {
        (Error::Usage { problem, fix }, Some(span)) => loaded.error_at(
            key,
            span,
            problem.clone(),
            format!("{fix} (in a recipe, each flag is the key of the same name with _ for -)"),
        ),
        _ => error,
    };
    crate::plan::parse_steps(&args.steps)
        .and_then(|steps| crate::plan::check_step_options(&steps, args.base_year))
        .map_err(|e| relocate(e, "steps"))?;
    let margin_key = [
        "uncertainty.moe",
        "uncertainty.ci_low",
        "uncertainty.ci_high",
    ]
    .into_iter()
    .find(|key| span_of(key).is_some())
    .unwrap_or("uncertainty");
    crate::plan::margin_spec(&args.uncertainty).map_err(|e| relocate(e, margin_key))?;
    let rounding_key = if span_of("output.decimals").is_some() {
        "output.decimals"
    } else {
        "output.sig"
    };
    crate::plan::resolve_output(&args.output).map_err(|e| relocate(e, rounding_key))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::Path;

    /// The merged arguments of `recipe` run with `levelfield adjust --recipe r.toml FLAGS`.
    fn merged(recipe: &str, flags: &[&str]) -> Result<(AdjustArgs, RecipeUse)> {
        let loaded = super::super::parse(recipe, "r.toml", Path::new("/data"))?;
        let mut argv = vec!["levelfield", "adjust", "--recipe", "r.toml"];
        argv.extend_from_slice(flags);
        let crate::cli::Command::Adjust(args) = crate::cli::parse_from(argv).unwrap().command
        else {
            unreachable!()
        };
        merge(&loaded, *args)
    }

    #[test]
    fn keys_become_flags_and_the_command_line_wins() {
        let (args, used) = merged(
            "input = \"-x.csv\"\nsteps = [\"ppp\", \"per-capita\"]\nper = 1000\n[columns]\nyear = \"Year\"\nlayout = \"wide\"\n[uncertainty]\nci_low = \"lo\"\nci_high = \"hi\"\nmargin_confidence = 95\n",
            &["--year-value", "2020", "--moe", "m"],
        )
        .unwrap();
        assert_eq!(args.input.as_deref(), Some("/data/-x.csv"));
        assert_eq!(args.steps, ["ppp", "per-capita"]);
        assert_eq!(args.per, 1000);
        assert!(args.columns.wide_years && !args.columns.long);
        assert_eq!(args.columns.year, None);
        assert_eq!(args.columns.year_value, Some(2020));
        assert_eq!(args.uncertainty.moe.as_deref(), Some("m"));
        assert_eq!(args.uncertainty.ci_low, None);
        assert_eq!(args.uncertainty.ci_high, None);
        assert_eq!(
            used.overridden,
            ["columns.year", "uncertainty.ci_low", "uncertainty.ci_high"]
        );
    }

    #[test]
    fn outputs_stay_in_the_recipe_folder_unless_the_command_line_allows() {
        let recipe = "[output]\nfile = \"../elsewhere.csv\"\n";
        let error = merged(recipe, &["in.csv"]).unwrap_err().to_string();
        assert!(error.contains("outside the recipe's folder"), "{error}");
        let (args, _) = merged(recipe, &["in.csv", "--allow-outside"]).unwrap();
        assert_eq!(
            args.output.output.as_deref(),
            Some(Path::new("/elsewhere.csv"))
        );
        // Replaced on the command line, the key is not checked.
        assert!(merged(recipe, &["in.csv", "-o", "out.csv"]).is_ok());
    }

    #[test]
    fn a_saved_recipe_reads_back_to_the_same_flags() {
        let recipe = "input = \"fees.csv\"\nsteps = [\"deflate\", \"ppp\"]\nbase_year = 2023\nstreaming = true\nchunk_mb = 0.5\n[columns]\nlayout = \"long\"\nheader_row = 3\n[uncertainty]\nse = \"se\"\nrank_intervals = \"simulate\"\n[output]\nformat = \"json\"\nwrite_columns = \"core\"\n";
        let (args, _) = merged(recipe, &[]).unwrap();
        let saved = super::super::save::recipe_text(&args, Path::new("/data")).unwrap();
        let (mut again, _) = merged(&saved, &[]).unwrap();
        // The same arguments (the saved recipe also writes the method keys' defaults).
        let mut first = args.clone();
        (first.argv, again.argv) = (Vec::new(), Vec::new());
        assert_eq!(format!("{again:?}"), format!("{first:?}"));
        for line in [
            "chunk_mb = 0.5",
            "layout = \"long\"",
            "header_row = 3",
            "draws = 2000",
            "write_columns = \"core\"",
        ] {
            assert!(saved.contains(line), "{line} in {saved}");
        }
    }
}
