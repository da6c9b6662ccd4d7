//! `market`: local currency to the base currency (USD) at the market exchange rate.
//! value_usd_market = value_lcu / fx, with fx in local currency units per USD (annual average).
//! A value already in the base currency passes through unchanged.

use super::{misplaced, Step, StepContext, StepSettings, TrackState, Unit};
use crate::error::Result;
use crate::reference::Kind;
use polars::prelude::*;

pub struct Market;

impl Step for Market {
    fn name(&self) -> &'static str {
        "market"
    }

    fn summary(&self) -> &'static str {
        "local currency to US dollars at the market exchange rate"
    }

    fn formula(&self) -> &'static str {
        "value_usd_market = value / fx   (fx: local currency units per USD, annual average)"
    }

    fn explain(&self, settings: &StepSettings) -> String {
        format!("Figures were converted from each country's currency to {} at market exchange rates (annual averages).", settings.base_currency)
    }

    fn column(&self) -> &'static str {
        "value_usd_market"
    }

    fn apply(&self, value: Expr, state: &mut TrackState, ctx: &mut StepContext) -> Result<Expr> {
        let out = match state.unit {
            Unit::Local => value / ctx.factor(Kind::Fx, StepContext::at_for(state.prices)),
            Unit::Base => value,
            Unit::Intl => {
                return Err(misplaced(
                    "market",
                    "the value is already in international dollars",
                    "put market before ppp, or leave one of them out",
                ))
            }
            Unit::Ratio => {
                return Err(misplaced(
                    "market",
                    "the value is a ratio of income",
                    "put per-income last",
                ))
            }
        };
        state.unit = Unit::Base;
        Ok(out)
    }
}
