//! Merging a recipe into the `adjust` arguments: a key fills its flag unless the flag (or a
//! flag that excludes it, such as `--year-value` for `year`) was given on the command line, in
//! which case the flag wins and the key is reported as overridden. Values are checked with the
//! flags' own parsers, and combinations the flags would refuse are errors at the key's line.

use super::{At, LoadedRecipe};
use crate::cli::{self, AdjustArgs};
use crate::error::{Error, Result};
use clap::ValueEnum;
use std::collections::BTreeSet;
use std::path::PathBuf;
use toml::Spanned;

/// What the merge did, for the run summary and the methods note.
#[derive(Debug, Clone, Default)]
pub struct RecipeUse {
    pub label: String,
    pub text: String,
    /// Recipe keys whose values a command-line flag replaced.
    pub overridden: Vec<String>,
}

/// Flags that exclude each other: giving one on the command line drops the recipe's others.
const GROUPS: &[&[&str]] = &[
    &["year", "year_value"],
    &["currency", "currency_code"],
    &["wide_years", "long"],
    &["decimals", "sig"],
    &["moe", "se", "ci_low", "ci_high", "sample_size"],
];

struct Merge<'a> {
    loaded: &'a LoadedRecipe,
    given: &'a BTreeSet<String>,
    overridden: Vec<String>,
    /// `--allow-outside` was given on the command line (a recipe key cannot grant it).
    allow_outside: bool,
}

impl<'a> Merge<'a> {
    /// The recipe's value for a key, unless the command line gave its flag or an excluding one.
    fn take<'r, T>(&mut self, key: &str, id: &str, value: &'r At<T>) -> Option<&'r Spanned<T>> {
        let value = value.as_ref()?;
        let group: &[&str] = GROUPS
            .iter()
            .find(|g| g.contains(&id))
            .copied()
            .unwrap_or(std::slice::from_ref(&id));
        if group.iter().any(|g| self.given.contains(*g)) {
            self.overridden.push(key.to_string());
            None
        } else {
            Some(value)
        }
    }

    fn choice<E: ValueEnum>(&self, key: &str, value: &Spanned<String>) -> Result<E> {
        E::from_str(value.get_ref(), false).map_err(|_| {
            let names: Vec<String> = E::value_variants()
                .iter()
                .filter_map(|v| v.to_possible_value())
                .map(|p| p.get_name().to_string())
                .collect();
            self.loaded.error_at(
                key,
                value.span(),
                format!("\"{}\" is not a value of {key}", value.get_ref()),
                format!("use one of: {}", names.join(", ")),
            )
        })
    }

    fn path(&self, value: &Spanned<String>) -> String {
        self.loaded.path(value.get_ref())
    }

    /// An output path of the recipe: it must lie inside the recipe's folder, so that a recipe
    /// from someone else cannot write elsewhere, unless the command line allows it.
    fn output_path(&self, key: &str, value: &Spanned<String>) -> Result<String> {
        let written = value.get_ref();
        if !self.allow_outside && !crate::source::stays_inside(&self.loaded.folder, written) {
            return Err(self.loaded.error_at(
                key,
                value.span(),
                format!("\"{written}\" is outside the recipe's folder"),
                "write the outputs of a recipe inside its folder, or pass --allow-outside on the command line to let this recipe write there",
            ));
        }
        Ok(self.path(value))
    }
}

/// Fills `args` from the recipe where the command line did not speak; `given` holds the clap
/// ids of the flags given on the command line.
pub fn merge(
    loaded: &LoadedRecipe,
    args: &mut AdjustArgs,
    given: &BTreeSet<String>,
) -> Result<RecipeUse> {
    let r = &loaded.recipe;
    let mut m = Merge {
        loaded,
        given,
        overridden: Vec::new(),
        allow_outside: args.allow_outside,
    };
    if let Some(v) = r.input.as_ref() {
        if args.input.is_some() {
            m.overridden.push("input".into());
        } else {
            args.input = Some(m.path(v));
        }
    }
    if let Some(v) = m.take("refs", "refs", &r.refs) {
        args.refs = Some(PathBuf::from(m.path(v)));
    }
    if let Some(v) = m.take("steps", "steps", &r.steps) {
        args.steps = v.get_ref().clone();
    }
    if let Some(v) = m.take("base_year", "base_year", &r.base_year) {
        args.base_year = Some(*v.get_ref());
    }
    if let Some(v) = m.take("deflator", "deflator", &r.deflator) {
        args.deflator = Some(m.choice("deflator", v)?);
    }
    if let Some(v) = m.take("per", "per", &r.per) {
        args.per = cli::parse_per(&v.get_ref().to_string()).map_err(|problem| {
            loaded.error_at("per", v.span(), problem, "write per = 1000, for example")
        })?;
    }
    if let Some(v) = m.take("income_as", "income_as", &r.income_as) {
        args.income_as = m.choice("income_as", v)?;
    }
    if let Some(v) = m.take("nearest_year", "nearest_year", &r.nearest_year) {
        args.nearest_year = *v.get_ref();
    }
    if let Some(v) = m.take("order", "order", &r.order) {
        args.order = m.choice("order", v)?;
    }
    if let Some(v) = m.take("rank_aggregates", "rank_aggregates", &r.rank_aggregates) {
        args.rank_aggregates = *v.get_ref();
    }
    if let Some(v) = m.take("aliases", "aliases", &r.aliases) {
        args.aliases = v
            .get_ref()
            .iter()
            .map(|p| PathBuf::from(loaded.path(p)))
            .collect();
    }
    if let Some(v) = m.take("allow_unresolved", "allow_unresolved", &r.allow_unresolved) {
        args.allow_unresolved = *v.get_ref();
    }
    if let Some(v) = m.take("streaming", "streaming", &r.streaming) {
        args.streaming = *v.get_ref();
    }
    if let Some(v) = m.take("chunk_mb", "chunk_mb", &r.chunk_mb) {
        args.chunk_mb = cli::parse_chunk_mb(&v.get_ref().to_string()).map_err(|problem| {
            loaded.error_at(
                "chunk_mb",
                v.span(),
                problem,
                "write chunk_mb = 16, for example",
            )
        })?;
    }
    if let Some(c) = &r.columns {
        merge_columns(&mut m, c, &mut args.columns)?;
    }
    if let Some(u) = &r.uncertainty {
        merge_uncertainty(&mut m, u, &mut args.uncertainty)?;
    }
    if let Some(o) = &r.output {
        merge_output(&mut m, o, &mut args.output)?;
    }
    check_conflicts(loaded)?;
    Ok(RecipeUse {
        label: loaded.label.clone(),
        text: loaded.text.clone(),
        overridden: m.overridden,
    })
}

fn merge_columns(
    m: &mut Merge,
    c: &super::ColumnsSection,
    args: &mut cli::ColumnArgs,
) -> Result<()> {
    let text = |v: &Spanned<String>| Some(v.get_ref().clone());
    if let Some(v) = m.take("columns.entity", "entity", &c.entity) {
        args.entity = text(v);
    }
    if let Some(v) = m.take("columns.value", "value", &c.value) {
        args.value = text(v);
    }
    if let Some(v) = m.take("columns.year", "year", &c.year) {
        args.year = text(v);
    }
    if let Some(v) = m.take("columns.year_value", "year_value", &c.year_value) {
        args.year_value = Some(*v.get_ref());
    }
    if let Some(v) = m.take("columns.group", "group", &c.group) {
        args.group = text(v);
    }
    if let Some(v) = m.take("columns.currency", "currency", &c.currency) {
        args.currency = text(v);
    }
    if let Some(v) = m.take("columns.currency_code", "currency_code", &c.currency_code) {
        args.currency_code = text(v);
    }
    if let Some(v) = m.take(
        "columns.value_multiplier",
        "value_multiplier",
        &c.value_multiplier,
    ) {
        args.value_multiplier = text(v);
    }
    if let Some(v) = m.take("columns.layout", "wide_years", &c.layout) {
        let (wide, long) = match v.get_ref().as_str() {
            "auto" => (false, false),
            "wide" => (true, false),
            "long" => (false, true),
            other => {
                return Err(m.loaded.error_at(
                    "columns.layout",
                    v.span(),
                    format!("\"{other}\" is not a layout"),
                    "use auto, long or wide",
                ))
            }
        };
        args.wide_years = wide;
        args.long = long;
    }
    if let Some(v) = m.take("columns.delimiter", "delimiter", &c.delimiter) {
        args.delimiter = text(v);
    }
    if let Some(v) = m.take("columns.encoding", "encoding", &c.encoding) {
        args.encoding = Some(m.choice("columns.encoding", v)?);
    }
    if let Some(v) = m.take("columns.decimal_comma", "decimal_comma", &c.decimal_comma) {
        args.decimal_comma = *v.get_ref();
    }
    if let Some(v) = m.take("columns.lenient", "lenient", &c.lenient) {
        args.lenient = *v.get_ref();
    }
    if let Some(v) = m.take("columns.sheet", "sheet", &c.sheet) {
        args.sheet = text(v);
    }
    if let Some(v) = m.take("columns.header_row", "header_row", &c.header_row) {
        args.header_row = Some(*v.get_ref());
    }
    if let Some(v) = m.take("columns.max_input_mb", "max_input_mb", &c.max_input_mb) {
        args.max_input_mb = *v.get_ref();
    }
    Ok(())
}

fn merge_uncertainty(
    m: &mut Merge,
    u: &super::UncertaintySection,
    args: &mut cli::UncertaintyArgs,
) -> Result<()> {
    let text = |v: &Spanned<String>| Some(v.get_ref().clone());
    if let Some(v) = m.take("uncertainty.moe", "moe", &u.moe) {
        args.moe = text(v);
    }
    if let Some(v) = m.take("uncertainty.se", "se", &u.se) {
        args.se = text(v);
    }
    if let Some(v) = m.take("uncertainty.ci_low", "ci_low", &u.ci_low) {
        args.ci_low = text(v);
    }
    if let Some(v) = m.take("uncertainty.ci_high", "ci_high", &u.ci_high) {
        args.ci_high = text(v);
    }
    if let Some(v) = m.take("uncertainty.sample_size", "sample_size", &u.sample_size) {
        args.sample_size = text(v);
    }
    if let Some(v) = m.take(
        "uncertainty.margin_confidence",
        "margin_confidence",
        &u.margin_confidence,
    ) {
        let as_text = Spanned::new(v.span(), v.get_ref().to_string());
        args.margin_confidence = Some(m.choice("uncertainty.margin_confidence", &as_text)?);
    }
    if let Some(v) = m.take("uncertainty.share_unit", "share_unit", &u.share_unit) {
        args.share_unit = m.choice("uncertainty.share_unit", v)?;
    }
    if let Some(v) = m.take("uncertainty.proportion", "proportion", &u.proportion) {
        args.proportion = *v.get_ref();
    }
    if let Some(v) = m.take(
        "uncertainty.rank_intervals",
        "rank_intervals",
        &u.rank_intervals,
    ) {
        args.rank_intervals = m.choice("uncertainty.rank_intervals", v)?;
    }
    if let Some(v) = m.take(
        "uncertainty.joint_adjustment",
        "joint_adjustment",
        &u.joint_adjustment,
    ) {
        args.joint_adjustment = m.choice("uncertainty.joint_adjustment", v)?;
    }
    if let Some(v) = m.take("uncertainty.draws", "draws", &u.draws) {
        args.draws = *v.get_ref();
    }
    if let Some(v) = m.take("uncertainty.seed", "seed", &u.seed) {
        args.seed = *v.get_ref();
    }
    Ok(())
}

fn merge_output(m: &mut Merge, o: &super::OutputSection, args: &mut cli::OutputArgs) -> Result<()> {
    if let Some(v) = m.take("output.format", "format", &o.format) {
        args.format = Some(m.choice("output.format", v)?);
    }
    if let Some(v) = m.take("output.file", "output", &o.file) {
        args.output = Some(PathBuf::from(m.output_path("output.file", v)?));
    }
    if let Some(v) = m.take("output.decimals", "decimals", &o.decimals) {
        args.decimals = Some(*v.get_ref());
    }
    if let Some(v) = m.take("output.sig", "sig", &o.sig) {
        args.sig = Some(*v.get_ref());
    }
    if let Some(v) = m.take("output.quiet", "quiet", &o.quiet) {
        args.quiet = *v.get_ref();
    }
    if let Some(v) = m.take("output.methods", "methods", &o.methods) {
        args.methods = Some(PathBuf::from(m.output_path("output.methods", v)?));
    }
    if let Some(v) = m.take("output.report", "report", &o.report) {
        args.report = Some(PathBuf::from(m.output_path("output.report", v)?));
    }
    if let Some(v) = m.take("output.write_columns", "write_columns", &o.write_columns) {
        args.write_columns = crate::model::ColumnSet::parse(v.get_ref()).map_err(|why| {
            m.loaded.error_at(
                "output.write_columns",
                v.span(),
                format!("\"{}\" is not a column set", v.get_ref()),
                why,
            )
        })?;
    }
    Ok(())
}

/// Pairs of keys a recipe may not hold together (the flags refuse the same pairs).
fn check_conflicts(loaded: &LoadedRecipe) -> Result<()> {
    let r = &loaded.recipe;
    let mut present: Vec<(&str, std::ops::Range<usize>)> = Vec::new();
    fn span<T>(v: &At<T>) -> Option<std::ops::Range<usize>> {
        v.as_ref().map(|s| s.span())
    }
    if let Some(c) = &r.columns {
        for (key, s) in [
            ("columns.year", span(&c.year)),
            ("columns.year_value", span(&c.year_value)),
            ("columns.currency", span(&c.currency)),
            ("columns.currency_code", span(&c.currency_code)),
        ] {
            if let Some(s) = s {
                present.push((key, s));
            }
        }
    }
    if let Some(u) = &r.uncertainty {
        for (key, s) in [
            ("uncertainty.moe", span(&u.moe)),
            ("uncertainty.se", span(&u.se)),
            ("uncertainty.ci_low", span(&u.ci_low)),
            ("uncertainty.sample_size", span(&u.sample_size)),
        ] {
            if let Some(s) = s {
                present.push((key, s));
            }
        }
        if let (Some(low), None) = (&u.ci_low, &u.ci_high) {
            return Err(loaded.error_at(
                "uncertainty.ci_low",
                low.span(),
                "ci_low without ci_high",
                "give both bounds, ci_low and ci_high",
            ));
        }
        if let (None, Some(high)) = (&u.ci_low, &u.ci_high) {
            return Err(loaded.error_at(
                "uncertainty.ci_high",
                high.span(),
                "ci_high without ci_low",
                "give both bounds, ci_low and ci_high",
            ));
        }
    }
    if let Some(o) = &r.output {
        for (key, s) in [
            ("output.decimals", span(&o.decimals)),
            ("output.sig", span(&o.sig)),
        ] {
            if let Some(s) = s {
                present.push((key, s));
            }
        }
    }
    let groups: &[&[&str]] = &[
        &["columns.year", "columns.year_value"],
        &["columns.currency", "columns.currency_code"],
        &["output.decimals", "output.sig"],
        &[
            "uncertainty.moe",
            "uncertainty.se",
            "uncertainty.ci_low",
            "uncertainty.sample_size",
        ],
    ];
    for group in groups {
        let found: Vec<&(&str, std::ops::Range<usize>)> =
            present.iter().filter(|(k, _)| group.contains(k)).collect();
        if let [first, second, ..] = found.as_slice() {
            return Err(loaded.error_at(
                second.0,
                second.1.clone(),
                format!("{} cannot be used with {}", second.0, first.0),
                format!("keep one of {}", group.join(", ")),
            ));
        }
    }
    Ok(())
}

/// Checks what only the merged arguments can show (such as `deflate` without a base year)
/// and points the error at the recipe key it concerns when the recipe set that key.
pub fn check_merged(loaded: &LoadedRecipe, used: &RecipeUse, args: &AdjustArgs) -> Result<()> {
    let r = &loaded.recipe;
    let from_recipe = |key: &str, span: Option<std::ops::Range<usize>>| {
        span.filter(|_| !used.overridden.iter().any(|o| o == key))
    };
    let relocate = |error: Error, key: &str, span: Option<std::ops::Range<usize>>| match (
        &error,
        from_recipe(key, span),
    ) {
        (Error::Usage { problem, fix }, Some(span)) => loaded.error_at(
            key,
            span,
            problem.clone(),
            format!("{fix} (in a recipe, each flag is the key of the same name with _ for -)"),
        ),
        _ => error,
    };
    let steps_span = r.steps.as_ref().map(|s| s.span());
    crate::plan::parse_steps(&args.steps)
        .and_then(|steps| crate::plan::check_step_options(&steps, args.base_year))
        .map_err(|e| relocate(e, "steps", steps_span))?;
    let u = r.uncertainty.as_ref();
    let margin = u.and_then(|u| {
        [
            ("uncertainty.moe", &u.moe),
            ("uncertainty.ci_low", &u.ci_low),
            ("uncertainty.ci_high", &u.ci_high),
        ]
        .into_iter()
        .find_map(|(key, v)| v.as_ref().map(|s| (key, s.span())))
    });
    let (margin_key, margin_span) = match margin {
        Some((key, span)) => (key, Some(span)),
        None => ("uncertainty", None),
    };
    crate::plan::margin_spec(&args.uncertainty)
        .map_err(|e| relocate(e, margin_key, margin_span))?;
    let (rounding_key, rounding_span) = match r.output.as_ref() {
        Some(o) if o.decimals.is_some() => {
            ("output.decimals", o.decimals.as_ref().map(|s| s.span()))
        }
        Some(o) => ("output.sig", o.sig.as_ref().map(|s| s.span())),
        None => ("output.sig", None),
    };
    crate::plan::resolve_output(&args.output)
        .map_err(|e| relocate(e, rounding_key, rounding_span))?;
    Ok(())
}
