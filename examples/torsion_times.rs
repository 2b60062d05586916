//! Per-profile time of the torsion solver on one thread: the benchmark for the torsion tier
//! (issue 6). Reads every drawing of the given folders or files, measures each profile, and
//! times `torsion_props` alone; prints the distribution of times, of mesh sizes and of the
//! accuracy estimate, and each profile's figures with `--each`.
//!
//!     cargo run --release --example torsion_times -- PATH... [--layer NAME] [--accuracy REL] [--each]

use std::time::Instant;

use sectio::analyze::{default_join_gap, drawing_scale_of, run_facts_of};
use sectio::fem::{torsion_props, TorsionSettings};
use sectio::geom::{chain_read, drop_crossing_loops, nest};
use sectio::import::{dxf, svg, LengthUnit, ReadOptions};
use sectio::section::section_props;

/// The same allocator as the binary.
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() {
    // Huge pages as the binary has them (see `sectio::cli::memory`).
    sectio::cli::memory::leave_huge_pages_to_the_system();
    let mut opts = ReadOptions::default();
    let mut settings = TorsionSettings::default();
    let mut each = false;
    let mut paths = Vec::new();
    let mut args = std::env::args().skip(1);
    while let Some(a) = args.next() {
        match a.as_str() {
            "--layer" => opts.layers.push(args.next().expect("layer name")),
            "--accuracy" => {
                settings.accuracy = args.next().expect("number").parse().expect("number")
            }
            "--each" => each = true,
            _ => paths.push(std::path::PathBuf::from(a)),
        }
    }
    let mut files = Vec::new();
    for p in paths {
        if p.is_dir() {
            let mut v: Vec<_> = std::fs::read_dir(&p)
                .expect("folder")
                .map(|e| e.expect("entry").path())
                .collect();
            v.sort();
            files.extend(v);
        } else {
            files.push(p);
        }
    }
    // (seconds, segments, nodes, accuracy)
    let mut runs: Vec<(f64, usize, usize, f64)> = Vec::new();
    let mut failures = 0;
    for f in &files {
        let bytes = std::fs::read(f).expect("read");
        // Drawing units are not applied: the benchmark drawings are in millimetres.
        let read = if svg::looks_like_svg(&bytes) {
            svg::read(&bytes, &opts)
        } else {
            dxf::read(&bytes, &opts)
        };
        let Ok(mut d) = read else {
            continue;
        };
        let (extent, short) = drawing_scale_of(&mut d, LengthUnit::MM);
        let gap = default_join_gap(extent, short);
        let run_facts = run_facts_of(&mut d, LengthUnit::MM);
        let c = chain_read(d.pieces, gap, &run_facts);
        let mut problems = c.problems;
        let loops = drop_crossing_loops(c.loops, gap, &d.curves.spans, &mut problems);
        let profiles = nest(loops, gap, &mut problems).profiles;
        for p in &profiles {
            let props = section_props(&[p]);
            let segments =
                p.outer.segments.len() + p.holes.iter().map(|h| h.segments.len()).sum::<usize>();
            let t0 = Instant::now();
            let r = torsion_props(&[p], &props, &settings);
            let dt = t0.elapsed().as_secs_f64();
            match r {
                Ok(t) => {
                    if each {
                        println!(
                            "{}\t{segments} segments\t{:.1} ms\t{} nodes\tJ {:.6e}\tIw {:.6e}\tacc {:.1e}",
                            f.display(),
                            dt * 1e3,
                            t.nodes,
                            t.j,
                            t.iw,
                            t.accuracy
                        );
                    }
                    runs.push((dt, segments, t.nodes, t.accuracy));
                }
                Err(e) => {
                    failures += 1;
                    println!("{}: {e}", f.display());
                }
            }
        }
    }
    if runs.is_empty() {
        println!("no profiles");
        return;
    }
    let pick = |v: &mut Vec<f64>, q: f64| {
        v.sort_by(f64::total_cmp);
        v[((v.len() - 1) as f64 * q).round() as usize]
    };
    let mut t: Vec<f64> = runs.iter().map(|r| r.0 * 1e3).collect();
    let mut n: Vec<f64> = runs.iter().map(|r| r.2 as f64).collect();
    let mut s: Vec<f64> = runs.iter().map(|r| r.1 as f64).collect();
    let mut a: Vec<f64> = runs.iter().map(|r| r.3).collect();
    let total: f64 = t.iter().sum();
    println!(
        "{} profiles ({failures} failed), {:.2} s in all, one thread",
        runs.len(),
        total / 1e3
    );
    for (name, v, unit) in [
        ("time", &mut t, "ms"),
        ("segments", &mut s, ""),
        ("nodes (last level)", &mut n, ""),
        ("accuracy estimate", &mut a, ""),
    ] {
        println!(
            "{name:>20}: median {:.4} {unit}, 90 % {:.4}, max {:.4}",
            pick(v, 0.5),
            pick(v, 0.9),
            pick(v, 1.0)
        );
    }
}
