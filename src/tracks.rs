//! Building the two tracks (adjusted and baseline) as polars expressions, with the standard
//! error of each value carried alongside when the figures or factors have margins.
//!
//! The result is a list of `with_columns` batches plus the reference factors the steps asked for;
//! `pipeline` joins the factors and runs the batches. Nothing here touches data.

use crate::adjust::{
    self, At, Deflator, FactorNeed, Prices, Step, StepContext, Track, TrackState, Unit,
};
use crate::error::Result;
use crate::model::PipelineSettings;
use crate::reference::Kind;
use polars::prelude::*;
use std::collections::BTreeSet;

/// What the pipeline runs.
pub struct TrackPlan {
    pub batches: Vec<Vec<Expr>>,
    /// Stage columns in the order written (value_lcu first when present).
    pub stage_columns: Vec<String>,
    /// Derived factor columns (price_level_index, cpi_ratio), by name and as expressions over
    /// the factors: computed once an entity-year (`frame::attach_factors`), not once a row.
    pub extra_columns: Vec<String>,
    pub extra_exprs: Vec<Expr>,
    pub needs: BTreeSet<FactorNeed>,
    /// Needs of the baseline track and of derived columns only: a catalog without their table
    /// still gives the adjusted values (those columns stay empty).
    pub optional: BTreeSet<FactorNeed>,
    pub deflator_used: Option<Deflator>,
    pub baseline_steps: Vec<&'static dyn Step>,
}

/// How the input enters the tracks.
pub struct TrackStart {
    pub unit: Unit,
    /// Write `value_lcu`, taking figures in the base currency back to local currency.
    pub to_local: bool,
    /// Some rows are in the base currency (so fx at the row's year is needed).
    pub any_base: bool,
    /// Carry `_se` through the steps into `_se_adjusted` and `_se_baseline`.
    pub with_se: bool,
}

pub fn plan_tracks(settings: &PipelineSettings, start: &TrackStart) -> Result<TrackPlan> {
    let mut plan = TrackPlan {
        batches: Vec::new(),
        stage_columns: Vec::new(),
        extra_columns: Vec::new(),
        extra_exprs: Vec::new(),
        needs: BTreeSet::new(),
        optional: BTreeSet::new(),
        deflator_used: None,
        baseline_steps: adjust::baseline_steps(&settings.steps),
    };
    let mut value = col("value");
    let mut se = start.with_se.then(|| col("_se"));
    if start.unit == Unit::Local && start.to_local {
        let mut ctx = context(settings, Track::Adjusted, &mut plan.needs);
        let fx = start.any_base.then(|| ctx.factor(Kind::Fx, At::RowYear));
        plan.batches
            .push(vec![localize(col("value"), fx.clone()).alias("value_lcu")]);
        plan.stage_columns.push("value_lcu".into());
        value = col("value_lcu");
        se = se.map(|s| localize(s, fx));
    }
    let state = TrackState {
        unit: start.unit,
        prices: Prices::RowYear,
        per: None,
    };
    let steps = settings.steps.clone();
    let (adjusted, adjusted_se, deflator) = run_track(
        &steps,
        value.clone(),
        se.clone(),
        state,
        settings,
        Track::Adjusted,
        &mut plan,
    )?;
    plan.deflator_used = deflator;
    let baseline_steps = plan.baseline_steps.clone();
    let (baseline, baseline_se, _) = run_track(
        &baseline_steps,
        value,
        se,
        state,
        settings,
        Track::Baseline,
        &mut plan,
    )?;
    let mut last = vec![
        adjusted.alias("value_adjusted"),
        baseline.alias("value_baseline"),
    ];
    if let (Some(a), Some(b)) = (adjusted_se, baseline_se) {
        last.push(a.alias("_se_adjusted"));
        last.push(b.alias("_se_baseline"));
    }
    plan.batches.push(last);
    // What only the baseline and the derived columns need is optional; the rest is required.
    let required = plan.needs.clone();
    plan.optional.retain(|need| !required.contains(need));
    plan.needs.extend(plan.optional.iter().copied());
    if let Some(intervals) = &settings.intervals {
        let z = lit(intervals.level.z());
        plan.batches.push(vec![
            (col("_se_baseline") * z.clone()).alias("moe_baseline"),
            (col("_se_adjusted") * z).alias("moe_adjusted"),
        ]);
        plan.batches.push(vec![
            (col("value_adjusted") - col("moe_adjusted")).alias("ci_low"),
            (col("value_adjusted") + col("moe_adjusted")).alias("ci_high"),
        ]);
    }
    Ok(plan)
}

/// A figure in the base currency goes back to local currency at its year's market rate; a
/// figure in a third currency cannot be converted with this entity's factors. Linear in `x`, so
/// it serves standard errors as well.
fn localize(x: Expr, fx: Option<Expr>) -> Expr {
    let local = match fx {
        Some(fx) => when(col("_basis").eq(lit("base")))
            .then(x.clone() * fx)
            .otherwise(x),
        None => x,
    };
    when(col("_basis").eq(lit("mismatch")))
        .then(crate::rank::null_of(DataType::Float64))
        .otherwise(local)
}

fn context<'a>(
    settings: &'a PipelineSettings,
    track: Track,
    needs: &'a mut BTreeSet<FactorNeed>,
) -> StepContext<'a> {
    StepContext {
        settings: &settings.step_settings,
        track,
        needs,
        deflator_used: None,
    }
}

type TrackResult = (Expr, Option<Expr>, Option<Deflator>);

fn run_track(
    steps: &[&'static dyn Step],
    start: Expr,
    start_se: Option<Expr>,
    start_state: TrackState,
    settings: &PipelineSettings,
    track: Track,
    plan: &mut TrackPlan,
) -> Result<TrackResult> {
    let needs = match track {
        Track::Adjusted => &mut plan.needs,
        Track::Baseline => &mut plan.optional,
    };
    let mut ctx = context(settings, track, needs);
    let mut state = start_state;
    let mut current = start;
    let mut se = start_se;
    let mut derived_needs = BTreeSet::new();
    for step in steps {
        let before = state;
        let next = step.apply(current.clone(), &mut state, &mut ctx)?;
        se = match se {
            Some(s) => Some(step.propagate(current, s, &before, &mut ctx)?),
            None => None,
        };
        if track == Track::Adjusted {
            plan.batches.push(vec![next.alias(step.column())]);
            let mut derived = context(settings, track, &mut derived_needs);
            for extra in step.extra_columns(&before, &mut derived) {
                if let Expr::Alias(_, name) = &extra {
                    plan.extra_columns.push(name.to_string());
                }
                plan.extra_exprs.push(extra);
            }
            plan.stage_columns.push(step.column().to_string());
            current = col(step.column());
        } else {
            current = next;
        }
    }
    let deflator_used = ctx.deflator_used;
    plan.optional.extend(derived_needs);
    Ok((current, se, deflator_used))
}
