//! Uncertainty: margins of error carried through the steps, statistical ties, rank intervals
//! and poll leads.
//!
//! - `normal`: the standard normal quantile and CDF
//! - `moe`: levels, standard errors and the ACS propagation formulas
//! - `intervals`: joint (Klein, Wright and Wieczorek 2020) and simulated rank intervals
//! - `poll`: the margin of a lead between two shares of one sample
//! - `ranking`: per group and year, the interval and tie columns added to the output frame

pub mod intervals;
pub mod moe;
pub mod normal;
pub mod poll;
pub mod ranking;
