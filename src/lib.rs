//! levelfield: make cross-country tables comparable and say how.
//!
//! Module map (data flows top to bottom, see DEVELOPERS.md):
//! - `cli`: clap definitions (stage one: raw, validated arguments, no file access)
//! - `plan`: the resolved plan (stage two: files read, references loaded, steps ordered)
//! - `ingest`: reading user tables (encoding, delimiter, long/wide layout, exact numbers)
//! - `entity`: ISO 3166-1, publishers' name variants, aggregates, user alias files
//! - `resolve`: entity and currency basis of every row
//! - `reference`: the reference catalog (datapackage.json), loading, validation, coverage
//! - `attach`: reference factors per entity and year, with their years and flags
//! - `adjust`: the registry of adjustment steps (market, ppp, deflate, per-capita, per-income)
//! - `rank`: standard competition ranks and rank shifts
//! - `uncertainty`: margins of error, rank intervals, ties, poll leads
//! - `tracks`: both tracks as polars expressions, standard errors alongside
//! - `audit`: recomputing a received table's claims and diagnosing discrepancies
//! - `pipeline`: the adjust run from bytes to the output frame and its summary
//! - `report`: terminal table, csv, md, json, atomic writes, the run summary
//! - `recipe`: the adjust settings as a TOML file (read, merged under flags, saved)
//! - `batch`: many recipes or one recipe over a folder, in parallel on polars' thread pool
//! - `demo`: the bundled invented scenario
//! - `flags`, `error`, `source`: shared vocabulary, typed errors, file access

pub mod adjust;
pub mod attach;
pub mod audit;
pub mod batch;
pub mod cleanup;
pub mod cli;
pub mod demo;
pub mod entity;
pub mod error;
pub mod flags;
pub mod format;
#[doc(hidden)]
pub mod fuzz_checks;
pub mod ingest;
pub mod model;
pub mod pipeline;
pub mod plan;
pub mod rank;
pub mod recipe;
pub mod reference;
pub mod report;
pub mod resolve;
pub mod source;
pub mod staging;
pub mod streaming;
pub mod tracks;
pub mod uncertainty;
pub mod units;

use cli::{Cli, Command};
use error::Result;
use std::io::Write;

/// What a finished command tells `main`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Done, nothing to report.
    Ok,
    /// Done, with findings the caller asked to fail on (exit code 1).
    Findings,
}

/// Runs a parsed command line.
pub fn run(cli: Cli) -> Result<Outcome> {
    match cli.command {
        Command::Adjust(args) => {
            let (args, plan) = recipe::resolve(*args)?;
            execute(&plan)?;
            if let Some(path) = &args.save_recipe {
                recipe::save_to(&args, path)?;
                if !plan.output.quiet {
                    eprintln!("  wrote the recipe of this run to {}", path.display());
                }
            }
            Ok(Outcome::Ok)
        }
        Command::Batch(args) => batch::run(&args),
        Command::Refs(args) => {
            let mut resolver = entity::Resolver::builtin();
            for path in &args.aliases {
                resolver.add_alias_file(path)?;
            }
            let (title, tables) =
                reference::coverage::survey(&source::DiskDir::new(&args.dir), &resolver)?;
            write_stdout(&reference::coverage::render(&title, &tables))?;
            Ok(if tables.iter().any(|t| t.error.is_some()) {
                Outcome::Findings
            } else {
                Outcome::Ok
            })
        }
        Command::Catalog(args) => {
            let mut resolver = entity::Resolver::builtin();
            for path in &args.aliases {
                resolver.add_alias_file(path)?;
            }
            let drafted = reference::draft::draft(&args.dir, &resolver)?;
            let path =
                reference::draft::write(&args.dir, args.output.as_deref(), args.force, &drafted)?;
            for line in &drafted.lines {
                eprintln!("  {line}");
            }
            eprintln!(
                "wrote a draft catalog to {}: review each resource (kind, unit, vintage, sources), then run `levelfield refs {}`",
                path.display(),
                args.dir.display()
            );
            Ok(Outcome::Ok)
        }
        Command::Demo(args) => demo::run(&args),
        Command::Audit(args) => {
            let plan = plan::resolve_audit(&args)?;
            let report = audit::run_audit(
                &plan.input_bytes,
                &plan.input_label,
                &plan.settings,
                &plan.resolver,
                &plan.references,
            )?;
            let text = match args.format {
                cli::AuditFormat::Table => audit::report::render_text(&report),
                cli::AuditFormat::Md => audit::report::render_markdown(&report),
                cli::AuditFormat::Json => audit::report::render_json(&report),
            };
            match &args.output {
                Some(path) => report::write_atomically(path, &text)?,
                None => write_stdout(&text)?,
            }
            Ok(if report.fails(args.fail_on) {
                Outcome::Findings
            } else {
                Outcome::Ok
            })
        }
        Command::Lead(args) => {
            write_stdout(&plan::describe_lead(&args)?)?;
            Ok(Outcome::Ok)
        }
    }
}

/// Runs a resolved adjust plan: pipeline (in memory or in pieces), output, methods note,
/// report, summary.
pub fn execute(plan: &plan::AdjustPlan) -> Result<pipeline::AdjustOutput> {
    // Every output is staged and renamed into place together at the end, when all are done.
    let mut staging = report::Staging::new();
    let mut output = match &plan.streaming {
        Some(stream) => {
            let run = streaming::StreamRun {
                settings: &plan.settings,
                input_label: &plan.input_label,
                resolver: &plan.resolver,
                references: plan.references.as_ref(),
                output_path: plan.output.path.as_deref(),
                rounding: plan.output.rounding,
                guard_formulas: plan.output.guard_formulas,
                columns: &plan.output.columns,
            };
            streaming::execute(&run, stream, &mut staging)?
        }
        None => pipeline::run_adjust(
            &plan.input_bytes,
            &plan.input_label,
            &plan.settings,
            &plan.resolver,
            plan.references.as_ref(),
        )?,
    };
    if let (Some((file, _)), Some(quote)) = (&plan.recipe_file, &plan.recipe) {
        output.summary.notes.push(if quote.overridden.is_empty() {
            format!("recipe: {file}")
        } else {
            format!(
                "recipe: {file}; flags on the command line overrode its keys {}",
                quote.overridden.join(", ")
            )
        });
    }
    output.summary.notice = plan.output.notice.clone();
    if plan.streaming.is_none() && plan.output.format.is_data_file() {
        let available = output.frame.width();
        let written = plan
            .output
            .columns
            .pick(
                &output
                    .frame
                    .get_column_names()
                    .iter()
                    .map(|n| n.to_string())
                    .collect::<Vec<_>>(),
            )?
            .len();
        if let Some(note) = plan.output.columns.describe(written, available) {
            output.summary.notes.push(note);
        }
    }
    let input_sha256 = match &plan.streaming {
        Some(stream) => source::sha256_of_file(&stream.path)?,
        None => report::methods::sha256_hex(&plan.input_bytes),
    };
    let note = methods_note(plan, &output, &input_sha256);
    if let Some(path) = &plan.output.methods {
        staging.text(path, &report::methods::render_markdown(&note))?;
    }
    if plan.streaming.is_none() {
        stage_outputs(plan, &output, &note, &mut staging)?;
    }
    let written = staging.commit()?;
    print_summary(plan, &output, &written);
    Ok(output)
}

/// Stages the report and the table (or writes the table to standard output).
fn stage_outputs(
    plan: &plan::AdjustPlan,
    output: &pipeline::AdjustOutput,
    note: &report::methods::MethodsNote,
    staging: &mut report::Staging,
) -> Result<()> {
    // A notice (the demo's INVENTED DATA) becomes the first column of the data files, so that
    // it stays with every copy of them; json carries it in its metadata.
    let marked = match &plan.output.notice {
        Some(notice) if plan.output.format != report::Format::Json => {
            Some(report::with_notice_column(&output.frame, notice)?)
        }
        _ => None,
    };
    let frame = if plan.output.format.is_data_file() {
        data_columns(marked.as_ref().unwrap_or(&output.frame), &plan.output)?
    } else {
        marked.unwrap_or_else(|| output.frame.clone())
    };
    let frame = &frame;
    let render = || -> Result<String> {
        Ok(match plan.output.format {
            report::Format::Methods => report::methods::render_markdown(note),
            format => report::render(
                frame,
                &output.summary,
                format,
                plan.output.rounding,
                plan.output.guard_formulas,
            )?,
        })
    };
    if let Some(path) = &plan.output.report {
        let html =
            report::html::render(&output.frame, &output.summary, note, plan.output.rounding)?;
        staging.text(path, &html)?;
    }
    match &plan.output.path {
        Some(path) if plan.output.format == report::Format::Parquet => {
            staging.parquet(path, frame)?
        }
        Some(path) if plan.output.format == report::Format::Csv => staging.csv(
            path,
            frame,
            plan.output.rounding,
            plan.output.guard_formulas,
        )?,
        Some(path) => staging.text(path, &render()?)?,
        None if plan.output.format == report::Format::Parquet => {
            return Err(error::Error::usage(
                "Parquet is a binary format and is not written to the terminal",
                "pass -o FILE.parquet",
            ))
        }
        None => {
            write_stdout(&render()?)?;
        }
    }
    Ok(())
}

/// The columns a data file gets (`--write-columns`); reader formats choose their own.
fn data_columns(
    frame: &polars::prelude::DataFrame,
    output: &plan::OutputPlan,
) -> Result<polars::prelude::DataFrame> {
    let available: Vec<String> = frame
        .get_column_names()
        .iter()
        .map(|n| n.to_string())
        .collect();
    let keep = output.columns.pick(&available)?;
    if keep.len() == available.len() {
        return Ok(frame.clone());
    }
    frame
        .select(keep)
        .map_err(error::Error::engine("selecting the output columns"))
}

/// Writes to standard output. When its reader has gone away (`| head`), the tool stops quietly
/// with exit code 0, as command-line tools do.
pub fn write_stdout(text: &str) -> Result<()> {
    let mut stdout = std::io::stdout().lock();
    match stdout
        .write_all(text.as_bytes())
        .and_then(|()| stdout.flush())
    {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => std::process::exit(0),
        Err(e) => Err(error::Error::io("standard output", "write", e)),
    }
}

/// The summary on stderr (or, with --quiet, its warnings), and every file written.
fn print_summary(
    plan: &plan::AdjustPlan,
    output: &pipeline::AdjustOutput,
    written: &[std::path::PathBuf],
) {
    if plan.output.quiet {
        // --quiet leaves out the summary, never its warnings.
        for warning in &output.summary.warnings {
            eprintln!("levelfield: warning: {}", report::format::visible(warning));
        }
        return;
    }
    eprint!("{}", report::summary::render(&output.summary));
    for path in written {
        if Some(path) == plan.output.path.as_ref() {
            eprintln!(
                "  wrote {} ({} rows)",
                path.display(),
                output.summary.rows_out
            );
        } else if Some(path) == plan.output.methods.as_ref() {
            eprintln!("  wrote the methods note to {}", path.display());
        } else {
            eprintln!("  wrote the report to {}", path.display());
        }
    }
}

/// The methods note of a finished run.
fn methods_note(
    plan: &plan::AdjustPlan,
    output: &pipeline::AdjustOutput,
    input_sha256: &str,
) -> report::methods::MethodsNote {
    let mut note = report::methods::build(
        &output.summary,
        &plan.settings,
        plan.references.as_ref(),
        input_sha256,
    );
    if let Some(notice) = &plan.output.notice {
        note.in_brief.insert(0, notice.clone());
    }
    if let Some((file, sha256)) = &plan.recipe_file {
        note.files.insert(
            1,
            report::methods::FileLine {
                role: "recipe".into(),
                file: file.clone(),
                description: "the settings of this run".into(),
                sha256: sha256.clone(),
            },
        );
    }
    note.recipe = plan.recipe.clone();
    note
}
