//! Hostile and careless input, second pass: script through the report, a stray quote, writes
//! outside where the user pointed, unbounded reads, arguments at their extremes, numbers at the
//! edge of a double, formulas and control characters in cells, interrupted runs.

use crate::{setup, Env};

const HOSTILE: &str = "<img src=x onerror=alert(1)><script>alert(2)</script>";

/// A reference folder whose every text field carries `HOSTILE` (catalog title, name, unit,
/// source, vintage), with an alias file naming one entity with it.
fn hostile_refs(env: &Env) -> String {
    let dir = env.path("refs");
    std::fs::create_dir_all(&dir).unwrap();
    let h = HOSTILE.replace('"', "\\\"");
    let catalog = format!(
        r#"{{"name":"x","title":"{h}","aliases":["aliases.csv"],"resources":[
        {{"name":"fx {h}","path":"fx.csv","kind":"fx","unit":"{h}","vintage":"{h}","sources":[{{"title":"{h}"}}]}},
        {{"name":"ppp {h}","path":"ppp.csv","kind":"ppp","unit":"{h}","vintage":"{h}","sources":[{{"title":"{h}"}}]}}]}}"#
    );
    std::fs::write(dir.join("datapackage.json"), catalog).unwrap();
    std::fs::write(
        dir.join("aliases.csv"),
        format!(
            "name,code\n\"{}\",XQA\nPlainland,XQB\n",
            HOSTILE.replace('"', "\"\"")
        ),
    )
    .unwrap();
    std::fs::write(dir.join("fx.csv"), "code,2020\nXQA,2\nXQB,4\n").unwrap();
    std::fs::write(dir.join("ppp.csv"), "code,2020\nXQA,1\nXQB,3\n").unwrap();
    dir.display().to_string()
}

#[test]
fn no_input_string_survives_unescaped_in_the_html_report() {
    let env = setup();
    let refs = hostile_refs(&env);
    // Invented entities (XQA, XQB) with invented figures: the point is the text, not the figures.
    let input = env.write(
        "in<b>put.csv",
        &format!(
            "country,year,value,item {HOSTILE}\n\"{}\",2020,10,\"{}\"\nPlainland,2020,20,\"{}\"\n",
            HOSTILE.replace('"', "\"\""),
            HOSTILE.replace('"', "\"\""),
            HOSTILE.replace('"', "\"\"")
        ),
    );
    let report = env.path("report.html");
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "ppp",
        "--group",
        &format!("item {HOSTILE}"),
        "--report",
        &report.display().to_string(),
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let html = std::fs::read_to_string(report).unwrap();
    assert!(!html.contains("<script"), "a script tag survived");
    assert!(!html.contains("<img"), "an img tag survived");
    assert!(
        !html.contains("onerror=alert(1)>"),
        "an attribute survived unescaped"
    );
    assert!(
        html.contains("&lt;img src=x onerror=alert(1)&gt;"),
        "the text is shown, escaped"
    );
}

#[test]
fn outputs_of_a_recipe_stay_in_its_folder_and_apart() {
    let env = setup();
    std::fs::create_dir_all(env.path("shared/recipes")).unwrap();
    std::fs::create_dir_all(env.path("victim")).unwrap();
    std::fs::write(env.path("victim/important.txt"), "keep me").unwrap();
    let input = env.write(
        "shared/recipes/in.csv",
        "country,year,value\nFrance,2020,1\nChile,2020,2\n",
    );
    let _ = input;
    for (key, value) in [
        ("file", "../../victim/important.txt"),
        ("methods", "/tmp/levelfield-outside-methods.md"),
        ("report", "../outside.html"),
    ] {
        let recipe = format!("input = \"in.csv\"\n[output]\n{key} = \"{value}\"\n");
        std::fs::write(env.path("shared/recipes/r.toml"), recipe).unwrap();
        let run = env.run(&[
            "adjust",
            "--recipe",
            "shared/recipes/r.toml",
            "--format",
            "csv",
        ]);
        assert_eq!(run.code, 2, "{key}: {}", run.stderr);
        assert!(
            run.stderr.contains("outside the recipe's folder")
                && run.stderr.contains(&format!("output.{key}")),
            "{}",
            run.stderr
        );
    }
    assert_eq!(
        std::fs::read_to_string(env.path("victim/important.txt")).unwrap(),
        "keep me"
    );
    // The recipe as its own output, and one file asked for twice.
    std::fs::write(
        env.path("shared/recipes/r.toml"),
        "input = \"in.csv\"\n[output]\nfile = \"r.toml\"\n",
    )
    .unwrap();
    let run = env.run(&["adjust", "--recipe", "shared/recipes/r.toml"]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("is the recipe file itself"),
        "{}",
        run.stderr
    );
    let out = env.path("out.csv").display().to_string();
    let run = env.run(&[
        "adjust",
        &env.path("shared/recipes/in.csv").display().to_string(),
        "-o",
        &out,
        "--methods",
        &out,
    ]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("asked for twice"), "{}", run.stderr);
    // Every file written is named.
    let methods = env.path("m.md").display().to_string();
    let run = env.run(&[
        "adjust",
        &env.path("shared/recipes/in.csv").display().to_string(),
        "-o",
        &out,
        "--methods",
        &methods,
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr.contains(&format!("wrote {out}"))
            && run
                .stderr
                .contains(&format!("wrote the methods note to {methods}")),
        "{}",
        run.stderr
    );
}

#[test]
fn a_catalog_cannot_read_outside_its_folder() {
    let env = setup();
    let dir = env.path("refs");
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(
        dir.join("datapackage.json"),
        r#"{"resources":[{"name":"p","path":"../../../../etc/passwd","kind":"ppp"}]}"#,
    )
    .unwrap();
    let input = env.write("in.csv", "country,year,value\nFrance,2020,1\n");
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &dir.display().to_string(),
        "--steps",
        "ppp",
    ]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("outside the catalog's folder"),
        "{}",
        run.stderr
    );
    assert!(
        !run.stderr.contains("root:"),
        "the file's content is not echoed"
    );
    // A file that is no table is not quoted either.
    let passwd = env.write(
        "passwd",
        "root:x:0:0:root:/root:/bin/bash\ndaemon:x:1:1::/:/bin/sh\n",
    );
    let run = env.run(&["adjust", &passwd]);
    assert_eq!(run.code, 2);
    assert!(!run.stderr.contains("root:x"), "{}", run.stderr);
    assert!(
        run.stderr.contains("not a delimited table"),
        "{}",
        run.stderr
    );
}

#[test]
fn devices_pipes_and_oversized_files_are_refused_before_reading() {
    let env = setup();
    for device in ["/dev/zero", "/dev/urandom"] {
        let run = env.run(&["adjust", device]);
        assert_eq!(run.code, 2, "{device}");
        assert!(run.stderr.contains("not a regular file"), "{}", run.stderr);
        let run = env.run(&["adjust", "--recipe", device]);
        assert_eq!(run.code, 2);
        assert!(run.stderr.contains("not a regular file"), "{}", run.stderr);
        let input = env.write("in.csv", "country,year,value\nFrance,2020,1\n");
        let run = env.run(&["adjust", &input, "--aliases", device]);
        assert!(run.stderr.contains("not a regular file"), "{}", run.stderr);
    }
    let fifo = env.path("pipe.csv");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .map(|s| s.success())
        .unwrap_or(false);
    assert!(made, "mkfifo is needed for this test (coreutils)");
    let run = env.run(&["adjust", &fifo.display().to_string()]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("not a regular file"), "{}", run.stderr);
    let big = env.write(
        "big.csv",
        &format!("country,year,value\n{}", "France,2020,1\n".repeat(200_000)),
    );
    let run = env.run(&["adjust", &big, "--max-input-mb", "1"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("larger than 1 MB"), "{}", run.stderr);
}

#[test]
fn arguments_at_their_extremes_never_panic() {
    let env = setup();
    let input = env.write(
        "in.csv",
        "country,year,value\nFrance,2020,123456789012345.25\nChile,2020,0.1\n",
    );
    for decimals in 0..=20 {
        let run = env.run(&[
            "adjust",
            &input,
            "--decimals",
            &decimals.to_string(),
            "--format",
            "csv",
            "-q",
        ]);
        assert_eq!(run.code, 0, "--decimals {decimals}: {}", run.stderr);
    }
    for sig in 1..=17 {
        let run = env.run(&[
            "adjust",
            &input,
            "--sig",
            &sig.to_string(),
            "--format",
            "md",
            "-q",
        ]);
        assert_eq!(run.code, 0, "--sig {sig}: {}", run.stderr);
    }
    for (flag, value) in [
        ("--decimals", "27"),
        ("--sig", "1000"),
        ("--sig", "0"),
        ("--base-year", "-5"),
        ("--value-multiplier", "0"),
        ("--year-value", "99999"),
    ] {
        let run = env.run(&["adjust", &input, flag, value, "--steps", "", "-q"]);
        assert_eq!(run.code, 2, "{flag} {value}: {}", run.stderr);
        assert!(
            !run.stderr.contains("panicked"),
            "{flag} {value}: {}",
            run.stderr
        );
    }
    let run = env.run(&["adjust", &input, "--value-multiplier", "1e-30"]);
    assert!(run.stderr.contains("28 digits"), "{}", run.stderr);
    let run = env.run(&[
        "adjust",
        &input,
        "--value-multiplier",
        "1e-3",
        "--format",
        "csv",
        "-q",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
}

#[test]
fn numbers_at_the_edge_of_a_double_are_refused_with_the_reason() {
    let env = setup();
    for (cell, reason) in [
        ("1e-400", "smaller than a double holds"),
        ("4.9e-324", "smaller than a double holds"),
        (
            "99999999999999999999999999999999",
            "beyond the range of exact decimals",
        ),
    ] {
        let input = env.write(
            "n.csv",
            &format!("country,year,value\nFrance,2020,{cell}\n"),
        );
        let run = env.run(&["adjust", &input]);
        assert_eq!(run.code, 2, "{cell}");
        assert!(
            run.stderr.contains(reason) && run.stderr.contains("line 2"),
            "{cell}: {}",
            run.stderr
        );
    }
}

#[test]
fn formulas_and_control_characters_are_neutralised_in_output() {
    let env = setup();
    let input = env.write(
        "f.csv",
        "country,year,value,item\nFrance,2020,-12,\"=HYPERLINK(\"\"http://x\"\")\"\nChile,2020,3,\"two\nlines\u{1b}[31m\u{7}\"\n",
    );
    let run = env.run(&["adjust", &input, "--group", "item", "--format", "csv", "-q"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(run.stdout.contains("'=HYPERLINK"), "{}", run.stdout);
    assert!(
        run.stdout.contains(",-12,-12,"),
        "numbers are never touched: {}",
        run.stdout
    );
    let raw = env.run(&[
        "adjust",
        &input,
        "--group",
        "item",
        "--format",
        "csv",
        "-q",
        "--allow-formulas",
    ]);
    assert!(raw.stdout.contains(",\"=HYPERLINK"), "{}", raw.stdout);
    let md = env.run(&["adjust", &input, "--group", "item", "--format", "md", "-q"]);
    assert!(
        !md.stdout.contains('\u{1b}') && !md.stdout.contains('\u{7}'),
        "{:?}",
        md.stdout
    );
    assert!(md.stdout.contains("two\\nlines\\u{1b}"), "{}", md.stdout);
    assert_eq!(
        md.stdout.lines().filter(|l| l.starts_with('|')).count(),
        4,
        "one line per row: {}",
        md.stdout
    );
}

#[test]
fn set_aside_lines_are_a_warning_even_with_quiet() {
    let env = setup();
    let input = env.write(
        "t.csv",
        "Fees, invented\ncountry,year,value\nFrance,2020,1\n",
    );
    let run = env.run(&["adjust", &input, "-q", "--format", "csv"]);
    assert_eq!(run.code, 0);
    assert!(
        run.stderr
            .contains("warning: 1 line(s) of the input were set aside"),
        "{}",
        run.stderr
    );
    let json = env.run(&["adjust", &input, "-q", "--format", "json"]);
    let value: serde_json::Value = serde_json::from_str(&json.stdout).unwrap();
    let warnings = value["metadata"]["summary"]["warnings"].as_array().unwrap();
    assert!(
        warnings
            .iter()
            .any(|w| w.as_str().unwrap().contains("set aside")),
        "{warnings:?}"
    );
}

#[test]
fn an_interrupted_run_leaves_no_temporary_file() {
    let env = setup();
    let rows: String = (0..400_000)
        .map(|i| format!("France,{},{}\n", 1990 + i % 30, i))
        .collect();
    let input = env.write("big.csv", &format!("country,year,value\n{rows}"));
    let out = env.path("out");
    std::fs::create_dir_all(&out).unwrap();
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_levelfield"))
        .args([
            "adjust",
            &input,
            "-o",
            &out.join("big-out.csv").display().to_string(),
            "-q",
        ])
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    // Interrupt once the temporary output exists (or the run ends first, on a fast machine).
    let started = std::time::Instant::now();
    while started.elapsed() < std::time::Duration::from_secs(60) {
        if std::fs::read_dir(&out).unwrap().count() > 0 || child.try_wait().unwrap().is_some() {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(1));
    }
    let _ = std::process::Command::new("kill")
        .args(["-TERM", &child.id().to_string()])
        .status();
    let status = child.wait().unwrap();
    let left: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    // A signal that lands after the rename finds the output complete; either way no hidden
    // temporary file may stay, and a run that finished leaves its output.
    let temporaries: Vec<&String> = left.iter().filter(|f| *f != "big-out.csv").collect();
    assert!(
        temporaries.is_empty(),
        "exit {status:?} left {temporaries:?}"
    );
    if status.success() {
        assert_eq!(
            left,
            vec!["big-out.csv".to_string()],
            "a finished run leaves its output"
        );
    }
}
