//! `ppp`: local currency to international dollars at the purchasing-power parity.
//! value_intl = value_lcu / ppp, with ppp in local currency units per international dollar.
//! A value in USD is first taken back to local currency at the same year's market rate.
//! Also writes price_level_index = ppp / fx * 100 (World Bank price level ratio definition:
//! 100 means prices at the base-currency level).

use super::{misplaced, Step, StepContext, StepSettings, TrackState, Unit};
use crate::error::Result;
use crate::reference::Kind;
use polars::prelude::*;

pub struct Ppp;

impl Step for Ppp {
    fn name(&self) -> &'static str {
        "ppp"
    }

    fn summary(&self) -> &'static str {
        "local currency to international dollars at purchasing-power parity"
    }

    fn formula(&self) -> &'static str {
        "value_intl = value / ppp   (ppp: local currency units per international dollar); price_level_index = ppp / fx * 100"
    }

    fn explain(&self, _settings: &StepSettings) -> String {
        "Figures were converted to international dollars at purchasing-power parities (PPPs), which remove differences in price levels between countries, so that an amount buys roughly the same everywhere.".into()
    }

    fn column(&self) -> &'static str {
        "value_intl"
    }

    fn apply(&self, value: Expr, state: &mut TrackState, ctx: &mut StepContext) -> Result<Expr> {
        let at = StepContext::at_for(state.prices);
        let out = match state.unit {
            Unit::Local => value / ctx.factor(Kind::Ppp, at),
            Unit::Base => value * ctx.factor(Kind::Fx, at) / ctx.factor(Kind::Ppp, at),
            Unit::Intl => {
                return Err(misplaced(
                    "ppp",
                    "the value is already in international dollars",
                    "list ppp once",
                ))
            }
            Unit::Ratio => {
                return Err(misplaced(
                    "ppp",
                    "the value is a ratio of income",
                    "put per-income last",
                ))
            }
        };
        state.unit = Unit::Intl;
        Ok(out)
    }

    fn extra_columns(&self, state_before: &TrackState, ctx: &mut StepContext) -> Vec<Expr> {
        let at = StepContext::at_for(state_before.prices);
        let pli = ctx.factor(Kind::Ppp, at) / ctx.factor(Kind::Fx, at) * lit(100.0);
        vec![pli.alias("price_level_index")]
    }
}
