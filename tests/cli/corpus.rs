//! The bad-input corpus (tests/data/bad/cases.tsv): every case gets its expected exit code and a
//! clear message or flag, never a panic, and rows in = rows out whenever a table is written.

use crate::{setup, Env, Run};

const GOOD_TABLE: &str = "country,year,value\nFrance,2020,1\nChile,2020,2\n";

fn check(run: &Run, case: &str, code: i32, expected: &str) {
    let all = format!("{}{}", run.stdout, run.stderr);
    assert!(!all.contains("panicked"), "{case}: panic\n{all}");
    assert_eq!(run.code, code, "{case}: exit code\n{all}");
    assert!(
        all.contains(expected),
        "{case}: expected {expected:?} in\n{all}"
    );
    if code == 2 {
        assert!(
            run.stdout.is_empty(),
            "{case}: nothing may be written on an error"
        );
        assert!(
            run.stderr.contains("what to do"),
            "{case}: every error says what to do\n{}",
            run.stderr
        );
    }
    if code == 0 && run.stderr.contains(" row(s) in, ") {
        let counts: Vec<&str> = run.stderr.split(" row(s) ").collect();
        let rows_in = counts[0].rsplit(' ').next().unwrap();
        let rows_out = counts[1].rsplit(' ').next().unwrap();
        assert_eq!(rows_in, rows_out, "{case}: rows in = rows out");
    }
}

#[test]
fn every_case_of_the_corpus_gets_its_message_or_flag() {
    let env = setup();
    let dir = env.repo.join("tests/data/bad");
    let index = std::fs::read_to_string(dir.join("cases.tsv")).unwrap();
    let good = env.write("good.csv", GOOD_TABLE);
    let mut count = 0;
    for line in index
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
    {
        let fields: Vec<&str> = line.split('\t').collect();
        let (case, extra, code, expected) = (
            fields[0],
            fields[1],
            fields[2].parse::<i32>().unwrap(),
            fields[3],
        );
        let mut args: Vec<String> = vec!["adjust".into()];
        match case.split_once(':') {
            Some(("ok", refs)) => args.extend([
                good.clone(),
                "--refs".into(),
                dir.join(refs).display().to_string(),
            ]),
            Some(("alias", file)) => args.extend([
                good.clone(),
                "--aliases".into(),
                dir.join(file).display().to_string(),
            ]),
            _ => args.push(dir.join(case).display().to_string()),
        }
        args.extend(extra.split_whitespace().map(String::from));
        args.extend(["--format".into(), "csv".into()]);
        let argv: Vec<&str> = args.iter().map(String::as_str).collect();
        check(&env.run(&argv), case, code, expected);
        count += 1;
    }
    assert!(count >= 30, "the corpus has {count} cases");
}

fn run_path(env: &Env, path: &str) -> Run {
    env.run(&["adjust", path, "--format", "csv"])
}

#[test]
fn paths_that_are_not_files() {
    let env = setup();
    check(
        &run_path(&env, &env.dir.path().display().to_string()),
        "directory",
        2,
        "folder",
    );
    check(
        &run_path(&env, "does-not-exist.csv"),
        "missing",
        2,
        "does-not-exist.csv: cannot read the file",
    );
    let looped = env.path("loop.csv");
    std::os::unix::fs::symlink(&looped, &looped).unwrap();
    check(
        &run_path(&env, &looped.display().to_string()),
        "symlink loop",
        2,
        "cannot read the file",
    );
}

#[test]
fn a_ten_megabyte_field_is_reported_briefly() {
    let env = setup();
    let huge = format!(
        "country,year,value\nFrance,2020,{}\n",
        "9x".repeat(5 * 1024 * 1024)
    );
    let path = env.write("huge.csv", &huge);
    let run = run_path(&env, &path);
    check(&run, "10 MB field", 2, "line 2, column \"value\"");
    assert!(
        run.stderr.len() < 2000,
        "the message quotes a short piece of the cell, not 10 MB"
    );
}

#[test]
fn inputs_beyond_the_size_limit_are_refused_before_reading() {
    let env = setup();
    let path = env.write(
        "big.csv",
        &format!("country,year,value\n{}", "France,2020,1\n".repeat(100_000)),
    );
    let run = env.run(&["adjust", &path, "--max-input-mb", "1"]);
    check(&run, "size limit", 2, "larger than 1 MB (--max-input-mb)");
}

#[test]
fn unwritable_output_leaves_the_earlier_file_alone() {
    // Root may write into a read-only folder, so as root (as CI runs) the binary is run as the
    // unprivileged user nobody through setpriv (util-linux); the failure branch always runs.
    let env = setup();
    use std::os::unix::fs::PermissionsExt;
    std::fs::set_permissions(env.dir.path(), std::fs::Permissions::from_mode(0o755)).unwrap();
    let input = env.write("in.csv", GOOD_TABLE);
    let out_dir = env.path("locked");
    std::fs::create_dir(&out_dir).unwrap();
    let out = out_dir.join("out.csv");
    std::fs::write(&out, "earlier output\n").unwrap();
    std::fs::set_permissions(&out_dir, std::fs::Permissions::from_mode(0o555)).unwrap();
    let as_root = std::process::Command::new("id")
        .arg("-u")
        .output()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim() == "0")
        .unwrap_or(false);
    let binary = env!("CARGO_BIN_EXE_levelfield");
    let args = ["adjust", input.as_str(), "-o", out.to_str().unwrap()];
    let output = if as_root {
        std::process::Command::new("setpriv")
            .args(["--reuid=65534", "--regid=65534", "--clear-groups", binary])
            .args(args)
            .current_dir(env.dir.path())
            .output()
            .expect("setpriv (util-linux) is needed to test a failed write as root")
    } else {
        std::process::Command::new(binary)
            .args(args)
            .current_dir(env.dir.path())
            .output()
            .unwrap()
    };
    std::fs::set_permissions(&out_dir, std::fs::Permissions::from_mode(0o755)).unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("temporary file"), "{stderr}");
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "earlier output\n");
    let leftovers: Vec<_> = std::fs::read_dir(&out_dir).unwrap().collect();
    assert_eq!(leftovers.len(), 1, "{leftovers:?}");
    let run = env.run(&["adjust", &input, "-o", &out_dir.display().to_string()]);
    check(&run, "output is a folder", 2, "this path is a folder");
}

/// A determinism property (same bytes across runs and thread counts), not a check of the figures:
/// those are checked against published values in world.rs and published.rs.
#[test]
fn output_is_identical_across_runs_and_thread_counts() {
    let env = setup();
    let args = ["demo", "--format", "csv"];
    let first = env.run(&args);
    let again = env.run(&args);
    assert_eq!(first.stdout, again.stdout);
    let mut command = std::process::Command::new(env!("CARGO_BIN_EXE_levelfield"));
    let single = command
        .args(args)
        .env("POLARS_MAX_THREADS", "1")
        .output()
        .unwrap();
    assert_eq!(String::from_utf8_lossy(&single.stdout), first.stdout);
    let margins = ["demo", "--margins", "--format", "json"];
    let a = env.run(&margins);
    let mut command = std::process::Command::new(env!("CARGO_BIN_EXE_levelfield"));
    let b = command
        .args(margins)
        .env("POLARS_MAX_THREADS", "1")
        .output()
        .unwrap();
    assert_eq!(String::from_utf8_lossy(&b.stdout), a.stdout);
}

#[test]
fn an_output_over_a_reference_file_is_refused_and_the_file_kept() {
    let env = setup();
    let input = env.write("in.csv", GOOD_TABLE);
    let refs = env.path("refs");
    std::fs::create_dir(&refs).unwrap();
    std::fs::write(
        refs.join("datapackage.json"),
        r#"{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"}]}"#,
    )
    .unwrap();
    std::fs::write(refs.join("ppp.csv"), "country,2020\nFrance,0.7\n").unwrap();
    let target = refs.join("ppp.csv").display().to_string();
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs.display().to_string(),
        "-o",
        &target,
    ]);
    check(
        &run,
        "output over a reference",
        2,
        "would overwrite an input file",
    );
    assert_eq!(
        std::fs::read_to_string(refs.join("ppp.csv")).unwrap(),
        "country,2020\nFrance,0.7\n"
    );
    assert_eq!(
        std::fs::read_to_string(&input).unwrap(),
        GOOD_TABLE,
        "the input is never modified"
    );
}
