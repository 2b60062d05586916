//! Load every `.dxf` file under the given folders with the `dxf` crate, to compare
//! `sectio measure` with a general-purpose DXF reader.
//!
//! Files are loaded in parallel with rayon, each inside `catch_unwind` so that a reader
//! panic counts as a failed file instead of ending the run.
//!
//!     cargo run --release --example dxf_load -- bench-out/dxf
//!
//! Prints `files=… entities=… failed=… panicked=… seconds=…` on one line.

use std::panic::{self, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::time::Instant;

use rayon::prelude::*;

fn main() {
    let dirs: Vec<PathBuf> = std::env::args_os().skip(1).map(PathBuf::from).collect();
    if dirs.is_empty() {
        eprintln!("usage: dxf_load DIR...");
        std::process::exit(2);
    }
    // Panics are counted below; keep their messages off the terminal.
    panic::set_hook(Box::new(|_| {}));
    let start = Instant::now();
    let mut files = Vec::new();
    for dir in &dirs {
        collect_dxf(dir, &mut files);
    }
    files.sort();
    let (entities, failed, panicked) = files
        .par_iter()
        .map(
            |path| match panic::catch_unwind(AssertUnwindSafe(|| dxf::Drawing::load_file(path))) {
                Ok(Ok(drawing)) => (drawing.entities().count() as u64, 0u64, 0u64),
                Ok(Err(_)) => (0, 1, 0),
                Err(_) => (0, 0, 1),
            },
        )
        .reduce(|| (0, 0, 0), |a, b| (a.0 + b.0, a.1 + b.1, a.2 + b.2));
    let seconds = start.elapsed().as_secs_f64();
    println!(
        "files={} entities={entities} failed={failed} panicked={panicked} seconds={seconds:.4}",
        files.len()
    );
}

fn collect_dxf(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        eprintln!("cannot read {}", dir.display());
        return;
    };
    for entry in entries.flatten() {
        let path = entry.path();
        if path.is_dir() {
            collect_dxf(&path, out);
        } else if path
            .extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("dxf"))
        {
            out.push(path);
        }
    }
}
