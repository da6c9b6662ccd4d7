//! Rank intervals: which ranks each entity could hold given the uncertainty of all the values.
//!
//! Joint intervals follow Klein, Wright and Wieczorek (2020), "A joint confidence region for an
//! overall ranking of populations", Journal of the Royal Statistical Society, Series C 69(3):
//! each value's interval is widened with a critical value for K simultaneous intervals
//! (Bonferroni, or the sharper one that assumes independent estimates), and then, ranking in
//! ascending order, entity k's ranks run from 1 + #{j: upper_j < lower_k} to
//! K − #{j: lower_j > upper_k}. We use strict inequalities so that tied values with no
//! uncertainty share both ranks instead of producing an empty set (identical in probability for
//! continuous estimates). The set covers the whole true ranking with probability ≥ 1 − α.
//!
//! The simulated intervals draw every value from its normal sampling distribution, rank each
//! draw and report percentiles of each entity's rank. They are per-entity, not joint, and
//! narrower: a reader may not combine them into a statement about the whole ranking.

use crate::rank::Order;
use crate::uncertainty::normal;

/// How simultaneous intervals are widened.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
pub enum Adjustment {
    /// Assumes independent estimates: z at (1 + (1 − α)^(1/K)) / 2.
    Independence,
    /// Valid under any dependence: z at 1 − α/(2K).
    Bonferroni,
}

/// The critical value for K simultaneous two-sided intervals at joint level 1 − α.
pub fn joint_critical(k: usize, alpha: f64, adjustment: Adjustment) -> f64 {
    let k = k.max(1) as f64;
    match adjustment {
        Adjustment::Bonferroni => normal::quantile(1.0 - alpha / (2.0 * k)),
        Adjustment::Independence => normal::quantile((1.0 + (1.0 - alpha).powf(1.0 / k)) / 2.0),
    }
}

/// Joint rank intervals (low, high) for each value, given standard errors and a critical value.
pub fn joint_intervals(
    values: &[f64],
    ses: &[f64],
    critical: f64,
    order: Order,
) -> Vec<(usize, usize)> {
    let k = values.len();
    let lower: Vec<f64> = values
        .iter()
        .zip(ses)
        .map(|(v, s)| v - critical * s)
        .collect();
    let upper: Vec<f64> = values
        .iter()
        .zip(ses)
        .map(|(v, s)| v + critical * s)
        .collect();
    (0..k)
        .map(|i| {
            let below = (0..k).filter(|&j| j != i && upper[j] < lower[i]).count();
            let above = (0..k).filter(|&j| j != i && lower[j] > upper[i]).count();
            match order {
                Order::Asc => (1 + below, k - above),
                Order::Desc => (1 + above, k - below),
            }
        })
        .collect()
}

/// A small deterministic generator (SplitMix64, Steele, Lea and Flood 2014) so that a seed gives
/// the same draws on every platform.
pub struct SplitMix64(u64);

impl SplitMix64 {
    pub fn new(seed: u64) -> Self {
        SplitMix64(seed)
    }

    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform on (0, 1), never 0.
    pub fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// Standard normal by the Box–Muller transform.
    pub fn normal(&mut self) -> f64 {
        let u1 = self.uniform();
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

/// Per-entity rank percentiles from `draws` simulated rankings (nearest-rank percentiles at
/// (1 − confidence)/2 and 1 − (1 − confidence)/2).
pub fn simulated_intervals(
    values: &[f64],
    ses: &[f64],
    draws: usize,
    seed: u64,
    confidence: f64,
    order: Order,
) -> Vec<(usize, usize)> {
    let k = values.len();
    let mut rng = SplitMix64::new(seed);
    let mut ranks: Vec<Vec<usize>> = vec![Vec::with_capacity(draws); k];
    let mut drawn = vec![0.0; k];
    for _ in 0..draws.max(1) {
        for j in 0..k {
            drawn[j] = values[j] + ses[j] * rng.normal();
        }
        for i in 0..k {
            let better = (0..k)
                .filter(|&j| match order {
                    Order::Desc => drawn[j] > drawn[i],
                    Order::Asc => drawn[j] < drawn[i],
                })
                .count();
            ranks[i].push(1 + better);
        }
    }
    let tail = (1.0 - confidence) / 2.0;
    ranks
        .into_iter()
        .map(|mut r| {
            r.sort_unstable();
            let n = r.len();
            let at = |q: f64| r[((q * n as f64).ceil() as usize).clamp(1, n) - 1];
            (at(tail), at(1.0 - tail))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn critical_values_for_51_populations() {
        // Klein, Wright and Wieczorek (2020) companion material: K = 51, α = 0.10 gives about
        // 3.081 (independence) and 3.096 (Bonferroni).
        assert!((joint_critical(51, 0.10, Adjustment::Independence) - 3.081).abs() < 0.001);
        assert!((joint_critical(51, 0.10, Adjustment::Bonferroni) - 3.096).abs() < 0.001);
    }

    #[test]
    fn zero_margins_collapse_to_point_ranks() {
        let values = [5.0, 9.0, 1.0, 7.0];
        let ivs = joint_intervals(&values, &[0.0; 4], 3.0, Order::Desc);
        assert_eq!(ivs, vec![(3, 3), (1, 1), (4, 4), (2, 2)]);
        let ivs = joint_intervals(&values, &[0.0; 4], 3.0, Order::Asc);
        assert_eq!(ivs, vec![(2, 2), (4, 4), (1, 1), (3, 3)]);
    }

    #[test]
    fn overlapping_values_share_ranks() {
        let ivs = joint_intervals(&[10.0, 10.5, 20.0], &[1.0, 1.0, 1.0], 2.0, Order::Desc);
        assert_eq!(ivs, vec![(2, 3), (2, 3), (1, 1)]);
    }

    #[test]
    fn splitmix64_gives_the_published_sequence() {
        // Seed 1234567: the first outputs of Vigna's reference splitmix64.c (values recalled
        // from memory, and reproduced by a Python transcription of that C code, which agree).
        let mut generator = SplitMix64::new(1_234_567);
        let first: Vec<u64> = (0..5).map(|_| generator.next_u64()).collect();
        assert_eq!(
            first,
            [
                6_457_827_717_110_365_317,
                3_203_168_211_198_807_973,
                9_817_491_932_198_370_423,
                4_593_380_528_125_082_431,
                16_408_922_859_458_223_821,
            ]
        );
    }

    #[test]
    fn the_first_draw_is_box_muller_of_the_first_two_uniforms() {
        // Uniform = (top 53 bits + 0.5) / 2^53 of the published outputs above; Box–Muller
        // z = sqrt(-2 ln u1) cos(2π u2), worked in Python from those two outputs:
        // u1 = 0.3500795420214082, u2 = 0.17364409667091268, z = 0.6687418474759114.
        let mut generator = SplitMix64::new(1_234_567);
        assert_eq!(generator.uniform(), 0.3500795420214082);
        let z = SplitMix64::new(1_234_567).normal();
        assert!((z - 0.6687418474759114).abs() < 1e-15, "{z}");
        // One simulated ranking: entity 0 is drawn at 0 + 1·z = 0.669, entity 1 is exact. It
        // ranks first against 0 (the draw is added, not subtracted) and second against
        // z + 0.5 (the margin is scaled by z, not added to it).
        let one_draw = |other: f64| {
            simulated_intervals(&[0.0, other], &[1.0, 0.0], 1, 1_234_567, 0.9, Order::Desc)
        };
        assert_eq!(one_draw(0.0), vec![(1, 1), (2, 2)]);
        assert_eq!(one_draw(z + 0.5), vec![(2, 2), (1, 1)]);
    }

    #[test]
    fn simulated_intervals_match_an_independent_transcription() {
        // Expected values from a Python transcription of the published pieces (SplitMix64 as in
        // splitmix64.c, the top 53 bits as a uniform, Box–Muller, standard competition ranks,
        // nearest-rank percentiles at (1 − c)/2 and 1 − (1 − c)/2), written apart from this
        // code; 200 draws, seed 7.
        let values = [10.0, 10.8, 11.5, 14.0];
        let ses = [1.0, 0.6, 1.0, 0.3];
        let run = |confidence, order| simulated_intervals(&values, &ses, 200, 7, confidence, order);
        assert_eq!(run(0.9, Order::Desc), vec![(2, 4), (2, 4), (2, 4), (1, 1)]);
        assert_eq!(run(0.9, Order::Asc), vec![(1, 3), (1, 3), (1, 3), (4, 4)]);
        assert_eq!(run(0.5, Order::Desc), vec![(3, 4), (2, 3), (2, 3), (1, 1)]);
        assert_eq!(run(0.5, Order::Asc), vec![(1, 2), (2, 3), (2, 3), (4, 4)]);
    }

    #[test]
    fn intervals_that_touch_overlap() {
        // Closed intervals [v - c·se, v + c·se] that share an end point cannot be told apart,
        // so both entities may hold either rank (common practice: a confidence interval
        // includes its bounds). Here [−1, 1] and [1, 3].
        for order in [Order::Desc, Order::Asc] {
            let ivs = joint_intervals(&[0.0, 2.0], &[1.0, 1.0], 1.0, order);
            assert_eq!(ivs, vec![(1, 2), (1, 2)], "{order:?}");
        }
    }

    #[test]
    fn widening_margins_never_narrows_an_interval() {
        let values = [3.0, 4.0, 6.0, 6.5, 9.0, 12.0];
        let mut previous = joint_intervals(&values, &[0.0; 6], 2.0, Order::Desc);
        for step in 1..40 {
            let se = step as f64 * 0.1;
            let next = joint_intervals(&values, &[se; 6], 2.0, Order::Desc);
            for (p, n) in previous.iter().zip(&next) {
                assert!(n.0 <= p.0 && n.1 >= p.1, "{p:?} -> {n:?}");
            }
            previous = next;
        }
    }

    #[test]
    fn joint_region_covers_the_true_ranking_at_least_at_the_nominal_level() {
        // Simulated populations with known means: over many samples, the joint region must hold
        // every true rank at least 90% of the time (Klein et al. 2020, theorem 1).
        let means = [10.0, 10.8, 11.5, 13.0, 13.4, 15.0, 18.0, 18.5];
        let se = 0.6;
        let critical = joint_critical(means.len(), 0.10, Adjustment::Independence);
        let truth = joint_intervals(&means, &[0.0; 8], 0.0, Order::Desc);
        let mut rng = SplitMix64::new(20_201_231);
        let trials = 2000;
        let mut covered = 0;
        for _ in 0..trials {
            let sample: Vec<f64> = means.iter().map(|m| m + se * rng.normal()).collect();
            let ivs = joint_intervals(&sample, &[se; 8], critical, Order::Desc);
            if ivs
                .iter()
                .zip(&truth)
                .all(|(iv, t)| iv.0 <= t.0 && t.0 <= iv.1)
            {
                covered += 1;
            }
        }
        assert!(
            covered as f64 / trials as f64 >= 0.90,
            "coverage {covered}/{trials}"
        );
    }

    #[test]
    fn simulation_is_seeded_and_narrower_than_the_joint_region() {
        let values = [10.0, 10.5, 14.0, 20.0];
        let ses = [1.0, 1.0, 1.0, 1.0];
        let a = simulated_intervals(&values, &ses, 2000, 7, 0.90, Order::Desc);
        let b = simulated_intervals(&values, &ses, 2000, 7, 0.90, Order::Desc);
        assert_eq!(a, b);
        let joint = joint_intervals(
            &values,
            &ses,
            joint_critical(4, 0.10, Adjustment::Independence),
            Order::Desc,
        );
        for (s, j) in a.iter().zip(&joint) {
            assert!(s.0 >= j.0 && s.1 <= j.1, "simulated {s:?} joint {j:?}");
        }
        assert_eq!(a[3], (1, 1));
    }

    #[test]
    fn box_muller_draws_have_unit_variance() {
        let mut rng = SplitMix64::new(1);
        let n = 200_000;
        let draws: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
        let mean = draws.iter().sum::<f64>() / n as f64;
        let var = draws.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / n as f64;
        assert!(
            mean.abs() < 0.01 && (var - 1.0).abs() < 0.01,
            "{mean} {var}"
        );
    }
}
