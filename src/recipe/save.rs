//! Writing the recipe of a run: the arguments after any recipe was merged, as TOML, with paths
//! rewritten relative to the folder the recipe is saved in so the folder can be handed on.
//! Method keys are always written (so a later change of a default cannot change the result);
//! reading and output keys only where they differ from the defaults.

use super::{ColumnsSection, OutputSection, Recipe, UncertaintySection};
use crate::cli::{AdjustArgs, IntervalKind, ShareUnit};
use crate::error::{Error, Result};
use crate::uncertainty::intervals::Adjustment;
use clap::ValueEnum;
use std::path::{Component, Path, PathBuf};
use toml::Spanned;

const HEADER: &str = "# levelfield recipe: run it with `levelfield adjust --recipe FILE`.\n\
# Paths are relative to this file's folder; flags given on the command line override keys.\n\n";

fn at<T>(value: T) -> Option<Spanned<T>> {
    Some(Spanned::new(0..0, value))
}

fn name<E: ValueEnum>(value: &E) -> String {
    value
        .to_possible_value()
        .map(|p| p.get_name().to_string())
        .unwrap_or_default()
}

fn text(value: &Option<String>) -> Option<Spanned<String>> {
    value.clone().map(|v| Spanned::new(0..0, v))
}

/// The recipe text for `args`, to be saved in `folder`.
pub fn recipe_text(args: &AdjustArgs, folder: &Path) -> Result<String> {
    let rel = |p: &Path| -> Result<Option<Spanned<String>>> {
        Ok(at(relative_to(p, folder)?.to_string_lossy().into_owned()))
    };
    let c = &args.columns;
    let u = &args.uncertainty;
    let o = &args.output;
    let input = match args.input.as_deref() {
        Some("-") => at("-".to_string()),
        Some(path) => rel(Path::new(path))?,
        None => None,
    };
    let steps: Vec<String> = args
        .steps
        .iter()
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .collect();
    let aliases = args
        .aliases
        .iter()
        .map(|p| relative_to(p, folder).map(|r| r.to_string_lossy().into_owned()))
        .collect::<Result<Vec<_>>>()?;
    let uses_income = steps.iter().any(|s| s == "per-income");
    let columns = ColumnsSection {
        entity: text(&c.entity),
        value: text(&c.value),
        year: text(&c.year),
        year_value: c.year_value.and_then(at),
        group: text(&c.group),
        currency: text(&c.currency),
        currency_code: text(&c.currency_code),
        value_multiplier: text(&c.value_multiplier),
        layout: if c.wide_years {
            at("wide".into())
        } else if c.long {
            at("long".into())
        } else {
            None
        },
        delimiter: text(&c.delimiter),
        encoding: c.encoding.as_ref().map(name).and_then(at),
        decimal_comma: c.decimal_comma.then_some(true).and_then(at),
        lenient: c.lenient.then_some(true).and_then(at),
        sheet: text(&c.sheet),
        header_row: c.header_row.and_then(at),
        max_input_mb: (c.max_input_mb != 4096)
            .then_some(c.max_input_mb)
            .and_then(at),
    };
    let has_margins =
        u.moe.is_some() || u.se.is_some() || u.ci_low.is_some() || u.sample_size.is_some();
    let uncertainty = has_margins.then(|| UncertaintySection {
        moe: text(&u.moe),
        se: text(&u.se),
        ci_low: text(&u.ci_low),
        ci_high: text(&u.ci_high),
        sample_size: text(&u.sample_size),
        margin_confidence: u
            .margin_confidence
            .map(|l| (l.confidence() * 100.0).round() as u32)
            .and_then(at),
        share_unit: (u.sample_size.is_some() || u.share_unit != ShareUnit::Percent)
            .then(|| name(&u.share_unit))
            .and_then(at),
        proportion: u.proportion.then_some(true).and_then(at),
        rank_intervals: at(name(&u.rank_intervals)),
        joint_adjustment: (u.rank_intervals == IntervalKind::Joint
            || u.joint_adjustment != Adjustment::Independence)
            .then(|| name(&u.joint_adjustment))
            .and_then(at),
        draws: (u.rank_intervals == IntervalKind::Simulate)
            .then_some(u.draws)
            .and_then(at),
        seed: (u.rank_intervals == IntervalKind::Simulate)
            .then_some(u.seed)
            .and_then(at),
    });
    let output = OutputSection {
        format: o.format.as_ref().map(name).and_then(at),
        file: match &o.output {
            Some(p) => rel(p)?,
            None => None,
        },
        decimals: o.decimals.and_then(at),
        sig: o.sig.and_then(at),
        quiet: o.quiet.then_some(true).and_then(at),
        methods: match &o.methods {
            Some(p) => rel(p)?,
            None => None,
        },
        report: match &o.report {
            Some(p) => rel(p)?,
            None => None,
        },
        write_columns: match &o.write_columns {
            crate::model::ColumnSet::All => None,
            crate::model::ColumnSet::Core => at("core".to_string()),
            crate::model::ColumnSet::List(names) => at(names.join(",")),
        },
    };
    let recipe = Recipe {
        input,
        refs: match &args.refs {
            Some(p) => rel(p)?,
            None => None,
        },
        steps: at(steps),
        base_year: args.base_year.and_then(at),
        deflator: args.deflator.as_ref().map(name).and_then(at),
        per: at(args.per),
        income_as: uses_income.then(|| name(&args.income_as)).and_then(at),
        nearest_year: at(args.nearest_year),
        order: at(name(&args.order)),
        rank_aggregates: at(args.rank_aggregates),
        aliases: (!aliases.is_empty()).then_some(aliases).and_then(at),
        allow_unresolved: at(args.allow_unresolved),
        streaming: args.streaming.then_some(true).and_then(at),
        chunk_mb: (args.streaming && args.chunk_mb != 16.0)
            .then_some(args.chunk_mb)
            .and_then(at),
        columns: (!toml::to_string(&columns)
            .unwrap_or_default()
            .trim()
            .is_empty())
        .then_some(columns),
        uncertainty,
        output: (!toml::to_string(&output)
            .unwrap_or_default()
            .trim()
            .is_empty())
        .then_some(output),
    };
    let body = toml::to_string(&recipe).map_err(|e| {
        Error::usage(
            format!("the recipe could not be written as TOML: {e}"),
            "report this as a bug",
        )
    })?;
    Ok(format!("{HEADER}{body}"))
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
