//! The recipe's keys, derived from the `adjust` flags' clap definition: a key is the flag's id
//! (its long name with `_` for `-`), in the section of the argument group that defines it
//! (`[columns]`, `[uncertainty]`, `[output]`, else the top level). The value's TOML type comes
//! from the flag's parser, its allowed values and help from the flag. Nothing about an option
//! is written here twice; only the few keys whose name differs from their flag are listed.

use crate::cli::{AdjustArgs, ColumnArgs, OutputArgs, UncertaintyArgs};
use clap::{Arg, ArgAction, Args, Command};
use std::any::TypeId;
use std::path::PathBuf;

/// Flags a recipe cannot set: they grant what a recipe from someone else must not grant
/// itself, or they name the recipe.
pub const COMMAND_LINE_ONLY: &[&str] =
    &["recipe", "save_recipe", "allow_outside", "allow_formulas"];

/// Keys named apart from their flag: (recipe key, flag id).
const RENAMED: &[(&str, &str)] = &[("output.file", "output")];

/// `columns.layout`: one key for the two layout flags, each value naming the flag it sets.
pub const LAYOUT_KEY: &str = "columns.layout";
pub const LAYOUT_VALUES: &[(&str, Option<&str>)] = &[
    ("auto", None),
    ("wide", Some("wide_years")),
    ("long", Some("long")),
];

/// The TOML type a key's value must have.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Text,
    Integer,
    /// An integer or a float.
    Number,
    Bool,
    /// An array of strings.
    List,
    /// An integer naming one of the flag's numeric values (margin_confidence = 90).
    NumericChoice,
    /// `columns.layout`.
    Layout,
}

impl Kind {
    pub fn expected(self) -> &'static str {
        match self {
            Kind::Text | Kind::Layout => "a string",
            Kind::Integer | Kind::NumericChoice => "an integer",
            Kind::Number => "a number",
            Kind::Bool => "a boolean",
            Kind::List => "an array of strings",
        }
    }
}

/// One recipe key and the flag behind it.
#[derive(Debug, Clone)]
pub struct Key {
    /// As written in a recipe: `steps`, `columns.entity`, `output.file`.
    pub key: String,
    /// The flag's clap id (`layout` for the layout key).
    pub id: String,
    /// The long flag (`--base-year`), absent for the positional input.
    pub long: Option<String>,
    pub kind: Kind,
    /// A path, taken from the recipe's folder.
    pub path: bool,
    /// Other spellings of the key accepted when reading (from the flag's aliases).
    pub aliases: Vec<String>,
    pub possible: Vec<String>,
    pub help: String,
}

impl Key {
    /// The section the key sits in, `""` for the top level.
    pub fn section(&self) -> &str {
        self.key.rsplit_once('.').map_or("", |(s, _)| s)
    }

    /// The key without its section.
    pub fn name(&self) -> &str {
        self.key.rsplit_once('.').map_or(&self.key, |(_, n)| n)
    }

    /// An output path: a path in the `[output]` section.
    pub fn is_output(&self) -> bool {
        self.path && self.section() == "output"
    }
}

/// The `adjust` flags as one clap command (the definition the command line is parsed with).
pub fn adjust_command() -> Command {
    AdjustArgs::augment_args(Command::new("levelfield-adjust")).no_binary_name(true)
}

/// Every recipe key, in the order of the flags' definition (which is the order a saved recipe
/// writes them in).
pub fn all() -> Vec<Key> {
    let sections: Vec<(&str, Vec<String>)> = vec![
        ("columns", ids(ColumnArgs::augment_args(Command::new("c")))),
        (
            "uncertainty",
            ids(UncertaintyArgs::augment_args(Command::new("u"))),
        ),
        ("output", ids(OutputArgs::augment_args(Command::new("o")))),
    ];
    let command = adjust_command();
    let mut keys: Vec<Key> = Vec::new();
    for arg in command.get_arguments() {
        let id = arg.get_id().as_str();
        if COMMAND_LINE_ONLY.contains(&id) || id == "help" {
            continue;
        }
        let section = sections
            .iter()
            .find(|(_, ids)| ids.iter().any(|i| i == id))
            .map(|(s, _)| *s);
        if id == "wide_years" || id == "long" {
            if id == "wide_years" {
                keys.push(layout_key(arg));
            }
            continue;
        }
        let dotted = |name: &str| match section {
            Some(s) => format!("{s}.{name}"),
            None => name.to_string(),
        };
        let key = RENAMED
            .iter()
            .find(|(_, flag)| *flag == id)
            .map_or_else(|| dotted(id), |(k, _)| k.to_string());
        keys.push(Key {
            key,
            id: id.to_string(),
            long: arg.get_long().map(|l| format!("--{l}")),
            kind: kind_of(arg),
            path: arg.is_positional()
                || arg.get_value_parser().type_id() == TypeId::of::<PathBuf>(),
            aliases: arg
                .get_all_aliases()
                .unwrap_or_default()
                .into_iter()
                .map(|a| dotted(&a.replace('-', "_")))
                .collect(),
            possible: arg
                .get_possible_values()
                .iter()
                .map(|p| p.get_name().to_string())
                .collect(),
            help: help_of(arg),
        });
    }
    keys
}

fn ids(command: Command) -> Vec<String> {
    command
        .get_arguments()
        .map(|a| a.get_id().to_string())
        .collect()
}

fn help_of(arg: &Arg) -> String {
    arg.get_help()
        .map(|h| h.to_string().replace('\n', " "))
        .unwrap_or_default()
}

fn layout_key(wide: &Arg) -> Key {
    Key {
        key: LAYOUT_KEY.into(),
        id: "layout".into(),
        long: None,
        kind: Kind::Layout,
        path: false,
        aliases: Vec::new(),
        possible: LAYOUT_VALUES.iter().map(|(v, _)| v.to_string()).collect(),
        help: format!("auto, long or wide ({})", help_of(wide)),
    }
}

/// The TOML type of a flag's value, from its action and parser.
fn kind_of(arg: &Arg) -> Kind {
    if matches!(arg.get_action(), ArgAction::SetTrue) {
        return Kind::Bool;
    }
    if matches!(arg.get_action(), ArgAction::Append) || arg.get_value_delimiter().is_some() {
        return Kind::List;
    }
    let parser = arg.get_value_parser().type_id();
    let integers = [
        TypeId::of::<i32>(),
        TypeId::of::<u32>(),
        TypeId::of::<u64>(),
        TypeId::of::<usize>(),
    ];
    if integers.iter().any(|t| parser == *t) {
        return Kind::Integer;
    }
    if parser == TypeId::of::<f64>() {
        return Kind::Number;
    }
    let possible = arg.get_possible_values();
    if !possible.is_empty() && possible.iter().all(|p| p.get_name().parse::<i64>().is_ok()) {
        return Kind::NumericChoice;
    }
    Kind::Text
}

#[cfg(test)]
mod tests {
    use super::*;

    fn key(name: &str) -> Key {
        all().into_iter().find(|k| k.key == name).unwrap()
    }

    #[test]
    fn keys_take_their_section_type_and_path_from_the_flags() {
        assert_eq!(key("steps").kind, Kind::List);
        assert_eq!(key("base_year").kind, Kind::Integer);
        assert_eq!(key("chunk_mb").kind, Kind::Number);
        assert_eq!(key("rank_aggregates").kind, Kind::Bool);
        assert_eq!(
            key("uncertainty.margin_confidence").kind,
            Kind::NumericChoice
        );
        assert_eq!(
            key("uncertainty.margin_confidence").aliases,
            ["uncertainty.moe_level"]
        );
        assert_eq!(key("columns.entity").kind, Kind::Text);
        assert!(key("output.file").is_output() && key("output.methods").is_output());
        assert!(key("refs").path && !key("refs").is_output() && key("input").path);
        assert_eq!(key("output.format").possible[0], "table");
        assert_eq!(key(LAYOUT_KEY).kind, Kind::Layout);
        let all = all();
        for flag in COMMAND_LINE_ONLY {
            assert!(all.iter().all(|k| k.id != *flag), "{flag} is a key");
        }
        assert!(all.iter().all(|k| k.id != "long" && k.id != "wide_years"));
    }
}
