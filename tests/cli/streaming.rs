//! `--streaming` gives the in-memory output byte for byte, on generated tables of a few hundred
//! thousand rows cut into many pieces. The tables are generated here (deterministic, not
//! invented figures of any real place: random numbers over the country-refs fixture's codes).

use crate::setup;

/// A small deterministic generator (SplitMix64), so the table is the same on every run.
struct Numbers(u64);

impl Numbers {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }
}

const CODES: &[(&str, &str)] = &[
    ("KOR", "KRW"),
    ("Turkiye", "TRY"),
    ("CZE", "CZK"),
    ("Côte d'Ivoire", "XOF"),
    ("VNM", "VND"),
    ("France", "EUR"),
    ("USA", "USD"),
    ("World", ""),
];

/// A long table with every kind of cell the reader flags: missing values, footnote marks,
/// thousands separators inside quotes, aggregates, years without a population figure, and a
/// figure in the base currency only near the end (the last piece changes the columns). Each
/// entity, year and item is one row, so the rows are ranked, but for one row in 997 that
/// repeats the series of the row before it (flagged several_series).
fn long_table(rows: usize) -> String {
    let mut n = Numbers(20261202);
    let mut out = String::from("country,year,item,currency,value\n");
    for i in 0..rows {
        let series = if i % 997 == 0 && i > 0 { i - 1 } else { i };
        let (entity, currency) = CODES[series % CODES.len()];
        let year = 2020 + (series / CODES.len()) % 4;
        let item = format!("item {:05}", series / (CODES.len() * 4));
        let whole = n.below(2_000_000);
        let value = match n.below(40) {
            0 => "..".to_string(),
            1 => format!("{whole}*"),
            2 => format!("\"{},{:03}.5\"", whole / 1000, whole % 1000),
            _ => format!("{whole}.{}", n.below(100)),
        };
        let currency = if i + 10 > rows && entity != "World" {
            "USD"
        } else {
            currency
        };
        out.push_str(&format!("{entity},{year},{item},{currency},{value}\n"));
    }
    out.push_str("\nSource: generated for the levelfield streaming test\n");
    out
}

/// The same `adjust` run over the whole file, to whole.csv, and in pieces of `chunk` MB, to
/// pieces.csv; `args` follow the input and its reference tables.
fn whole_and_in_pieces(
    env: &crate::Env,
    input: &str,
    args: &[&str],
    chunk: &str,
) -> (crate::Run, crate::Run) {
    let refs = env.data("country-refs");
    let run = [&["adjust", input, "--refs", &refs][..], args].concat();
    let whole = env.run(&[&run[..], &["-o", "whole.csv", "--max-input-mb", "64"]].concat());
    let pieces = ["-o", "pieces.csv", "--streaming", "--chunk-mb", chunk];
    let streamed = env.run(&[&run[..], &pieces[..]].concat());
    (whole, streamed)
}

/// The steps and columns of most tables here: ppp, grouped by item, currencies from their
/// column.
const PPP_BY_ITEM: [&str; 6] = [
    "--steps",
    "ppp",
    "--group",
    "item",
    "--currency",
    "currency",
];

/// Both runs of `whole_and_in_pieces` in 0.2 MB pieces, which must succeed: their outputs, and
/// the streamed run's summary.
fn run_both(env: &crate::Env, input: &str, extra: &[&str]) -> (Vec<u8>, Vec<u8>, String) {
    let args = [&["--format", "csv"][..], extra].concat();
    let (whole, pieces) = whole_and_in_pieces(env, input, &args, "0.2");
    assert_eq!(whole.code, 0, "{}", whole.stderr);
    assert_eq!(pieces.code, 0, "{}", pieces.stderr);
    (
        std::fs::read(env.path("whole.csv")).unwrap(),
        std::fs::read(env.path("pieces.csv")).unwrap(),
        pieces.stderr,
    )
}

#[test]
fn streaming_output_is_byte_identical_on_a_generated_long_table() {
    let env = setup();
    let input = env.write("long.csv", &long_table(200_000));
    let (whole, pieces, summary) = run_both(
        &env,
        &input,
        &[
            "--steps",
            "ppp,per-capita",
            "--per",
            "1000",
            "--group",
            "item",
            "--currency",
            "currency",
            "--lenient",
        ],
    );
    assert!(
        summary.contains("200000 row(s) in, 200000 row(s) out"),
        "{summary}"
    );
    let count: usize = summary
        .split("read in ")
        .nth(1)
        .and_then(|s| s.split(' ').next())
        .and_then(|n| n.parse().ok())
        .unwrap_or(0);
    assert!(count > 20, "expected many pieces: {summary}");
    // The note below the table is set aside in streaming too.
    assert!(summary.contains("below the table"), "{summary}");
    assert_eq!(whole.len(), pieces.len());
    assert!(
        whole == pieces,
        "streaming output differs from the in-memory output"
    );
    // Base-currency rows near the end gave every row the same columns as the whole run.
    assert!(String::from_utf8_lossy(&whole[..400]).contains("value_lcu"));
    // The comparison covers ranks: most rows are ranked, the repeated series are not.
    let text = String::from_utf8_lossy(&whole);
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap_or_default().split(',').collect();
    let rank = header.iter().position(|h| *h == "rank_adjusted").unwrap();
    let ranked = lines
        .filter(|l| !l.contains('"'))
        .filter(|l| l.split(',').nth(rank).is_some_and(|r| !r.is_empty()))
        .count();
    // (About a third: aggregates, missing values and years without a population are not.)
    assert!(ranked > 50_000, "only {ranked} ranked rows");
    assert!(summary.contains("several_series"), "{summary}");
}

#[test]
fn streaming_output_is_byte_identical_on_a_wide_table_and_refuses_what_it_cannot_do() {
    let env = setup();
    let mut n = Numbers(7);
    let mut text = String::from("Economy,2020,2021,2022,2023\n");
    for _ in 0..20_000 {
        let (entity, _) = CODES[n.below(CODES.len() as u64) as usize];
        let cells: Vec<String> = (0..4).map(|_| n.below(100_000).to_string()).collect();
        text.push_str(&format!("{entity},{}\n", cells.join(",")));
    }
    let input = env.write("wide.csv", &text);
    let (whole, pieces, _) = run_both(
        &env,
        &input,
        &[
            "--steps",
            "ppp,per-capita",
            "--allow-unresolved",
            "--decimals",
            "2",
        ],
    );
    assert!(
        whole == pieces,
        "streaming output differs from the in-memory output"
    );

    let refs = env.data("country-refs");
    for (extra, words) in [
        (vec!["--format", "md", "-o", "x.md"], "writes csv to a file"),
        (
            vec!["-o", "x.csv", "--moe", "m", "--margin-confidence", "90"],
            "margins of error",
        ),
        (vec!["-o", "x.csv", "--report", "r.html"], "HTML report"),
        (vec!["-o", "x.csv", "--encoding", "utf-16le"], "UTF-16"),
    ] {
        let mut args = vec![
            "adjust",
            &input,
            "--refs",
            &refs,
            "--steps",
            "ppp",
            "--streaming",
        ];
        args.extend(extra);
        let run = env.run(&args);
        assert_eq!(run.code, 2, "{}", run.stderr);
        assert!(run.stderr.contains(words), "{words}: {}", run.stderr);
    }
}

#[test]
fn streaming_errors_keep_the_line_of_the_whole_file() {
    let env = setup();
    let mut text = String::from("country,year,value\n");
    for i in 0..20_000 {
        text.push_str(&format!("FRA,2020,{i}\n"));
    }
    text.push_str("FRA,2020,twelve\n");
    let input = env.write("bad.csv", &text);
    let refs = env.data("country-refs");
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "ppp",
        "--streaming",
        "--chunk-mb",
        "0.05",
        "-o",
        "x.csv",
    ]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("line 20002"), "{}", run.stderr);
    assert!(
        !env.path("x.csv").exists(),
        "no output is left behind by a failed run"
    );
}

#[test]
fn a_batch_of_streamed_tables_runs_them_side_by_side_and_writes_what_single_runs_write() {
    // Batch jobs run on the thread pool, where a streamed table's pieces are read and written
    // too: a writer waiting on the pool that its own job holds would stop every job (it did).
    let env = setup();
    std::fs::create_dir(env.path("incoming")).unwrap();
    let table = long_table(30_000);
    for name in ["a", "b", "c", "d"] {
        env.write(&format!("incoming/{name}.csv"), &table);
    }
    let recipe = format!(
        "refs = \"{}\"\nsteps = [\"ppp\"]\nstreaming = true\nchunk_mb = 0.2\n\n[columns]\ngroup = \"item\"\ncurrency = \"currency\"\nlenient = true\n",
        env.data("country-refs")
    );
    env.write("streamed.toml", &recipe);
    env.write(
        "batch.toml",
        "[[run]]\nrecipe = \"streamed.toml\"\ninputs = \"incoming/*.csv\"\n",
    );
    let run = env.run_within(
        &["batch", "batch.toml"],
        std::time::Duration::from_secs(120),
    );
    assert_eq!(run.code, 0, "{}{}", run.stdout, run.stderr);
    let single = env.run(&[
        "adjust",
        "--recipe",
        "streamed.toml",
        "incoming/a.csv",
        "-o",
        "single.csv",
    ]);
    assert_eq!(single.code, 0, "{}", single.stderr);
    let alone = std::fs::read(env.path("single.csv")).unwrap();
    for name in ["a", "b", "c", "d"] {
        let batch = std::fs::read(env.path(&format!("incoming/{name}-adjusted.csv"))).unwrap();
        assert!(
            batch == alone,
            "batch output of {name} differs from its single run"
        );
    }
}

#[test]
fn streaming_reads_a_table_whose_header_row_is_given() {
    // --header-row names the header's line in the file; every later piece starts with a copy
    // of the header, so the option must not be applied to them again (it was: exit 2).
    let env = setup();
    let input = env.write(
        "titled.csv",
        &format!("Fees, a title line\n{}", long_table(20_000)),
    );
    let args = [&PPP_BY_ITEM[..], &["--lenient", "--header-row", "2"]].concat();
    let (whole, pieces, _) = run_both(&env, &input, &args);
    assert!(
        whole == pieces,
        "streaming output differs from the in-memory output"
    );
}

/// A run's summary without the lines that differ by design: how the file was cut, and the
/// output's name.
fn summary_of_the_table(stderr: &str) -> Vec<&str> {
    stderr
        .lines()
        .filter(|l| !l.starts_with("  streaming:") && !l.starts_with("  wrote "))
        .collect()
}

#[test]
fn the_summary_of_a_streamed_run_counts_what_every_piece_set_aside() {
    // The summary was the first piece's: names left unresolved, lines set aside and empty
    // lines inside the table in later pieces were missing or listed apart; a semicolon table's
    // grouped figures counted in the first piece only.
    let env = setup();
    let body = long_table(30_000);
    let mut lines: Vec<String> = body.lines().map(str::to_string).collect();
    for (at, name) in [(3, "Atlantis"), (20_000, "Lemuria"), (25_000, "Atlantis")] {
        lines[at] = lines[at].replacen(lines[at].split(',').next().unwrap(), name, 1);
    }
    for at in [5_000, 12_000, 29_000] {
        lines.insert(at, String::new());
    }
    let titled = format!(
        "Fees by country, invented for this test\n{}\n",
        lines.join("\n")
    );
    // A quote opened near the end and never closed: the lines after it are read as written.
    let table_only = body.split("\n\n").next().unwrap();
    let quoted =
        format!("{table_only}\nKOR,2020,item 09000,KRW,\"12\nKOR,2021,item 09000,KRW,13\n");
    // The same table separated by semicolons, a figure in ten written 1,234 (one thousand
    // two hundred and thirty-four, read with the comma as a thousands separator).
    let mut semicolon = String::from("country;year;item;currency;value\n");
    let mut reader = csv::Reader::from_reader(table_only.as_bytes());
    for (i, record) in reader.records().enumerate() {
        let mut cells: Vec<String> = record.unwrap().iter().map(str::to_string).collect();
        if i % 10 == 0 || cells[4].contains(',') {
            cells[4] = "1,234".into();
        }
        semicolon.push_str(&format!("{}\n", cells.join(";")));
    }
    let cases = [
        (
            "titled.csv",
            titled,
            vec!["--allow-unresolved", "--lenient"],
        ),
        ("quoted.csv", quoted, vec!["--lenient"]),
        ("semicolon.csv", semicolon, vec!["--lenient"]),
    ];
    for (name, text, extra) in cases {
        let input = env.write(name, &text);
        let args = [&PPP_BY_ITEM[..], &extra].concat();
        let (whole, pieces) = whole_and_in_pieces(&env, &input, &args, "0.05");
        assert_eq!(whole.code, 0, "{name}: {}", whole.stderr);
        assert_eq!(pieces.code, 0, "{name}: {}", pieces.stderr);
        assert!(pieces.stderr.contains("piece(s)"), "{}", pieces.stderr);
        assert!(
            !pieces.stderr.contains("in 1 piece(s)"),
            "{}",
            pieces.stderr
        );
        assert_eq!(
            summary_of_the_table(&whole.stderr),
            summary_of_the_table(&pieces.stderr),
            "{name}"
        );
        let expected = match name {
            "titled.csv" => "2 entity name(s) unresolved and kept flagged (--allow-unresolved): \"Atlantis\", \"Lemuria\"",
            "quoted.csv" => "2 line(s) inside an unclosed quote",
            _ => "figure(s) hold a comma read as a thousands separator",
        };
        assert!(whole.stderr.contains(expected), "{name}: {}", whole.stderr);
        assert!(
            std::fs::read(env.path("whole.csv")).unwrap()
                == std::fs::read(env.path("pieces.csv")).unwrap(),
            "{name}: streaming output differs"
        );
    }
}

#[test]
fn names_that_match_nothing_are_told_for_the_whole_file_after_its_faults() {
    // A streamed run told only the first piece's unknown names; and an unknown name in one
    // piece hid a fault of the table in a later one, which a whole-file reading tells first.
    let env = setup();
    let mut lines: Vec<String> = long_table(20_000).lines().map(str::to_string).collect();
    for (at, name) in [(100, "Narnia"), (18_000, "Oz"), (19_000, "Narnia")] {
        lines[at] = lines[at].replacen(lines[at].split(',').next().unwrap(), name, 1);
    }
    let names_only = lines.join("\n");
    lines[15_000].push_str(",an extra cell");
    let with_a_ragged_line = lines.join("\n");
    for (name, text, told) in [
        ("names.csv", names_only, "2 entity name(s) match no"),
        ("ragged.csv", with_a_ragged_line, "6 field(s) on this line"),
    ] {
        let input = env.write(name, &text);
        let args = [&PPP_BY_ITEM[..], &["--lenient"]].concat();
        let (whole, streamed) = whole_and_in_pieces(&env, &input, &args, "0.05");
        assert_eq!((whole.code, streamed.code), (2, 2), "{name}");
        assert!(whole.stderr.contains(told), "{name}: {}", whole.stderr);
        assert_eq!(whole.stderr, streamed.stderr, "{name}");
        assert!(!env.path("pieces.csv").exists(), "{name}");
    }
}

#[test]
fn a_quote_inside_a_cell_does_not_move_where_pieces_end() {
    // An inch mark (`5" screens`) is a character to the csv reader; the cutter took it for an
    // opening quote, ended a piece inside a later quoted cell that spans two lines, and the
    // streamed run failed (exit 2) where the in-memory run read the file.
    let env = setup();
    let mut text = String::from("country,year,item,currency,value\n");
    for i in 0..4_000 {
        let row = match i {
            1_500 => "KOR,2021,item 5\" screens,KRW,7".to_string(),
            3_000 => "\"a, b\nc\",2020,item X,KRW,1".to_string(),
            _ => format!("KOR,{},item {i},KRW,{i}.5", 2020 + i % 4),
        };
        text.push_str(&row);
        text.push('\n');
    }
    let input = env.write("inch.csv", &text);
    for chunk in ["0.02", "0.05"] {
        let args = [&PPP_BY_ITEM[..], &["--lenient", "--allow-unresolved"]].concat();
        let (whole, streamed) = whole_and_in_pieces(&env, &input, &args, chunk);
        assert_eq!(whole.code, 0, "{}", whole.stderr);
        assert_eq!(streamed.code, 0, "{chunk}: {}", streamed.stderr);
        assert!(
            std::fs::read(env.path("whole.csv")).unwrap()
                == std::fs::read(env.path("pieces.csv")).unwrap(),
            "{chunk}: streaming output differs"
        );
    }
}
