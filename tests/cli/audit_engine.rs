//! `audit` runs the adjust engine: a correct table in any currency gives no finding, the audit of
//! adjust's own output gives none, and planted faults in tables built from real open data are
//! found with their causes.
//!
//! The real data are the Penn World Table 7.1 figures of tests/data/world (Debian package
//! r-cran-pwt 7.1.1-7, no restriction on redistribution; see that folder's README): GDP in
//! national currency, in US dollars at the market rate, at PPP and per person at PPP.

use crate::{setup, Env, Run};
use std::collections::HashMap;

fn world(env: &Env, path: &str) -> String {
    env.repo
        .join("tests/data/world")
        .join(path)
        .display()
        .to_string()
}

/// The rows of tests/data/world/expected.csv.
fn expected(env: &Env) -> Vec<HashMap<String, String>> {
    let mut reader = csv::Reader::from_path(world(env, "expected.csv")).unwrap();
    reader.deserialize().map(|r| r.unwrap()).collect()
}

fn fixed(value: f64, decimals: usize) -> String {
    format!("{value:.decimals$}")
}

fn audit(env: &Env, input: &str, extra: &[&str]) -> Run {
    let refs = world(env, "wb-bulk");
    let mut args = vec!["audit", input, "--refs", refs.as_str(), "--format", "json"];
    args.extend_from_slice(extra);
    env.run(&args)
}

fn findings(run: &Run) -> Vec<serde_json::Value> {
    let report: serde_json::Value = serde_json::from_str(&run.stdout)
        .unwrap_or_else(|e| panic!("{e}: {}{}", run.stdout, run.stderr));
    report["findings"].as_array().unwrap().clone()
}

/// A table in US dollars (or national currency) with PPP and per-capita claims, figures rounded
/// to `decimals`. The intl claim is the figure worked from the table's own PPP factors (in
/// build.py, independently of the tool); the per-capita claim is PWT's published `cgdp`.
fn twin(
    env: &Env,
    name: &str,
    usd: bool,
    decimals: usize,
    fault: impl Fn(usize, &mut [String; 3]),
) -> String {
    let mut text = String::from("country,year,gdp,gdp_intl,gdp_intl_per_person\n");
    for (i, row) in expected(env).iter().enumerate() {
        let value: f64 = if usd {
            row["expected_usd"].parse().unwrap()
        } else {
            row["value_lcu"].parse().unwrap()
        };
        let intl: f64 = row["expected_intl"].parse().unwrap();
        let per_person: f64 = row["published_intl_per_capita"].parse().unwrap();
        let mut cells = [
            fixed(value, decimals),
            fixed(intl, decimals),
            fixed(per_person, decimals.max(2)),
        ];
        fault(i, &mut cells);
        text.push_str(&format!(
            "{},{},{},{},{}\n",
            row["iso3"], row["year"], cells[0], cells[1], cells[2]
        ));
    }
    env.write(name, &text)
}

const CLAIMS: &[&str] = &[
    "--value",
    "gdp",
    "--claim",
    "intl=gdp_intl",
    "--claim",
    "intl+per-capita=gdp_intl_per_person",
];

#[test]
fn a_correct_table_in_us_dollars_or_national_currency_gives_no_finding() {
    // The failing case of the issue: figures in US dollars with a correct PPP claim were
    // recomputed without converting dollars to national currency first.
    let env = setup();
    for usd in [true, false] {
        for decimals in [0, 1, 2] {
            let input = twin(
                &env,
                &format!("clean-{usd}-{decimals}.csv"),
                usd,
                decimals,
                |_, _| {},
            );
            let mut args = CLAIMS.to_vec();
            if usd {
                args.extend(["--currency-code", "USD"]);
            }
            let run = audit(&env, &input, &args);
            assert_eq!(
                run.code, 0,
                "usd {usd}, {decimals} decimals: {}",
                run.stdout
            );
            assert_eq!(
                findings(&run),
                Vec::<serde_json::Value>::new(),
                "usd {usd}, {decimals} decimals"
            );
            let text = env.run(
                &[
                    "audit",
                    &input,
                    "--refs",
                    &world(&env, "wb-bulk"),
                    CLAIMS[0],
                    CLAIMS[1],
                    CLAIMS[2],
                    CLAIMS[3],
                    CLAIMS[4],
                    CLAIMS[5],
                ]
                .into_iter()
                .chain(if usd {
                    vec!["--currency-code", "USD"]
                } else {
                    vec![]
                })
                .collect::<Vec<_>>(),
            );
            assert!(
                text.stdout
                    .contains("240 claimed figure(s) checked; 0 error(s), 0 warning(s)"),
                "{}",
                text.stdout
            );
            assert!(text.stdout.contains("No findings"), "{}", text.stdout);
        }
    }
}

#[test]
fn planted_faults_in_real_figures_are_found_with_their_causes_and_nothing_else() {
    let env = setup();
    let rows = expected(&env);
    // Row 0: the market rate used for the PPP; row 1: the PPP of the previous year; row 7: a
    // thousandfold slip in the per-person figure; rows 10 and 11 swapped (rows shifted).
    let ppp_of = |i: usize| -> f64 { rows[i]["ppp"].parse().unwrap() };
    let faulty = twin(&env, "faulty.csv", true, 0, |i, cells| {
        let usd: f64 = rows[i]["expected_usd"].parse().unwrap();
        let lcu: f64 = rows[i]["value_lcu"].parse().unwrap();
        match i {
            0 => cells[1] = fixed(usd, 0),
            1 => cells[1] = fixed(lcu / ppp_of(0), 0),
            7 => {
                cells[2] = fixed(
                    rows[i]["published_intl_per_capita"].parse::<f64>().unwrap() * 1000.0,
                    2,
                )
            }
            10 => cells[1] = fixed(rows[11]["expected_intl"].parse().unwrap(), 0),
            11 => cells[1] = fixed(rows[10]["expected_intl"].parse().unwrap(), 0),
            _ => {}
        }
    });
    let mut args = CLAIMS.to_vec();
    args.extend(["--currency-code", "USD", "--per", "1"]);
    let run = audit(&env, &faulty, &args);
    assert_eq!(run.code, 1, "{}", run.stdout);
    let found = findings(&run);
    let cause = |line: u64, check: &str| -> String {
        found
            .iter()
            .find(|f| f["line"] == line && f["check"] == check)
            .map(|f| f["cause"].as_str().unwrap().to_string())
            .unwrap_or_else(|| panic!("no {check} finding on line {line}: {found:#?}"))
    };
    // Lines are the data row plus the header line.
    assert!(cause(2, "intl").contains("market exchange rate was used where a PPP"));
    assert!(
        cause(3, "intl").contains("PPP of 2006 was used instead of 2007's"),
        "{}",
        cause(3, "intl")
    );
    assert!(cause(9, "intl+per-capita")
        .contains("scale slip: the figure is per 1,000 people but the table says per 1"));
    assert!(cause(12, "intl").contains("the rows appear shifted"));
    assert!(cause(13, "intl").contains("the rows appear shifted"));
    let lines: std::collections::BTreeSet<u64> =
        found.iter().map(|f| f["line"].as_u64().unwrap()).collect();
    assert_eq!(
        lines.into_iter().collect::<Vec<_>>(),
        vec![2, 3, 9, 12, 13],
        "no clean row is reported"
    );
}

/// A generated table of the demo's invented entities, years 2019-2023 (the demo references'
/// years), in the given currency basis.
fn generated(env: &Env, name: &str, seed: u64, basis: &str) -> String {
    let entities = [
        "Azrevny",
        "Bolqueth",
        "Celvaran",
        "Dyrnolva",
        "Ezvandre",
        "Fulvessa",
        "Glumveth",
        "Hestravoy",
    ];
    let mut state = seed
        .wrapping_mul(6364136223846793005)
        .wrapping_add(1442695040888963407);
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    let mut text = String::from("country,year,value,cur\n");
    for entity in entities {
        for year in 2019..=2023 {
            let decimals = (next() % 3) as usize;
            let value = 10.0 + (next() % 10_000_000) as f64 / 10.0;
            let cur = match basis {
                "column" if next() % 2 == 0 => "USD",
                _ => "",
            };
            text.push_str(&format!(
                "{entity},{year},{},{cur}\n",
                fixed(value, decimals)
            ));
        }
    }
    env.write(name, &text)
}

/// The demo's reference tables (invented) with a US CPI row, for deflating after conversion,
/// and an invented income table.
fn demo_refs(env: &Env) -> String {
    let source = env.repo.join("reference-tables");
    let dir = env.path("demo-refs");
    std::fs::create_dir_all(&dir).unwrap();
    for file in ["aliases.csv", "fx.csv", "ppp.csv", "population.csv"] {
        std::fs::copy(source.join(file), dir.join(file)).unwrap();
    }
    let mut cpi = std::fs::read_to_string(source.join("cpi.csv")).unwrap();
    cpi.push_str("USA,100,101.2,105.9,114.4,119.1\n");
    std::fs::write(dir.join("cpi.csv"), cpi).unwrap();
    let mut income = String::from("code,2019,2020,2021,2022,2023\n");
    for code in ["XAA", "XAB", "XAC", "XAD", "XAE", "XAF", "XAG", "XAH"] {
        income.push_str(&format!("{code},1000,1100,1200,1300,1400\n"));
    }
    std::fs::write(dir.join("income.csv"), income).unwrap();
    let catalog = std::fs::read_to_string(source.join("datapackage.json")).unwrap();
    let catalog = catalog.replacen(
        "\"resources\": [",
        "\"resources\": [{\"name\": \"invented-income\", \"path\": \"income.csv\", \"kind\": \"income\", \"unit\": \"invented, local currency\"},",
        1,
    );
    std::fs::write(dir.join("datapackage.json"), catalog).unwrap();
    dir.display().to_string()
}

fn role_of(step: &str) -> (&'static str, &'static str) {
    match step {
        "market" => ("usd", "value_usd_market"),
        "ppp" => ("intl", "value_intl"),
        "deflate" => ("real", "value_real"),
        "per-capita" => ("per-capita", "value_per_capita"),
        _ => ("per-income", "value_per_income"),
    }
}

#[test]
fn the_audit_of_adjusts_own_output_finds_nothing_for_every_basis_and_step() {
    let env = setup();
    let refs = demo_refs(&env);
    let routes: &[&[&str]] = &[
        &["market"],
        &["ppp"],
        &["deflate"],
        &["per-capita"],
        &["per-income"],
        &["deflate", "ppp"],
        &["ppp", "deflate"],
        &["ppp", "per-capita"],
        &["deflate", "ppp", "per-capita"],
        &["market", "per-income"],
    ];
    let mut checked = 0;
    for (seed, basis) in [(1, "local"), (2, "code"), (3, "column")] {
        let input = generated(&env, &format!("gen-{basis}.csv"), seed, basis);
        for steps in routes {
            let mut common: Vec<String> = vec![
                "--refs".into(),
                refs.clone(),
                "--base-year".into(),
                "2023".into(),
            ];
            match basis {
                "code" => common.extend(["--currency-code".into(), "USD".into()]),
                "column" => common.extend(["--currency".into(), "cur".into()]),
                _ => {}
            }
            let output = env.path(&format!("out-{basis}-{}.csv", steps.join("-")));
            let mut args: Vec<String> = vec![
                "adjust".into(),
                input.clone(),
                "--steps".into(),
                steps.join(","),
                "-o".into(),
                output.display().to_string(),
            ];
            args.extend(common.iter().cloned());
            let run = env.run(&args.iter().map(String::as_str).collect::<Vec<_>>());
            assert_eq!(run.code, 0, "{steps:?} {basis}: {}", run.stderr);
            // Claim each stage column with its route, and the adjusted rank.
            let mut audit_args: Vec<String> = vec![
                "audit".into(),
                output.display().to_string(),
                "--value".into(),
                "value_input".into(),
                "--format".into(),
                "json".into(),
            ];
            audit_args.extend(common.iter().cloned().map(|a| {
                if a == "cur" {
                    "currency".to_string()
                } else {
                    a
                }
            }));
            let mut route: Vec<&str> = Vec::new();
            for step in *steps {
                let (role, column) = role_of(step);
                route.push(role);
                audit_args.extend(["--claim".into(), format!("{}={column}", route.join("+"))]);
            }
            audit_args.extend(["--claim".into(), "rank=rank_adjusted".into()]);
            let run = env.run(&audit_args.iter().map(String::as_str).collect::<Vec<_>>());
            assert_eq!(
                run.code, 0,
                "{steps:?} {basis}: {}{}",
                run.stdout, run.stderr
            );
            assert_eq!(
                findings(&run),
                Vec::<serde_json::Value>::new(),
                "{steps:?} {basis}"
            );
            let report: serde_json::Value = serde_json::from_str(&run.stdout).unwrap();
            let n = report["claims_checked"].as_u64().unwrap();
            assert!(
                n >= 40 * steps.len() as u64,
                "{steps:?} {basis}: only {n} claims checked"
            );
            checked += n;
        }
    }
    assert!(checked > 2000, "{checked}");
}

#[test]
fn a_claim_whose_rounding_just_touches_the_raw_figures_rounding_is_accepted() {
    // A printed figure is exact to half a unit of its last digit (common practice in statistical
    // publishing): a raw 10 stands for 9.5 to 10.5 and a claimed 11 for 10.5 to 11.5, so both
    // can come from 10.5; a claimed 12 cannot. With three decimals at a thousand, 1000.003 -
    // 1000.002 is 0.001 + 9.0e-14 in binary floating point (worked in Python 3), which the
    // tolerance's slack for the last bits must absorb. The figures are invented; the table is
    // in US dollars, so the usd claim is the raw figure itself.
    let env = setup();
    let input = env.write(
        "touching.csv",
        "country,year,gdp,usd\nFRA,2008,10,11\nDEU,2008,10,12\nITA,2008,1000.002,1000.003\nESP,2008,1000.002,1000.004\n",
    );
    let run = audit(
        &env,
        &input,
        &[
            "--value",
            "gdp",
            "--claim",
            "usd=usd",
            "--currency-code",
            "USD",
        ],
    );
    let lines: Vec<u64> = findings(&run)
        .iter()
        .map(|f| f["line"].as_u64().unwrap())
        .collect();
    assert_eq!(lines, vec![3, 5], "{}", run.stdout);
}

#[test]
fn a_slip_by_any_power_of_ten_up_to_a_million_is_named() {
    // Per-capita figures worked from PWT 7.1 (expected_intl_per_capita, by build.py, not by the
    // tool) written 10^p times too large or too small, for p from -6 to 6: each is named as a
    // slip of that power, and nothing else is found. Claims are written with every digit, so
    // only the power differs.
    let env = setup();
    let slips = [
        (-6, "is 1/1,000,000 of the recomputation, as if"),
        (-5, "is 1/100,000 of the recomputation, as if"),
        (-4, "is 1/10,000 of the recomputation, as if"),
        (-3, "is 1/1,000 of the recomputation, as if"),
        (-2, "is 1/100 of the recomputation, as if"),
        (-1, "is 1/10 of the recomputation, as if"),
        (1, "is per 10 people but the table says per 1"),
        (2, "is per 100 people but the table says per 1"),
        (3, "is per 1,000 people but the table says per 1"),
        (4, "is per 10,000 people but the table says per 1"),
        (5, "is per 100,000 people but the table says per 1"),
        (6, "is per 1,000,000 people but the table says per 1"),
    ];
    let rows = expected(&env);
    let slipped = twin(&env, "slipped.csv", true, 0, |i, cells| {
        if let Some((power, _)) = slips.get(i) {
            let per_person: f64 = rows[i]["expected_intl_per_capita"].parse().unwrap();
            cells[2] = format!("{:e}", per_person * 10f64.powi(*power));
        }
    });
    let mut args = CLAIMS.to_vec();
    args.extend(["--currency-code", "USD", "--per", "1"]);
    let found = findings(&audit(&env, &slipped, &args));
    for (i, (_, want)) in slips.iter().enumerate() {
        let line = i as u64 + 2;
        let cause = found
            .iter()
            .find(|f| f["line"] == line && f["check"] == "intl+per-capita")
            .map(|f| f["cause"].as_str().unwrap().to_string())
            .unwrap_or_else(|| panic!("no finding on line {line}: {found:#?}"));
        assert!(cause.contains(want), "line {line}: {cause}");
    }
    assert_eq!(found.len(), slips.len(), "{found:#?}");
}
