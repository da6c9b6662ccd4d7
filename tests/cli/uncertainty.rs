//! Margins of error through the steps, rank intervals, ties and poll leads, end to end.

use crate::{assert_golden, num, setup, Env};

/// A reference folder whose population table carries 90% margins (long layout, margin_field).
fn population_with_margins(env: &Env, population: &str, moe: &str) -> String {
    let refs = env.path("refs");
    std::fs::create_dir_all(&refs).unwrap();
    std::fs::write(
        refs.join("datapackage.json"),
        r#"{"resources":[{"name":"pop","path":"pop.csv","kind":"population","layout":"long",
            "entity_field":"country","year_field":"year","value_field":"people","margin_field":"moe","margin_confidence":90}]}"#,
    )
    .unwrap();
    std::fs::write(
        refs.join("pop.csv"),
        format!("country,year,people,moe\nUnited States,2020,\"{population}\",\"{moe}\"\n"),
    )
    .unwrap();
    refs.display().to_string()
}

#[test]
fn proportion_with_an_uncertain_population_matches_the_acs_handbook() {
    // ACS General Handbook (2018/2020), ch. 8: 203,119 ± 5,070 of 630,498 ± 831 (90%) is a
    // proportion of 0.322 ± 0.008.
    let env = setup();
    let refs = population_with_margins(&env, "630,498", "831");
    let input = env.write(
        "count.csv",
        "country,year,people,moe\nUnited States,2020,\"203,119\",\"5,070\"\n",
    );
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "per-capita",
        "--proportion",
        "--moe",
        "moe",
        "--margin-confidence",
        "90",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let row = &run.rows()[0];
    assert!(
        (num(row, "value_adjusted") - 0.322).abs() < 0.0005,
        "{row:?}"
    );
    assert!((num(row, "moe_adjusted") - 0.008).abs() < 0.0005, "{row:?}");
    assert!(row.contains_key("population_se"));
}

#[test]
fn ratio_with_an_uncertain_denominator_uses_the_ratio_form() {
    // Worked by the ACS ratio formula: 226,840 ± 5,556 / 203,119 ± 5,070 = 1.117 ± 0.039.
    let env = setup();
    let refs = population_with_margins(&env, "203,119", "5,070");
    let input = env.write(
        "count.csv",
        "country,year,value,moe\nUnited States,2020,\"226,840\",\"5,556\"\n",
    );
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "per-capita",
        "--moe",
        "moe",
        "--margin-confidence",
        "90",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let row = &run.rows()[0];
    assert!(
        (num(row, "value_adjusted") - 1.117).abs() < 0.0005,
        "{row:?}"
    );
    assert!((num(row, "moe_adjusted") - 0.039).abs() < 0.0005, "{row:?}");
}

#[test]
fn margins_scale_with_exact_factors_and_convert_between_levels() {
    // Scaling by an exact factor scales the margin by the same factor; MOE95 = MOE90 × 1.960/1.645
    // (ACS General Handbook, ch. 8).
    let env = setup();
    let input = env.write(
        "prices.csv",
        "country,year,price,moe\nFrance,2020,2.30,0.10\nUnited States,2020,2.00,0.05\n",
    );
    let refs = env.data("published");
    let at90 = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "ppp",
        "--moe",
        "moe",
        "--margin-confidence",
        "90",
        "--format",
        "csv",
    ]);
    assert_eq!(at90.code, 0, "{}", at90.stderr);
    let rows = at90.rows();
    assert!((num(&rows[0], "moe_adjusted") - 0.10 / 1.15).abs() < 1e-12);
    assert!((num(&rows[0], "ci_low") - (2.0 - 0.10 / 1.15)).abs() < 1e-12);
    let se = env.write("se.csv", "country,year,price,se\nFrance,2020,2.30,0.10\n");
    let at95 = env.run(&[
        "adjust",
        &se,
        "--refs",
        &refs,
        "--steps",
        "ppp",
        "--se",
        "se",
        "--margin-confidence",
        "95",
        "--format",
        "csv",
    ]);
    assert!(
        (num(&at95.rows()[0], "moe_adjusted") - 0.10 / 1.15 * 1.959_963_984_540_054).abs() < 1e-9
    );
}

#[test]
fn a_margin_without_its_level_is_refused_and_asymmetric_intervals_are_flagged() {
    let env = setup();
    let input = env.write("in.csv", "country,year,value,moe\nFrance,2020,10,1\n");
    let run = env.run(&["adjust", &input, "--moe", "moe"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("--margin-confidence"), "{}", run.stderr);
    let ci = env.write(
        "ci.csv",
        "country,year,value,lo,hi\nFrance,2020,10,8,13\nChile,2020,20,18,22\n",
    );
    let run = env.run(&[
        "adjust",
        &ci,
        "--ci-low",
        "lo",
        "--ci-high",
        "hi",
        "--margin-confidence",
        "95",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert!(rows[0]["flags"].contains("asymmetric_ci"));
    assert!(
        (num(&rows[0], "moe_adjusted") - 3.0).abs() < 1e-9,
        "the larger half is kept"
    );
    let wide = env.write("wide.csv", "country,2020\nFrance,1\n");
    let run = env.run(&["adjust", &wide, "--moe", "x", "--margin-confidence", "90"]);
    assert_eq!(run.code, 2);
}

#[test]
fn survey_shares_ties_and_rank_intervals() {
    // Shares with n: SE = sqrt(p(1 − p)/n) (binomial; common practice). 48% and 46% of 1,000
    // differ by far less than their margins: a statistical tie; 30% is clearly below both.
    let env = setup();
    let input = env.write(
        "poll.csv",
        "country,year,share,n\nFrance,2024,48,1000\nChile,2024,46,1000\nPeru,2024,30,1000\n",
    );
    let run = env.run(&[
        "adjust",
        &input,
        "--sample-size",
        "n",
        "--margin-confidence",
        "95",
        "--format",
        "csv",
        "--currency-code",
        "XXX",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert!(
        (num(&rows[0], "moe_adjusted")
            - 1.959_963_984_540_054 * 100.0 * (0.48f64 * 0.52 / 1000.0).sqrt())
        .abs()
            < 1e-9
    );
    assert_eq!(rows[0]["tied_with"], "CHL");
    assert_eq!(rows[1]["tied_with"], "FRA");
    assert_eq!(rows[2]["tied_with"], "");
    assert_eq!(
        (
            rows[0]["rank_adjusted_low"].as_str(),
            rows[0]["rank_adjusted_high"].as_str()
        ),
        ("1", "2")
    );
    assert_eq!(
        (
            rows[2]["rank_adjusted_low"].as_str(),
            rows[2]["rank_adjusted_high"].as_str()
        ),
        ("3", "3")
    );
}

#[test]
fn simulated_intervals_are_reproducible_with_a_seed() {
    let env = setup();
    let input = env.write("in.csv", "country,year,value,se\nFrance,2020,10,1\nChile,2020,11,1\nPeru,2020,15,1\nBolivia,2020,9,2\n");
    let args = [
        "adjust",
        &input,
        "--currency-code",
        "XXX",
        "--se",
        "se",
        "--rank-intervals",
        "simulate",
        "--draws",
        "500",
        "--seed",
        "42",
        "--format",
        "csv",
    ];
    let a = env.run(&args);
    let b = env.run(&args);
    assert_eq!(a.code, 0, "{}", a.stderr);
    assert_eq!(a.stdout, b.stdout);
    assert!(a.stderr.contains("not a joint region"), "{}", a.stderr);
    // The intervals themselves, worked from the normal model: Peru (15 ± 1) is above Chile
    // (11 ± 1) unless a draw of their difference, N(4, √2), falls below 0: z = 2.83,
    // probability 0.0023, so Peru's rank is 1 in all but about one of 500 draws: (1, 1).
    // Bolivia (9 ± 2) falls below France (10 ± 1) with probability Φ(1/√5) = 0.67 and below
    // Chile with Φ(2/√5) = 0.81: last in most draws, so its range ends at 4 and starts
    // above 1. France and Chile overlap (difference N(1, √2)): France's range spans ranks.
    let rows = a.rows();
    let range = |i: usize| {
        (
            rows[i]["rank_adjusted_low"].parse::<u32>().unwrap(),
            rows[i]["rank_adjusted_high"].parse::<u32>().unwrap(),
            rows[i]["rank_adjusted"].parse::<u32>().unwrap(),
        )
    };
    assert_eq!(range(2), (1, 1, 1), "Peru");
    let (low, high, rank) = range(3);
    assert_eq!((high, rank), (4, 4), "Bolivia");
    assert!((2..=4).contains(&low), "Bolivia low {low}");
    let (low, high, rank) = range(0);
    assert!(
        low < high && low <= rank && rank <= high,
        "France {low}-{high}"
    );
    assert!(low >= 2, "France never outranks Peru: {low}");
}

#[test]
fn demo_with_margins_separates_real_shifts_from_noise() {
    let env = setup();
    let run = env.run(&["demo", "--margins"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_golden("demo-margins-table.txt", &run.stdout);
    let csv = env.run(&["demo", "--margins", "--format", "csv"]);
    let rows = csv.rows();
    // Worked by hand from the demo's (invented) tables: Bolqueth spends 877 ± 35.1 (90%) in
    // 2023; at its PPP of 10.2 that is 85.98 ± 3.441 international dollars, and at its market
    // rate of 8.5, 103.18 ± 4.129 US dollars. An exact factor scales the margin by itself (ACS
    // General Handbook, ch. 8).
    let bolqueth = rows.iter().find(|r| r["entity_code"] == "XAB").unwrap();
    let num = |c: &str| bolqueth[c].parse::<f64>().unwrap();
    assert!((num("value_adjusted") - 877.0 / 10.2).abs() < 1e-9);
    assert!((num("moe_adjusted") - 35.1 / 10.2).abs() < 1e-9);
    assert!((num("value_baseline") - 877.0 / 8.5).abs() < 1e-9);
    assert!((num("moe_baseline") - 35.1 / 8.5).abs() < 1e-9);
    let moved: Vec<_> = rows.iter().filter(|r| r["rank_shift"] != "0").collect();
    assert!(
        moved
            .iter()
            .any(|r| r["flags"].contains("within_uncertainty")),
        "some shifts are noise"
    );
    assert!(
        moved
            .iter()
            .any(|r| !r["flags"].contains("within_uncertainty")),
        "some shifts are real"
    );
    let json = env.run(&["demo", "--margins", "--format", "json"]);
    let parsed: serde_json::Value = serde_json::from_str(&json.stdout).unwrap();
    assert!(parsed["rows"][0]["rank_adjusted_high"].is_number());
    assert!(parsed["rows"][0]["moe_adjusted"].is_number());
}

#[test]
fn poll_lead_inside_its_margin_is_a_tie() {
    // 48 versus 44 with n = 1,000 at 95%: the margin of the lead is about ±5.9 points
    // (multinomial variance of a difference of shares; common practice), so it is a tie.
    let env = setup();
    let run = env.run(&["lead", "48", "44", "-n", "1000", "--names", "Ana,Ben"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stdout.contains("margin of the lead: ±5.9 points"),
        "{}",
        run.stdout
    );
    assert!(run.stdout.contains("a statistical tie"), "{}", run.stdout);
    assert!(run.stdout.contains("Ana 48.0 (±3.1)"), "{}", run.stdout);
    let clear = env.run(&["lead", "55", "35", "-n", "1000"]);
    assert!(
        clear.stdout.contains("larger than its margin"),
        "{}",
        clear.stdout
    );
    let bad = env.run(&["lead", "70", "40", "-n", "1000"]);
    assert_eq!(bad.code, 2);
}

#[test]
fn the_renamed_margin_flag_works_and_the_old_one_says_it_was_renamed() {
    let env = setup();
    let input = env.write(
        "s.csv",
        "country,year,value,m\nFrance,2020,10,1\nChile,2020,20,1\n",
    );
    let new = env.run(&[
        "adjust",
        &input,
        "--moe",
        "m",
        "--margin-confidence",
        "90",
        "--currency-code",
        "XXX",
        "--format",
        "csv",
    ]);
    assert_eq!(new.code, 0, "{}", new.stderr);
    let old = env.run(&[
        "adjust",
        &input,
        "--moe",
        "m",
        "--moe-level",
        "90",
        "--currency-code",
        "XXX",
        "--format",
        "csv",
    ]);
    assert_eq!(old.code, 0, "{}", old.stderr);
    assert_eq!(old.stdout, new.stdout);
    assert!(
        old.stderr
            .contains("--moe-level was renamed --margin-confidence"),
        "{}",
        old.stderr
    );
    assert!(!new.stderr.contains("renamed"), "{}", new.stderr);
}
