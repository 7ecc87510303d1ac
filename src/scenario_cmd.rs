//! `quarry check` and `quarry fmt`: validate a scenario file, or rewrite it in canonical form.

use std::path::PathBuf;

use clap::Args;
use quarry_core::scenario::Scenario;

use crate::Failure;
use crate::output::write_stdout;

/// Arguments of `quarry check` and `quarry fmt`.
#[derive(Args, Debug)]
pub struct FileArgs {
    /// The scenario file.
    #[arg(value_name = "FILE.ron")]
    pub file: PathBuf,
}

fn load(args: &FileArgs) -> Result<Scenario, Failure> {
    Scenario::load(&args.file).map_err(|e| Failure::Usage(format!("{}: {e}", args.file.display())))
}

/// `quarry check`: exit 0 with a one-line summary when valid, 2 with the message when not.
pub fn check(args: &FileArgs) -> Result<(), Failure> {
    let s = load(args)?;
    write_stdout(&format!(
        "{}: ok — \"{}\", scenario format version {}, {} parameters, {} orbits\n",
        args.file.display(),
        s.title,
        s.version,
        s.parameters.len(),
        s.orbits.len()
    ))
}

/// `quarry fmt`: rewrite the file in canonical form (atomically).
pub fn fmt(args: &FileArgs) -> Result<(), Failure> {
    let s = load(args)?;
    s.save(&args.file).map_err(|e| Failure::Io(e.to_string()))
}
