//! Integration tests: the `levelfield` binary run as a user runs it, on fixtures in
//! tests/data and golden files in tests/golden. `setup()` gives each test a scratch folder and
//! a runner; `LEVELFIELD_UPDATE_GOLDEN=1 cargo test` rewrites the golden files.

mod adjust;
mod audit;
mod audit_engine;
mod browser;
mod corpus;
mod errors;
mod fuzz_replay;
mod golden;
mod hostile;
mod labels;
mod layouts;
mod options;
mod properties;
mod published;
mod recipes;
mod refs;
mod streaming;
mod uncertainty;
mod world;

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::Command;

pub struct Env {
    pub dir: tempfile::TempDir,
    pub repo: PathBuf,
}

pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

impl Run {
    fn of(out: std::process::Output) -> Run {
        Run {
            code: out.status.code().unwrap_or(-1),
            stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
            stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
        }
    }

    /// The csv on stdout as rows of column → cell.
    pub fn rows(&self) -> Vec<HashMap<String, String>> {
        let mut reader = csv::Reader::from_reader(self.stdout.as_bytes());
        let headers = reader.headers().expect("csv header").clone();
        reader
            .records()
            .map(|r| {
                let r = r.expect("csv record");
                headers
                    .iter()
                    .zip(r.iter())
                    .map(|(h, v)| (h.to_string(), v.to_string()))
                    .collect()
            })
            .collect()
    }
}

pub fn setup() -> Env {
    Env {
        dir: tempfile::tempdir().expect("temp dir"),
        repo: PathBuf::from(env!("CARGO_MANIFEST_DIR")),
    }
}

impl Env {
    pub fn data(&self, name: &str) -> String {
        self.repo
            .join("tests/data")
            .join(name)
            .display()
            .to_string()
    }

    pub fn write(&self, name: &str, text: &str) -> String {
        let path = self.dir.path().join(name);
        std::fs::write(&path, text).expect("write fixture");
        path.display().to_string()
    }

    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    pub fn run(&self, args: &[&str]) -> Run {
        self.run_with_stdin(args, None)
    }

    pub fn run_in(&self, subdir: &str, args: &[&str]) -> Run {
        self.spawn(&self.dir.path().join(subdir), args, None)
    }

    pub fn run_with_stdin(&self, args: &[&str], stdin: Option<&str>) -> Run {
        self.spawn(self.dir.path(), args, stdin)
    }

    fn spawn(&self, cwd: &Path, args: &[&str], stdin: Option<&str>) -> Run {
        use std::io::Write;
        let mut command = Command::new(env!("CARGO_BIN_EXE_levelfield"));
        command.args(args).current_dir(cwd);
        command
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped());
        let mut child = command.spawn().expect("run levelfield");
        if let Some(text) = stdin {
            child
                .stdin
                .take()
                .unwrap()
                .write_all(text.as_bytes())
                .unwrap();
        } else {
            drop(child.stdin.take());
        }
        Run::of(child.wait_with_output().expect("wait for levelfield"))
    }

    /// Runs levelfield in the folder, killed (and the test failed) if it takes over `limit`:
    /// for runs that could hang.
    pub fn run_within(&self, args: &[&str], limit: std::time::Duration) -> Run {
        let mut child = Command::new(env!("CARGO_BIN_EXE_levelfield"))
            .args(args)
            .current_dir(self.dir.path())
            .stdin(std::process::Stdio::null())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .expect("run levelfield");
        let started = std::time::Instant::now();
        while child.try_wait().expect("wait for levelfield").is_none() {
            if started.elapsed() > limit {
                let _ = child.kill();
                panic!("levelfield {args:?} still ran after {limit:?}: stuck");
            }
            std::thread::sleep(std::time::Duration::from_millis(50));
        }
        Run::of(child.wait_with_output().expect("wait for levelfield"))
    }
}

/// Compares `actual` with a golden file, or rewrites it when LEVELFIELD_UPDATE_GOLDEN is set.
pub fn assert_golden(name: &str, actual: &str) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/golden")
        .join(name);
    if std::env::var_os("LEVELFIELD_UPDATE_GOLDEN").is_some() {
        std::fs::write(&path, actual).expect("write golden file");
        return;
    }
    let expected = std::fs::read_to_string(&path).unwrap_or_else(|_| {
        panic!(
            "missing golden file {}; run LEVELFIELD_UPDATE_GOLDEN=1 cargo test",
            path.display()
        )
    });
    assert_eq!(
        actual,
        expected,
        "output differs from {}; if the change is intended, rerun with LEVELFIELD_UPDATE_GOLDEN=1",
        path.display()
    );
}

pub fn num(row: &HashMap<String, String>, column: &str) -> f64 {
    row[column]
        .parse::<f64>()
        .unwrap_or_else(|_| panic!("{column} = {:?} is not a number", row[column]))
}

/// Standard competition ranks of `values` (largest first), computed independently of the tool.
pub fn competition_ranks(values: &[f64]) -> Vec<i64> {
    values
        .iter()
        .map(|v| 1 + values.iter().filter(|w| *w > v).count() as i64)
        .collect()
}
