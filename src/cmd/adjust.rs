//! `levelfield adjust`: the recipe merged under the flags, the plan, the run (in memory or in
//! pieces), the outputs staged and renamed together, the summary and the saved recipe.

use super::{write_stdout, write_stdout_with, Outcome};
use crate::cli::AdjustArgs;
use crate::error::Result;
use crate::output::OutputTable;
use crate::{error, pipeline, plan, recipe, report, source, streaming};

/// Runs `adjust` with its arguments (and the recipe they name).
pub fn run(args: AdjustArgs) -> Result<Outcome> {
    let (args, plan) = recipe::resolve(args)?;
    let quiet = plan.output.quiet;
    execute(plan)?;
    if let Some(path) = &args.save_recipe {
        recipe::save_to(&args, path)?;
        if !quiet {
            eprintln!("  wrote the recipe of this run to {}", path.display());
        }
    }
    Ok(Outcome::Ok)
}

/// Runs a resolved adjust plan: pipeline (in memory or in pieces), output, methods note,
/// report, summary.
pub fn execute(mut plan: plan::AdjustPlan) -> Result<pipeline::AdjustOutput> {
    // Every output is staged and renamed into place together at the end, when all are done.
    let mut staging = report::Staging::new();
    let input_sha256 = match &plan.streaming {
        Some(stream) => source::sha256_of_file(&stream.path)?,
        None => report::methods::sha256_hex(&plan.input_bytes),
    };
    let plan = &mut plan;
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
        // The input's bytes go to the run, which lets them go once they are read.
        None => pipeline::run_adjust(
            std::mem::take(&mut plan.input_bytes),
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
    if plan.output.format.is_data_file() {
        let (written, available) = match output.streamed_columns {
            Some(streamed) => streamed,
            None => (
                plan.output
                    .columns
                    .pick(&output.table.column_names())?
                    .len(),
                output.table.width(),
            ),
        };
        if let Some(note) = plan.output.columns.describe(written, available) {
            output.summary.notes.push(note);
        }
    }
    let plan = &*plan;
    let note = methods_note(plan, &output, &input_sha256);
    if let Some(path) = &plan.output.methods {
        staging.text(path, &report::methods::render_markdown(&note))?;
    }
    if plan.streaming.is_none() {
        stage_outputs(plan, &output, &note, &mut staging)?;
    }
    crate::trace::phase("outputs written");
    let written = staging.commit()?;
    crate::trace::phase("outputs in place");
    print_summary(plan, &output, &written);
    Ok(output)
}

/// Stages the report and the table (or writes the table to standard output). csv is written
/// straight from the output table; the other formats take its text frame.
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
            output.table.with_notice(notice)
        }
        _ => output.table.clone(),
    };
    let table = if plan.output.format.is_data_file() {
        data_columns(&marked, &plan.output)?
    } else {
        marked
    };
    let render = || -> Result<String> {
        Ok(match plan.output.format {
            report::Format::Methods => report::methods::render_markdown(note),
            format => report::render(
                &table.text_frame()?,
                &output.summary,
                format,
                plan.output.rounding,
                plan.output.guard_formulas,
            )?,
        })
    };
    if let Some(path) = &plan.output.report {
        let frame = output.table.text_frame()?;
        let html = report::html::render(&frame, &output.summary, note, plan.output.rounding)?;
        staging.text(path, &html)?;
    }
    let (rounding, guard) = (plan.output.rounding, plan.output.guard_formulas);
    match &plan.output.path {
        Some(path) if plan.output.format == report::Format::Parquet => {
            staging.parquet(path, &table.text_frame()?)?
        }
        Some(path) if plan.output.format == report::Format::Csv => {
            staging.csv(path, &table, rounding, guard)?
        }
        Some(path) => staging.text(path, &render()?)?,
        None if plan.output.format == report::Format::Parquet => {
            return Err(error::Error::usage(
                "Parquet is a binary format and is not written to the terminal",
                "pass -o FILE.parquet",
            ))
        }
        None if plan.output.format == report::Format::Csv => {
            write_stdout_with(|out| report::write_csv(&table, rounding, true, guard, out))?
        }
        None => write_stdout(&render()?)?,
    }
    Ok(())
}

/// The columns a data file gets (`--write-columns`); reader formats choose their own.
fn data_columns(table: &OutputTable, output: &plan::OutputPlan) -> Result<OutputTable> {
    let available = table.column_names();
    let keep = output.columns.pick(&available)?;
    if keep.len() == available.len() {
        return Ok(table.clone());
    }
    table.select(&keep)
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
