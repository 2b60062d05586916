//! `sectio explain FILE`: the report on one drawing, on standard output.

use std::io::Write;

use anyhow::{bail, Context};

use super::args::ExplainArgs;
use super::{unit, EXIT_OK, EXIT_SOME_FAILED};
use crate::analyze::Settings;
use crate::explain::{explain_drawing, render::write_report};
use crate::import::ReadOptions;

/// Read the file, write the report, and return the exit status: 0 when every profile would
/// be measured, 1 when the file could not be read or has problems. I/O errors (exit 2) are
/// returned as errors.
pub(super) fn explain(args: ExplainArgs) -> anyhow::Result<i32> {
    if let Some(g) = args.gap {
        if !(g.is_finite() && g >= 0.0) {
            bail!("--gap must be a length of zero or more millimetres");
        }
    }
    if args.file.is_dir() {
        bail!(
            "{} is a folder; explain takes one DXF file",
            args.file.display()
        );
    }
    let bytes = std::fs::read(&args.file)
        .with_context(|| format!("cannot read {}", args.file.display()))?;
    let settings = Settings {
        read: ReadOptions {
            layers: args.layer,
            exclude_layers: args.exclude_layer,
            include_hidden_layers: args.include_hidden_layers,
            hatch_outlines: args.hatch_outlines,
            census: true,
            svg_mm_per_unit: args.svg_scale,
        },
        join_gap: args.gap,
        merge: false,
        assume_units: unit(args.assume_units),
        plastic: false,
        extrusion: false,
    };
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
