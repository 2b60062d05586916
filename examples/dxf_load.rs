//! Load every `.dxf` file under the given folders with the `dxf` crate, to compare
//! `sectio measure` with a general-purpose DXF reader.
//!
//! Files are loaded in parallel with rayon, each inside `catch_unwind` so that a reader
//! panic counts as a failed file instead of ending the run.
//!
//!     cargo run --release --example dxf_load -- bench-out/typical
//!
//! Prints `files=… entities=… failed=… panicked=… seconds=…` on one line.

use std::panic::{self, AssertUnwindSafe};
use std::path::PathBuf;
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
    // The same file search as `sectio measure` (recursive, `.dxf` in any case, sorted).
    let files = sectio::cli::batch::collect_files(&dirs).expect("folders readable");
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
