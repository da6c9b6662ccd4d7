//! `levelfield batch MANIFEST.toml`: many recipes, or one recipe over every table a pattern
//! matches, in one command. Each table is exactly the run `adjust --recipe` would make (the
//! same merge, plan and writer), so a batch output is byte-identical to the single run.
//!
//! Tables run in parallel on polars' own thread pool, so the batch and the engine share one set
//! of threads (POLARS_MAX_THREADS bounds both) instead of oversubscribing the cores. One failing
//! table does not stop the others unless `--fail-fast`; the final table lists every input with
//! its rows, flags, status and output, and the exit code is 1 when any failed.

use super::Outcome;
use crate::cli::{AdjustArgs, BatchArgs};
use crate::error::{Error, Result};
use crate::recipe;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use rayon::prelude::*;
use serde::Deserialize;
use std::collections::BTreeMap;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use toml::Spanned;

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct Manifest {
    output_dir: Option<Spanned<String>>,
    #[serde(default)]
    run: Vec<Spanned<RunEntry>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RunEntry {
    recipe: Spanned<String>,
    inputs: Option<Spanned<String>>,
}

/// One table to adjust.
#[derive(Debug, Clone)]
struct Job {
    recipe: PathBuf,
    /// The input matched by a pattern (None: the recipe's own).
    input: Option<PathBuf>,
    /// Set when the job cannot even start (a pattern matching nothing).
    problem: Option<String>,
    glob: bool,
}

/// How one table went.
#[derive(Debug, Clone)]
pub struct JobResult {
    pub input: String,
    pub rows_in: Option<usize>,
    pub rows_out: Option<usize>,
    pub rows_flagged: Option<usize>,
    pub status: Status,
    pub output: Option<PathBuf>,
}

#[derive(Debug, Clone, PartialEq)]
pub enum Status {
    Done,
    Failed(String),
    Skipped,
}

pub fn run(args: &BatchArgs) -> Result<Outcome> {
    let (jobs, output_dir) = read_manifest(&args.manifest, args.allow_outside)?;
    let results = run_jobs(&jobs, output_dir.as_deref(), args)?;
    let failed = results
        .iter()
        .filter(|r| matches!(r.status, Status::Failed(_)))
        .count();
    if !args.quiet || failed > 0 {
        super::write_stdout(&render_results(&results))?;
    }
    for r in &results {
        if let Status::Failed(message) = &r.status {
            eprintln!("error in {}: {message}\n", r.input);
        }
    }
    Ok(if failed > 0 {
        Outcome::Findings
    } else {
        Outcome::Ok
    })
}

fn manifest_error(
    label: &str,
    text: &str,
    span: std::ops::Range<usize>,
    key: &str,
    problem: impl Into<String>,
    fix: impl Into<String>,
) -> Error {
    let (line, column) = recipe::line_column(text, span.start);
    Error::Recipe {
        file: label.to_string(),
        line,
        column,
        key: key.to_string(),
        problem: problem.into(),
        fix: fix.into(),
    }
}

/// The jobs of one `[[run]]` entry: its recipe alone, or with each file its pattern matches
/// (a job that says so when none does). `within` places a manifest path in its folder.
fn entry_jobs(
    entry: &RunEntry,
    label: &str,
    text: &str,
    within: &dyn Fn(&str) -> PathBuf,
) -> Result<Vec<Job>> {
    let mut jobs = Vec::new();
    let recipe = within(entry.recipe.get_ref());
    if !recipe.is_file() {
        return Err(manifest_error(
            label,
            text,
            entry.recipe.span(),
            "recipe",
            format!("{} is not a file", recipe.display()),
            "name a recipe file relative to the manifest's folder",
        ));
    }
    let Some(pattern) = &entry.inputs else {
        return Ok(vec![Job {
            recipe,
            input: None,
            problem: None,
            glob: false,
        }]);
    };
    let full = within(pattern.get_ref());
    let matches = glob::glob(&full.to_string_lossy()).map_err(|e| {
        manifest_error(
            label,
            text,
            pattern.span(),
            "inputs",
            format!("\"{}\" is not a file pattern: {}", pattern.get_ref(), e.msg),
            "use * and ? wildcards, for example incoming/*.csv",
        )
    })?;
    // Outputs of an earlier batch sit beside their inputs; a pattern never picks them up.
    let mut inputs: Vec<PathBuf> = matches
        .flatten()
        .filter(|p| p.is_file() && !is_levelfield_output(p))
        .collect();
    inputs.sort();
    if inputs.is_empty() {
        jobs.push(Job {
            recipe: recipe.clone(),
            input: Some(full.clone()),
            problem: Some(format!(
                "no file matches {} (manifest line {})",
                full.display(),
                recipe::line_column(text, pattern.span().start).0
            )),
            glob: true,
        });
    }
    for input in inputs {
        jobs.push(Job {
            recipe: recipe.clone(),
            input: Some(input),
            problem: None,
            glob: true,
        });
    }
    Ok(jobs)
}

/// Reads the manifest and expands patterns into jobs, in manifest order.
fn read_manifest(path: &Path, allow_outside: bool) -> Result<(Vec<Job>, Option<PathBuf>)> {
    let label = path.display().to_string();
    let bytes = crate::source::read_file(path)?;
    let text = String::from_utf8_lossy(&bytes).into_owned();
    let manifest: Manifest = toml::from_str(&text).map_err(|e| {
        let span = e.span().unwrap_or(0..0);
        manifest_error(
            &label,
            &text,
            span,
            "",
            e.message().trim(),
            "a manifest holds output_dir and [[run]] entries with recipe and inputs (see `levelfield batch --help`)",
        )
    })?;
    let folder = path.parent().unwrap_or(Path::new("")).to_path_buf();
    let within = |p: &str| -> PathBuf {
        if Path::new(p).is_absolute() {
            PathBuf::from(p)
        } else {
            folder.join(p)
        }
    };
    if manifest.run.is_empty() {
        return Err(manifest_error(
            &label,
            &text,
            0..0,
            "run",
            "the manifest lists no [[run]]",
            "add a [[run]] entry with recipe = \"FILE.toml\"",
        ));
    }
    let mut jobs = Vec::new();
    for entry in &manifest.run {
        jobs.extend(entry_jobs(entry.get_ref(), &label, &text, &within)?);
    }
    if let Some(dir) = &manifest.output_dir {
        if !allow_outside && !crate::source::stays_inside(&folder, dir.get_ref()) {
            return Err(manifest_error(
                &label,
                &text,
                dir.span(),
                "output_dir",
                format!("\"{}\" is outside the manifest's folder", dir.get_ref()),
                "put output_dir inside the manifest's folder, or pass --allow-outside on the command line",
            ));
        }
    }
    let output_dir = manifest.output_dir.map(|d| within(d.get_ref()));
    if let Some(dir) = &output_dir {
        if !dir.is_dir() {
            std::fs::create_dir_all(dir).map_err(|e| Error::io(dir.display(), "create", e))?;
        }
    }
    Ok((jobs, output_dir))
}

/// The arguments of one job: the recipe's, with the pattern's input and a placed output.
fn job_plan(
    job: &Job,
    output_dir: Option<&Path>,
    allow_outside: bool,
) -> Result<(AdjustArgs, crate::plan::AdjustPlan)> {
    let mut argv: Vec<std::ffi::OsString> = vec![
        "levelfield".into(),
        "adjust".into(),
        "--recipe".into(),
        job.recipe.clone().into_os_string(),
    ];
    if allow_outside {
        argv.push("--allow-outside".into());
    }
    if let Some(input) = &job.input {
        argv.extend(["--".into(), input.clone().into_os_string()]);
    }
    let cli = crate::cli::parse_from(argv)
        .map_err(|e| Error::usage(format!("batch job: {e}"), "report this as a bug"))?;
    let crate::cli::Command::Adjust(args) = cli.command else {
        return Err(Error::usage(
            "batch job is not an adjust run",
            "report this as a bug",
        ));
    };
    let place_outputs = |args: &mut AdjustArgs| -> Result<()> {
        let input =
            match args.input.as_deref() {
                None | Some("-") => return Err(Error::usage(
                    format!("{}: a batch run needs an input file", job.recipe.display()),
                    "set input in the recipe, or inputs = \"PATTERN\" in the manifest's [[run]]",
                )),
                Some(input) => PathBuf::from(input),
            };
        let format = args
            .output
            .format
            .or_else(|| {
                args.output
                    .output
                    .as_deref()
                    .and_then(crate::report::Format::from_path)
            })
            .unwrap_or(crate::report::Format::Csv);
        // The terminal table is for reading, not for a file: a batch writes csv instead, and
        // names the file for what it holds.
        let format = if format == crate::report::Format::Table {
            args.output.format = Some(crate::report::Format::Csv);
            crate::report::Format::Csv
        } else {
            format
        };
        let keep_own = output_dir.is_none() && !job.glob && args.output.output.is_some();
        if !keep_own {
            let base = adjusted_base(&input, output_dir);
            let with_suffix = |suffix: &str| {
                let name = base.file_name().unwrap_or_default().to_string_lossy();
                base.with_file_name(format!("{name}.{suffix}"))
            };
            let out = with_suffix(format.extension());
            if args.output.methods.is_some() {
                args.output.methods = Some(with_suffix("methods.md"));
            }
            if args.output.report.is_some() {
                args.output.report = Some(with_suffix("report.html"));
            }
            args.output.output = Some(out);
            args.output.format = args.output.format.or(Some(format));
        }
        args.output.quiet = true;
        Ok(())
    };
    recipe::resolve_with(*args, place_outputs)
}

fn run_jobs(jobs: &[Job], output_dir: Option<&Path>, args: &BatchArgs) -> Result<Vec<JobResult>> {
    // Plans first (cheap: recipes only), so that two jobs writing one file is caught before any
    // table is read.
    let mut planned_outputs: BTreeMap<PathBuf, String> = BTreeMap::new();
    let bar = if args.quiet || !std::io::stderr().is_terminal() {
        ProgressBar::with_draw_target(Some(jobs.len() as u64), ProgressDrawTarget::hidden())
    } else {
        ProgressBar::new(jobs.len() as u64)
    };
    bar.set_style(
        ProgressStyle::with_template("{bar:30.cyan/blue} {pos}/{len} tables  {elapsed}  {msg}")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    for job in jobs.iter().filter(|j| j.problem.is_none()) {
        if let Some(out) = expected_output(job, output_dir) {
            let input = job
                .input
                .as_ref()
                .map(|p| p.display().to_string())
                .unwrap_or_else(|| job.recipe.display().to_string());
            if let Some(other) = planned_outputs.insert(out.clone(), input.clone()) {
                return Err(Error::usage(
                    format!(
                        "{other} and {input} would both be written to {}",
                        out.display()
                    ),
                    "give the inputs different file names, or drop output_dir so each output is written beside its input",
                ));
            }
        }
    }
    let stop = AtomicBool::new(false);
    let run_one = |job: &Job| -> JobResult {
        let label = job
            .input
            .as_ref()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| format!("(input of {})", job.recipe.display()));
        let mut result = JobResult {
            input: label.clone(),
            rows_in: None,
            rows_out: None,
            rows_flagged: None,
            status: Status::Skipped,
            output: None,
        };
        if args.fail_fast && stop.load(Ordering::SeqCst) {
            return result;
        }
        let outcome = match &job.problem {
            Some(problem) => Err(Error::usage(
                problem.clone(),
                "check the pattern in the manifest",
            )),
            None => job_plan(job, output_dir, args.allow_outside).and_then(|(_, plan)| {
                result.input = plan.input_label.clone();
                result.output = plan.output.path.clone();
                super::adjust::execute(plan)
            }),
        };
        match outcome {
            Ok(output) => {
                result.rows_in = Some(output.summary.rows_in);
                result.rows_out = Some(output.summary.rows_out);
                result.rows_flagged = Some(output.summary.rows_flagged);
                result.status = Status::Done;
            }
            Err(error) => {
                stop.store(true, Ordering::SeqCst);
                result.output = None;
                result.status = Status::Failed(error.to_string());
            }
        }
        bar.set_message(label);
        bar.inc(1);
        result
    };
    let results = if args.fail_fast {
        // In order, one at a time: "stop at the first failure" then means the first in the list.
        jobs.iter().map(run_one).collect()
    } else {
        polars_core::runtime::THREAD_POOL.install(|| jobs.par_iter().map(run_one).collect())
    };
    bar.finish_and_clear();
    Ok(results)
}

/// Where a job will write, when that is known before its recipe is merged (pattern jobs and
/// jobs under output_dir); used only to catch two jobs writing one file.
fn expected_output(job: &Job, output_dir: Option<&Path>) -> Option<PathBuf> {
    Some(adjusted_base(job.input.as_ref()?, output_dir))
}

/// FOLDER/STEM-adjusted for an input: beside it, or in the manifest's output_dir. Outputs add
/// their extension to it (`.csv`, `.methods.md`, `.report.html`).
fn adjusted_base(input: &Path, output_dir: Option<&Path>) -> PathBuf {
    let stem = input
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "table".into());
    let folder = output_dir
        .map(Path::to_path_buf)
        .unwrap_or_else(|| input.parent().unwrap_or(Path::new("")).to_path_buf());
    folder.join(format!("{stem}-adjusted"))
}

/// Files a batch writes: NAME-adjusted.EXT and its methods note and report.
fn is_levelfield_output(path: &Path) -> bool {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let stem = name.split('.').next().unwrap_or("");
    stem.ends_with("-adjusted")
}

/// The summary table: one line per input.
pub fn render_results(results: &[JobResult]) -> String {
    let mut builder = tabled::builder::Builder::default();
    builder.push_record([
        "input", "rows in", "rows out", "flagged", "status", "output",
    ]);
    let number = |n: Option<usize>| n.map(|n| n.to_string()).unwrap_or_else(|| "-".into());
    for r in results {
        builder.push_record([
            r.input.clone(),
            number(r.rows_in),
            number(r.rows_out),
            number(r.rows_flagged),
            match &r.status {
                Status::Done => "done".into(),
                Status::Failed(_) => "FAILED".into(),
                Status::Skipped => "skipped".into(),
            },
            r.output
                .as_ref()
                .map(|p| p.display().to_string())
                .unwrap_or_else(|| "-".into()),
        ]);
    }
    let done = results.iter().filter(|r| r.status == Status::Done).count();
    let failed = results
        .iter()
        .filter(|r| matches!(r.status, Status::Failed(_)))
        .count();
    let skipped = results.len() - done - failed;
    let mut table = builder.build();
    table.with(tabled::settings::Style::sharp());
    format!(
        "{table}\n{} table(s): {done} done, {failed} failed, {skipped} skipped\n",
        results.len()
    )
}
