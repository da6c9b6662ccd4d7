//! `levelfield lead`: is a lead between two shares of one poll larger than its margin of error?

use super::{write_stdout, Outcome};
use crate::cli::LeadArgs;
use crate::error::Result;
use crate::plan;

pub fn run(args: &LeadArgs) -> Result<Outcome> {
    write_stdout(&plan::describe_lead(args)?)?;
    Ok(Outcome::Ok)
}
