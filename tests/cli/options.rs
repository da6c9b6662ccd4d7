//! Options whose paths had no test: ppp then deflate (the base currency's CPI), `--deflator`,
//! Bonferroni joint intervals from the command line, `--rank-aggregates` and `--share-unit`.
//! Each expected value is worked from its source in the comment beside it.

use crate::{num, setup};

/// Standard normal quantiles (any normal table; to 16 digits as computed by the inverse of
/// the normal distribution function): z(0.95) for 90% margins, z(0.975) for Bonferroni with
/// α = 0.10 and K = 2.
const Z_95: f64 = 1.644_853_626_951_472_2;

#[test]
fn ppp_then_deflate_uses_the_base_currency_cpi() {
    // OECD PPP FAQ worked example: 2.30 EUR in France at a PPP of 1.15 = 2.00 international
    // dollars (2020). Deflating after the conversion uses the US CPI-U (BLS, annual averages,
    // recalled from memory: 2020 = 258.811, 2023 = 304.702): 2.00 × 304.702 / 258.811.
    // France has no CPI in these tables, so an own-CPI deflation would flag no_cpi instead.
    let env = setup();
    let input = env.write("p.csv", "country,year,price\nFrance,2020,2.30\n");
    let refs = env.data("published");
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "ppp,deflate",
        "--base-year",
        "2023",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    let expected = 2.00 * 304.702 / 258.811;
    assert!(
        (num(&rows[0], "value_adjusted") - expected).abs() < 1e-9,
        "{:?}",
        rows[0]
    );
    assert!(
        run.stderr.contains("deflated with the USD CPI"),
        "{}",
        run.stderr
    );
    // An inverted CPI ratio would give 2.00 × 258.811 / 304.702 = 1.699: told apart.
    assert!((num(&rows[0], "value_adjusted") - 2.00 * 258.811 / 304.702).abs() > 0.1);

    // --deflator own with the deflation first asks for France's own CPI, which these tables
    // lack: the row is flagged, never deflated with another country's index.
    let own = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "deflate,ppp",
        "--base-year",
        "2023",
        "--deflator",
        "own",
        "--format",
        "csv",
    ]);
    assert_eq!(own.code, 0, "{}", own.stderr);
    let rows = own.rows();
    assert!(rows[0]["flags"].contains("no_cpi"), "{:?}", rows[0]);
    assert!(rows[0]["value_adjusted"].is_empty());

    // --deflator base-currency needs a conversion before it: with deflate first it is refused
    // with the fix; after ppp it gives the figure above.
    let first = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "deflate,ppp",
        "--base-year",
        "2023",
        "--deflator",
        "base-currency",
    ]);
    assert_eq!(first.code, 2, "{}", first.stderr);
    assert!(
        first.stderr.contains("put deflate after"),
        "{}",
        first.stderr
    );
    let base = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "ppp,deflate",
        "--base-year",
        "2023",
        "--deflator",
        "base-currency",
        "--format",
        "csv",
    ]);
    assert_eq!(base.code, 0, "{}", base.stderr);
    assert!((num(&base.rows()[0], "value_adjusted") - expected).abs() < 1e-9);
}

#[test]
fn bonferroni_from_the_command_line_widens_joint_intervals_more_than_independence() {
    // Two estimates 3.91 apart, standard errors 1 each, 90% joint intervals over K = 2:
    // independence: z at (1 + 0.9^(1/2)) / 2 = 0.974342 → z ≈ 1.9494, so the intervals
    // (±1.9494) are 3.899 wide together and do not overlap; Bonferroni: z at 1 − 0.10/4 =
    // 0.975 → z = 1.959964, 3.920 together, and they overlap. (Bonferroni inequality and
    // Šidák's independence correction: common practice in multiple comparisons.)
    let env = setup();
    let input = env.write(
        "est.csv",
        "country,year,value,se\nFrance,2020,100,1\nChile,2020,103.91,1\n",
    );
    let run_with = |adjustment: &str| {
        let run = env.run(&[
            "adjust",
            &input,
            "--currency-code",
            "XXX",
            "--se",
            "se",
            "--rank-intervals",
            "joint",
            "--joint-adjustment",
            adjustment,
            "--format",
            "csv",
        ]);
        assert_eq!(run.code, 0, "{}", run.stderr);
        run.rows()
    };
    let independent = run_with("independence");
    assert_eq!(independent[1]["rank_adjusted_low"], "1");
    assert_eq!(independent[1]["rank_adjusted_high"], "1");
    let bonferroni = run_with("bonferroni");
    assert_eq!(bonferroni[1]["rank_adjusted_low"], "1");
    assert_eq!(bonferroni[1]["rank_adjusted_high"], "2");
    assert_eq!(bonferroni[0]["rank_adjusted_low"], "1");
}

#[test]
fn aggregates_are_ranked_only_when_asked() {
    // Aggregates (here the World) are left out of country rankings unless asked (common
    // practice of international data banks, which list them apart).
    let env = setup();
    let input = env.write(
        "c.csv",
        "country,year,value\nWorld,2020,50\nFrance,2020,30\nChile,2020,20\n",
    );
    let run = |extra: &[&str]| {
        let mut argv = vec![
            "adjust",
            &input,
            "--currency-code",
            "XXX",
            "--format",
            "csv",
        ];
        argv.extend_from_slice(extra);
        let run = env.run(&argv);
        assert_eq!(run.code, 0, "{}", run.stderr);
        run.rows()
    };
    let apart = run(&[]);
    assert!(apart[0]["flags"].contains("aggregate"));
    assert!(apart[0]["rank_adjusted"].is_empty());
    assert_eq!(apart[1]["rank_adjusted"], "1");
    let ranked = run(&["--rank-aggregates"]);
    assert_eq!(ranked[0]["rank_adjusted"], "1");
    assert_eq!(ranked[1]["rank_adjusted"], "2");
    assert_eq!(ranked[2]["rank_adjusted"], "3");
}

#[test]
fn share_units_percent_and_fraction_give_the_same_margin() {
    // Margin of a survey share from its sample size: z × sqrt(p (1 − p) / n) (simple random
    // sampling; the standard error of a proportion in any survey-sampling text, e.g. the ACS
    // General Handbook, ch. 8). p = 0.48, n = 1000, 90%: 1.6448536 × 0.0157987 = 0.0259866.
    let env = setup();
    let expected = Z_95 * (0.48f64 * 0.52 / 1000.0).sqrt();
    for (unit, share, scale) in [("percent", "48", 100.0), ("fraction", "0.48", 1.0)] {
        let input = env.write(
            "s.csv",
            &format!("country,year,share,n\nFrance,2020,{share},1000\nChile,2020,{share},1000\n"),
        );
        let run = env.run(&[
            "adjust",
            &input,
            "--sample-size",
            "n",
            "--share-unit",
            unit,
            "--margin-confidence",
            "90",
            "--format",
            "csv",
        ]);
        assert_eq!(run.code, 0, "{unit}: {}", run.stderr);
        let rows = run.rows();
        assert!(
            (num(&rows[0], "moe_adjusted") - expected * scale).abs() < 1e-12 * scale,
            "{unit}: {:?}",
            rows[0]
        );
        // Shares are not money: two countries' shares rank together, equal shares tie.
        assert_eq!(rows[0]["rank_adjusted"], "1", "{unit}: {:?}", rows[0]);
        assert_eq!(rows[1]["rank_adjusted"], "1");
    }
    // A fraction given as a percent is refused or flagged, never read as 48 times too big.
    let input = env.write("bad.csv", "country,year,share,n\nFrance,2020,48,1000\n");
    let run = env.run(&[
        "adjust",
        &input,
        "--sample-size",
        "n",
        "--share-unit",
        "fraction",
        "--margin-confidence",
        "90",
        "--format",
        "csv",
    ]);
    assert!(
        run.code == 2 || run.rows()[0]["moe_adjusted"].is_empty(),
        "{}",
        run.stdout
    );
}

#[test]
fn write_columns_keeps_the_core_or_a_list_with_the_same_cells() {
    // Penn World Table figures (tests/data/world): the core set and a list hold exactly the
    // cells of the full output, in its order; the summary says which set was written.
    let env = setup();
    let world = env.repo.join("tests/data/world");
    let input = world.join("gdp-long-titled.csv").display().to_string();
    let refs = world.join("wb-bulk").display().to_string();
    let run = |extra: &[&str]| {
        let mut argv = vec![
            "adjust",
            &input,
            "--refs",
            &refs,
            "--steps",
            "ppp,per-capita",
            "--format",
            "csv",
        ];
        argv.extend_from_slice(extra);
        let run = env.run(&argv);
        assert_eq!(run.code, 0, "{}", run.stderr);
        run
    };
    let all = run(&[]);
    let core = run(&["--write-columns", "core"]);
    assert!(
        core.stderr.contains("columns: the core set"),
        "{}",
        core.stderr
    );
    let header = core.stdout.lines().next().unwrap();
    assert_eq!(
        header,
        "row_id,entity_input,entity_code,entity_name,year,group,value,value_baseline,value_adjusted,rank_baseline,rank_adjusted,rank_shift,flags"
    );
    let (all_rows, core_rows) = (all.rows(), core.rows());
    assert_eq!(all_rows.len(), 120);
    for (a, c) in all_rows.iter().zip(&core_rows) {
        for (name, cell) in c {
            assert_eq!(&a[name], cell, "{name}");
        }
    }
    let list = run(&["--write-columns", "value_adjusted,entity_code"]);
    assert_eq!(
        list.stdout.lines().next().unwrap(),
        "entity_code,value_adjusted"
    );
    let streamed = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "ppp,per-capita",
        "--write-columns",
        "core",
        "--streaming",
        "-o",
        "s.csv",
    ]);
    assert_eq!(streamed.code, 0, "{}", streamed.stderr);
    assert_eq!(
        std::fs::read_to_string(env.path("s.csv")).unwrap(),
        core.stdout
    );
    let bad = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "ppp",
        "--write-columns",
        "nope",
        "-o",
        "bad.csv",
    ]);
    assert_eq!(bad.code, 2);
    assert!(
        bad.stderr
            .contains("\"nope\", which this run does not write"),
        "{}",
        bad.stderr
    );
    assert!(!env.path("bad.csv").exists());
}

#[test]
fn per_capita_margins_with_and_without_an_uncertain_population() {
    // ACS General Handbook (U.S. Census Bureau), ch. 8, worked by hand: X = 500 with SE 20,
    // population 2000 with SE 50, per 1000 people, margins written at 90% (z = 1.6448536...).
    // ratio:      1000 · sqrt(20² + 0.25²·50²) / 2000
    // proportion: 1000 · sqrt(20² − 0.25²·50²) / 2000 (X counts people within the population)
    // exact population: 1000 · 20 / 2000, for ratios and proportions alike.
    let env = setup();
    let input = env.write("x.csv", "country,year,value,se\nFrance,2020,500,20\n");
    for (name, se_field) in [("uncertain", r#","se_field":"se""#), ("exact", "")] {
        let dir = env.path(name);
        std::fs::create_dir(&dir).unwrap();
        std::fs::write(
            dir.join("population.csv"),
            "country,year,value,se\nFrance,2020,2000,50\n",
        )
        .unwrap();
        std::fs::write(
            dir.join("datapackage.json"),
            format!(r#"{{"resources":[{{"name":"pop","path":"population.csv","kind":"population"{se_field}}}]}}"#),
        )
        .unwrap();
    }
    let moe = |refs: &str, proportion: bool| {
        let refs = env.path(refs).display().to_string();
        let mut argv = vec![
            "adjust",
            &input,
            "--refs",
            &refs,
            "--steps",
            "per-capita",
            "--per",
            "1000",
            "--currency-code",
            "XXX",
            "--se",
            "se",
            "--format",
            "csv",
        ];
        if proportion {
            argv.push("--proportion");
        }
        let run = env.run(&argv);
        assert_eq!(run.code, 0, "{}", run.stderr);
        let rows = run.rows();
        assert!((num(&rows[0], "value_adjusted") - 250.0).abs() < 1e-12);
        num(&rows[0], "moe_adjusted")
    };
    let close = |got: f64, want: f64| assert!((got - want).abs() < 1e-9 * want, "{got} vs {want}");
    close(
        moe("uncertain", false),
        Z_95 * 1000.0 * 556.25f64.sqrt() / 2000.0,
    );
    close(
        moe("uncertain", true),
        Z_95 * 1000.0 * 243.75f64.sqrt() / 2000.0,
    );
    close(moe("exact", true), Z_95 * 1000.0 * 20.0 / 2000.0);
    close(moe("exact", false), Z_95 * 1000.0 * 20.0 / 2000.0);
}

#[test]
fn the_methods_note_explains_each_step_that_ran() {
    // The note's plain sentences come from the step registry; the deflation sentence names the
    // index actually used, and cpi_ratio is CPI[base] / CPI[year] (BLS CPI-U, recalled from
    // memory: 2023 = 304.702, 2020 = 258.811, 2000 = 172.2).
    let env = setup();
    let refs = env.data("published");
    let fr = env.write("fr.csv", "country,year,price\nFrance,2020,2.30\n");
    let us = env.write("us.csv", "country,year,price\nUnited States,2000,100\n");
    let note = |input: &str, steps: &str, extra: &[&str]| {
        let mut argv = vec![
            "adjust",
            input,
            "--refs",
            &refs,
            "--steps",
            steps,
            "--base-year",
            "2023",
            "--format",
            "methods",
        ];
        argv.extend_from_slice(extra);
        let run = env.run(&argv);
        assert_eq!(run.code, 0, "{}", run.stderr);
        run.stdout
    };
    let market = note(&fr, "market", &[]);
    assert!(
        market.contains("converted from each country's currency to USD at market exchange rates"),
        "{market}"
    );
    let base = note(&fr, "ppp,deflate", &["--deflator", "base-currency"]);
    assert!(
        base.contains("with the USD consumer price index, after conversion at each year's rate"),
        "{base}"
    );
    let csv = |input: &str, steps: &str| {
        let run = env.run(&[
            "adjust",
            input,
            "--refs",
            &refs,
            "--steps",
            steps,
            "--base-year",
            "2023",
            "--format",
            "csv",
        ]);
        assert_eq!(run.code, 0, "{}", run.stderr);
        num(&run.rows()[0], "cpi_ratio")
    };
    // The entity's own CPI (before any conversion) and the base currency's (after one).
    assert!((csv(&us, "deflate") - 304.702 / 172.2).abs() < 1e-12);
    assert!((csv(&fr, "ppp,deflate") - 304.702 / 258.811).abs() < 1e-12);
}

#[test]
fn per_income_margins_and_rules_whatever_the_currency_route() {
    // A share of income does not depend on the currency it is computed in: 500 (SE 20) against
    // an income of 2000 (SE 50) in local currency, reached directly, through international
    // dollars (PPP 1.15, the OECD FAQ's France figure) or through US dollars (fixture rate
    // 0.92), and with the income table itself in international dollars. ACS General Handbook,
    // ch. 8 (ratio of two estimates), worked by hand: share 0.25, SE sqrt(20² + 0.25²·50²) /
    // 2000, margin at 90% = z · SE; days of income: 365 times both.
    let env = setup();
    let input = env.write("x.csv", "country,year,value,se\nFrance,2020,500,20\n");
    for (name, basis, income, se) in [
        ("lcu", "lcu", 2000.0, 50.0),
        ("intl", "intl", 2000.0 / 1.15, 50.0 / 1.15),
    ] {
        let dir = env.path(name);
        std::fs::create_dir(&dir).unwrap();
        std::fs::write(dir.join("ppp.csv"), "country,2020\nFrance,1.15\n").unwrap();
        std::fs::write(dir.join("fx.csv"), "country,2020\nFrance,0.92\n").unwrap();
        std::fs::write(
            dir.join("income.csv"),
            format!("country,year,value,se\nFrance,2020,{income},{se}\n"),
        )
        .unwrap();
        std::fs::write(
            dir.join("datapackage.json"),
            format!(
                r#"{{"resources":[{{"name":"ppp","path":"ppp.csv","kind":"ppp"}},{{"name":"fx","path":"fx.csv","kind":"fx"}},{{"name":"income","path":"income.csv","kind":"income","basis":"{basis}","se_field":"se"}}]}}"#
            ),
        )
        .unwrap();
    }
    let se = 556.25f64.sqrt() / 2000.0;
    for refs in ["lcu", "intl"] {
        for steps in ["per-income", "ppp,per-income", "market,per-income"] {
            for (income_as, scale) in [("share", 1.0), ("days", 365.0)] {
                let refs_dir = env.path(refs).display().to_string();
                let run = env.run(&[
                    "adjust",
                    &input,
                    "--refs",
                    &refs_dir,
                    "--steps",
                    steps,
                    "--se",
                    "se",
                    "--income-as",
                    income_as,
                    "--format",
                    "csv",
                ]);
                assert_eq!(run.code, 0, "{refs} {steps}: {}", run.stderr);
                let row = &run.rows()[0];
                let what = format!("{refs} {steps} {income_as}");
                let value = num(row, "value_per_income");
                assert!(
                    (value - 0.25 * scale).abs() < 1e-9 * scale,
                    "{what}: {value}"
                );
                let moe = num(row, "moe_adjusted");
                let want = Z_95 * se * scale;
                assert!((moe - want).abs() < 1e-9 * want, "{what}: {moe} vs {want}");
            }
        }
    }
    // Per-capita figures per person may be compared with income per person; per 1000 may not.
    let refs = env.path("lcu").display().to_string();
    let pop = env.path("lcu/population.csv");
    std::fs::write(&pop, "country,2020\nFrance,4\n").unwrap();
    let catalog = std::fs::read_to_string(env.path("lcu/datapackage.json")).unwrap();
    std::fs::write(
        env.path("lcu/datapackage.json"),
        catalog.replace(
            r#""resources":["#,
            r#""resources":[{"name":"pop","path":"population.csv","kind":"population"},"#,
        ),
    )
    .unwrap();
    let per_person = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "per-capita,per-income",
        "--format",
        "csv",
    ]);
    assert_eq!(per_person.code, 0, "{}", per_person.stderr);
    // 500 / 4 people = 125 per person, against 2000 per person: 0.0625.
    assert!((num(&per_person.rows()[0], "value_per_income") - 0.0625).abs() < 1e-12);
    let per_thousand = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "per-capita,per-income",
        "--per",
        "1000",
    ]);
    assert_eq!(per_thousand.code, 2);
    assert!(
        per_thousand.stderr.contains("use --per 1 with per-income"),
        "{}",
        per_thousand.stderr
    );
    // The note says which comparison was made.
    let note = |income_as: &str| {
        env.run(&[
            "adjust",
            &input,
            "--refs",
            &refs,
            "--steps",
            "per-income",
            "--income-as",
            income_as,
            "--format",
            "methods",
        ])
        .stdout
    };
    assert!(note("share").contains("as a share of a year's income"));
    assert!(note("days").contains("as the number of days of income they cost"));
}
