//! `sectio explain FILE`: the report on one drawing, on standard output.

use std::io::Write;

use anyhow::{bail, Context};

use super::args::ExplainArgs;
use super::{read_settings, EXIT_OK, EXIT_SOME_FAILED};
use crate::explain::{explain_drawing, render::write_report};

/// Read the file, write the report, and return the exit status: 0 when every profile would
/// be measured, 1 when the file could not be read or has problems. I/O errors (exit 2) are
/// returned as errors.
pub(super) fn explain(args: ExplainArgs) -> anyhow::Result<i32> {
    let settings = read_settings(&args.read, true)?;
    if args.file.is_dir() {
        bail!(
            "{} is a folder; explain takes one DXF file",
            args.file.display()
        );
    }
    let bytes = std::fs::read(&args.file)
        .with_context(|| format!("cannot read {}", args.file.display()))?;
    let explanation = explain_drawing(&bytes, &settings);
    let stdout = std::io::stdout();
    let mut out = std::io::BufWriter::new(stdout.lock());
    write_report(&mut out, &args.file.display().to_string(), &explanation)
        .and_then(|()| out.flush())
        .context("cannot write to standard output")?;
    Ok(if explanation.all_measured() {
        EXIT_OK
    } else {
        EXIT_SOME_FAILED
    })
}
