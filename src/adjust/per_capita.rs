//! `per-capita`: divides by the population of the row's year and scales to "per N people".
//! value_per_capita = value / population * per, with per one of 1, 1000, 100000, 1000000.

use super::{misplaced, At, Step, StepContext, StepSettings, TrackState, Unit};
use crate::error::Result;
use crate::reference::Kind;
use polars::prelude::*;

pub struct PerCapita;

impl Step for PerCapita {
    fn name(&self) -> &'static str {
        "per-capita"
    }

    fn summary(&self) -> &'static str {
        "divide by population (per person, or per 1,000 / 100,000 / 1,000,000 with --per)"
    }

    fn formula(&self) -> &'static str {
        "value_per_capita = value / population * per"
    }

    fn explain(&self, settings: &StepSettings) -> String {
        match settings.per {
            1 => "Figures were divided by population, giving an amount per person.".into(),
            per => format!(
                "Figures were divided by population and stated per {} people.",
                crate::format::format_number(
                    per as f64,
                    crate::format::Rounding::Decimals(0),
                    true
                )
            ),
        }
    }

    fn column(&self) -> &'static str {
        "value_per_capita"
    }

    fn apply(&self, value: Expr, state: &mut TrackState, ctx: &mut StepContext) -> Result<Expr> {
        if state.unit == Unit::Ratio {
            return Err(misplaced(
                "per-capita",
                "the value is already a ratio of income per capita",
                "put per-capita before per-income",
            ));
        }
        if state.per.is_some() {
            return Err(misplaced(
                "per-capita",
                "the value is already per capita",
                "list per-capita once",
            ));
        }
        let per = ctx.settings.per;
        state.per = Some(per);
        Ok(value / ctx.factor(Kind::Population, At::RowYear) * lit(per as f64))
    }

    fn propagate(
        &self,
        value_before: Expr,
        se_before: Expr,
        _state_before: &TrackState,
        ctx: &mut StepContext,
    ) -> Result<Expr> {
        let per = lit(ctx.settings.per as f64);
        let population = ctx.factor(Kind::Population, At::RowYear);
        let proportion = ctx.settings.proportion;
        Ok(match ctx.factor_se(Kind::Population, At::RowYear) {
            Some(se_population) => {
                super::ratio_se(
                    value_before,
                    se_before,
                    population,
                    se_population,
                    proportion,
                ) * per
            }
            // An exact population: the ratio and proportion forms both reduce to SE_X / Y.
            None => se_before / population * per,
        })
    }
}
