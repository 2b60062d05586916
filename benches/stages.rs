//! `cargo bench`: the time of each step of measuring a drawing (parse, chain, crossings,
//! nest, properties) on three drawings generated in memory, so that a change to one step can
//! be timed on its own, without a corpus on disk. `scripts/bench.sh` is the benchmark of
//! issue 10's targets (whole runs over folders, against the parse floor and the `dxf` crate);
//! this one complements it.
//!
//!     cargo bench                          # all three drawings
//!     cargo bench -- catalog               # the drawings whose name contains "catalog"
//!     SECTIO_BENCH_ROUNDS=40 cargo bench   # more rounds (default 15; typical: 20 times that)
//!
//! The drawings (layer PROFILE, read with `--layer PROFILE`; dimension lines and text on
//! layer DIM around each profile, which the reader passes over):
//! - typical: one profile, an outline of 1000 edges (loose LINEs, every third edge an ARC)
//!   and 6 round holes of 24 arcs each (closed LWPOLYLINEs with bulges);
//! - catalog: 200 profiles in a 20 × 10 grid, outlines of 150 edges and 2 holes of 16 arcs,
//!   every other outline one closed LWPOLYLINE instead of loose entities;
//! - heavy: one profile, an outline of 50 000 edges and 12 holes of 32 arcs.
//!
//! Each outline is star-shaped (radius R·(1 + 0.08 sin 5θ), jittered by a tenth of an edge),
//! its arc edges bulge outwards, and its holes are circles inside it, so the generator knows
//! the exact area: the vertices' polygon (shoelace) plus each arc's circular segment
//! r²(θ − sin θ)/2, less π ρ² per hole. Every round checks the number of profiles and holes, that no problem was
//! reported, and the total area to 1e-9 relative, so that a broken step cannot pass for a
//! fast one.
//!
//! Each step's best and median time over the rounds are printed, the best also per segment.

use std::f64::consts::{PI, TAU};
use std::fmt::Write as _;
use std::time::{Duration, Instant};

use sectio::analyze::{default_join_gap, drawing_scale_of, run_facts_of};
use sectio::geom::{chain_read, drop_crossing_loops, nest};
use sectio::import::{dxf, LengthUnit, ReadOptions};
use sectio::section::section_props;

/// The same allocator as the binary, so that the times match a `measure` run.
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

const STEPS: [&str; 5] = ["parse", "chain", "crossings", "nest", "properties"];

fn main() {
    // `cargo bench` passes `--bench`; the first other argument filters the drawings by name.
    // Without `--bench` (`cargo test --bench stages`, as `scripts/test.sh` runs it) each
    // drawing is measured once, as a test of the benchmark and its checks.
    let args: Vec<String> = std::env::args().skip(1).collect();
    let timing = args.iter().any(|a| a == "--bench");
    let filter = args
        .iter()
        .find(|a| !a.starts_with("--"))
        .cloned()
        .unwrap_or_default();
    let rounds: usize = match std::env::var("SECTIO_BENCH_ROUNDS") {
        Ok(v) => v
            .parse()
            .ok()
            .filter(|&n| n > 0)
            .expect("SECTIO_BENCH_ROUNDS must be a positive whole number"),
        Err(_) => 15,
    };
    let specs = [
        Spec {
            name: "typical",
            grid: (1, 1),
            edges: 1000,
            holes: 6,
            hole_arcs: 24,
            rounds: 20 * rounds,
        },
        Spec {
            name: "catalog",
            grid: (20, 10),
            edges: 150,
            holes: 2,
            hole_arcs: 16,
            rounds,
        },
        Spec {
            name: "heavy",
            grid: (1, 1),
            edges: 50_000,
            holes: 12,
            hole_arcs: 32,
            rounds,
        },
    ];
    let opts = ReadOptions {
        layers: vec!["PROFILE".into()],
        ..ReadOptions::default()
    };
    for spec in specs.iter().filter(|s| s.name.contains(&filter)) {
        let sheet = generate(spec);
        let rounds = if timing { spec.rounds } else { 1 };
        let times: Vec<[Duration; 5]> = (0..rounds).map(|_| one_round(&sheet, &opts)).collect();
        if timing {
            report(spec, &sheet, &times);
        } else {
            println!("{}: checked (one round, not timed)", spec.name);
        }
    }
}

/// What to generate.
struct Spec {
    name: &'static str,
    /// Profiles across and up.
    grid: (usize, usize),
    /// Edges of each outline.
    edges: usize,
    /// Holes per profile, and arcs per hole.
    holes: usize,
    hole_arcs: usize,
    rounds: usize,
}

/// A generated drawing and what measuring it must give.
struct Sheet {
    text: String,
    profiles: usize,
    segments: usize,
    /// Exact total area (mm²).
    area: f64,
}

/// Outline radius and spacing of the profiles (mm).
const R: f64 = 40.0;
const SPACING: f64 = 100.0;

fn generate(spec: &Spec) -> Sheet {
    let mut next = splitmix(0x005E_C710 + spec.edges as u64);
    let mut w = Writer::default();
    w.text
        .push_str("  0\nSECTION\n  2\nHEADER\n  9\n$INSUNITS\n 70\n4\n  0\nENDSEC\n");
    w.text.push_str("  0\nSECTION\n  2\nENTITIES\n");
    let (mut area, mut segments) = (0.0, 0);
    for i in 0..spec.grid.0 {
        for j in 0..spec.grid.1 {
            let c = (i as f64 * SPACING, j as f64 * SPACING);
            let as_polyline = (i + j) % 2 == 1 && spec.grid.0 * spec.grid.1 > 1;
            area += outline(&mut w, c, spec.edges, as_polyline, &mut next);
            for h in 0..spec.holes {
                let a = TAU * h as f64 / spec.holes as f64;
                let hc = (c.0 + 0.45 * R * a.cos(), c.1 + 0.45 * R * a.sin());
                let rho = 0.1 * R;
                w.circle_polyline(hc, rho, spec.hole_arcs);
                area -= PI * rho * rho;
            }
            segments += spec.edges + spec.holes * spec.hole_arcs;
            // Clutter on another layer: two dimension lines and their text.
            w.line("DIM", (c.0 - R, c.1 - 1.2 * R), (c.0 + R, c.1 - 1.2 * R));
            w.line("DIM", (c.0 - R, c.1 - 1.3 * R), (c.0 - R, c.1 - 1.1 * R));
            w.entity("TEXT", "DIM");
            w.pair(10, c.0);
            w.pair(20, c.1 - 1.25 * R);
            w.pair(40, 2.5);
            w.text.push_str("  1\nHV-000\n");
        }
    }
    w.text.push_str("  0\nENDSEC\n  0\nEOF\n");
    Sheet {
        text: w.text,
        profiles: spec.grid.0 * spec.grid.1,
        segments,
        area,
    }
}

/// A star-shaped outline of `n` edges about `c`, counter-clockwise; every third edge an arc
/// bulging outwards (centre inside, at a distance of one chord from the chord's middle, so a
/// sweep of 2·atan(1/2)). Written as loose LINEs and ARCs, or as one closed LWPOLYLINE.
/// Returns its exact area.
fn outline(
    w: &mut Writer,
    c: (f64, f64),
    n: usize,
    as_polyline: bool,
    next: &mut impl FnMut() -> f64,
) -> f64 {
    let vertices: Vec<(f64, f64)> = (0..n)
        .map(|k| {
            let t = TAU * (k as f64 + 0.3 * (next() - 0.5)) / n as f64;
            // Radial noise of a tenth of an edge: the outline stays simple however fine.
            let noise = 0.1 * TAU / n as f64 * (next() - 0.5);
            let r = R * (1.0 + 0.08 * (5.0 * t).sin() + noise);
            (c.0 + r * t.cos(), c.1 + r * t.sin())
        })
        .collect();
    let sweep = 2.0 * 0.5f64.atan();
    let bulge = (sweep / 4.0).tan();
    let mut area = 0.0;
    if as_polyline {
        w.entity("LWPOLYLINE", "PROFILE");
        w.pair_int(90, n);
        w.pair_int(70, 1);
    }
    for k in 0..n {
        let (p, q) = (vertices[k], vertices[(k + 1) % n]);
        area += 0.5 * (p.0 * q.1 - q.0 * p.1);
        let is_arc = k % 3 == 2;
        if as_polyline {
            w.pair(10, p.0);
            w.pair(20, p.1);
            if is_arc {
                w.pair(42, bulge);
            }
        } else if is_arc {
            // Centre to the left of p→q (inwards), one chord from its middle.
            let (dx, dy) = (q.0 - p.0, q.1 - p.1);
            let centre = (0.5 * (p.0 + q.0) - dy, 0.5 * (p.1 + q.1) + dx);
            let r = (p.0 - centre.0).hypot(p.1 - centre.1);
            let angle = |v: (f64, f64)| (v.1 - centre.1).atan2(v.0 - centre.0).to_degrees();
            w.entity("ARC", "PROFILE");
            w.text.push_str("100\nAcDbCircle\n");
            w.pair(10, centre.0);
            w.pair(20, centre.1);
            w.pair(30, 0.0);
            w.pair(40, r);
            w.text.push_str("100\nAcDbArc\n");
            w.pair(50, angle(p));
            w.pair(51, angle(q));
        } else {
            w.line("PROFILE", p, q);
        }
        if is_arc {
            let chord = (q.0 - p.0).hypot(q.1 - p.1);
            let r = chord * 1.25f64.sqrt(); // half-chord 1/2, distance 1: r² = 1/4 + 1
            area += 0.5 * r * r * (sweep - sweep.sin());
        }
    }
    area
}

/// DXF text in the usual layout: codes right-aligned in three characters.
#[derive(Default)]
struct Writer {
    text: String,
    handle: u32,
}

impl Writer {
    fn entity(&mut self, kind: &str, layer: &str) {
        self.handle += 1;
        let h = self.handle;
        let _ = write!(
            self.text,
            "  0\n{kind}\n  5\n{h:X}\n100\nAcDbEntity\n  8\n{layer}\n"
        );
    }
    fn pair(&mut self, code: u32, v: f64) {
        let _ = write!(self.text, "{code:>3}\n{v:?}\n");
    }
    fn pair_int(&mut self, code: u32, v: usize) {
        let _ = write!(self.text, "{code:>3}\n{v}\n");
    }
    fn line(&mut self, layer: &str, a: (f64, f64), b: (f64, f64)) {
        self.entity("LINE", layer);
        self.text.push_str("100\nAcDbLine\n");
        for (code, v) in [
            (10, a.0),
            (20, a.1),
            (30, 0.0),
            (11, b.0),
            (21, b.1),
            (31, 0.0),
        ] {
            self.pair(code, v);
        }
    }
    /// A circle as a closed LWPOLYLINE of `m` arcs (bulge tan(sweep/4), sweep 2π/m).
    fn circle_polyline(&mut self, c: (f64, f64), rho: f64, m: usize) {
        self.entity("LWPOLYLINE", "PROFILE");
        self.text.push_str("100\nAcDbPolyline\n");
        self.pair_int(90, m);
        self.pair_int(70, 1);
        let bulge = (TAU / m as f64 / 4.0).tan();
        for k in 0..m {
            let t = TAU * k as f64 / m as f64;
            self.pair(10, c.0 + rho * t.cos());
            self.pair(20, c.1 + rho * t.sin());
            self.pair(42, bulge);
        }
    }
}

/// Uniform numbers in [0, 1): SplitMix64 (G. Steele, D. Lea, C. Flood, "Fast splittable
/// pseudorandom number generators", OOPSLA 2014), from a fixed seed.
fn splitmix(seed: u64) -> impl FnMut() -> f64 {
    let mut s = seed;
    move || {
        s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = s;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        (z >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// Measure the sheet once, step by step as `sectio measure` does; checks the result.
fn one_round(sheet: &Sheet, opts: &ReadOptions) -> [Duration; 5] {
    let t0 = Instant::now();
    let mut d = dxf::read(sheet.text.as_bytes(), opts).expect("the generated drawing reads");
    let t1 = Instant::now();
    let (extent, short) = drawing_scale_of(&mut d, LengthUnit::MM);
    let gap = default_join_gap(extent, short);
    let runs = run_facts_of(&mut d, LengthUnit::MM);
    let c = chain_read(d.pieces, gap, &runs);
    let t2 = Instant::now();
    let mut problems = c.problems;
    let loops = drop_crossing_loops(c.loops, gap, &d.curves.spans, &mut problems);
    let t3 = Instant::now();
    let profiles = nest(loops, gap, &mut problems).profiles;
    let t4 = Instant::now();
    let area: f64 = profiles.iter().map(|p| section_props(&[p]).area).sum();
    let t5 = Instant::now();
    assert!(problems.is_empty(), "problems: {problems:?}");
    assert_eq!(profiles.len(), sheet.profiles, "profiles found");
    let holes: usize = profiles.iter().map(|p| p.holes.len()).sum();
    let segments: usize = profiles
        .iter()
        .map(|p| p.outer.segments.len() + p.holes.iter().map(|h| h.segments.len()).sum::<usize>())
        .sum();
    assert_eq!(
        segments, sheet.segments,
        "segments in the profiles ({holes} holes)"
    );
    assert!(
        (area - sheet.area).abs() <= 1e-9 * sheet.area,
        "area {area} against the generator's {}",
        sheet.area
    );
    [t1 - t0, t2 - t1, t3 - t2, t4 - t3, t5 - t4]
}

fn report(spec: &Spec, sheet: &Sheet, times: &[[Duration; 5]]) {
    let mb = sheet.text.len() as f64 / 1e6;
    println!(
        "{}: {} profile{}, {} segments, {:.2} MB of DXF, {} rounds",
        spec.name,
        sheet.profiles,
        if sheet.profiles == 1 { "" } else { "s" },
        sheet.segments,
        mb,
        times.len()
    );
    println!("  step          best ms  median ms  ns/segment");
    let ms = |d: Duration| d.as_secs_f64() * 1e3;
    let mut best_total = 0.0;
    for (k, step) in STEPS.iter().enumerate() {
        let mut t: Vec<Duration> = times.iter().map(|r| r[k]).collect();
        t.sort();
        let (best, median) = (t[0], t[t.len() / 2]);
        best_total += ms(best);
        let extra = if k == 0 {
            format!("   {:.0} MB/s", mb / best.as_secs_f64())
        } else {
            String::new()
        };
        println!(
            "  {step:12} {:8.3} {:10.3} {:11.1}{extra}",
            ms(best),
            ms(median),
            best.as_secs_f64() * 1e9 / sheet.segments as f64
        );
    }
    println!(
        "  {:12} {:8.3}            {:11.1}",
        "sum of best",
        best_total,
        best_total * 1e6 / sheet.segments as f64
    );
}
