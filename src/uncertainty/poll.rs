//! The margin of a lead between two shares of the same sample.
//!
//! For shares p1 and p2 from one simple random sample of n, the lead p1 − p2 has variance
//! (p1 + p2 − (p1 − p2)²)/n, because the two counts are multinomial and negatively correlated
//! (the standard multinomial result; common practice in survey reporting). A lead smaller than
//! its margin is a statistical tie.

use crate::uncertainty::moe::{se_of_share, Level};

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Lead {
    pub lead: f64,
    pub margin: f64,
    pub margin_first: f64,
    pub margin_second: f64,
    pub beyond_margin: bool,
}

/// Shares as fractions (0.48), sample size n.
pub fn lead(p1: f64, p2: f64, n: f64, level: Level) -> Lead {
    let difference = p1 - p2;
    let margin = level.z() * ((p1 + p2 - difference * difference) / n).sqrt();
    Lead {
        lead: difference,
        margin,
        margin_first: level.z() * se_of_share(p1, n),
        margin_second: level.z() * se_of_share(p2, n),
        beyond_margin: difference.abs() > margin,
    }
}

/// The result in words, with shares and margins in percentage points. `n` is the effective
/// sample size (the sample over its design effect `deff`), and the text states the assumption.
pub fn describe(
    first: &str,
    second: &str,
    p1: f64,
    p2: f64,
    n: f64,
    level: Level,
    deff: f64,
) -> String {
    let l = lead(p1, p2, n, level);
    let points = |x: f64| format!("{:.1}", x * 100.0);
    let verdict = if l.beyond_margin {
        format!(
            "the lead is larger than its margin at {}% confidence",
            level.percent()
        )
    } else {
        format!(
            "the lead is within its margin at {}% confidence: a statistical tie",
            level.percent()
        )
    };
    let assumption = if deff == 1.0 {
        "margins assume a simple random sample (design effect 1); a weighted or clustered poll has wider ones: pass --design-effect from its documentation".to_string()
    } else {
        format!("margins allow for a design effect of {deff} (effective sample {n:.0})")
    };
    format!(
        "{first} {} (±{}), {second} {} (±{}), n = {}\nlead: {} points, margin of the lead: ±{} points\n{verdict}\n{assumption}\n",
        points(p1),
        points(l.margin_first),
        points(p2),
        points(l.margin_second),
        n * deff,
        points(l.lead),
        points(l.margin),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_share_of_a_thousand_at_95() {
        // n = 1,000, p = 0.5 at 95%: ±3.1 points (common practice: survey organisations quote ±3).
        let l = lead(0.5, 0.0, 1000.0, Level::P95);
        assert!(
            (l.margin_first * 100.0 - 3.1).abs() < 0.05,
            "{}",
            l.margin_first
        );
    }

    #[test]
    fn a_four_point_lead_in_a_thousand_is_a_tie() {
        // 48 versus 44 with n = 1,000 at 95%: margin of the lead about ±5.9 points, so a tie
        // (the multinomial formula above; common practice).
        let l = lead(0.48, 0.44, 1000.0, Level::P95);
        assert!((l.margin * 100.0 - 5.9).abs() < 0.05, "{}", l.margin);
        assert!(!l.beyond_margin);
        let text = describe("A", "B", 0.48, 0.44, 1000.0, Level::P95, 1.0);
        assert!(text.contains("a statistical tie"), "{text}");
        let wide = lead(0.55, 0.35, 1000.0, Level::P95);
        assert!(wide.beyond_margin);
    }

    #[test]
    fn the_lead_and_both_margins_match_an_independent_computation() {
        // Worked in Python 3 with statistics.NormalDist (its own inverse of the normal
        // distribution): z = NormalDist().inv_cdf(0.975) = 1.9599639845400536, then
        // z * sqrt((0.48 + 0.44 - 0.04**2) / 1000) = 0.05939693410375221 for the lead,
        // z * sqrt(0.48 * 0.52 / 1000) = 0.030964949889274056 and
        // z * sqrt(0.44 * 0.56 / 1000) = 0.030765816313223872 for the shares. The lead's own
        // variance without the squared difference would give 0.05945, the sum of the share
        // margins 0.06173: neither is within 1e-12.
        let l = lead(0.48, 0.44, 1000.0, Level::P95);
        let close = |got: f64, want: f64| (got / want - 1.0).abs() < 1e-12;
        assert!(close(l.lead, 0.04), "{}", l.lead);
        assert!(close(l.margin, 0.05939693410375221), "{}", l.margin);
        assert!(
            close(l.margin_first, 0.030964949889274056),
            "{}",
            l.margin_first
        );
        assert!(
            close(l.margin_second, 0.030765816313223872),
            "{}",
            l.margin_second
        );
    }

    #[test]
    fn no_lead_with_no_margin_is_not_beyond_it() {
        // "Larger than its margin" is strict (the Census Bureau's "greater than" rule for
        // significance, as in moe::differ): shares of zero give a lead of 0 and a margin of 0.
        let l = lead(0.0, 0.0, 1000.0, Level::P95);
        assert_eq!((l.lead, l.margin, l.margin_second), (0.0, 0.0, 0.0));
        assert!(!l.beyond_margin);
    }

    #[test]
    fn a_design_effect_widens_the_margin_by_its_square_root() {
        // Effective sample n / deff (Kish's design effect; common practice in survey reporting).
        let simple = lead(0.48, 0.44, 1000.0, Level::P95).margin;
        let clustered = lead(0.48, 0.44, 1000.0 / 2.0, Level::P95).margin;
        assert!((clustered / simple - 2f64.sqrt()).abs() < 1e-12);
        let text = describe("A", "B", 0.48, 0.44, 500.0, Level::P95, 2.0);
        assert!(
            text.contains("design effect of 2") && text.contains("n = 1000"),
            "{text}"
        );
    }
}
