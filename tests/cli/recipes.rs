//! Recipes and batch runs: a recipe reproduces a flag run byte for byte, `--save-recipe`
//! round-trips, errors name the key and line, and a batch equals its single runs.

use crate::setup;

/// The flags of a run over the fixture with real country names (tests/data/country-refs).
fn flag_args<'a>(env: &'a crate::Env, refs: &'a str, input: &'a str) -> Vec<&'a str> {
    let _ = env;
    vec![
        "adjust",
        input,
        "--refs",
        refs,
        "--steps",
        "ppp,per-capita",
        "--per",
        "1000",
        "--decimals",
        "3",
        "--format",
        "csv",
    ]
}

/// The `value_adjusted` cell of Korea's 2020 row in a csv output.
fn korea_2020_adjusted(csv_bytes: &[u8]) -> String {
    let mut reader = csv::Reader::from_reader(csv_bytes);
    let headers = reader.headers().unwrap().clone();
    let column = |name: &str| headers.iter().position(|h| h == name).unwrap();
    let korea = reader
        .records()
        .map(|r| r.unwrap())
        .find(|r| &r[column("entity_code")] == "KOR" && &r[column("year")] == "2020")
        .unwrap();
    korea[column("value_adjusted")].to_string()
}

#[test]
fn recipe_run_is_byte_identical_to_the_flag_run_and_save_recipe_round_trips() {
    let env = setup();
    std::fs::create_dir(env.path("recipes")).unwrap();
    let input = env.data("wide-country-fees.csv");
    let refs = env.data("country-refs");
    let mut args = flag_args(&env, &refs, &input);
    args.extend(["-o", "flags.csv", "--save-recipe", "recipes/fees.toml"]);
    let run = env.run(&args);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let recipe = std::fs::read_to_string(env.path("recipes/fees.toml")).unwrap();
    assert!(
        recipe.contains("steps = [\"ppp\", \"per-capita\"]"),
        "{recipe}"
    );
    assert!(recipe.contains("per = 1000"), "{recipe}");
    // Paths are written relative to the recipe's folder.
    assert!(recipe.contains("file = \"../flags.csv\""), "{recipe}");

    // Run the recipe from another folder: its paths still resolve.
    std::fs::create_dir(env.path("elsewhere")).unwrap();
    let run = env.run_in(
        "elsewhere",
        &[
            "adjust",
            "--recipe",
            "../recipes/fees.toml",
            "-o",
            "../from-recipe.csv",
        ],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr.contains("overrode its keys output.file"),
        "{}",
        run.stderr
    );
    let a = std::fs::read(env.path("flags.csv")).unwrap();
    let b = std::fs::read(env.path("from-recipe.csv")).unwrap();
    assert!(!a.is_empty());
    assert_eq!(a, b, "the recipe run differs from the flag run");
    // And both are right, worked by hand from the fixture's (invented, rounded) factors for
    // Korea 2020: 1,200,000 won / PPP 848 / (51.8 million people / 1000) = 0.02732 → 0.027.
    let by_hand: f64 = 1_200_000.0 / 848.0 / (51.8e6 / 1000.0);
    assert!((by_hand - 0.027_318).abs() < 1e-6);
    assert_eq!(korea_2020_adjusted(&b), "0.027");

    // Saving the recipe of a recipe run gives the same recipe back.
    // The saved recipe writes its table above its own folder: the user allows that.
    let run = env.run(&[
        "adjust",
        "--recipe",
        "recipes/fees.toml",
        "--allow-outside",
        "--save-recipe",
        "recipes/again.toml",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let again = std::fs::read_to_string(env.path("recipes/again.toml")).unwrap();
    assert_eq!(again, recipe);

    // The methods note quotes the recipe it read.
    let run = env.run(&[
        "adjust",
        "--recipe",
        "recipes/fees.toml",
        "--format",
        "methods",
        "-o",
        "m.md",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let note = std::fs::read_to_string(env.path("m.md")).unwrap();
    assert!(
        note.contains("## Recipe\n\nRead from recipes/fees.toml"),
        "{note}"
    );
    assert!(note.contains(&recipe), "{note}");
    assert!(note.contains("| recipe | recipes/fees.toml |"), "{note}");
}

#[test]
fn flags_override_recipe_keys_and_the_summary_says_which() {
    let env = setup();
    let recipe = format!(
        "input = \"{}\"\nrefs = \"{}\"\nsteps = [\"ppp\"]\n\n[output]\nformat = \"csv\"\n",
        env.data("wide-country-fees.csv"),
        env.data("country-refs")
    );
    env.write("r.toml", &recipe);
    let run = env.run(&["adjust", "--recipe", "r.toml", "--steps", "market"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr.contains("overrode its keys steps"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr.contains("steps (adjusted): market"),
        "{}",
        run.stderr
    );
    let rows = run.rows();
    assert!(rows[0].contains_key("fx_used") && !rows[0].contains_key("ppp_used"));
}

#[test]
fn recipe_errors_name_the_key_and_the_line() {
    let env = setup();
    let cases = [
        // (recipe text, words the message must hold)
        (
            "steps = [\"ppp\"]\n\n[columns]\nentity = \"Economy\"\nentitty = \"x\"\n",
            vec!["r.toml, line 5, column 1, key `entitty`", "unknown field"],
        ),
        (
            "steps = [\"deflate\"]\nbase_year = \"2023\"\n",
            vec!["r.toml, line 2", "key `base_year`", "invalid type"],
        ),
        (
            "input = \"x.csv\"\nrefs = \"refs\"\nsteps = [\"deflate\", \"ppp\"]\n",
            vec!["r.toml, line 3", "key `steps`", "deflate needs a base year"],
        ),
        (
            "steps = [\"ppp\", \"warp\"]\n",
            vec!["line 1", "key `steps`", "unknown step \"warp\""],
        ),
        (
            "[output]\nformat = \"pdf\"\n",
            vec!["line 2", "key `output.format`", "use one of: table, csv"],
        ),
        (
            "[columns]\nyear = \"y\"\nyear_value = 2020\n",
            vec![
                "line 3",
                "key `columns.year_value`",
                "cannot be used with columns.year",
            ],
        ),
        (
            "[uncertainty]\nmoe = \"m\"\n",
            vec!["line 2", "key `uncertainty.moe`", "confidence level"],
        ),
    ];
    for (text, words) in cases {
        env.write("r.toml", text);
        let run = env.run(&["adjust", "x.csv", "--recipe", "r.toml"]);
        assert_eq!(run.code, 2, "{text}: {}", run.stderr);
        for word in words {
            assert!(
                run.stderr.contains(word),
                "{text}: missing {word:?} in {}",
                run.stderr
            );
        }
    }
}

#[test]
fn batch_runs_every_table_reports_the_broken_one_and_equals_single_runs() {
    let env = setup();
    std::fs::create_dir(env.path("incoming")).unwrap();
    let fees = std::fs::read_to_string(env.data("wide-country-fees.csv")).unwrap();
    env.write("incoming/a.csv", &fees);
    env.write("incoming/b.csv", &fees.replace("Türkiye", "Turkey"));
    env.write("incoming/c.csv", "Economy,2020\nNowhereland,5\n");
    let recipe = format!(
        "refs = \"{}\"\nsteps = [\"ppp\"]\n\n[output]\nformat = \"csv\"\n",
        env.data("country-refs")
    );
    env.write("fees.toml", &recipe);
    env.write(
        "batch.toml",
        "[[run]]\nrecipe = \"fees.toml\"\ninputs = \"incoming/*.csv\"\n",
    );
    let run = env.run(&["batch", "batch.toml"]);
    assert_eq!(run.code, 1, "{}{}", run.stdout, run.stderr);
    assert!(
        run.stdout
            .contains("3 table(s): 2 done, 1 failed, 0 skipped"),
        "{}",
        run.stdout
    );
    assert!(run.stdout.contains("FAILED"), "{}", run.stdout);
    assert!(run.stderr.contains("Nowhereland"), "{}", run.stderr);
    assert!(env.path("incoming/a-adjusted.csv").is_file());
    assert!(env.path("incoming/b-adjusted.csv").is_file());
    assert!(!env.path("incoming/c-adjusted.csv").exists());

    // Each output equals the single run of the same recipe on the same input.
    for name in ["a", "b"] {
        let single = env.run(&[
            "adjust",
            "--recipe",
            "fees.toml",
            &format!("incoming/{name}.csv"),
            "-o",
            &format!("{name}-single.csv"),
        ]);
        assert_eq!(single.code, 0, "{}", single.stderr);
        let batch = std::fs::read(env.path(&format!("incoming/{name}-adjusted.csv"))).unwrap();
        let alone = std::fs::read(env.path(&format!("{name}-single.csv"))).unwrap();
        assert_eq!(
            batch, alone,
            "batch output of {name} differs from its single run"
        );
        // And not only equal: worked by hand from the fixture's (invented, rounded) factors,
        // Korea 2020 is 1,200,000 won / PPP 848 = 1415.0943396... international dollars.
        let adjusted: f64 = korea_2020_adjusted(&batch).parse().unwrap();
        assert!(
            (adjusted - 1_200_000.0 / 848.0).abs() < 1e-9 * adjusted,
            "{name}: {adjusted}"
        );
    }

    // A rerun does not pick up its own outputs; --fail-fast skips what follows a failure.
    env.write("incoming/0.csv", "Economy,2020\nNowhereland,5\n");
    let run = env.run(&["batch", "batch.toml", "--fail-fast"]);
    assert_eq!(run.code, 1);
    assert!(
        run.stdout
            .contains("4 table(s): 0 done, 1 failed, 3 skipped"),
        "{}",
        run.stdout
    );
}

#[test]
fn batch_writes_csv_named_csv_when_a_recipe_asks_for_the_terminal_table() {
    let env = setup();
    std::fs::create_dir(env.path("incoming")).unwrap();
    let fees = std::fs::read_to_string(env.data("wide-country-fees.csv")).unwrap();
    env.write("incoming/a.csv", &fees);
    let recipe = format!(
        "refs = \"{}\"\nsteps = [\"ppp\"]\n\n[output]\nformat = \"table\"\n",
        env.data("country-refs")
    );
    env.write("fees.toml", &recipe);
    env.write(
        "batch.toml",
        "[[run]]\nrecipe = \"fees.toml\"\ninputs = \"incoming/*.csv\"\n",
    );
    let run = env.run(&["batch", "batch.toml"]);
    assert_eq!(run.code, 0, "{}{}", run.stdout, run.stderr);
    let out = std::fs::read_to_string(env.path("incoming/a-adjusted.csv")).unwrap();
    assert!(out.starts_with("row_id,"), "{out}");
    assert!(!env.path("incoming/a-adjusted.txt").exists());
}

#[test]
fn batch_manifest_errors_name_the_line() {
    let env = setup();
    env.write("fees.toml", "steps = []\n");
    env.write(
        "batch.toml",
        "[[run]]\nrecipe = \"fees.toml\"\ninput = \"*.csv\"\n",
    );
    let run = env.run(&["batch", "batch.toml"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("batch.toml, line 3"), "{}", run.stderr);
    assert!(
        run.stderr.contains("unknown field `input`"),
        "{}",
        run.stderr
    );
    env.write("batch.toml", "[[run]]\nrecipe = \"missing.toml\"\n");
    let run = env.run(&["batch", "batch.toml"]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("line 2") && run.stderr.contains("is not a file"),
        "{}",
        run.stderr
    );
}
