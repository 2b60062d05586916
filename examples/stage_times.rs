//! Where a `measure` run spends its time, stage by stage, on one thread (a development aid
//! for the performance work; `scripts/bench.sh` is the benchmark).
//!
//!     cargo run --release --example stage_times -- DIR [--layer NAME]

use std::time::{Duration, Instant};

use sectio::analyze::{default_join_gap, drawing_scale_of, run_facts_of};
use sectio::geom::{chain_read, drop_crossing_loops, nest};
use sectio::import::{dxf, LengthUnit, ReadOptions};
use sectio::section::section_props;

/// The same allocator as the binary, so that the stage times match a `measure` run.
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() {
    // Huge pages as the binary has them (see `sectio::cli::memory`).
    sectio::cli::memory::leave_huge_pages_to_the_system();
    let mut args = std::env::args().skip(1);
    let dir = args.next().expect("usage: stage_times DIR [--layer NAME]");
    let mut opts = ReadOptions::default();
    if args.next().as_deref() == Some("--layer") {
        opts.layers.push(args.next().expect("layer name"));
    }
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("folder")
        .map(|e| e.expect("entry").path())
        .collect();
    files.sort();
    let mut t = [Duration::ZERO; 6];
    let names = [
        "read file",
        "parse",
        "chain",
        "crossings",
        "nest",
        "properties",
    ];
    let mut area = 0.0;
    let (mut n_segments, mut n_loops) = (0usize, 0usize);
    for f in &files {
        let t0 = Instant::now();
        let bytes = std::fs::read(f).expect("read");
        let t1 = Instant::now();
        let Ok(mut d) = dxf::read(&bytes, &opts) else {
            continue;
        };
        let t2 = Instant::now();
        let (extent, short) = drawing_scale_of(&mut d, LengthUnit::MM);
        let gap = default_join_gap(extent, short);
        let runs = run_facts_of(&mut d, LengthUnit::MM);
        let c = chain_read(d.pieces, gap, &runs);
        n_loops += c.loops.len();
        n_segments += c.loops.iter().map(|l| l.segments.len()).sum::<usize>();
        let t3 = Instant::now();
        let mut problems = c.problems;
        let loops = drop_crossing_loops(c.loops, gap, &d.curves.spans, &mut problems);
        let t4 = Instant::now();
        let profiles = nest(loops, gap, &mut problems).profiles;
        let t5 = Instant::now();
        for p in &profiles {
            area += section_props(&[p]).area;
        }
        let t6 = Instant::now();
        for (k, (a, b)) in [(t0, t1), (t1, t2), (t2, t3), (t3, t4), (t4, t5), (t5, t6)]
            .into_iter()
            .enumerate()
        {
            t[k] += b - a;
        }
    }
    let total: Duration = t.iter().sum();
    for (n, d) in names.iter().zip(t) {
        println!(
            "{n:12} {:8.1} ms {:5.1} %",
            d.as_secs_f64() * 1e3,
            100.0 * d.as_secs_f64() / total.as_secs_f64()
        );
    }
    println!(
        "{:12} {:8.1} ms (checksum {area:.3})",
        "total",
        total.as_secs_f64() * 1e3
    );
    println!(
        "{n_loops} loops of {n_segments} segments in {} files",
        files.len()
    );
}
