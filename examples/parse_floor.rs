//! The parse floor: the least work any DXF reader must do, to compare `sectio measure` with.
//!
//! For every `.dxf` file under the given folders (in parallel over files with rayon, as the
//! real tool runs), read the file, split it into group-code/value line pairs, parse each
//! code as an integer and, for codes 10-59 (coordinates, radii, angles), the value as f64.
//! The floats are summed into a checksum so that nothing is optimised away. No entity
//! logic at all.
//!
//!     cargo run --release --example parse_floor -- bench-out/typical
//!
//! Prints `files=… bytes=… pairs=… seconds=… checksum=…` on one line.

use std::path::PathBuf;
use std::time::Instant;

use rayon::prelude::*;

fn main() {
    let dirs: Vec<PathBuf> = std::env::args_os().skip(1).map(PathBuf::from).collect();
    if dirs.is_empty() {
        eprintln!("usage: parse_floor DIR...");
        std::process::exit(2);
    }
    let start = Instant::now();
    // The same file search as `sectio measure` (recursive, `.dxf` in any case, sorted).
    let files = sectio::cli::batch::collect_files(&dirs).expect("folders readable");
    let totals = files
        .par_iter()
        .map(|path| match std::fs::read(path) {
            Ok(bytes) => {
                let (pairs, checksum, ok) = parse_pairs(&bytes);
                Totals {
                    bytes: bytes.len() as u64,
                    pairs,
                    checksum,
                    failed: u64::from(!ok),
                }
            }
            Err(_) => Totals {
                failed: 1,
                ..Totals::default()
            },
        })
        .reduce(Totals::default, Totals::add);
    let seconds = start.elapsed().as_secs_f64();
    println!(
        "files={} bytes={} pairs={} failed={} seconds={:.4} checksum={:.6e}",
        files.len(),
        totals.bytes,
        totals.pairs,
        totals.failed,
        seconds,
        totals.checksum
    );
}

#[derive(Default)]
struct Totals {
    bytes: u64,
    pairs: u64,
    checksum: f64,
    failed: u64,
}

impl Totals {
    fn add(self, o: Totals) -> Totals {
        Totals {
            bytes: self.bytes + o.bytes,
            pairs: self.pairs + o.pairs,
            checksum: self.checksum + o.checksum,
            failed: self.failed + o.failed,
        }
    }
}

/// Splits `bytes` into code/value line pairs; returns (pairs, sum of floats, all parsed).
fn parse_pairs(bytes: &[u8]) -> (u64, f64, bool) {
    let bytes = bytes.strip_suffix(b"\n").unwrap_or(bytes);
    let mut lines = bytes.split(|&b| b == b'\n');
    let (mut pairs, mut sum) = (0u64, 0.0f64);
    while let Some(code_line) = lines.next() {
        let Some(value_line) = lines.next() else {
            return (pairs, sum, false);
        };
        let Some(code) = as_str(code_line).and_then(|s| s.parse::<i32>().ok()) else {
            return (pairs, sum, false);
        };
        if (10..=59).contains(&code) {
            match as_str(value_line).and_then(|s| s.parse::<f64>().ok()) {
                Some(v) => sum += v,
                None => return (pairs, sum, false),
            }
        }
        pairs += 1;
    }
    (pairs, sum, true)
}

/// The line without surrounding blanks (group codes are right-aligned; CR of CRLF files).
fn as_str(line: &[u8]) -> Option<&str> {
    std::str::from_utf8(line.trim_ascii()).ok()
}
