//! `levelfield refs` (how each reference table of a folder reads, with coverage and errors)
//! and `levelfield catalog` (a draft datapackage.json for a folder of downloaded tables).

use super::{write_stdout, Outcome};
use crate::cli::{CatalogArgs, RefsArgs};
use crate::error::Result;
use crate::{entity, reference, source};

/// `refs DIR`: findings (exit 1) when a table cannot be read.
pub fn refs(args: &RefsArgs) -> Result<Outcome> {
    let mut resolver = entity::Resolver::builtin();
    for path in &args.aliases {
        resolver.add_alias_file(path)?;
    }
    let (title, tables) = reference::coverage::survey(&source::DiskDir::new(&args.dir), &resolver)?;
    write_stdout(&reference::coverage::render(&title, &tables))?;
    Ok(if tables.iter().any(|t| t.error.is_some()) {
        Outcome::Findings
    } else {
        Outcome::Ok
    })
}

/// `catalog DIR`: writes the draft, never over an existing catalog unless forced.
pub fn catalog(args: &CatalogArgs) -> Result<Outcome> {
    let mut resolver = entity::Resolver::builtin();
    for path in &args.aliases {
        resolver.add_alias_file(path)?;
    }
    let drafted = reference::draft::draft(&args.dir, &resolver)?;
    let path = reference::draft::write(&args.dir, args.output.as_deref(), args.force, &drafted)?;
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
