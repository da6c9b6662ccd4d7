//! Stage one of the command line: clap definitions only. Values are checked for form here
//! (numbers, enums, conflicts); nothing touches a file until `plan` resolves them.

use crate::adjust::{self, Deflator, IncomeAs};
use crate::audit::Severity;
use crate::ingest::encoding::EncodingChoice;
use crate::rank::Order;
use crate::report::Format;
use crate::uncertainty::intervals::Adjustment;
use crate::uncertainty::moe::Level;
use clap::{Args, Parser, Subcommand};
use std::path::PathBuf;

/// The manifest's format, shown under `levelfield batch --help`.
pub const MANIFEST_HELP: &str = "MANIFEST FORMAT (TOML; paths relative to the manifest's folder):

  output_dir = \"adjusted\"        # optional: every output into this folder
                                  # (default: beside each input)

  [[run]]
  recipe = \"fees.toml\"           # a recipe with its own input

  [[run]]
  recipe = \"wages.toml\"
  inputs = \"incoming/wages-*.csv\" # the recipe once per matching file, in name order

Outputs are named INPUT-adjusted.EXT (EXT from the recipe's format, csv by default) unless a
[[run]] without `inputs` and without output_dir has its own output file. Patterns never match
files named *-adjusted.*, so a rerun does not adjust its own earlier outputs. A recipe's methods
note and report are written beside each output as NAME.methods.md and NAME.report.html.";

#[derive(Debug, Parser)]
#[command(
    name = "levelfield",
    version,
    about = "Make cross-country money and count tables comparable: PPP instead of market rates, one price base, per capita, with rank shifts and flags.",
    long_about = None,
    term_width = 100,
    after_help = "Run `levelfield demo` to see a worked (invented) example, and `levelfield adjust --help` for every option."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Adjust a table: convert, deflate, divide by population, rank, flag.
    Adjust(Box<AdjustArgs>),
    /// List the reference tables of a catalog folder: coverage, gaps and validation errors.
    Refs(RefsArgs),
    /// Draft a datapackage.json for a folder of downloaded reference tables, for you to review.
    Catalog(CatalogArgs),
    /// Run the bundled, invented scenario end to end and print the comparison.
    Demo(DemoArgs),
    /// Is a lead between two shares of one poll larger than its margin of error?
    Lead(LeadArgs),
    /// Check a received table: recompute its claimed figures and explain each discrepancy.
    Audit(Box<AuditArgs>),
    /// Run many recipes, or one recipe over every table a pattern matches, and summarise.
    Batch(BatchArgs),
}

#[derive(Debug, Args)]
#[command(after_long_help = MANIFEST_HELP)]
pub struct BatchArgs {
    /// The batch manifest (TOML): [[run]] entries naming a recipe and, optionally, a pattern of
    /// inputs.
    #[arg(value_name = "MANIFEST")]
    pub manifest: PathBuf,

    /// Stop at the first failing table; tables not yet started are reported as skipped.
    #[arg(long)]
    pub fail_fast: bool,

    /// No progress bar, and no summary table when every table succeeded.
    #[arg(short, long)]
    pub quiet: bool,

    /// Let the manifest and its recipes write outside their own folders (by default every
    /// output must lie inside them). Command line only.
    #[arg(long)]
    pub allow_outside: bool,
}

#[derive(Debug, Args)]
pub struct AuditArgs {
    /// The table to check (CSV or TSV, long layout), or `-` for standard input.
    #[arg(value_name = "INPUT")]
    pub input: String,

    /// Folder of reference tables described by a datapackage.json.
    #[arg(long, value_name = "DIR")]
    pub refs: PathBuf,

    /// What a column claims, ROLE=COL (repeatable). Roles: usd, intl, real, per-capita,
    /// per-income (steps, chained with + in the order applied: real+intl+per-capita), share,
    /// change, rank (ranks follow the longest route claimed). Without --claim, roles are
    /// suggested by header words and the report says so.
    #[arg(long, value_name = "ROLE=COL")]
    pub claim: Vec<String>,

    /// How per-income claims state affordability.
    #[arg(long, value_enum, default_value_t = IncomeAs::Share)]
    pub income_as: IncomeAs,

    /// Accept a reference factor up to N years from the figure's year, as adjust does.
    #[arg(long, default_value_t = 0, value_name = "N")]
    pub nearest_year: u32,

    /// Base year of `real` claims.
    #[arg(long, value_name = "YYYY")]
    pub base_year: Option<i32>,

    /// Per-capita scale the table states: 1, 1000, 100000 or 1000000.
    #[arg(long, default_value_t = 1, value_parser = parse_per, value_name = "N")]
    pub per: u32,

    /// Order of claimed ranks: desc means the largest value is rank 1.
    #[arg(long, value_enum, default_value_t = Order::Desc)]
    pub order: Order,

    /// Exit with code 1 when a finding at or above this severity exists.
    #[arg(long, value_enum, default_value_t = Severity::Error)]
    pub fail_on: Severity,

    /// Provenance columns, KEY=COL comma-separated: n (sample size), source, coverage.
    #[arg(long, value_name = "n=COL,source=COL,coverage=COL")]
    pub note_cols: Option<String>,

    /// Samples smaller than this are reported as a caution.
    #[arg(long, default_value_t = 100.0, value_name = "N")]
    pub min_n: f64,

    /// CSV of extra entity names and user-defined entities.
    #[arg(long, value_name = "FILE")]
    pub aliases: Vec<PathBuf>,

    /// Keep rows whose entity matches nothing instead of stopping.
    #[arg(long)]
    pub allow_unresolved: bool,

    #[command(flatten)]
    pub columns: ColumnArgs,

    /// Report format: table (terminal), md (an editor's memo) or json.
    #[arg(long, value_enum, default_value_t = AuditFormat::Table)]
    pub format: AuditFormat,

    /// Write the report to FILE (atomically) instead of standard output.
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// Formats of the audit report.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum AuditFormat {
    Table,
    Md,
    Json,
}

#[derive(Debug, Args)]
pub struct LeadArgs {
    /// The first share (percent unless --share-unit fraction).
    #[arg(value_name = "SHARE1")]
    pub first: f64,

    /// The second share.
    #[arg(value_name = "SHARE2")]
    pub second: f64,

    /// The sample size.
    #[arg(long, short = 'n', value_name = "N")]
    pub n: f64,

    /// Confidence level.
    #[arg(long, value_enum, default_value_t = Level::P95)]
    pub level: Level,

    /// Names of the two, comma-separated.
    #[arg(long, value_name = "A,B", default_value = "first,second")]
    pub names: String,

    /// Shares are percentages (48) or fractions (0.48).
    #[arg(long, value_enum, default_value_t = ShareUnit::Percent)]
    pub share_unit: ShareUnit,

    /// The survey's design effect (variance against a simple random sample of the same size;
    /// 1 assumes simple random sampling). The margin grows with its square root.
    #[arg(long, default_value_t = 1.0, value_name = "DEFF")]
    pub design_effect: f64,
}

#[derive(Debug, Args, Clone)]
#[command(after_long_help = adjust::steps_help())]
pub struct AdjustArgs {
    /// The table to adjust (CSV, TSV, spreadsheet or Parquet), or `-` for standard input.
    /// May come from --recipe instead.
    #[arg(value_name = "INPUT", required_unless_present = "recipe")]
    pub input: Option<String>,

    /// Run the settings of a recipe file (TOML); flags given here override its keys.
    #[arg(long, value_name = "FILE", help_heading = "Recipe")]
    pub recipe: Option<PathBuf>,

    /// After the run, write its settings as a recipe to FILE (paths relative to FILE's folder).
    #[arg(long, value_name = "FILE", help_heading = "Recipe")]
    pub save_recipe: Option<PathBuf>,

    /// Let the recipe write outputs outside its own folder (by default a recipe's outputs must
    /// lie inside it). Command line only: a recipe cannot grant it to itself.
    #[arg(long, help_heading = "Recipe")]
    pub allow_outside: bool,

    /// The flags given on the command line (clap ids), so a recipe knows what they override.
    #[arg(skip)]
    pub given: std::collections::BTreeSet<String>,

    /// The words of the command line after `adjust` (a recipe's keys are parsed in front of
    /// them, and a saved recipe is written from them).
    #[arg(skip)]
    pub argv: Vec<std::ffi::OsString>,

    /// Folder of reference tables described by a datapackage.json.
    #[arg(long, value_name = "DIR", help_heading = "Method")]
    pub refs: Option<PathBuf>,

    /// Steps in order, comma-separated: market, ppp, deflate, per-capita, per-income (see below).
    #[arg(
        long,
        value_delimiter = ',',
        value_name = "LIST",
        help_heading = "Method"
    )]
    pub steps: Vec<String>,

    /// The year whose prices `deflate` brings every figure to.
    #[arg(long, value_name = "YYYY", help_heading = "Method")]
    pub base_year: Option<i32>,

    /// Which CPI deflates: the entity's own (before conversion) or the base currency's (after).
    /// Default: chosen by where deflate stands in --steps.
    #[arg(long, value_enum, help_heading = "Method")]
    pub deflator: Option<Deflator>,

    /// Per-capita scale: 1, 1000, 100000 or 1000000 people.
    #[arg(long, default_value_t = 1, value_parser = parse_per, value_name = "N", help_heading = "Method")]
    pub per: u32,

    /// How per-income states affordability.
    #[arg(long, value_enum, default_value_t = IncomeAs::Share, help_heading = "Method")]
    pub income_as: IncomeAs,

    /// Accept a reference factor up to N years from the figure's year (flagged).
    #[arg(long, default_value_t = 0, value_name = "N", help_heading = "Method")]
    pub nearest_year: u32,

    /// Rank order: desc makes the largest value rank 1.
    #[arg(long, value_enum, default_value_t = Order::Desc, help_heading = "Method")]
    pub order: Order,

    /// Rank aggregates (world, regions, income groups) among countries.
    #[arg(long, help_heading = "Method")]
    pub rank_aggregates: bool,

    /// CSV of extra entity names and user-defined entities (columns name,code[,kind][,currency]).
    #[arg(long, value_name = "FILE", help_heading = "Entities")]
    pub aliases: Vec<PathBuf>,

    /// Keep rows whose entity matches nothing, flagged `unresolved`, instead of stopping.
    #[arg(long, help_heading = "Entities")]
    pub allow_unresolved: bool,

    #[command(flatten)]
    pub columns: ColumnArgs,

    /// Read a CSV or TSV file larger than memory in pieces (csv output to -o FILE; same result
    /// as without it, byte for byte).
    #[arg(long, help_heading = "Reading")]
    pub streaming: bool,

    /// With --streaming: megabytes of input per piece (memory per piece is a few times this).
    #[arg(long, default_value_t = 16.0, value_parser = parse_chunk_mb, value_name = "MB", help_heading = "Reading")]
    pub chunk_mb: f64,

    #[command(flatten)]
    pub uncertainty: UncertaintyArgs,

    #[command(flatten)]
    pub output: OutputArgs,
}

#[derive(Debug, Args, Clone)]
pub struct UncertaintyArgs {
    /// Column of margins of error of the figures (needs --margin-confidence).
    #[arg(long, value_name = "COL", help_heading = "Uncertainty", conflicts_with_all = ["se", "ci_low", "sample_size"])]
    pub moe: Option<String>,

    /// Column of standard errors of the figures.
    #[arg(long, value_name = "COL", help_heading = "Uncertainty", conflicts_with_all = ["ci_low", "sample_size"])]
    pub se: Option<String>,

    /// Column of lower confidence bounds (with --ci-high and --margin-confidence).
    #[arg(
        long,
        value_name = "COL",
        help_heading = "Uncertainty",
        requires = "ci_high",
        conflicts_with = "sample_size"
    )]
    pub ci_low: Option<String>,

    /// Column of upper confidence bounds (with --ci-low and --margin-confidence).
    #[arg(
        long,
        value_name = "COL",
        help_heading = "Uncertainty",
        requires = "ci_low"
    )]
    pub ci_high: Option<String>,

    /// Column of survey sample sizes: the figures are shares and their margins come from p and n.
    #[arg(long, value_name = "COL", help_heading = "Uncertainty")]
    pub sample_size: Option<String>,

    /// Confidence level of the given margins or bounds, and of the margins written out
    /// (default 90 for --se and --sample-size). Formerly --moe-level.
    #[arg(long, value_enum, help_heading = "Uncertainty", alias = "moe-level")]
    pub margin_confidence: Option<Level>,

    /// Shares for --sample-size are percentages (48) or fractions (0.48).
    #[arg(long, value_enum, default_value_t = ShareUnit::Percent, help_heading = "Uncertainty")]
    pub share_unit: ShareUnit,

    /// The figures count people within the population: per-capita margins use the proportion
    /// formula instead of the ratio formula.
    #[arg(long, help_heading = "Uncertainty")]
    pub proportion: bool,

    /// Rank intervals: joint (a confidence region for the whole ranking) or simulate (per-entity
    /// percentiles of simulated ranks; narrower, not joint).
    #[arg(long, value_enum, default_value_t = IntervalKind::Joint, help_heading = "Uncertainty")]
    pub rank_intervals: IntervalKind,

    /// How joint intervals are widened for K entities.
    #[arg(long, value_enum, default_value_t = Adjustment::Independence, help_heading = "Uncertainty")]
    pub joint_adjustment: Adjustment,

    /// Number of simulated rankings for --rank-intervals simulate.
    #[arg(
        long,
        default_value_t = 2000,
        value_name = "N",
        help_heading = "Uncertainty"
    )]
    pub draws: usize,

    /// Seed of the simulation (the same seed gives the same intervals).
    #[arg(
        long,
        default_value_t = 1,
        value_name = "S",
        help_heading = "Uncertainty"
    )]
    pub seed: u64,
}

/// How shares are written for --sample-size.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, clap::ValueEnum, serde::Serialize)]
pub enum ShareUnit {
    #[default]
    Percent,
    Fraction,
}

/// Which rank intervals to compute.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, clap::ValueEnum, serde::Serialize)]
pub enum IntervalKind {
    #[default]
    Joint,
    Simulate,
}

#[derive(Debug, Args, Clone)]
pub struct ColumnArgs {
    /// Column of entity names or codes (default: a header naming a country, economy, entity or ISO code).
    #[arg(long, value_name = "COL", help_heading = "Input columns")]
    pub entity: Option<String>,

    /// Column of figures in a long table.
    #[arg(long, value_name = "COL", help_heading = "Input columns")]
    pub value: Option<String>,

    /// Column of years in a long table.
    #[arg(
        long,
        value_name = "COL",
        help_heading = "Input columns",
        conflicts_with = "year_value"
    )]
    pub year: Option<String>,

    /// One year for the whole table.
    #[arg(long, value_name = "YYYY", help_heading = "Input columns")]
    pub year_value: Option<i32>,

    /// Column to rank within (item, indicator); ranks are per group and year.
    #[arg(long, value_name = "COL", help_heading = "Input columns")]
    pub group: Option<String>,

    /// Column of ISO 4217 codes, one per row.
    #[arg(
        long,
        value_name = "COL",
        help_heading = "Input columns",
        conflicts_with = "currency_code"
    )]
    pub currency: Option<String>,

    /// ISO 4217 code of every figure (for example USD). Default: each entity's own currency.
    #[arg(long, value_name = "XXX", help_heading = "Input columns")]
    pub currency_code: Option<String>,

    /// Multiply every figure first (1000 for a table in thousands, 1000000 for millions).
    #[arg(long, value_name = "N", help_heading = "Input columns")]
    pub value_multiplier: Option<String>,

    /// Treat the table as wide: one column per year (detected automatically when headers are years).
    #[arg(long, help_heading = "Input columns", conflicts_with = "long")]
    pub wide_years: bool,

    /// Treat the table as long even if some headers look like years.
    #[arg(long, help_heading = "Input columns")]
    pub long: bool,

    /// Field delimiter (default: sniffed): a character, or `tab`.
    #[arg(long, value_name = "CHAR", help_heading = "Reading")]
    pub delimiter: Option<String>,

    /// Text encoding (default: from the byte-order mark, else UTF-8, else Windows-1252).
    #[arg(long, value_enum, help_heading = "Reading")]
    pub encoding: Option<EncodingChoice>,

    /// Numbers use a decimal comma (1.234,5).
    #[arg(long, help_heading = "Reading")]
    pub decimal_comma: bool,

    /// Keep cells that are not numbers as rows flagged `unparsed` instead of stopping.
    #[arg(long, help_heading = "Reading")]
    pub lenient: bool,

    /// Spreadsheet input: the sheet to read, by name or position (from 1). Default: the first.
    #[arg(long, value_name = "NAME|INDEX", help_heading = "Reading")]
    pub sheet: Option<String>,

    /// The line (or spreadsheet row) that holds the header (default: found by structure, past
    /// title and source lines).
    #[arg(long, value_name = "N", help_heading = "Reading")]
    pub header_row: Option<usize>,

    /// Refuse inputs larger than this many megabytes (the whole table is held in memory).
    #[arg(
        long,
        default_value_t = 4096,
        value_name = "MB",
        help_heading = "Reading"
    )]
    pub max_input_mb: u64,
}

#[derive(Debug, Args, Clone, Default)]
pub struct OutputArgs {
    /// Output format (default: from the -o extension; table on a terminal, csv when piped).
    #[arg(long, value_enum, help_heading = "Output")]
    pub format: Option<Format>,

    /// Write to FILE (atomically) instead of standard output.
    #[arg(
        short = 'o',
        long = "output",
        value_name = "FILE",
        help_heading = "Output"
    )]
    pub output: Option<PathBuf>,

    /// Round numbers to N decimals (half to even) in every format, N from 0 to 20.
    #[arg(
        long,
        value_name = "N",
        help_heading = "Output",
        conflicts_with = "sig",
        value_parser = clap::value_parser!(u32).range(0..=20)
    )]
    pub decimals: Option<u32>,

    /// Round numbers to N significant digits (half to even) in every format, N from 1 to 17
    /// (a double holds 17).
    #[arg(long, value_name = "N", help_heading = "Output", value_parser = clap::value_parser!(u32).range(1..=17))]
    pub sig: Option<u32>,

    /// Do not print the run summary on stderr.
    #[arg(short, long, help_heading = "Output")]
    pub quiet: bool,

    /// Also write the methods note (Markdown) to FILE.
    #[arg(long, value_name = "FILE", help_heading = "Output")]
    pub methods: Option<PathBuf>,

    /// Also write a self-contained HTML report (table, charts, methods) to FILE.
    #[arg(long, value_name = "FILE", help_heading = "Output")]
    pub report: Option<PathBuf>,

    /// Write csv text cells that start with = + - @ as they are. By default they get a leading
    /// ' so that a spreadsheet shows them instead of running them as formulas. Command line
    /// only: a recipe cannot turn the guard off.
    #[arg(long, help_heading = "Output")]
    pub allow_formulas: bool,

    /// The columns of csv, json and Parquet output: all (every stage and factor column), core
    /// (ids, entity, year, group, value, baseline, adjusted, margins, ranks, shift, flags), or
    /// output column names separated by commas.
    #[arg(long, value_name = "SET", default_value = "all", value_parser = parse_column_set, help_heading = "Output")]
    pub write_columns: crate::model::ColumnSet,
}

fn parse_column_set(text: &str) -> Result<crate::model::ColumnSet, String> {
    crate::model::ColumnSet::parse(text)
}

#[derive(Debug, Args)]
pub struct RefsArgs {
    /// Catalog folder (holding datapackage.json).
    #[arg(value_name = "DIR", default_value = "reference-tables")]
    pub dir: PathBuf,

    /// Alias files whose names the reference tables may use.
    #[arg(long, value_name = "FILE")]
    pub aliases: Vec<PathBuf>,
}

#[derive(Debug, Args)]
pub struct CatalogArgs {
    /// Folder of downloaded tables (.csv, .tsv) as the sources publish them.
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,

    /// Write the draft to FILE instead of DIR/datapackage.json.
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,

    /// Replace an existing catalog.
    #[arg(long)]
    pub force: bool,

    /// Alias files whose names the tables may use.
    #[arg(long, value_name = "FILE")]
    pub aliases: Vec<PathBuf>,
}

#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Write the demo's input, alias file and reference tables into DIR, to rerun with `adjust`.
    #[arg(long, value_name = "DIR")]
    pub extract: Option<PathBuf>,

    /// Run the second scenario: survey estimates with margins of error, rank intervals and ties.
    #[arg(long)]
    pub margins: bool,

    #[command(flatten)]
    pub output: OutputArgs,
}

/// Parses a command line and records which `adjust` flags were given on it (a recipe may
/// fill the others).
pub fn parse_from<I, T>(argv: I) -> Result<Cli, clap::Error>
where
    I: IntoIterator<Item = T>,
    T: Into<std::ffi::OsString> + Clone,
{
    use clap::{CommandFactory, FromArgMatches};
    let argv: Vec<T> = argv.into_iter().collect();
    if argv.iter().any(|a| {
        let a: std::ffi::OsString = a.clone().into();
        a == "--moe-level" || a.to_string_lossy().starts_with("--moe-level=")
    }) {
        eprintln!("levelfield: note: --moe-level was renamed --margin-confidence; the old name still works for now");
    }
    let words: Vec<std::ffi::OsString> = argv.iter().map(|a| a.clone().into()).collect();
    let matches = Cli::command().try_get_matches_from(argv)?;
    let mut cli = Cli::from_arg_matches(&matches)?;
    if let (Command::Adjust(args), Some(("adjust", sub))) = (&mut cli.command, matches.subcommand())
    {
        // No option comes before the subcommand, so its words start after `levelfield adjust`.
        args.argv = words.into_iter().skip(2).collect();
        args.given = sub
            .ids()
            .filter(|id| {
                sub.value_source(id.as_str()) == Some(clap::parser::ValueSource::CommandLine)
            })
            .map(|id| id.to_string())
            .collect();
    }
    Ok(cli)
}

pub(crate) fn parse_chunk_mb(text: &str) -> Result<f64, String> {
    match text.trim().parse::<f64>() {
        Ok(mb) if mb.is_finite() && mb > 0.0 => Ok(mb),
        _ => Err(format!(
            "\"{text}\" is not a piece size: give megabytes above 0, such as 16 or 0.5"
        )),
    }
}

pub(crate) fn parse_per(text: &str) -> Result<u32, String> {
    match text.replace(['_', ','], "").as_str() {
        "1" => Ok(1),
        "1000" => Ok(1000),
        "100000" => Ok(100_000),
        "1000000" => Ok(1_000_000),
        other => Err(format!(
            "\"{other}\" is not a per-capita scale: use 1, 1000, 100000 or 1000000"
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn clap_definition_is_consistent() {
        Cli::command().debug_assert();
    }

    #[test]
    fn per_capita_scales() {
        assert_eq!(parse_per("100,000"), Ok(100_000));
        assert!(parse_per("10").is_err());
    }
}
