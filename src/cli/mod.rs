//! The command line: flags to settings, the batch over files, the output file.
//!
//! Only this module and [`crate::import`] touch the file system.

pub mod args;
pub mod batch;
pub mod check;
mod explain;

use std::io::Write;
use std::path::Path;
use std::time::Instant;

use anyhow::{bail, Context};

use crate::analyze::Settings;
use crate::fem::TorsionSettings;
use crate::import::{LengthUnit, ReadOptions};
use crate::report::{csv_header, csv_records, CsvFormat, Tiers};
use args::{Cli, Command, MeasureArgs, ReadArgs, UnitArg};

/// Exit status: every profile measured.
pub const EXIT_OK: i32 = 0;
/// Exit status: output written, but some inputs or profiles failed.
pub const EXIT_SOME_FAILED: i32 = 1;
/// Exit status: usage or I/O error before any output.
pub const EXIT_USAGE: i32 = 2;

pub(crate) fn unit(u: UnitArg) -> LengthUnit {
    match u {
        UnitArg::Mm => LengthUnit::MM,
        UnitArg::Cm => LengthUnit::CM,
        UnitArg::M => LengthUnit::M,
        UnitArg::In => LengthUnit::INCH,
    }
}

/// Run a parsed command line; returns the exit status.
pub fn run(cli: Cli) -> anyhow::Result<i32> {
    match cli.command {
        Command::Measure(args) => measure(args),
        Command::Explain(args) => explain::explain(args),
        Command::Check(args) => check::check(args),
    }
}

fn parse_delimiter(d: Option<&str>, decimal_comma: bool) -> anyhow::Result<u8> {
    let byte = match d {
        None => return Ok(if decimal_comma { b';' } else { b',' }),
        Some("tab") | Some("\\t") => b'\t',
        Some(s) if s.len() == 1 && s.is_ascii() => s.as_bytes()[0],
        Some(s) => bail!("--delimiter takes one ASCII character or 'tab', not {s:?}"),
    };
    if decimal_comma && byte == b',' {
        bail!("--decimal-comma needs a delimiter other than ',' (e.g. --delimiter ';')");
    }
    if byte == b'"' || byte == b'\n' || byte == b'\r' {
        bail!("--delimiter cannot be a quote or a line break");
    }
    Ok(byte)
}

/// The reading settings `measure` and `explain` share, from their common options (`census`:
/// keep the layer table and entity counts, for `explain`). A bad `--gap` is a usage error.
fn read_settings(read: &ReadArgs, census: bool) -> anyhow::Result<Settings> {
    if let Some(g) = read.gap {
        if !(g.is_finite() && g >= 0.0) {
            bail!("--gap must be a length of zero or more millimetres");
        }
    }
    Ok(Settings {
        read: ReadOptions {
            layers: read.layer.clone(),
            exclude_layers: read.exclude_layer.clone(),
            include_hidden_layers: read.include_hidden_layers,
            hatch_outlines: read.hatch_outlines,
            census,
            svg_mm_per_unit: read.svg_scale,
        },
        join_gap: read.gap,
        merge: false,
        assume_units: unit(read.assume_units),
        plastic: false,
        extrusion: false,
        torsion: None,
    })
}

fn measure(args: MeasureArgs) -> anyhow::Result<i32> {
    let started = Instant::now();
    let delimiter = parse_delimiter(args.delimiter.as_deref(), args.decimal_comma)?;
    if !(args.density.is_finite() && args.density > 0.0) {
        bail!("--density must be a positive number of kg/m³");
    }
    let read = read_settings(&args.read, false)?;
    let files = batch::collect_files(&args.paths)?;
    if files.is_empty() {
        bail!("no .dxf or .svg files found in the given paths");
    }
    let tiers = if args.all {
        Tiers::ALL
    } else {
        Tiers {
            plastic: args.plastic,
            extrusion: args.extrusion,
            torsion: args.torsion,
        }
    };
    let settings = Settings {
        merge: args.merge,
        plastic: tiers.plastic,
        extrusion: tiers.extrusion,
        torsion: tiers.torsion.then_some(TorsionSettings {
            accuracy: args.torsion_accuracy,
            max_nodes: args.torsion_max_nodes,
        }),
        ..read
    };
    let format = CsvFormat {
        unit: unit(args.units),
        delimiter,
        decimal_comma: args.decimal_comma,
        density_kg_m3: args.material.map_or(args.density, |m| m.density_kg_m3()),
        tiers,
    };
    let batch = batch::run_batch(&files, &settings, args.jobs, |rows| {
        csv_records(rows, &format)
    })?;
    let rows = batch.rows;
    let write = |w: &mut dyn Write| -> std::io::Result<()> {
        w.write_all(&csv_header(&format)?)?;
        for chunk in &batch.rendered {
            w.write_all(
                chunk
                    .as_ref()
                    .map_err(|e| std::io::Error::new(e.kind(), e.to_string()))?,
            )?;
        }
        w.flush()
    };
    match &args.output {
        Some(path) => write_atomically(path, |w| write(w))
            .with_context(|| format!("cannot write {}", path.display()))?,
        None => {
            let stdout = std::io::stdout();
            let mut lock = stdout.lock();
            write(&mut lock).context("cannot write to standard output")?;
        }
    }
    let errors = rows.iter().filter(|r| r.outcome.result.is_err()).count();
    let failed_files = {
        let mut f: Vec<&str> = rows
            .iter()
            .filter(|r| r.outcome.result.is_err())
            .map(|r| r.file.as_str())
            .collect();
        f.dedup();
        f.len()
    };
    eprintln!(
        "sectio: {} files, {} profiles measured, {} errors{}, {:.2} s",
        files.len(),
        rows.len() - errors,
        errors,
        if errors > 0 {
            format!(" in {failed_files} files")
        } else {
            String::new()
        },
        started.elapsed().as_secs_f64()
    );
    Ok(if errors > 0 {
        EXIT_SOME_FAILED
    } else {
        EXIT_OK
    })
}

/// Write to a temporary file beside `path`, then rename it over `path`: readers never see
/// a half-written file, and a failed run leaves the old file (or none).
pub fn write_atomically(
    path: &Path,
    write: impl FnOnce(&mut std::io::BufWriter<&mut std::fs::File>) -> std::io::Result<()>,
) -> anyhow::Result<()> {
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let mut tmp = tempfile::Builder::new()
        .prefix(".sectio-")
        .suffix(".tmp")
        .tempfile_in(dir)?;
    {
        let mut w = std::io::BufWriter::new(tmp.as_file_mut());
        write(&mut w)?;
        w.flush()?;
    }
    tmp.as_file().sync_all().ok();
    tmp.persist(path)?;
    Ok(())
}
