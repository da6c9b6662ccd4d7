//! `per-income`: affordability, the figure against income per capita of the same year.
//! share = value / income; days = value / (income / 365).
//! Both sides are brought to local currency of the row's year first (a value in USD times fx,
//! in international dollars times ppp; an income table in USD or international dollars the
//! same way), so the ratio does not depend on the currency steps before it.

use super::{misplaced, At, IncomeAs, Prices, Step, StepContext, StepSettings, TrackState, Unit};
use crate::error::Result;
use crate::reference::{Basis, Kind};
use polars::prelude::*;

pub struct PerIncome;

impl Step for PerIncome {
    fn name(&self) -> &'static str {
        "per-income"
    }

    fn summary(&self) -> &'static str {
        "affordability: share of income per capita, or days of income with --income-as days"
    }

    fn formula(&self) -> &'static str {
        "value_per_income = value / income   (share), or value / (income / 365)   (days)"
    }

    fn explain(&self, settings: &StepSettings) -> String {
        match settings.income_as {
            IncomeAs::Share => "Figures were compared with average income per person in the same year and country, as a share of a year's income.".into(),
            IncomeAs::Days => "Figures were compared with average income per person in the same year and country, as the number of days of income they cost.".into(),
        }
    }

    fn column(&self) -> &'static str {
        "value_per_income"
    }

    fn apply(&self, value: Expr, state: &mut TrackState, ctx: &mut StepContext) -> Result<Expr> {
        if state.prices == Prices::BaseYear {
            return Err(misplaced(
                "per-income",
                "the value is in base-year prices but income is of the row's own year",
                "leave deflate out when comparing with income (a share of income needs no price base)",
            ));
        }
        if state.per.is_some_and(|p| p != 1) {
            return Err(misplaced(
                "per-income",
                "the value is per several people but income is per person",
                "use --per 1 with per-income",
            ));
        }
        let numerator = match state.unit {
            Unit::Local => value,
            Unit::Base => value * ctx.factor(Kind::Fx, At::RowYear),
            Unit::Intl => value * ctx.factor(Kind::Ppp, At::RowYear),
            Unit::Ratio => {
                return Err(misplaced(
                    "per-income",
                    "the value is already a ratio of income",
                    "list per-income once",
                ))
            }
        };
        let income = ctx.factor(Kind::Income, At::RowYear);
        let income_local = match ctx.settings.income_basis {
            Basis::Lcu => income,
            Basis::Base => income * ctx.factor(Kind::Fx, At::RowYear),
            Basis::Intl => income * ctx.factor(Kind::Ppp, At::RowYear),
        };
        state.unit = Unit::Ratio;
        Ok(match ctx.settings.income_as {
            IncomeAs::Share => numerator / income_local,
            IncomeAs::Days => numerator / (income_local / lit(365.0)),
        })
    }

    fn propagate(
        &self,
        value_before: Expr,
        se_before: Expr,
        state_before: &TrackState,
        ctx: &mut StepContext,
    ) -> Result<Expr> {
        let Some(income_se) = ctx.factor_se(Kind::Income, At::RowYear) else {
            let mut state = *state_before;
            return self.apply(se_before, &mut state, ctx);
        };
        // Both sides in local currency, as in `apply`; the conversions are exact factors.
        let to_local = |x: Expr, unit: Unit, ctx: &mut StepContext| match unit {
            Unit::Base => x * ctx.factor(Kind::Fx, At::RowYear),
            Unit::Intl => x * ctx.factor(Kind::Ppp, At::RowYear),
            _ => x,
        };
        let numerator = to_local(value_before, state_before.unit, ctx);
        let numerator_se = to_local(se_before, state_before.unit, ctx);
        let basis_unit = match ctx.settings.income_basis {
            Basis::Lcu => Unit::Local,
            Basis::Base => Unit::Base,
            Basis::Intl => Unit::Intl,
        };
        let income = to_local(ctx.factor(Kind::Income, At::RowYear), basis_unit, ctx);
        let income_se = to_local(income_se, basis_unit, ctx);
        let share_se = super::ratio_se(numerator, numerator_se, income, income_se, false);
        Ok(match ctx.settings.income_as {
            IncomeAs::Share => share_se,
            IncomeAs::Days => share_se * lit(365.0),
        })
    }
}
