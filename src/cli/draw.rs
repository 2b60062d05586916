//! `sectio draw FILE`: an SVG sheet of one drawing's profiles with their marks.

use std::io::Write;

use anyhow::{bail, Context};

use super::args::DrawArgs;
use super::{measure_settings, read_settings, write_atomically, EXIT_OK, EXIT_SOME_FAILED};
use crate::analyze::analyze_drawing_with_geometry;
use crate::fem::TorsionSettings;
use crate::report::drawing::{sheet_svg, DrawStyle, SheetItem};
use crate::report::Tiers;

/// Read and measure the file, write the sheet of its measured profiles, list the failed
/// rows on standard error, and return the exit status: 0 when every row was measured, 1
/// when some were not (nothing is written when none was). I/O errors (exit 2) are returned
/// as errors.
pub(super) fn draw(args: DrawArgs) -> anyhow::Result<i32> {
    let read = read_settings(&args.read, false)?;
    let tiers = if args.all {
        Tiers::ALL
    } else {
        Tiers {
            plastic: args.plastic,
            extrusion: args.extrusion,
            torsion: args.torsion,
        }
    };
    let settings = measure_settings(
        read,
        args.merge,
        tiers,
        TorsionSettings {
            accuracy: args.torsion_accuracy,
            max_nodes: args.torsion_max_nodes,
        },
    );
    if args.file.is_dir() {
        bail!(
            "{} is a folder; draw takes one DXF or SVG file",
            args.file.display()
        );
    }
    let name = args.file.display().to_string();
    let bytes = std::fs::read(&args.file).with_context(|| format!("cannot read {name}"))?;
    // As in the batch: a panic is our bug, reported as such, never a crash.
    let measured = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        analyze_drawing_with_geometry(&bytes, &settings)
    }))
    .map_err(|_| {
        anyhow::anyhow!("internal error while measuring {name}; please report it with the drawing")
    })?;
    let mut items: Vec<SheetItem> = Vec::new();
    let mut errors = 0usize;
    for (outcome, profiles) in measured.outcomes.iter().zip(&measured.profiles) {
        match &outcome.result {
            Ok(props) => {
                if !outcome.message.is_empty() {
                    eprintln!(
                        "sectio: {name}: profile {}: {}",
                        outcome.profile, outcome.message
                    );
                }
                items.push(SheetItem {
                    label: Some(outcome.profile.to_string()),
                    profiles: profiles.iter().collect(),
                    props,
                });
            }
            Err(e) => {
                errors += 1;
                eprintln!("sectio: {name}: profile {}: error: {e}", outcome.profile);
            }
        }
    }
    if items.is_empty() {
        eprintln!("sectio: {name}: no profile could be measured; nothing written");
        return Ok(EXIT_SOME_FAILED);
    }
    let style = DrawStyle {
        scale: args.scale,
        ..DrawStyle::default()
    };
    let svg = sheet_svg(&items, &measured.curves, &style);
    match &args.output {
        Some(path) => write_atomically(path, |w| w.write_all(svg.as_bytes()))
            .with_context(|| format!("cannot write {}", path.display()))?,
        None => {
            let stdout = std::io::stdout();
            let mut lock = stdout.lock();
            lock.write_all(svg.as_bytes())
                .and_then(|()| lock.flush())
                .context("cannot write to standard output")?;
        }
    }
    eprintln!(
        "sectio: {name}: {} profiles drawn, {errors} errors",
        items.len()
    );
    Ok(if errors > 0 {
        EXIT_SOME_FAILED
    } else {
        EXIT_OK
    })
}
