//! The `adjust` pipeline: ingest → resolve → frame → attach factors → adjust (both tracks) →
//! rank → flags → the output table. Every stage adds columns and none removes rows: the run
//! fails with an internal error if rows in and rows out ever differ.
//!
//! `prepare` is the per-row part (shared with each piece of `--streaming`): the tracks are one
//! polars lazy plan over the frame, collected once by `finish`, which adds the ranks (computed
//! over numbers, `rank.rs`) and the flags and hands the rows' texts to the `OutputTable`.

use crate::adjust::{self, Step, Unit};
use crate::entity::Resolver;
use crate::error::{Error, Result};
use crate::flags::{self, FlagCounts, LateFlags};
use crate::frame::{self, FrameStart};
use crate::ingest;
pub use crate::model::{PipelineSettings, RunSummary};
use crate::output::{OutputTable, RowTexts};
use crate::rank;
use crate::reference::References;
use crate::resolve::{self, ResolveOptions};
use crate::tracks::{self, TrackPlan, TrackStart};
use crate::uncertainty::ranking::{self, IntervalSettings};
use crate::units::TrackUnit;
use polars::prelude::*;

/// The result of a run: the output frame and what the summary reports.
pub struct AdjustOutput {
    pub table: OutputTable,
    pub summary: RunSummary,
    /// A streamed run's table is written as it goes (`table` is empty): how many columns it
    /// wrote of how many.
    pub streamed_columns: Option<(usize, usize)>,
}

/// An adjust run of the input `bytes`: borrowed, or owned (`Vec<u8>`), when they are let go
/// as soon as the table is read.
pub fn run_adjust<'a>(
    bytes: impl Into<std::borrow::Cow<'a, [u8]>>,
    input_label: &str,
    settings: &PipelineSettings,
    resolver: &Resolver,
    references: Option<&References>,
) -> Result<AdjustOutput> {
    let prepared = prepare(bytes.into(), input_label, settings, resolver, references)?;
    complete(prepared, settings, references)
}

/// A prepared run finished: ranks, flags, intervals, the summary.
fn complete(
    mut prepared: Prepared,
    settings: &PipelineSettings,
    references: Option<&References>,
) -> Result<AdjustOutput> {
    let rows_in = prepared.rows_in;
    let table = finish(&mut prepared, settings, None)?;
    let table = match &settings.intervals {
        Some(intervals) => OutputTable::plain(finish_intervals(table.text_frame()?, intervals)?),
        None => table,
    };
    let counts = table.flag_counts()?;
    crate::trace::phase("flagged");
    let mut summary = summarize(
        counts,
        &prepared.ingested.file,
        prepared.ingested.summary_notes(),
        rows_in,
        table.height(),
        settings,
        &prepared.baseline_steps,
        prepared.deflator_used,
        references,
    );
    add_warnings(
        &mut summary,
        prepared.ingested.asides.warnings(),
        &prepared.missing_tables,
    );
    Ok(AdjustOutput {
        table,
        summary,
        streamed_columns: None,
    })
}

/// Each row's late flags, from the ranked frame's `_several`, `_mixed` and `rank_adjusted`.
pub(crate) fn late_flags(frame: &DataFrame, baseline_missing: bool) -> Result<Vec<LateFlags>> {
    let bools = |name: &str| {
        frame
            .column(name)
            .and_then(|c| c.bool().cloned())
            .map_err(Error::engine("flagging the rows"))
    };
    let (several, mixed) = (bools("_several")?, bools("_mixed")?);
    let ranked = frame
        .column("rank_adjusted")
        .map_err(Error::engine("flagging the rows"))?
        .is_not_null();
    Ok(several
        .iter()
        .zip(mixed.iter())
        .zip(ranked.iter())
        .map(|((several, mixed), ranked)| LateFlags {
            no_baseline: baseline_missing,
            several_series: several.unwrap_or(false),
            mixed_currency: mixed.unwrap_or(false),
            not_ranked: !ranked.unwrap_or(false),
        })
        .collect())
}

/// The per-row part of a run, before ranks: ingest, entities, the canonical frame, factors
/// gathered once per entity-year, and both tracks, as one lazy frame; the rows' texts set
/// aside.
pub(crate) struct Prepared {
    pub lf: LazyFrame,
    /// What ingest decided (its rows were taken out: their texts are in `texts`).
    pub ingested: ingest::Ingested,
    pub texts: RowTexts,
    pub rows_in: usize,
    /// How many ranking partitions (group and year) the rows fall into: `_partition`
    /// numbers them from 0.
    pub partitions: usize,
    /// The output columns up to `value_adjusted` (and the margin columns), in order.
    pub head_columns: Vec<String>,
    pub baseline_steps: Vec<&'static dyn Step>,
    pub deflator_used: Option<adjust::Deflator>,
    /// Whether any row is a figure in the base currency (it changes the columns).
    pub any_base: bool,
    /// Kinds the baseline (or a derived column) needs and the catalog lacks: the baseline stays
    /// empty, flagged `no_baseline`, and the adjusted values are ranked on their own.
    pub missing_tables: Vec<crate::reference::Kind>,
}

impl Prepared {
    pub fn baseline_missing(&self) -> bool {
        !self.missing_tables.is_empty()
    }
}

pub(crate) fn prepare(
    bytes: std::borrow::Cow<'_, [u8]>,
    input_label: &str,
    settings: &PipelineSettings,
    resolver: &Resolver,
    references: Option<&References>,
) -> Result<Prepared> {
    let resolved = read_and_resolve(bytes, input_label, settings, resolver, false)?;
    prepare_resolved(resolved, settings, references)
}

/// The table read and its entities resolved: the part of `prepare` whose errors a reading of
/// the whole file gives first (a fault in the table, then the names that match nothing).
pub(crate) struct Resolved {
    pub ingested: ingest::Ingested,
    entities: resolve::EntityColumns,
    bases: Vec<resolve::InputBasis>,
}

/// Reads the table and resolves its entities. With `defer_unresolved` names that match
/// nothing are no error here: they are in `ingested.asides.unresolved` (a `--streaming`
/// piece, whose names are told once every piece is read).
pub(crate) fn read_and_resolve(
    bytes: std::borrow::Cow<'_, [u8]>,
    input_label: &str,
    settings: &PipelineSettings,
    resolver: &Resolver,
    defer_unresolved: bool,
) -> Result<Resolved> {
    let mut ingested = ingest::ingest(&bytes, input_label, &settings.ingest, Some(resolver))?;
    // Bytes the run owns are let go once read (at 10M rows, 260 MB of the peak).
    drop(bytes);
    let (entities, bases) = resolve::resolve_rows(
        &mut ingested,
        resolver,
        &ResolveOptions {
            allow_unresolved: settings.allow_unresolved || defer_unresolved,
            rank_aggregates: settings.rank_aggregates,
            base_currency: &settings.step_settings.base_currency,
        },
    )?;
    crate::trace::phase("entities resolved");
    Ok(Resolved {
        ingested,
        entities,
        bases,
    })
}

/// The rest of `prepare`: the canonical frame, the factors and both tracks.
pub(crate) fn prepare_resolved(
    resolved: Resolved,
    settings: &PipelineSettings,
    references: Option<&References>,
) -> Result<Prepared> {
    let Resolved {
        mut ingested,
        entities,
        bases,
    } = resolved;
    let base_currency = settings.step_settings.base_currency.clone();
    let check_currency = settings.converts_currency();
    let whole_table_in_base =
        settings.ingest.currency_code.as_deref() == Some(base_currency.as_str());
    let rows_in = ingested.rows.len();
    let (canonical, rows) = frame::canonical_frame(
        &mut ingested,
        &entities,
        &bases,
        settings,
        &FrameStart {
            check_currency,
            whole_table_in_base,
        },
    )?;
    let (any_base, carried_names) = (canonical.any_base, canonical.carried_names.clone());
    let partitions = canonical.partitions;
    crate::trace::phase("frame built");

    // Both tracks, built as expressions; the factors they name are collected in `needs`.
    let start_unit = if whole_table_in_base {
        Unit::Base
    } else {
        Unit::Local
    };
    let TrackPlan {
        batches,
        stage_columns,
        extra_columns,
        extra_exprs,
        needs,
        optional,
        deflator_used,
        baseline_steps,
    } = tracks::plan_tracks(
        settings,
        &TrackStart {
            unit: start_unit,
            to_local: check_currency,
            any_base,
            with_se: settings.intervals.is_some(),
        },
    )?;

    let (frame, texts, missing_tables) = frame::attach_factors(
        canonical,
        rows,
        entities,
        &frame::Factors {
            needs: &needs,
            optional: &optional,
            derived: extra_exprs,
        },
        references,
        settings,
    )?;
    crate::trace::phase("factors attached");
    let mut lf = frame.lazy();
    for batch in batches {
        lf = lf.with_columns(batch);
    }
    let head = head_columns(
        &stage_columns,
        &needs,
        &extra_columns,
        settings,
        carried_names,
    );
    Ok(Prepared {
        lf,
        ingested,
        texts,
        rows_in,
        partitions,
        head_columns: head,
        baseline_steps,
        deflator_used,
        any_base,
        missing_tables,
    })
}

/// The output columns up to `value_adjusted` (and the margin columns), then the carried ones,
/// in order.
fn head_columns(
    stage_columns: &[String],
    needs: &std::collections::BTreeSet<adjust::FactorNeed>,
    extra_columns: &[String],
    settings: &PipelineSettings,
    carried_names: Vec<String>,
) -> Vec<String> {
    let mut head: Vec<String> = [
        "row_id",
        "entity_input",
        "entity_code",
        "entity_name",
        "entity_kind",
        "year",
        "group",
        "value_input",
        "value",
        "currency",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    head.extend(stage_columns.iter().cloned());
    let uncertain = &settings.step_settings.uncertain_factors;
    for need in needs {
        head.push(need.used_column());
        if uncertain.contains(&need.kind) && need.whose == adjust::Whose::Entity {
            head.push(need.se_column());
        }
        head.push(need.year_column());
    }
    head.extend(extra_columns.iter().cloned());
    head.extend(["value_baseline", "value_adjusted"].map(String::from));
    if settings.intervals.is_some() {
        head.extend(["moe_baseline", "moe_adjusted", "ci_low", "ci_high"].map(String::from));
    }
    head.extend(carried_names);
    head
}

/// The ranks, their shift, and the columns they are written under.
const RANK_COLUMNS: [&str; 3] = ["rank_baseline", "rank_adjusted", "rank_shift"];

/// The output table of a prepared run: its plan collected with the columns the output needs,
/// its ranks and flags. The ranks are computed here over its own rows, or `given`: a streamed
/// piece's slice of the whole file's ranks, with `_several` and `_mixed`
/// (`streaming::ranks::Ranks::slice`). The rows' texts are taken out of `prepared`.
pub(crate) fn finish(
    prepared: &mut Prepared,
    settings: &PipelineSettings,
    given: Option<DataFrame>,
) -> Result<OutputTable> {
    let baseline_missing = prepared.baseline_missing();
    let order = output_columns(&prepared.head_columns, settings);
    // The frame holds every output column but the texts, the factors and the flags, which are
    // rendered from the rows and their entity-years (`output::RowTexts`), and the ranks;
    // what the ranks and the late flags need comes along.
    let mut selection: Vec<Expr> = order
        .iter()
        .filter(|c| {
            !prepared.texts.renders(c) && *c != "flags" && !RANK_COLUMNS.contains(&c.as_str())
        })
        .map(|c| col(c.as_str()))
        .collect();
    if given.is_none() {
        selection.extend(["_several", "_unit", "_rank_eligible", "_partition"].map(col));
    }
    let mut frame = std::mem::take(&mut prepared.lf)
        .select(selection)
        .collect()
        .map_err(Error::engine("adjusting"))?;
    crate::trace::phase("adjusted");
    if frame.height() != prepared.rows_in {
        return Err(Error::engine("checking that no row was lost")(polars_err!(
            ComputeError: "{} rows in, {} rows out", prepared.rows_in, frame.height()
        )));
    }
    match given {
        Some(ranks) => {
            frame
                .hstack_mut(ranks.columns())
                .map_err(Error::engine("ranking"))?;
        }
        None => add_ranks(&mut frame, prepared.partitions, settings, baseline_missing)?,
    }
    crate::trace::phase("ranked");
    let flags =
        late_flags(&frame, baseline_missing).map(|late| prepared.texts.flags(|row| late[row]))?;
    for private in [
        "_several",
        "_mixed",
        "_unit",
        "_rank_eligible",
        "_partition",
    ] {
        if frame.get_column_index(private).is_some() {
            frame
                .drop_in_place(private)
                .map_err(Error::engine("ranking"))?;
        }
    }
    let texts = std::mem::take(&mut prepared.texts);
    Ok(OutputTable::compact(frame, texts, Some(flags), &order))
}

/// `_mixed` (whether the row's group and year hold eligible figures in several units, from
/// `_unit`, `_rank_eligible` and `_partition`), then the ranks per group and year (`_partition`,
/// numbered below `partitions`) and their shift, added to `frame`.
pub(crate) fn add_ranks(
    frame: &mut DataFrame,
    partitions: usize,
    settings: &PipelineSettings,
    baseline_missing: bool,
) -> Result<()> {
    let numbers = frame
        .column("_partition")
        .and_then(|c| c.u32().map(|ca| ca.rechunk().into_owned()))
        .map_err(Error::engine("ranking"))?;
    let numbers: Vec<u32> = numbers.into_no_null_iter().collect();
    let mixed = match settings.one_unit() {
        true => vec![false; numbers.len()],
        false => mixed_of(frame, &numbers, partitions)?,
    };
    frame
        .with_column(Column::new("_mixed".into(), mixed))
        .map_err(Error::engine("ranking"))?;
    let [baseline, adjusted] = rank::rank_columns(
        frame,
        &numbers,
        partitions,
        settings.order,
        baseline_missing,
    )
    .map_err(Error::engine("ranking"))?;
    let shift = rank::shift_of(&baseline, &adjusted).map_err(Error::engine("ranking"))?;
    for column in [baseline, adjusted, shift] {
        frame
            .with_column(column)
            .map_err(Error::engine("ranking"))?;
    }
    Ok(())
}

/// `rank::mixed_units` of a frame's `_unit` texts (numbered here) and `_rank_eligible`.
fn mixed_of(frame: &DataFrame, partitions: &[u32], count: usize) -> Result<Vec<bool>> {
    let units = frame
        .column("_unit")
        .and_then(|c| c.str().cloned())
        .map_err(Error::engine("ranking"))?;
    let mut numbers: rank::Numbering<&str> = rank::Numbering::default();
    let units: Vec<Option<u32>> = units.iter().map(|u| u.map(|u| numbers.number(u))).collect();
    let eligible: Vec<bool> = frame
        .column("_rank_eligible")
        .and_then(|c| c.bool().cloned())
        .map_err(Error::engine("ranking"))?
        .iter()
        .map(|e| e.unwrap_or(false))
        .collect();
    Ok(rank::mixed_units(&units, &eligible, partitions, count))
}

/// The standard cautions, and those the run's settings call for.
/// The standard cautions printed with every note.
pub const CAUTIONS: &[&str] = &[
    "Market rates and PPPs answer different questions: market rates for what money buys abroad, PPPs for what it buys at home. Say which one a chart uses.",
    "Reference data (exchange rates, PPPs, price indices, populations) are revised between releases; cite the vintage used.",
    "A rank change inside the uncertainty of the figures is not a finding: a small gap can reverse with the next revision.",
    "Where the figures concern health, poverty lines or safety, defer to the published figures of the responsible authorities.",
];

fn cautions(settings: &PipelineSettings) -> Vec<String> {
    let mut out: Vec<String> = CAUTIONS.iter().map(|c| c.to_string()).collect();
    let names: Vec<&str> = settings.steps.iter().map(|s| s.name()).collect();
    if names.contains(&"ppp") {
        out.insert(1, "PPPs are estimates for a whole economy's basket of goods and services; they may not fit one good or service, such as a single fee or price.".into());
    }
    if names.contains(&"per-income") && settings.step_settings.income_as == adjust::IncomeAs::Days {
        out.push("Days of income divide by a mean income per person over 365 days: a mean lies above what a typical or poor household earns, so the burden for them is larger than these figures show.".into());
    }
    if matches!(
        settings.ingest.margins,
        crate::ingest::margins::MarginSpec::SampleSize { .. }
    ) {
        out.push("Margins from sample sizes assume a simple random sample with no design effect; a clustered or weighted survey has wider margins, so some differences called real here may be ties.".into());
    }
    if settings.intervals.is_some() {
        out.push("A rank shift flagged within_uncertainty lies inside the margins of error: do not report it as a change.".into());
    }
    out
}

/// The warnings of a run summary besides its own: the reading's first (lines set aside,
/// likely misreadings), a missing baseline table's last.
pub(crate) fn add_warnings(
    summary: &mut RunSummary,
    reading: Vec<String>,
    missing_tables: &[crate::reference::Kind],
) {
    summary
        .warnings
        .extend(missing_tables_warning(missing_tables));
    summary.warnings.splice(0..0, reading);
}

/// The warning of a run whose catalog lacks a table only the baseline needs.
fn missing_tables_warning(kinds: &[crate::reference::Kind]) -> Option<String> {
    if kinds.is_empty() {
        return None;
    }
    let names: Vec<&str> = kinds.iter().map(|k| k.as_str()).collect();
    Some(format!(
        "the reference catalog has no {} table: the adjusted values and ranks are complete, but the baseline (the comparison without the price-level adjustment), its ranks, the rank shift and the price level index are left empty (flag no_baseline); add a resource with \"kind\": \"{}\" to the catalog to get them",
        names.join(" or "),
        names[0]
    ))
}

/// Every output column in order, given the head columns of `prepare`.
pub(crate) fn output_columns(head: &[String], settings: &PipelineSettings) -> Vec<String> {
    let mut order = head.to_vec();
    order.extend(["rank_baseline", "rank_adjusted", "rank_shift", "flags"].map(String::from));
    if settings.intervals.is_some() {
        order.extend(["_se_baseline", "_se_adjusted"].map(String::from));
    }
    order
}

/// Adds rank intervals and ties, then puts the columns in their documented order.
fn finish_intervals(frame: DataFrame, intervals: &IntervalSettings) -> Result<DataFrame> {
    let frame = ranking::add_intervals(frame, intervals)?;
    let mut names: Vec<String> = frame
        .get_column_names()
        .iter()
        .map(|n| n.to_string())
        .filter(|n| {
            !n.starts_with('_')
                && n != "flags"
                && !n.starts_with("rank_baseline_")
                && !n.starts_with("rank_adjusted_")
                && n != "tied_with"
        })
        .collect();
    names.extend(
        [
            "rank_baseline_low",
            "rank_baseline_high",
            "rank_adjusted_low",
            "rank_adjusted_high",
            "tied_with",
            "flags",
        ]
        .map(String::from),
    );
    frame
        .select(names)
        .map_err(Error::engine("ordering the output columns"))
}

/// The methods part of the summary: how prices were deflated and converted, how margins were
/// carried, what per capita means here.
fn method_notes(
    settings: &PipelineSettings,
    names: &[&str],
    deflator_used: Option<adjust::Deflator>,
) -> Vec<String> {
    let mut method_notes = Vec::new();
    let base_year = settings.step_settings.base_year;
    if let Some(deflator) = deflator_used {
        let year = base_year.unwrap_or_default();
        method_notes.push(match deflator {
            adjust::Deflator::Own => format!("deflated with each entity's own CPI to {year} prices, before any currency conversion"),
            adjust::Deflator::BaseCurrency => {
                format!("converted at each year's rate, then deflated with the {} CPI to {year} prices", settings.step_settings.base_currency)
            }
        });
    }
    let ppp_pos = names.iter().position(|n| *n == "ppp");
    let deflate_pos = names.iter().position(|n| *n == "deflate");
    if let Some(p) = ppp_pos {
        method_notes.push(match deflate_pos {
            Some(d) if d < p => format!(
                "PPP conversion at constant PPPs: the {} PPP for every year (deflate, then convert)",
                base_year.unwrap_or_default()
            ),
            _ => "PPP conversion at current PPPs: each figure at its own year's PPP".to_string(),
        });
    }
    if let Some(intervals) = &settings.intervals {
        method_notes.push(format!(
            "margins at {}% carried through every step (scaled by exact factors; ratio formulas for uncertain population or income: ACS General Handbook, ch. 8)",
            intervals.level.percent()
        ));
        method_notes.push(intervals.describe());
    }
    if names.contains(&"per-capita") {
        method_notes.push(format!(
            "per capita: {}",
            crate::units::per_people_words(settings.step_settings.per)
        ));
    }
    method_notes
}

#[allow(clippy::too_many_arguments)]
/// The run summary; `file` and `reading_notes` are what reading the input decided.
pub(crate) fn summarize(
    counts: FlagCounts,
    file: &str,
    reading_notes: Vec<String>,
    rows_in: usize,
    rows_out: usize,
    settings: &PipelineSettings,
    baseline_steps: &[&'static dyn Step],
    deflator_used: Option<adjust::Deflator>,
    references: Option<&References>,
) -> RunSummary {
    let names: Vec<&str> = settings.steps.iter().map(|s| s.name()).collect();
    let baseline_names: Vec<&str> = baseline_steps.iter().map(|s| s.name()).collect();
    let input_currency = crate::units::InputCurrency {
        code: if settings.figures_are_not_money() {
            Some("XXX".into())
        } else {
            settings.ingest.currency_code.clone()
        },
        column: settings.ingest.roles.currency.is_some(),
    };
    let method_notes = method_notes(settings, &names, deflator_used);
    let mut warnings: Vec<String> = references.map(|r| r.warnings()).unwrap_or_default();
    if let Some(n) = counts.by_flag.get(flags::MIXED_CURRENCY) {
        warnings.push(format!(
            "{n} row(s) are not ranked: their group and year hold figures in different currencies and no step converts them (flag mixed_currency); add market or ppp to --steps, or state the one currency of every figure with --currency-code (XXX for figures that are not money, such as counts)"
        ));
    }
    if let Some(n) = counts.by_flag.get(flags::SEVERAL_SERIES) {
        warnings.push(format!(
            "{n} row(s) share their entity, group and year with another row: the table holds several series, so those rows are not ranked (flag several_series); pass --group COL with the column that tells the series apart (see the columns not used above)"
        ));
    }
    let mut notes = reading_notes;
    if settings.ingest.currency_code.is_none()
        && settings.ingest.roles.currency.is_none()
        && settings.converts_currency()
    {
        notes.push("currency: no --currency or --currency-code given, so each figure is taken to be in its entity's own currency (the unit of its reference tables)".into());
    }
    if settings.nearest_year > 0 {
        notes.push(format!(
            "factors may come from up to {} year(s) away (--nearest-year); such rows are flagged",
            settings.nearest_year
        ));
    }
    RunSummary {
        input: file.to_string(),
        rows_in,
        rows_out,
        rows_flagged: counts.rows_flagged,
        flag_counts: counts.by_flag,
        steps: names.iter().map(|s| s.to_string()).collect(),
        baseline_steps: baseline_steps
            .iter()
            .map(|s| s.name().to_string())
            .collect(),
        notes,
        method_notes,
        references: references.map(|r| r.describe()).unwrap_or_default(),
        warnings,
        cautions: cautions(settings),
        units: crate::units::Units {
            baseline: TrackUnit::of(&baseline_names, &settings.step_settings, &input_currency),
            adjusted: TrackUnit::of(&names, &settings.step_settings, &input_currency),
        },
        notice: None,
    }
}
