//! `levelfield audit` on tables built from the demo scenario: a clean control (figures rounded
//! to 0, 1 and 2 decimals) and a table with one of each known fault.

use crate::{setup, Env, Run};

const CLAIMS: &[&str] = &[
    "--value",
    "budget",
    "--claim",
    "intl=budget_intl",
    "--claim",
    "usd=budget_usd",
    "--claim",
    "per-capita=budget_per_1000",
    "--per",
    "1000",
    "--claim",
    "rank=rank_intl",
];

fn audit(env: &Env, file: &str, extra: &[&str]) -> Run {
    let input = env.data(&format!("audit/{file}"));
    let refs = env.repo.join("reference-tables").display().to_string();
    let aliases = env.data("audit/aliases.csv");
    let mut args = vec![
        "audit",
        input.as_str(),
        "--refs",
        refs.as_str(),
        "--aliases",
        aliases.as_str(),
    ];
    args.extend_from_slice(CLAIMS);
    args.extend_from_slice(extra);
    env.run(&args)
}

#[test]
fn a_clean_table_has_no_findings_and_exits_zero() {
    let env = setup();
    let run = audit(&env, "clean.csv", &[]);
    assert_eq!(run.code, 0, "{}{}", run.stdout, run.stderr);
    assert!(
        run.stdout
            .contains("48 claimed figure(s) checked; 0 error(s), 0 warning(s), 0 caution(s)"),
        "{}",
        run.stdout
    );
    assert!(run.stdout.contains("No findings"));
}

#[test]
fn every_planted_fault_is_found_with_its_cause_and_the_exit_code_is_one() {
    let env = setup();
    let run = audit(&env, "faulty.csv", &["--format", "json"]);
    assert_eq!(run.code, 1, "{}", run.stderr);
    let report: serde_json::Value = serde_json::from_str(&run.stdout).unwrap();
    let findings = report["findings"].as_array().unwrap();
    let cause_of = |entity: &str, check: &str| -> String {
        findings
            .iter()
            .find(|f| f["entity"] == entity && f["check"] == check)
            .map(|f| f["cause"].as_str().unwrap().to_string())
            .unwrap_or_else(|| panic!("no {check} finding for {entity}: {findings:#?}"))
    };
    assert!(cause_of("Bolqueth", "intl").contains("market exchange rate was used where a PPP"));
    assert!(cause_of("Celvaran", "intl").contains("PPP of 2022 was used instead of 2023"));
    assert!(cause_of("Dyrnolva", "per-capita")
        .contains("per 100,000 people but the table says per 1,000"));
    assert!(cause_of("Fulvessa", "intl").contains("matches the recomputation for Glumveth"));
    assert!(cause_of("Glumveth", "intl").contains("matches the recomputation for Fulvessa"));
    assert!(cause_of("Tarvossin Sea", "rank").contains("aggregate but is ranked"));
    // Rows without a planted fault have no claim finding.
    for clean in [
        "Azrevny",
        "Ezvandre",
        "Hestravoy",
        "Ismolvane",
        "Kazvorrel",
        "Luvrandis",
    ] {
        assert!(
            !findings.iter().any(|f| f["entity"] == clean),
            "{clean}: {findings:#?}"
        );
    }
    let text = audit(&env, "faulty.csv", &[]);
    assert!(text.stdout.contains("ERROR ("), "{}", text.stdout);
    let memo = audit(&env, "faulty.csv", &["--format", "md"]);
    assert!(memo.stdout.starts_with("# Audit memo"), "{}", memo.stdout);
    assert!(memo.stdout.contains("| line | entity | check |"));
}

/// A small reference folder: PPP 0.2 for France (a price level that multiplies rounding by 5),
/// CPI for 2020 and 2023.
fn small_refs(env: &Env) -> String {
    let refs = env.path("refs");
    std::fs::create_dir_all(&refs).unwrap();
    std::fs::write(
        refs.join("datapackage.json"),
        r#"{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"},{"name":"c","path":"cpi.csv","kind":"cpi"}]}"#,
    )
    .unwrap();
    std::fs::write(
        refs.join("ppp.csv"),
        "country,2019,2020\nFrance,0.2,0.2\nChile,400,420\n",
    )
    .unwrap();
    std::fs::write(
        refs.join("cpi.csv"),
        "country,2020,2023\nFrance,100,120\nChile,100,130\n",
    )
    .unwrap();
    refs.display().to_string()
}

/// The findings of one check in a json audit report, in the report's order.
fn findings_of_check(run: &Run, check: &str) -> Vec<serde_json::Value> {
    let report: serde_json::Value = serde_json::from_str(&run.stdout)
        .unwrap_or_else(|e| panic!("{e}: {}{}", run.stdout, run.stderr));
    report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["check"] == check)
        .cloned()
        .collect()
}

#[test]
fn rounding_tolerance_follows_both_the_claim_and_the_raw_figure() {
    // A raw figure rounded to whole units (±0.5) divided by a PPP of 0.2 may honestly be off by
    // 2.5 units, plus half a unit of the claim's own last digit (common practice in statistical
    // publishing, no source).
    let env = setup();
    let refs = small_refs(&env);
    let within = env.write(
        "within.csv",
        "country,year,value,intl\nFrance,2020,100,502.5\n",
    );
    let run = env.run(&["audit", &within, "--refs", &refs, "--claim", "intl=intl"]);
    assert_eq!(run.code, 0, "{}", run.stdout);
    let beyond = env.write(
        "beyond.csv",
        "country,year,value,intl\nFrance,2020,100,502.7\n",
    );
    let run = env.run(&["audit", &beyond, "--refs", &refs, "--claim", "intl=intl"]);
    assert_eq!(run.code, 1, "{}", run.stdout);
}

#[test]
fn nominal_as_real_points_as_percent_mixed_years_and_shares() {
    let env = setup();
    let refs = small_refs(&env);
    // Real 2023 prices claimed, but the nominal figure was copied.
    let real = env.write("real.csv", "country,year,value,real\nFrance,2020,100,100\n");
    let run = env.run(&[
        "audit",
        &real,
        "--refs",
        &refs,
        "--claim",
        "real=real",
        "--base-year",
        "2023",
    ]);
    assert_eq!(run.code, 1);
    assert!(
        run.stdout.contains("nominal figures are labelled as real"),
        "{}",
        run.stdout
    );
    // A rate of 10% rising to 12%: +20% change, or +2 points mislabelled as percent.
    let change = env.write(
        "change.csv",
        "country,year,value,change\nChile,2019,10,..\nChile,2020,12,2\n",
    );
    let run = env.run(&[
        "audit",
        &change,
        "--refs",
        &refs,
        "--claim",
        "change=change",
    ]);
    assert!(
        run.stdout
            .contains("percentage points are given as a percent change"),
        "{}",
        run.stdout
    );
    // The first year has no claim (".."), the second is checked: one claim.
    assert!(
        run.stdout.contains("2 row(s), 1 claimed figure(s) checked"),
        "{}",
        run.stdout
    );
    // A latest-year cross-section mixing 2019 and 2020, with shares that do not add to 100.
    let mixed = env.write(
        "mixed.csv",
        "country,year,value,share\nFrance,2019,30,30\nChile,2020,70,60\n",
    );
    let run = env.run(&[
        "audit",
        &mixed,
        "--refs",
        &refs,
        "--claim",
        "share=share",
        "--fail-on",
        "warning",
    ]);
    assert_eq!(run.code, 1);
    assert!(
        run.stdout
            .contains("mixes figures from different years (2019, 2020)"),
        "{}",
        run.stdout
    );
    assert!(
        run.stdout.contains("add up to 90, not 100"),
        "{}",
        run.stdout
    );
    assert!(
        run.stdout.contains("2 row(s), 2 claimed figure(s) checked"),
        "{}",
        run.stdout
    );
}

#[test]
fn provenance_notes_are_cautions_and_only_fail_when_asked() {
    let env = setup();
    let refs = small_refs(&env);
    let input = env.write(
        "notes.csv",
        "country,year,value,intl,n,source,scope\nFrance,2020,100,500,40,,capital city only\nChile,2020,4200,10,900,Survey A,national\n",
    );
    let args = [
        "audit",
        &input,
        "--refs",
        &refs,
        "--claim",
        "intl=intl",
        "--note-cols",
        "n=n,source=source,coverage=scope",
    ];
    let run = env.run(&args);
    assert_eq!(run.code, 0, "{}", run.stdout);
    assert!(run.stdout.contains("CAUTION (3)"), "{}", run.stdout);
    assert!(run.stdout.contains("a sample of 40, below 100"));
    assert!(run.stdout.contains("no source is given"));
    assert!(run
        .stdout
        .contains("\"capital city only\" stands for the whole of France"));
    let mut strict = args.to_vec();
    strict.extend(["--fail-on", "caution"]);
    assert_eq!(env.run(&strict).code, 1);
}

#[test]
fn header_words_suggest_claims_and_the_report_says_so() {
    let env = setup();
    let refs = small_refs(&env);
    let input = env.write(
        "h.csv",
        "country,year,value,Fee (PPP $)\nFrance,2020,100,500\n",
    );
    let run = env.run(&["audit", &input, "--refs", &refs, "--value", "value"]);
    assert_eq!(run.code, 0, "{}{}", run.stdout, run.stderr);
    assert!(
        run.stdout
            .contains("intl = \"Fee (PPP $)\" (assumed from the header"),
        "{}",
        run.stdout
    );
}

#[test]
fn shares_and_changes_within_rounding_pass_and_a_half_point_slip_does_not() {
    // Invented figures, worked by hand. Shares: 1.0 and 3.0 of 4.0 are 25% and 75%; a claimed
    // 26.3 differs by 1.3, which is exactly half a unit of the claim (0.05) plus the raw
    // figure's half unit carried into the share (0.05 × 100 / 4 = 1.25): the roundings touch,
    // so it passes (common practice: a printed figure is exact to half a unit of its last
    // digit). In floating point the difference is 1.3 + 6.7e-16 (worked in Python 3), which
    // only the tolerance's slack absorbs. In 2021, 1.000 of 8.000 is 12.5%, and 13.0 is off by
    // 0.5 against a tolerance of 0.05 + 0.00625. In 2022, 1.0 of 4.0 claimed as 28 is off by
    // 3 against 0.5 + 1.25 (the raw half unit is divided by the total, not multiplied: that
    // would allow 20). In 2023 the total is zero, so no share is defined and none is checked.
    // Changes: 10 to 12 is +20%.
    let env = setup();
    let refs = small_refs(&env);
    let shares = env.write(
        "shares.csv",
        "country,year,value,share\nFrance,2020,1.0,26.3\nChile,2020,3.0,75.0\nFrance,2021,1.000,13.0\nChile,2021,7.000,87.5\nFrance,2022,1.0,28\nChile,2022,3.0,75\nFrance,2023,0,0\nChile,2023,0,0\n",
    );
    let run = env.run(&[
        "audit",
        &shares,
        "--refs",
        &refs,
        "--claim",
        "share=share",
        "--format",
        "json",
    ]);
    let report: serde_json::Value = serde_json::from_str(&run.stdout).unwrap();
    let errors: Vec<(u64, f64)> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["check"] == "share" && f["severity"] == "error")
        .map(|f| {
            (
                f["line"].as_u64().unwrap(),
                f["recomputed"].as_f64().unwrap(),
            )
        })
        .collect();
    assert_eq!(
        errors,
        vec![(4, 12.5), (6, 25.0)],
        "{:#}",
        report["findings"]
    );
    assert_eq!(report["claims_checked"], 6);
    let change = env.write(
        "changes.csv",
        "country,year,value,change\nChile,2019,10,..\nChile,2020,12,20\nFrance,2019,50,..\nFrance,2020,40,-20.0\n",
    );
    let run = env.run(&[
        "audit",
        &change,
        "--refs",
        &refs,
        "--claim",
        "change=change",
    ]);
    assert_eq!(run.code, 0, "{}", run.stdout);
    assert!(
        run.stdout
            .contains("4 row(s), 2 claimed figure(s) checked; 0 error(s)"),
        "{}",
        run.stdout
    );
}

#[test]
fn points_given_as_a_percent_change_are_named_up_to_their_rounding_and_no_further() {
    // Invented figures, worked by hand: 10.0 to 20.0 is +100%, or +10 points. A claimed 12
    // differs from the 10 points by 2, exactly its tolerance: half a unit of the claim (0.5)
    // plus the raw figures' half units carried into the difference, 100 × (0.05 / 10 +
    // 20 × 0.05 / 10²) = 1.5 (common practice: a printed figure is exact to half a unit of
    // its last digit). A claimed 12.5 is 2.5 away against 0.05 + 1.5: neither a change nor
    // points.
    let env = setup();
    let refs = small_refs(&env);
    let change = env.write(
        "points.csv",
        "country,year,value,change\nChile,2019,10.0,..\nChile,2020,20.0,12\nFrance,2019,10.0,..\nFrance,2020,20.0,12.5\n",
    );
    let run = env.run(&[
        "audit",
        &change,
        "--refs",
        &refs,
        "--claim",
        "change=change",
        "--format",
        "json",
    ]);
    let causes: Vec<(u64, String)> = findings_of_check(&run, "change")
        .iter()
        .map(|f| {
            (
                f["line"].as_u64().unwrap(),
                f["cause"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    assert_eq!(causes.len(), 2, "{causes:#?}");
    assert_eq!(causes[0].0, 3);
    assert!(
        causes[0]
            .1
            .contains("percentage points are given as a percent change"),
        "{causes:#?}"
    );
    assert_eq!(causes[1].0, 5);
    assert!(
        causes[1].1.contains("does not match the recomputation"),
        "{causes:#?}"
    );
}

#[test]
fn ranks_are_recomputed_among_the_rows_that_claim_one_leaving_out_aggregates() {
    // Invented figures. Japan claims no rank and World is an aggregate: neither takes a place,
    // so Chile (300) is first and France (100) second. Ranking the rows without a claim would
    // put Japan (500) first; the same table with the two ranks swapped has two wrong ranks.
    let env = setup();
    let refs = small_refs(&env);
    let findings_of = |name: &str, france: &str, chile: &str| -> Vec<u64> {
        let input = env.write(
            name,
            &format!("country,year,value,rank\nFrance,2020,100,{france}\nChile,2020,300,{chile}\nJapan,2020,500,..\nWorld,2020,1000,..\n"),
        );
        let run = env.run(&[
            "audit",
            &input,
            "--refs",
            &refs,
            "--claim",
            "rank=rank",
            "--format",
            "json",
        ]);
        findings_of_check(&run, "rank")
            .iter()
            .map(|f| f["line"].as_u64().unwrap())
            .collect()
    };
    assert_eq!(findings_of("ranks.csv", "2", "1"), Vec::<u64>::new());
    assert_eq!(findings_of("swapped.csv", "1", "2"), vec![2, 3]);
}

#[test]
fn a_change_in_thousands_keeps_both_figures_roundings_and_nothing_more() {
    // Invented figures, worked by hand. Chile goes from 10 to 12 (thousands): +20%. Each raw
    // figure is exact to half a unit (0.5 thousand), so the change can lie anywhere within
    // 100 × (0.5/10 + 12 × 0.5/10²) = 11 points of 20, plus half a unit of the claim (0.5):
    // a claimed 31 is inside (off by 11 ≤ 11.5), 32 is not (common practice: a printed figure
    // is exact to half a unit of its last digit). The multiplier scales figures and their
    // roundings alike, so the bound is the same with --value-multiplier 1000 as without.
    let env = setup();
    let refs = small_refs(&env);
    for (claim, errors) in [("31", 0), ("32", 1)] {
        let input = env.write(
            "change.csv",
            &format!("country,year,value,change\nChile,2019,10,..\nChile,2020,12,{claim}\n"),
        );
        for multiplier in [None, Some("1000")] {
            let mut args = vec!["audit", &input, "--refs", &refs, "--claim", "change=change"];
            if let Some(m) = multiplier {
                args.extend(["--value-multiplier", m]);
            }
            let run = env.run(&args);
            assert!(
                run.stdout.contains(&format!(
                    "2 row(s), 1 claimed figure(s) checked; {errors} error(s)"
                )),
                "claim {claim}, multiplier {multiplier:?}: {}{}",
                run.stdout,
                run.stderr
            );
        }
    }
}

#[test]
fn a_rank_that_follows_a_wrong_claimed_figure_is_named_against_the_recomputation() {
    // Invented figures, worked by hand from small_refs' PPPs for 2020 (France 0.2, Chile 420):
    // France 100 / 0.2 = 500 and Chile 300000 / 420 = 714.29 international dollars, so Chile
    // is first. The table claims Chile at 400 and ranks France first: the ranks follow the
    // table's own figures but change once the figures are recomputed, on both lines.
    let env = setup();
    let refs = small_refs(&env);
    let input = env.write(
        "ranked.csv",
        "country,year,value,intl,rank\nFrance,2020,100,500,1\nChile,2020,300000,400,2\n",
    );
    let run = env.run(&[
        "audit",
        &input,
        "--refs",
        &refs,
        "--claim",
        "intl=intl",
        "--claim",
        "rank=rank",
        "--format",
        "json",
    ]);
    let ranks: Vec<(u64, f64)> = findings_of_check(&run, "rank")
        .iter()
        .map(|f| {
            assert!(
                f["cause"]
                    .as_str()
                    .is_some_and(|c| c.contains("once the figures are recomputed")),
                "{f:#}"
            );
            (
                f["line"].as_u64().unwrap(),
                f["recomputed"].as_f64().unwrap(),
            )
        })
        .collect();
    assert_eq!(ranks, vec![(2, 2.0), (3, 1.0)], "{}", run.stdout);
}
