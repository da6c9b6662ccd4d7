//! `levelfield demo`: the bundled scenario, embedded in the binary so it runs from any folder.
//!
//! The scenario is invented (see demo/README.md): the yearly fee for a standard adult
//! public-transport pass in the capitals of twelve fictional countries, with invented
//! currencies and invented reference tables. The demo runs the same plan that
//! `levelfield adjust` would build from `DEMO_ARGS`, only with embedded files.

use super::Outcome;
use crate::cli::{Command, DemoArgs};
use crate::entity::Resolver;
use crate::error::{Error, Result};
use crate::plan;
use crate::reference;
use crate::source::Embedded;

/// The `adjust` arguments the demo runs, as a user would type them.
pub const DEMO_ARGS: &[&str] = &[
    "demo/transit-pass-fees.csv",
    "--refs",
    "reference-tables",
    "--steps",
    "deflate,ppp",
    "--base-year",
    "2023",
];

/// The second scenario: survey estimates with margins of error (`levelfield demo --margins`).
pub const DEMO_MARGIN_ARGS: &[&str] = &[
    "demo/transit-spending-survey.csv",
    "--refs",
    "reference-tables",
    "--steps",
    "ppp",
    "--moe",
    "moe90",
    "--margin-confidence",
    "90",
];

pub const DEMO_INPUT: &str = include_str!("../../demo/transit-pass-fees.csv");
pub const DEMO_MARGIN_INPUT: &str = include_str!("../../demo/transit-spending-survey.csv");

pub static DEMO_REFERENCES: Embedded = Embedded {
    prefix: "reference-tables",
    files: &[
        (
            "datapackage.json",
            include_str!("../../reference-tables/datapackage.json"),
        ),
        (
            "aliases.csv",
            include_str!("../../reference-tables/aliases.csv"),
        ),
        ("fx.csv", include_str!("../../reference-tables/fx.csv")),
        ("ppp.csv", include_str!("../../reference-tables/ppp.csv")),
        ("cpi.csv", include_str!("../../reference-tables/cpi.csv")),
        (
            "population.csv",
            include_str!("../../reference-tables/population.csv"),
        ),
    ],
};

const MARGIN_BANNER: &str = "INVENTED DATA: twelve fictional countries, their made-up currencies and made-up reference tables.\n\
Average monthly household spending on public transport, 2023, local currency, from an invented household survey\n\
with 90% margins of error.\n";

const BANNER: &str = "INVENTED DATA: twelve fictional countries, their made-up currencies and made-up reference tables.\n\
Yearly fee for a standard adult public-transport pass in each capital, 2019 and 2023, local currency.\n";

/// Builds the demo's plan from the embedded files.
pub fn demo_plan(args: &DemoArgs) -> Result<plan::AdjustPlan> {
    let demo_args = if args.margins {
        DEMO_MARGIN_ARGS
    } else {
        DEMO_ARGS
    };
    let adjust = demo_adjust_args(demo_args)?;
    let steps = plan::parse_steps(&adjust.steps)?;
    plan::check_step_options(&steps, adjust.base_year)?;
    let mut resolver = Resolver::builtin();
    let references = reference::load(&DEMO_REFERENCES, &mut resolver)?;
    let mut ingest = plan::ingest_options(&adjust.columns)?;
    ingest.margins = plan::margin_spec(&adjust.uncertainty)?;
    let settings = plan::pipeline_settings(&adjust, steps, ingest, Some(&references));
    Ok(plan::AdjustPlan {
        input_bytes: if args.margins {
            DEMO_MARGIN_INPUT
        } else {
            DEMO_INPUT
        }
        .as_bytes()
        .to_vec(),
        input_label: demo_args[0].to_string(),
        settings,
        resolver,
        references: Some(references),
        output: demo_output(&args.output)?,
        recipe: Some(crate::report::methods::RecipeQuote {
            origin: "The recipe equivalent to this demo (it runs in the folder that `levelfield demo --extract DIR` writes; save it as a .toml file and pass --recipe)".into(),
            text: crate::recipe::save::recipe_text(&adjust, std::path::Path::new("."))?,
            overridden: Vec::new(),
        }),
        recipe_file: None,
        streaming: None,
    })
}

/// The demo prints the comparison table unless another format or a file is asked for.
fn demo_output(args: &crate::cli::OutputArgs) -> Result<plan::OutputPlan> {
    let mut output = plan::resolve_output(args)?;
    if args.format.is_none() && args.output.is_none() {
        output.format = crate::report::Format::Table;
    }
    output.notice = Some(
        "INVENTED DATA: the countries, currencies and every figure in this demo are made up; they describe no real place.".into(),
    );
    Ok(output)
}

pub fn run(args: &DemoArgs) -> Result<Outcome> {
    if let Some(dir) = &args.extract {
        extract(dir)?;
        eprintln!("wrote the demo files into {}", dir.display());
        eprintln!(
            "reproduce with: cd {} && levelfield adjust {}",
            dir.display(),
            DEMO_ARGS.join(" ")
        );
        eprintln!("or from its recipe: levelfield adjust --recipe fees.toml (survey.toml for the margins scenario)");
        return Ok(Outcome::Ok);
    }
    let plan = demo_plan(args)?;
    if plan.output.format == crate::report::Format::Table {
        super::write_stdout(if args.margins { MARGIN_BANNER } else { BANNER })?;
    }
    super::adjust::execute(plan)?;
    eprintln!(
        "reproduce with: levelfield demo --extract levelfield-demo && cd levelfield-demo && levelfield adjust {}",
        if args.margins { DEMO_MARGIN_ARGS } else { DEMO_ARGS }.join(" ")
    );
    Ok(Outcome::Ok)
}

/// Writes the demo files into `dir`, laid out as in the repository.
pub fn extract(dir: &std::path::Path) -> Result<()> {
    let write = |relative: &str, text: &str| -> Result<()> {
        let path = dir.join(relative);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent)
                .map_err(|e| Error::io(parent.display(), "create the folder", e))?;
        }
        crate::report::write_atomically(&path, text)
    };
    write("demo/transit-pass-fees.csv", DEMO_INPUT)?;
    write("demo/transit-spending-survey.csv", DEMO_MARGIN_INPUT)?;
    for (name, text) in DEMO_REFERENCES.files {
        write(&format!("reference-tables/{name}"), text)?;
    }
    for (name, demo_args) in [("fees.toml", DEMO_ARGS), ("survey.toml", DEMO_MARGIN_ARGS)] {
        write(name, &demo_recipe(demo_args)?)?;
    }
    Ok(())
}

/// The recipe of one demo scenario, paths relative to the extracted folder.
fn demo_recipe(demo_args: &[&str]) -> Result<String> {
    let adjust = demo_adjust_args(demo_args)?;
    crate::recipe::save::recipe_text(&adjust, std::path::Path::new("."))
}

/// A demo scenario's arguments, parsed as `levelfield adjust` would parse them.
fn demo_adjust_args(demo_args: &[&str]) -> Result<Box<crate::cli::AdjustArgs>> {
    let mut argv = vec!["levelfield", "adjust"];
    argv.extend_from_slice(demo_args);
    let cli = crate::cli::parse_from(argv)
        .map_err(|e| Error::usage(format!("demo arguments: {e}"), "report this as a bug"))?;
    match cli.command {
        Command::Adjust(adjust) => Ok(adjust),
        _ => Err(Error::usage(
            "demo arguments are not an adjust command",
            "report this as a bug",
        )),
    }
}
