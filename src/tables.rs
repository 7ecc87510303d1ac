//! What the exporting subcommands share: the scenario behind a MODEL argument (for units,
//! notes and orbit seeds) and writing a file so that a failure names the path.

use std::path::Path;

use quarry_core::export::Units;
use quarry_core::scenario::Scenario;

use crate::Failure;
use crate::model_args::ModelArgs;

/// Whether `path` stands for standard output (`-`).
pub fn is_stdout(path: &Path) -> bool {
    path.as_os_str() == "-"
}

/// The scenario file named by the MODEL argument, if it names one (the same test
/// `model_args` applies; the file was read and checked there already).
pub fn scenario_of(args: &ModelArgs) -> Option<Scenario> {
    let name = args.model.as_deref()?;
    if !(name.ends_with(".ron") || name.contains('/') || Path::new(name).is_file()) {
        return None;
    }
    Scenario::load(Path::new(name)).ok()
}

/// Units for table headers: the scenario's, or none for a built-in or `--var` model.
pub fn units_of(args: &ModelArgs) -> Units {
    scenario_of(args)
        .map(|s| Units::from_scenario(&s))
        .unwrap_or_default()
}

/// Writes `bytes` to `path` atomically (see `quarry_core::scenario::write_atomically`); an
/// error names the path and exits with status 1.
pub fn write_file(path: &Path, bytes: &[u8], option: &str) -> Result<(), Failure> {
    if path.as_os_str().is_empty() {
        return Err(Failure::Usage(format!("{option}: the file name is empty")));
    }
    quarry_core::scenario::write_atomically(path, bytes)
        .map_err(|e| Failure::Io(format!("{option} {e}")))
}
