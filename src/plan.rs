//! Stage two of the command line: the resolved plan. Steps are looked up in the registry and
//! ordered, paths are checked, the input is read, alias files and reference tables are loaded
//! and validated, and the output is decided, all before any adjustment runs.

use crate::adjust::{self, Step, StepSettings};
pub use crate::adjust::{check_step_options, check_year_option};
use crate::cells::number::NumberStyle;
use crate::cli::{
    AdjustArgs, ColumnArgs, IntervalKind, LeadArgs, OutputArgs, ShareUnit, UncertaintyArgs,
};
use crate::entity::Resolver;
use crate::error::{Error, Result};
use crate::ingest::layout::{LayoutChoice, RoleFlags};
use crate::ingest::margins::MarginSpec;
use crate::ingest::IngestOptions;
use crate::pipeline::PipelineSettings;
use crate::reference::{self, Basis, Kind, References};
use crate::report::format::Rounding;
use crate::report::Format;
use crate::source::{self, DiskDir};
use crate::uncertainty::moe::Level;
use crate::uncertainty::ranking::{IntervalMethod, IntervalSettings};
use rust_decimal::Decimal;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::str::FromStr;

/// Everything a run needs, resolved.
pub struct AdjustPlan {
    pub input_bytes: Vec<u8>,
    pub input_label: String,
    pub settings: PipelineSettings,
    pub resolver: Resolver,
    pub references: Option<References>,
    pub output: OutputPlan,
    /// The recipe quoted in the methods note.
    pub recipe: Option<crate::report::methods::RecipeQuote>,
    /// The recipe file a run read, with its sha256, for the files list.
    pub recipe_file: Option<(String, String)>,
    /// Set for `--streaming`: the input is read in pieces from this file, not held in memory.
    pub streaming: Option<crate::streaming::StreamingPlan>,
}

#[derive(Debug, Clone)]
pub struct OutputPlan {
    pub format: Format,
    pub path: Option<PathBuf>,
    pub rounding: Rounding,
    pub quiet: bool,
    pub methods: Option<PathBuf>,
    pub report: Option<PathBuf>,
    /// A notice printed at the top of reports and notes (the demo says its data are invented).
    pub notice: Option<String>,
    /// Text cells that a spreadsheet would run as formulas get a leading `'` in csv.
    pub guard_formulas: bool,
    /// The columns of data files (`--write-columns`).
    pub columns: crate::model::ColumnSet,
}

pub fn resolve_adjust(args: &AdjustArgs) -> Result<AdjustPlan> {
    let steps = parse_steps(&args.steps)?;
    check_step_options(&steps, args.base_year)?;
    if !steps.is_empty() && args.refs.is_none() {
        return Err(Error::usage(
            "--steps needs reference tables",
            "pass --refs DIR, a folder with a datapackage.json (see reference-tables/README.md)",
        ));
    }
    let output = resolve_output(&args.output)?;
    let input = args.input.as_deref().ok_or_else(|| {
        Error::usage(
            "no input table",
            "pass INPUT (a file, or - for standard input), or set input in the recipe",
        )
    })?;
    source::set_read_limit_mb(args.columns.max_input_mb);
    let (input_bytes, input_label, streaming) = if args.streaming {
        let path = PathBuf::from(input);
        if input != "-" && !path.is_file() {
            // Let the usual reader say what is wrong with the path.
            source::read_file(&path)?;
        }
        (
            Vec::new(),
            input.to_string(),
            Some(crate::streaming::StreamingPlan {
                path,
                chunk_bytes: (args.chunk_mb * (1u64 << 20) as f64).max(1.0) as usize,
            }),
        )
    } else {
        let (bytes, label) = read_input(input, args.columns.max_input_mb)?;
        crate::trace::phase("input read");
        (bytes, label, None)
    };
    let outputs: Vec<&Path> = [
        &output.path,
        &output.methods,
        &output.report,
        &args.save_recipe,
    ]
    .into_iter()
    .flatten()
    .map(PathBuf::as_path)
    .collect();
    refuse_same_outputs(&outputs, args.recipe.as_deref())?;
    for out in &outputs {
        refuse_overwrite(out, input, args.refs.as_deref(), &args.aliases)?;
    }
    let mut resolver = Resolver::builtin();
    for path in &args.aliases {
        resolver.add_alias_file(path)?;
    }
    let references = match &args.refs {
        Some(dir) => Some(load_refs(dir, &mut resolver)?),
        None => None,
    };
    crate::trace::phase("references loaded");
    let settings = settings_of(args, steps, references.as_ref())?;
    if streaming.is_some() {
        crate::streaming::check(
            input,
            output.format,
            output.path.as_deref(),
            &settings,
            output.report.is_some(),
        )?;
    }
    Ok(AdjustPlan {
        input_bytes,
        input_label,
        settings,
        resolver,
        references,
        output,
        recipe: None,
        recipe_file: None,
        streaming,
    })
}

/// The pipeline settings of an `adjust` run: how to read the input (with its margins), the
/// steps, and what the references say.
fn settings_of(
    args: &AdjustArgs,
    steps: Vec<&'static dyn Step>,
    references: Option<&References>,
) -> Result<PipelineSettings> {
    let mut ingest = ingest_options(&args.columns)?;
    ingest.margins = margin_spec(&args.uncertainty)?;
    Ok(pipeline_settings(args, steps, ingest, references))
}

/// The pipeline settings `levelfield adjust INPUT WORDS...` would run with, parsed by the same
/// clap definition and checked by the same rules, without reading a file: for the fuzz targets
/// and property tests, which run the pipeline on generated tables.
pub fn settings_from_words(
    words: &[&str],
    references: Option<&References>,
) -> Result<PipelineSettings> {
    let argv = ["levelfield", "adjust", "-"]
        .into_iter()
        .chain(words.iter().copied());
    let cli = crate::cli::parse_from(argv).map_err(|e| {
        Error::usage(
            e.to_string(),
            "pass adjust's flags as the command line takes them",
        )
    })?;
    let crate::cli::Command::Adjust(args) = cli.command else {
        return Err(Error::usage("not an adjust command", "pass adjust's flags"));
    };
    let steps = parse_steps(&args.steps)?;
    check_step_options(&steps, args.base_year)?;
    settings_of(&args, steps, references)
}

/// The pipeline settings, with the base currency and income basis taken from the references.
pub fn pipeline_settings(
    args: &AdjustArgs,
    steps: Vec<&'static dyn Step>,
    ingest: IngestOptions,
    references: Option<&References>,
) -> PipelineSettings {
    let (base_currency, income_basis, uncertain_factors) = reference_facts(references);
    let u = &args.uncertainty;
    let has_margins = ingest.margins != MarginSpec::None || !uncertain_factors.is_empty();
    let intervals = has_margins.then(|| IntervalSettings {
        level: u.margin_confidence.unwrap_or(Level::P90),
        method: match u.rank_intervals {
            IntervalKind::Joint => IntervalMethod::Joint(u.joint_adjustment),
            IntervalKind::Simulate => IntervalMethod::Simulate {
                draws: u.draws,
                seed: u.seed,
            },
        },
        order: args.order,
    });
    PipelineSettings {
        ingest,
        steps,
        step_settings: StepSettings {
            base_year: args.base_year,
            deflator: args.deflator,
            per: args.per,
            income_as: args.income_as,
            income_basis,
            base_currency,
            proportion: u.proportion,
            uncertain_factors,
        },
        nearest_year: args.nearest_year,
        allow_unresolved: args.allow_unresolved,
        rank_aggregates: args.rank_aggregates,
        order: args.order,
        intervals,
        assume_base_rows: false,
        factor_year_offset: None,
    }
}

/// What the steps take from the catalog: the base currency, the income table's basis, and the
/// kinds whose tables carry margins.
fn reference_facts(
    references: Option<&References>,
) -> (String, Basis, std::collections::BTreeSet<Kind>) {
    let base_currency = references
        .and_then(|r| r.get(Kind::Ppp).or(r.get(Kind::Fx)))
        .map(|t| t.resource.base_currency.clone())
        .unwrap_or_else(|| "USD".into());
    let income_basis = references
        .and_then(|r| r.get(Kind::Income))
        .map(|t| t.resource.basis)
        .unwrap_or(Basis::Lcu);
    let uncertain_factors = references
        .map(|r| {
            r.tables
                .iter()
                .filter(|t| t.has_margins())
                .map(|t| t.resource.kind)
                .collect()
        })
        .unwrap_or_default();
    (base_currency, income_basis, uncertain_factors)
}

/// A resolved audit: input read, aliases and references loaded, claims parsed.
pub struct AuditPlan {
    pub input_bytes: Vec<u8>,
    pub input_label: String,
    pub settings: crate::audit::AuditSettings,
    pub resolver: Resolver,
    pub references: References,
}

pub fn resolve_audit(args: &crate::cli::AuditArgs) -> Result<AuditPlan> {
    let claims = args
        .claim
        .iter()
        .map(|c| crate::audit::claims::parse_claim(c))
        .collect::<Result<Vec<_>>>()?;
    let notes = match &args.note_cols {
        Some(text) => crate::audit::NoteColumns::parse(text)?,
        None => crate::audit::NoteColumns::default(),
    };
    let (input_bytes, input_label) = read_input(&args.input, args.columns.max_input_mb)?;
    if let Some(out) = &args.output {
        refuse_overwrite(out, &args.input, Some(&args.refs), &args.aliases)?;
    }
    let mut resolver = Resolver::builtin();
    for path in &args.aliases {
        resolver.add_alias_file(path)?;
    }
    let references = load_refs(&args.refs, &mut resolver)?;
    check_year_option("--base-year", args.base_year)?;
    let mut ingest = ingest_options(&args.columns)?;
    if ingest.roles.layout == LayoutChoice::Auto {
        ingest.roles.layout = LayoutChoice::Long;
    }
    // The engine's settings, as `adjust` would build them; each claim brings its steps. Margins
    // are not read: the audit compares figures, not intervals.
    let (base_currency, income_basis, _) = reference_facts(Some(&references));
    let pipeline = PipelineSettings {
        ingest,
        steps: Vec::new(),
        step_settings: StepSettings {
            base_year: args.base_year,
            deflator: None,
            per: args.per,
            income_as: args.income_as,
            income_basis,
            base_currency,
            proportion: false,
            uncertain_factors: Default::default(),
        },
        nearest_year: args.nearest_year,
        allow_unresolved: args.allow_unresolved,
        rank_aggregates: false,
        order: args.order,
        intervals: None,
        assume_base_rows: false,
        factor_year_offset: None,
    };
    Ok(AuditPlan {
        input_bytes,
        input_label,
        settings: crate::audit::AuditSettings {
            pipeline,
            claims,
            notes,
            min_n: args.min_n,
        },
        resolver,
        references,
    })
}

/// The margin columns and level, checked: a margin without its level is refused.
pub fn margin_spec(args: &UncertaintyArgs) -> Result<MarginSpec> {
    let level_needed = |what: &str| {
        Error::usage(
            format!("{what} needs the confidence level it was stated at"),
            "pass --margin-confidence 90, 95 or 99 (ACS and many agencies publish 90% margins; check the source's notes)",
        )
    };
    Ok(
        match (
            &args.moe,
            &args.se,
            &args.ci_low,
            &args.ci_high,
            &args.sample_size,
        ) {
            (Some(column), ..) => MarginSpec::Moe {
                column: column.clone(),
                level: args
                    .margin_confidence
                    .ok_or_else(|| level_needed("--moe"))?,
            },
            (None, Some(column), ..) => MarginSpec::Se {
                column: column.clone(),
            },
            (None, None, Some(low), Some(high), _) => MarginSpec::Ci {
                low: low.clone(),
                high: high.clone(),
                level: args
                    .margin_confidence
                    .ok_or_else(|| level_needed("--ci-low/--ci-high"))?,
            },
            (None, None, None, None, Some(column)) => MarginSpec::SampleSize {
                column: column.clone(),
                percent: args.share_unit == ShareUnit::Percent,
            },
            _ => MarginSpec::None,
        },
    )
}

/// `levelfield lead`: the margin of a lead between two shares of one sample, in words.
pub fn describe_lead(args: &LeadArgs) -> Result<String> {
    let scale = if args.share_unit == ShareUnit::Percent {
        100.0
    } else {
        1.0
    };
    let (p1, p2) = (args.first / scale, args.second / scale);
    if !(0.0..=1.0).contains(&p1) || !(0.0..=1.0).contains(&p2) || p1 + p2 > 1.0 + 1e-9 {
        return Err(Error::usage(
            format!("shares {} and {} are not two parts of one whole", args.first, args.second),
            "give two shares between 0 and 100 (or 0 and 1 with --share-unit fraction) that add up to at most 100",
        ));
    }
    if !(args.n.is_finite() && args.n >= 1.0) {
        return Err(Error::usage(
            format!("sample size {} is not a count", args.n),
            "pass -n with the number of respondents",
        ));
    }
    if !(args.design_effect.is_finite() && args.design_effect >= 1.0 && args.design_effect <= 100.0)
    {
        return Err(Error::usage(
            format!("--design-effect {} is not a design effect", args.design_effect),
            "pass a design effect from 1 (simple random sampling) to 100, as the survey's documentation states it",
        ));
    }
    let names: Vec<&str> = args.names.splitn(2, ',').map(str::trim).collect();
    let (a, b) = (names[0], names.get(1).copied().unwrap_or("second"));
    Ok(crate::uncertainty::poll::describe(
        a,
        b,
        p1,
        p2,
        args.n / args.design_effect,
        args.level,
        args.design_effect,
    ))
}

pub fn parse_steps(names: &[String]) -> Result<Vec<&'static dyn Step>> {
    let mut steps: Vec<&'static dyn Step> = Vec::new();
    for raw in names {
        let name = raw.trim();
        if name.is_empty() {
            continue;
        }
        let step = adjust::find_step(name).ok_or_else(|| {
            Error::usage(
                format!("unknown step \"{name}\""),
                format!("use steps from: {}", adjust::step_names()),
            )
        })?;
        if steps.iter().any(|s| s.name() == step.name()) {
            return Err(Error::usage(
                format!("step {name} is listed twice"),
                "list each step once",
            ));
        }
        steps.push(step);
    }
    Ok(steps)
}

pub fn ingest_options(columns: &ColumnArgs) -> Result<IngestOptions> {
    check_year_option("--year-value", columns.year_value)?;
    let delimiter = match columns.delimiter.as_deref() {
        None => None,
        Some("tab") | Some("\\t") | Some("\t") => Some(b'\t'),
        Some(d) if d.len() == 1 && d.is_ascii() => Some(d.as_bytes()[0]),
        Some(d) => {
            return Err(Error::usage(
                format!("--delimiter \"{d}\" is not one character"),
                "pass one character such as ; or | or the word tab",
            ))
        }
    };
    let value_multiplier = match columns.value_multiplier.as_deref() {
        None => None,
        Some(text) => Some(parse_multiplier(text)?),
    };
    let layout = if columns.wide_years {
        LayoutChoice::Wide
    } else if columns.long {
        LayoutChoice::Long
    } else {
        LayoutChoice::Auto
    };
    Ok(IngestOptions {
        delimiter,
        encoding: columns.encoding,
        roles: RoleFlags {
            entity: columns.entity.clone(),
            value: columns.value.clone(),
            year: columns.year.clone(),
            year_value: columns.year_value,
            group: columns.group.clone(),
            currency: columns.currency.clone(),
            layout,
            reserved: Vec::new(),
            knobs: Default::default(),
        },
        currency_code: columns
            .currency_code
            .as_ref()
            .map(|c| c.trim().to_uppercase()),
        value_multiplier,
        number_style: NumberStyle {
            decimal_comma: columns.decimal_comma,
        },
        lenient: columns.lenient,
        margins: MarginSpec::None,
        extra_columns: Vec::new(),
        sheet: columns.sheet.clone(),
        header_row: columns.header_row,
        line_offset: 0,
        row_offset: 0,
    })
}

/// `--value-multiplier`: a positive exact decimal (plain or scientific), within the 28 digits
/// of the decimal type.
fn parse_multiplier(text: &str) -> Result<Decimal> {
    let plain = text.trim().replace([',', '_'], "");
    let parsed = if plain.contains(['e', 'E']) {
        Decimal::from_scientific(&plain)
    } else {
        Decimal::from_str(&plain)
    };
    match parsed {
        Ok(m) if m > Decimal::ZERO => Ok(m),
        Ok(_) => Err(Error::usage(
            format!("--value-multiplier \"{text}\" is zero or negative"),
            "pass a positive number such as 1000, 1000000 or 0.001",
        )),
        Err(_) if plain.parse::<f64>().is_ok_and(|f| f > 0.0) => Err(Error::usage(
            format!(
                "--value-multiplier \"{text}\" needs more than the 28 digits exact decimals hold"
            ),
            "pass a multiplier between 1e-28 and 1e28, such as 1000 or 0.001",
        )),
        Err(_) => Err(Error::usage(
            format!("--value-multiplier \"{text}\" is not a number"),
            "pass a number such as 1000, 1e6 or 0.001",
        )),
    }
}

pub fn resolve_output(args: &OutputArgs) -> Result<OutputPlan> {
    let format = match (args.format, &args.output) {
        (Some(f), _) => f,
        (None, Some(path)) => Format::from_path(path).unwrap_or(Format::Csv),
        (None, None) if std::io::stdout().is_terminal() => Format::Table,
        (None, None) => Format::Csv,
    };
    let rounding = match (args.decimals, args.sig) {
        (Some(d), _) if d > 20 => {
            return Err(Error::usage(
                format!("--decimals {d} is more than the 20 decimals a figure can be written with"),
                "pass --decimals from 0 to 20, or --sig N for significant digits",
            ))
        }
        (Some(d), _) => Rounding::Decimals(d),
        (None, Some(s)) if s == 0 || s > 17 => {
            return Err(Error::usage(
                format!("--sig {s} is outside 1 to 17 (a double holds 17 significant digits)"),
                "pass --sig from 1 to 17",
            ))
        }
        (None, Some(s)) => Rounding::Significant(s),
        (None, None) => Rounding::Full,
    };
    Ok(OutputPlan {
        format,
        path: args.output.clone(),
        rounding,
        quiet: args.quiet,
        methods: args.methods.clone(),
        report: args.report.clone(),
        notice: None,
        guard_formulas: !args.allow_formulas,
        columns: args.write_columns.clone(),
    })
}

fn read_input(input: &str, max_mb: u64) -> Result<(Vec<u8>, String)> {
    source::set_read_limit_mb(max_mb);
    if input == "-" {
        return Ok((source::read_stdin()?, "<stdin>".into()));
    }
    Ok((source::read_file(Path::new(input))?, input.to_string()))
}

fn load_refs(dir: &Path, resolver: &mut Resolver) -> Result<References> {
    if !dir.join(reference::CATALOG_FILE).is_file() {
        return Err(Error::usage(
            format!("{} has no {}", dir.display(), reference::CATALOG_FILE),
            "point --refs at a folder with a datapackage.json catalog (see reference-tables/README.md)",
        ));
    }
    reference::load(&DiskDir::new(dir), resolver)
}

/// The outputs of one run are different files, and none is the recipe that asked for them.
fn refuse_same_outputs(outputs: &[&Path], recipe: Option<&Path>) -> Result<()> {
    let key = |p: &Path| -> PathBuf {
        let absolute = std::path::absolute(p).unwrap_or_else(|_| p.to_path_buf());
        let parent = absolute.parent().and_then(|d| d.canonicalize().ok());
        match (parent, absolute.file_name()) {
            (Some(dir), Some(name)) => dir.join(name),
            _ => crate::source::normalize(&absolute),
        }
    };
    for (i, a) in outputs.iter().enumerate() {
        if let Some(b) = outputs[..i].iter().find(|b| key(b) == key(a)) {
            return Err(Error::usage(
                format!("{} is asked for twice: the table, the methods note, the report and the saved recipe would overwrite each other", b.display()),
                "give each output its own file name",
            ));
        }
        if recipe.is_some_and(|r| key(r) == key(a)) {
            return Err(Error::usage(
                format!("the output {} is the recipe file itself", a.display()),
                "write the output to another file; the recipe stays as it is",
            ));
        }
    }
    Ok(())
}

/// The output may not replace the input, a reference table or an alias file.
fn refuse_overwrite(
    output: &Path,
    input: &str,
    refs: Option<&Path>,
    aliases: &[PathBuf],
) -> Result<()> {
    let out = match output.canonicalize() {
        Ok(p) => p,
        Err(_) => return Ok(()),
    };
    let mut protected: Vec<PathBuf> = aliases.to_vec();
    if input != "-" {
        protected.push(PathBuf::from(input));
    }
    if let Some(dir) = refs {
        if let Ok(entries) = std::fs::read_dir(dir) {
            protected.extend(entries.flatten().map(|e| e.path()));
        }
    }
    for path in protected {
        if path.canonicalize().ok().as_ref() == Some(&out) {
            return Err(Error::usage(
                format!(
                    "the output {} would overwrite an input file",
                    output.display()
                ),
                "write the output to a new file",
            ));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn settings_from_words_are_those_the_command_line_gives() {
        let settings = settings_from_words(
            &[
                "--steps",
                "deflate,ppp",
                "--base-year",
                "2023",
                "--nearest-year",
                "1",
                "--lenient",
                "--allow-unresolved",
            ],
            None,
        )
        .unwrap();
        let names: Vec<&str> = settings.steps.iter().map(|s| s.name()).collect();
        assert_eq!(names, ["deflate", "ppp"]);
        assert_eq!(settings.step_settings.base_year, Some(2023));
        assert_eq!(settings.step_settings.base_currency, "USD");
        assert_eq!(settings.nearest_year, 1);
        assert!(settings.ingest.lenient && settings.allow_unresolved);
        assert!(settings.intervals.is_none());
        // The same refusals as the command line: an unknown step, a flag adjust does not take.
        assert!(settings_from_words(&["--steps", "deflat"], None).is_err());
        assert!(settings_from_words(&["--no-such-flag"], None).is_err());
    }
}
