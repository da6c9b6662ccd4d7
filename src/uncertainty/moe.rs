//! Margins of error: conversion between confidence levels and standard errors, and the
//! propagation formulas for sums, ratios and proportions.
//!
//! Source for every formula here: U.S. Census Bureau, "Understanding and Using American
//! Community Survey Data: What All Data Users Need to Know" (the ACS General Handbook, 2018 and
//! 2020 editions), chapter 8, "Calculating Measures of Error for Derived Estimates". The
//! handbook states margins at 90% (z = 1.645) and converts with 1.960/1.645 (95%) and
//! 2.576/1.645 (99%); we use the exact normal quantiles, which agree to three decimals.

use crate::uncertainty::normal;

/// A confidence level for margins of error.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
pub enum Level {
    #[value(name = "90")]
    P90,
    #[value(name = "95")]
    P95,
    #[value(name = "99")]
    P99,
}

impl Level {
    pub fn confidence(self) -> f64 {
        match self {
            Level::P90 => 0.90,
            Level::P95 => 0.95,
            Level::P99 => 0.99,
        }
    }

    /// The two-sided critical z (1.645, 1.960, 2.576).
    pub fn z(self) -> f64 {
        normal::two_sided_critical(self.confidence())
    }

    pub fn percent(self) -> u32 {
        match self {
            Level::P90 => 90,
            Level::P95 => 95,
            Level::P99 => 99,
        }
    }
}

/// SE = MOE / z.
pub fn se_from_moe(moe: f64, level: Level) -> f64 {
    moe / level.z()
}

/// MOE = z × SE.
pub fn moe_from_se(se: f64, level: Level) -> f64 {
    se * level.z()
}

/// MOE of a sum of independent estimates: sqrt(Σ MOE²) (ACS handbook, ch. 8).
pub fn moe_sum(moes: &[f64]) -> f64 {
    moes.iter().map(|m| m * m).sum::<f64>().sqrt()
}

/// MOE of a ratio X/Y: (1/Y)·sqrt(MOE_X² + (X/Y)²·MOE_Y²) (ACS handbook, ch. 8). Works equally on
/// standard errors.
pub fn moe_ratio(x: f64, moe_x: f64, y: f64, moe_y: f64) -> f64 {
    let r = x / y;
    (moe_x * moe_x + r * r * moe_y * moe_y).sqrt() / y.abs()
}

/// MOE of a proportion X/Y where X is a subset of Y: (1/Y)·sqrt(MOE_X² − p²·MOE_Y²), falling back
/// to the ratio form when the value under the root is negative (ACS handbook, ch. 8).
pub fn moe_proportion(x: f64, moe_x: f64, y: f64, moe_y: f64) -> f64 {
    let p = x / y;
    let under = moe_x * moe_x - p * p * moe_y * moe_y;
    if under < 0.0 {
        moe_ratio(x, moe_x, y, moe_y)
    } else {
        under.sqrt() / y.abs()
    }
}

/// SE of a share p (a fraction) estimated from a simple random sample of n: sqrt(p(1−p)/n)
/// (the binomial standard error; common practice in survey reporting).
pub fn se_of_share(p: f64, n: f64) -> f64 {
    (p * (1.0 - p) / n).sqrt()
}

/// Two estimates differ significantly when |x1 − x2| / sqrt(SE1² + SE2²) exceeds the critical z
/// (U.S. Census Bureau, "Instructions for Applying Statistical Testing to ACS Data").
pub fn z_statistic(x1: f64, se1: f64, x2: f64, se2: f64) -> f64 {
    let denominator = (se1 * se1 + se2 * se2).sqrt();
    if denominator == 0.0 {
        if x1 == x2 {
            0.0
        } else {
            f64::INFINITY
        }
    } else {
        (x1 - x2).abs() / denominator
    }
}

pub fn differ(x1: f64, se1: f64, x2: f64, se2: f64, level: Level) -> bool {
    z_statistic(x1, se1, x2, se2) > level.z()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_difference_test_divides_by_the_combined_standard_error() {
        // Worked by hand: |10 − 4| / sqrt(3² + 4²) = 6 / 5 = 1.2.
        assert_eq!(z_statistic(10.0, 3.0, 4.0, 4.0), 1.2);
        // Exact figures: equal ones do not differ, unequal ones always do.
        assert_eq!(z_statistic(7.0, 0.0, 7.0, 0.0), 0.0);
        assert_eq!(z_statistic(7.0, 0.0, 8.0, 0.0), f64::INFINITY);
        // The Census Bureau's rule is "greater than" the critical value: at exactly z it is
        // not a significant difference.
        let z = Level::P90.z();
        assert!(!differ(z, 1.0, 0.0, 0.0, Level::P90));
        assert!(differ(z * (1.0 + 1e-12), 1.0, 0.0, 0.0, Level::P90));
    }

    #[test]
    fn level_conversions_match_the_handbook_factors() {
        // ACS handbook: MOE95 = MOE90 × 1.960/1.645; MOE99 = MOE90 × 2.576/1.645; SE = MOE90/1.645.
        let moe90 = 1000.0;
        let se = se_from_moe(moe90, Level::P90);
        assert!((se - 1000.0 / 1.645).abs() < 0.1);
        assert!((moe_from_se(se, Level::P95) - moe90 * 1.960 / 1.645).abs() < 0.1);
        assert!((moe_from_se(se, Level::P99) - moe90 * 2.576 / 1.645).abs() < 0.5);
    }

    #[test]
    fn proportion_at_exactly_zero_under_the_root_keeps_the_proportion_form() {
        // The handbook falls back to the ratio form only when the value under the root is
        // negative: X = 100 ± 5 of Y = 200 ± 10 gives 25 − 0.25·100 = 0, so the margin is 0
        // (the ratio form would give sqrt(25 + 25) / 200 = 0.0354).
        assert_eq!(moe_proportion(100.0, 5.0, 200.0, 10.0), 0.0);
        assert!((moe_ratio(100.0, 5.0, 200.0, 10.0) - 50f64.sqrt() / 200.0).abs() < 1e-15);
    }

    #[test]
    fn levels_print_as_the_percent_they_stand_for() {
        let printed: Vec<u32> = [Level::P90, Level::P95, Level::P99]
            .iter()
            .map(|l| l.percent())
            .collect();
        assert_eq!(printed, [90, 95, 99]);
        for level in [Level::P90, Level::P95, Level::P99] {
            assert_eq!(level.percent() as f64 / 100.0, level.confidence());
        }
    }

    #[test]
    fn acs_handbook_sum() {
        // ACS General Handbook, ch. 8: margins 3,860, 2,642 and 1,957 of a sum give ± 5,070 (the
        // handbook rounds to units); the root of the squares, worked by hand, is 5,070.4648.
        let moe = moe_sum(&[3860.0, 2642.0, 1957.0]);
        assert!((moe - 5_070.464_771_596_386).abs() < 1e-9, "{moe}");
        // A plain sum of margins (a wrong formula) would give 8,459.
        assert!((moe_sum(&[3860.0, 2642.0, 1957.0]) - 8459.0).abs() > 3000.0);
    }

    #[test]
    fn acs_handbook_proportion() {
        // ACS General Handbook, ch. 8: 203,119 ± 5,070 of 630,498 ± 831 is 0.322 ± 0.008. Worked
        // by hand from those inputs: sqrt(5070² − (203119/630498)²·831²)/630498 = 0.0080300446.
        // The ratio formula would give 0.0080525, the numerator's margin alone 0.0080413: the
        // tolerance below tells all three apart.
        let moe = moe_proportion(203_119.0, 5070.0, 630_498.0, 831.0);
        assert!((moe - 0.008_030_044_578_210_323).abs() < 1e-12, "{moe}");
        assert!((moe - 0.008_052_465).abs() > 1e-6, "not the ratio formula");
        assert!(
            (moe - 0.008_041_263).abs() > 1e-6,
            "not the numerator's margin alone"
        );
        assert_eq!((moe * 1000.0).round(), 8.0, "the handbook's rounded 0.008");
    }

    #[test]
    fn ratio_form() {
        // The ACS ratio formula on the handbook's figures, worked by hand:
        // 226,840 ± 5,556 over 203,119 ± 5,070: sqrt(5556² + 1.11678²·5070²)/203119 = 0.0390547.
        let moe = moe_ratio(226_840.0, 5556.0, 203_119.0, 5070.0);
        assert!((moe - 0.039_054_666_611_033_496).abs() < 1e-12, "{moe}");
        // Leaving out the denominator's margin (a wrong formula) gives 0.0273535.
        assert!((moe - 5556.0 / 203_119.0).abs() > 1e-3);
    }

    #[test]
    fn proportion_falls_back_to_ratio_when_negative_under_the_root() {
        // ACS handbook rule: if MOE_X² − p²·MOE_Y² < 0, use the ratio formula.
        let fallback = moe_proportion(50.0, 1.0, 100.0, 10.0);
        assert_eq!(fallback, moe_ratio(50.0, 1.0, 100.0, 10.0));
    }

    #[test]
    fn significance_of_a_difference() {
        // ACS 2007 worked case (Census statistical testing instructions): 25.7±0.9 versus
        // 22.8±0.9 at 90% gives z ≈ 3.75, significant.
        let se = se_from_moe(0.9, Level::P90);
        let z = z_statistic(25.7, se, 22.8, se);
        assert!((z - 3.75).abs() < 0.01, "{z}");
        assert!(differ(25.7, se, 22.8, se, Level::P90));
        assert!(!differ(25.7, se, 25.0, se, Level::P90));
    }
}
