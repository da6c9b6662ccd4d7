//! Labels say the unit the run applied, in every output meant for reading: the md footer, the
//! json metadata, the HTML report (lede, axes, legends) and the methods note. Three runs —
//! deflate only, ppp, per-capita only — each with its label lines kept in a golden file, and
//! the words asserted here directly. Cautions travel with md, json and HTML, never with csv.
//!
//! The figures are the demo's invented ones (the labels do not depend on them).

use crate::{assert_golden, setup, Env};

struct Outputs {
    md: String,
    json: serde_json::Value,
    html: String,
    methods: String,
    csv: String,
}

fn run_all(env: &Env, steps: &str) -> Outputs {
    let extract = env.run(&["demo", "--extract", "files"]);
    assert_eq!(extract.code, 0, "{}", extract.stderr);
    // Without a currency conversion, two countries' currencies cannot be ranked together
    // (mixed_currency): those runs rank one country's fee, so that their charts are drawn.
    let table = if steps.contains("ppp") {
        "country,year,value\nAzrevny,2019,528\nBolqueth,2019,5740\nAzrevny,2023,620\nBolqueth,2023,6630\n"
    } else {
        "country,year,value\nAzrevny,2019,528\nAzrevny,2023,620\n"
    };
    std::fs::write(env.path("files/one.csv"), table).unwrap();
    let base = [
        "adjust",
        "one.csv",
        "--refs",
        "reference-tables",
        "--steps",
        steps,
        "--base-year",
        "2023",
    ];
    let with = |extra: &[&str]| -> String {
        let mut argv: Vec<&str> = base.to_vec();
        argv.extend_from_slice(extra);
        let run = env.run_in("files", &argv);
        assert_eq!(run.code, 0, "{steps}: {}", run.stderr);
        run.stdout
    };
    with(&[
        "--format",
        "csv",
        "-o",
        "out.csv",
        "--report",
        "r.html",
        "--methods",
        "m.md",
    ]);
    let read = |name: &str| std::fs::read_to_string(env.path("files").join(name)).unwrap();
    Outputs {
        md: with(&["--format", "md"]),
        json: serde_json::from_str(&with(&["--format", "json"])).unwrap(),
        html: read("r.html"),
        methods: read("m.md"),
        csv: read("out.csv"),
    }
}

/// The label lines of a run's outputs, for its golden file.
fn label_lines(out: &Outputs) -> String {
    let mut lines = Vec::new();
    lines.extend(
        out.md
            .lines()
            .filter(|l| l.starts_with("baseline:"))
            .map(|l| format!("md footer: {l}")),
    );
    lines.push(format!(
        "json units: {}",
        out.json["metadata"]["summary"]["units"]
    ));
    for piece in out
        .html
        .split(['<', '>'])
        .filter(|p| p.contains("aseline") && !p.contains('{') && p.len() < 400)
    {
        lines.push(format!("html: {}", piece.trim()));
    }
    lines.extend(
        out.methods
            .lines()
            .filter(|l| l.contains("baseline") || l.contains("figures are in"))
            .map(|l| format!("methods: {l}")),
    );
    lines.join("\n") + "\n"
}

fn words<'a>(out: &'a Outputs, track: &str) -> &'a str {
    out.json["metadata"]["summary"]["units"][track]["words"]
        .as_str()
        .unwrap()
}

/// Every place a unit is written says `unit`.
fn assert_everywhere(out: &Outputs, unit: &str) {
    assert!(out.md.contains(unit), "md: {}", out.md);
    assert!(out.html.contains(unit), "html lacks {unit}");
    assert!(out.methods.contains(unit), "methods: {}", out.methods);
}

#[test]
fn deflate_only_says_local_currency_at_constant_prices_and_no_market_rate() {
    let env = setup();
    let out = run_all(&env, "deflate");
    let unit = "local currency as given, 2023 prices";
    assert_eq!(words(&out, "adjusted"), unit);
    assert_eq!(words(&out, "baseline"), unit);
    assert_eq!(
        out.json["metadata"]["summary"]["units"]["adjusted"]["basis"],
        "as_given"
    );
    assert_eq!(
        out.json["metadata"]["summary"]["units"]["adjusted"]["price_year"],
        2023
    );
    assert_everywhere(&out, unit);
    // No market rate was used: no label says so (the general caution on choosing between
    // market rates and PPPs stays in the note).
    for text in [&out.md, &out.html, &out.methods] {
        assert!(!text.contains("at market rates"), "{text}");
        assert!(!text.contains("baseline, market"), "{text}");
    }
    assert!(out.html.contains("baseline, the same steps (no PPP step)"));
    assert_golden("labels-deflate.txt", &label_lines(&out));
}

#[test]
fn ppp_says_international_dollars_against_market_rates() {
    let env = setup();
    let out = run_all(&env, "ppp");
    assert_eq!(
        words(&out, "adjusted"),
        "international dollars (PPP), current prices"
    );
    assert_eq!(
        words(&out, "baseline"),
        "USD at market rates, current prices"
    );
    assert_everywhere(&out, "international dollars (PPP), current prices");
    assert_everywhere(&out, "USD at market rates, current prices");
    assert!(out.html.contains("baseline, at market rates"));
    assert!(out.methods.contains("they may not fit one good or service"));
    assert_golden("labels-ppp.txt", &label_lines(&out));
}

#[test]
fn per_capita_only_says_the_scale_and_current_prices() {
    let env = setup();
    let out = run_all(&env, "per-capita");
    let unit = "local currency as given, current prices, per person";
    assert_eq!(words(&out, "adjusted"), unit);
    assert_eq!(
        out.json["metadata"]["summary"]["units"]["adjusted"]["per_people"],
        1
    );
    assert_everywhere(&out, unit);
    for text in [&out.md, &out.html, &out.methods] {
        assert!(!text.contains("at market rates"), "{text}");
        assert!(!text.contains("international dollars"), "{text}");
    }
    // The PPP caution is written only where a PPP was used.
    assert!(!out.methods.contains("they may not fit one good or service"));
    assert_golden("labels-per-capita.txt", &label_lines(&out));
}

#[test]
fn cautions_travel_with_md_json_and_html_but_not_csv() {
    let env = setup();
    let out = run_all(&env, "ppp");
    let cautions = out.json["metadata"]["cautions"].as_array().unwrap();
    assert!(cautions.len() >= 4, "{cautions:?}");
    for caution in cautions {
        let caution = caution.as_str().unwrap();
        assert!(out.md.contains(caution), "md lacks {caution}");
        // The HTML escapes apostrophes.
        let head: String = caution.chars().take(40).collect();
        assert!(
            out.html.contains(&caution.replace('\'', "&#39;")),
            "html lacks {caution}"
        );
        assert!(out.methods.contains(caution), "methods lack {caution}");
        assert!(!out.csv.contains(&head), "csv carries {caution}");
    }
    assert!(out.md.contains("**Cautions**"));
    assert!(cautions
        .iter()
        .any(|c| c.as_str().unwrap().starts_with("Market rates and PPPs")));
}

#[test]
fn demo_data_files_say_the_data_are_invented() {
    let env = setup();
    let marker = "INVENTED DATA";
    let csv = env.run(&["demo", "--format", "csv"]);
    let rows = csv.rows();
    assert!(!rows.is_empty());
    assert!(rows.iter().all(|r| r["data_notice"].starts_with(marker)));
    let chart = env.run(&["demo", "--format", "chart-csv"]);
    assert!(chart
        .rows()
        .iter()
        .all(|r| r["data_notice"].starts_with(marker)));
    let json: serde_json::Value =
        serde_json::from_str(&env.run(&["demo", "--format", "json"]).stdout).unwrap();
    assert!(json["metadata"]["notice"]
        .as_str()
        .unwrap()
        .starts_with(marker));
    let md = env.run(&["demo", "--format", "md"]).stdout;
    assert!(md.starts_with(&format!("**{marker}")), "{md}");
    // Outside the demo, data files carry no such column.
    let extract = env.run(&["demo", "--extract", "files"]);
    assert_eq!(extract.code, 0);
    let mut argv = vec!["adjust"];
    argv.extend_from_slice(levelfield::demo::DEMO_ARGS);
    argv.extend(["--format", "csv"]);
    let adjust = env.run_in("files", &argv);
    assert!(!adjust.stdout.contains("data_notice"));
}
