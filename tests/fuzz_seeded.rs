//! The fuzz targets' paths on the stable toolchain, with seeded random inputs: mutated
//! drawings (bit flips, truncation, splicing, duplicated, dropped and swapped lines, numbers
//! replaced by NaN, infinities, 1e300, −0 and huge exponents) through the DXF and SVG paths,
//! and random segment soups through the pipeline. The same bodies as the libFuzzer targets
//! (`fuzz/src/targets.rs`), a bounded number of iterations each, so CI runs them without
//! nightly; `scripts/fuzz.sh` fuzzes for real (DEVELOPERS.md, "Robustness: fuzzing").
//!
//! A panic anywhere on the test's thread counts, also one the library catches itself (the
//! torsion solver's guard): the harness watches with a panic hook, names the seed and the
//! iteration, and saves the input under `target/tmp/fuzz_seeded/`.
//! `SECTIO_FUZZ_SEED=N` runs other seeds than the fixed ones.

use std::cell::RefCell;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};

#[path = "../fuzz/src/targets.rs"]
mod targets;

thread_local! {
    /// The message of the last panic on this thread, caught or not.
    static PANIC: RefCell<Option<String>> = const { RefCell::new(None) };
}

/// Record every panic on the test's thread (and still print it, as the default hook does).
fn watch_panics() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        let default = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            PANIC.with(|p| *p.borrow_mut() = Some(info.to_string()));
            default(info);
        }));
    });
}

/// Run `body` on `input`; on a panic (also one caught inside), save the input and say which
/// path, seed and iteration it was.
fn check(
    path: &str,
    seed: u64,
    iteration: usize,
    input: &[u8],
    body: &dyn Fn(&[u8]),
) -> Result<(), String> {
    watch_panics();
    PANIC.with(|p| p.borrow_mut().take());
    let result = catch_unwind(AssertUnwindSafe(|| body(input)));
    let message = PANIC.with(|p| p.borrow_mut().take());
    if result.is_ok() && message.is_none() {
        return Ok(());
    }
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("fuzz_seeded");
    let file = dir.join(format!("{path}-{seed:x}-{iteration}.bin"));
    let saved = std::fs::create_dir_all(&dir)
        .and_then(|()| std::fs::write(&file, input))
        .map_or_else(
            |e| format!("not saved: {e}"),
            |()| format!("saved to {}", file.display()),
        );
    Err(format!(
        "{path}: seed {seed:#x}, iteration {iteration}: {}; input {saved} \
         (replay: cd fuzz && cargo +nightly fuzz run {path} {})",
        message.unwrap_or_else(|| "panicked".into()),
        file.display()
    ))
}

/// The seeds to run: the fixed one, or those of `SECTIO_FUZZ_SEED` (comma-separated).
fn seeds(fixed: u64) -> Vec<u64> {
    match std::env::var("SECTIO_FUZZ_SEED") {
        Ok(s) => s
            .split(',')
            .map(|t| {
                let t = t.trim();
                t.strip_prefix("0x")
                    .map_or_else(|| t.parse(), |h| u64::from_str_radix(h, 16))
                    .expect("SECTIO_FUZZ_SEED: numbers, decimal or 0x-hex, comma-separated")
            })
            .collect(),
        Err(_) => vec![fixed],
    }
}

/// Each iteration draws from its own generator, so a reported seed and iteration give the
/// same input again whatever ran before.
fn rng_for(seed: u64, iteration: usize) -> StdRng {
    StdRng::seed_from_u64(seed ^ (iteration as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15))
}

/// `iterations` inputs made by `make` through `body`; fails with the first panic.
fn run(
    path: &str,
    fixed_seed: u64,
    iterations: usize,
    make: &dyn Fn(&mut StdRng) -> Vec<u8>,
    body: &dyn Fn(&[u8]),
) {
    for seed in seeds(fixed_seed) {
        for i in 0..iterations {
            let input = make(&mut rng_for(seed, i));
            if let Err(e) = check(path, seed, i, &input, body) {
                panic!("{e}");
            }
        }
    }
}

// ---------------------------------------------------------------------------------------
// The harness itself

#[test]
fn the_harness_sees_panics_also_caught_ones() {
    let quiet: &dyn Fn(&[u8]) = &|data| assert!(data.len() < 10);
    assert_eq!(check("selftest", 1, 0, b"short", quiet), Ok(()));
    let loud: &dyn Fn(&[u8]) = &|_| panic!("deliberate");
    let e = check("selftest", 0x5eed, 7, b"input", loud).unwrap_err();
    assert!(
        e.contains("seed 0x5eed, iteration 7") && e.contains("deliberate"),
        "{e}"
    );
    assert!(e.contains("selftest-5eed-7.bin"), "{e}");
    // The library catches a panic of the torsion solver and carries on: still a bug.
    let caught: &dyn Fn(&[u8]) = &|_| {
        let _ = catch_unwind(|| panic!("caught inside"));
    };
    let e = check("selftest", 2, 3, b"", caught).unwrap_err();
    assert!(e.contains("caught inside"), "{e}");
    // And `run` turns one into a test failure.
    let failed = catch_unwind(AssertUnwindSafe(|| {
        run("selftest", 3, 5, &|_| Vec::new(), loud)
    }));
    assert!(failed.is_err());
}

// ---------------------------------------------------------------------------------------
// Mutated drawings

/// Files under `dir` (recursively) whose extension is `ext`, sorted.
fn files(dir: &Path, ext: &str, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        if p.is_dir() {
            files(&p, ext, out);
        } else if p.extension().is_some_and(|x| x.eq_ignore_ascii_case(ext)) {
            out.push(p);
        }
    }
}

/// The project's own drawings with extension `ext`: the fixtures and the fuzz seeds, but not
/// the fuzzers' finds in `fixtures/fuzz` (`tests/robustness.rs` runs those; some take
/// seconds in a debug build, by design).
fn drawings(ext: &str) -> Vec<Vec<u8>> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut paths = Vec::new();
    files(&root.join("fixtures"), ext, &mut paths);
    files(&root.join("fuzz/seeds"), ext, &mut paths);
    paths.retain(|p| !p.starts_with(root.join("fixtures/fuzz")));
    paths.sort();
    assert!(!paths.is_empty(), "no .{ext} drawings to mutate");
    paths.iter().map(|p| std::fs::read(p).unwrap()).collect()
}

/// Text put in place of a number.
const AWKWARD: [&str; 18] = [
    "nan",
    "NaN",
    "inf",
    "-inf",
    "infinity",
    "1e300",
    "-1e300",
    "-0",
    "-0.0",
    "1e999",
    "1e-999",
    "4.9e-324",
    "1.7976931348623157e308",
    "99999999999999999999",
    "0",
    "1e15",
    "1,5",
    "",
];

/// Text put in place of a count or a flag (DXF integer groups).
const AWKWARD_COUNTS: [&str; 6] = ["0", "-1", "2147483647", "4294967296", "99999999999", "3"];

/// Where a number may be replaced: for DXF (ASCII, read pair by pair) the value lines of real groups (coordinates,
/// sizes, angles: codes 10–59, 110–149, 210–239, 1010–1059) and of integer groups (counts and
/// flags: 60–99, 170–179, 270–289), so that the file stays readable pair by pair; for SVG every
/// number in the text. Byte ranges, and whether the place holds an integer.
fn number_places(b: &[u8], dxf: bool) -> Vec<(usize, usize, bool)> {
    if !dxf {
        return numbers(b).into_iter().map(|(s, e)| (s, e, false)).collect();
    }
    let ls = lines(b);
    let mut out = Vec::new();
    // Pair by pair from the start (a value that reads as a code must not count as one).
    for w in ls.chunks_exact(2) {
        let code = std::str::from_utf8(&b[w[0].0..w[0].1])
            .ok()
            .and_then(|t| t.trim().parse::<i32>().ok());
        let real =
            |c: i32| (10..60).contains(&c) || (110..150).contains(&c) || (210..240).contains(&c);
        let int =
            |c: i32| (60..100).contains(&c) || (170..180).contains(&c) || (270..290).contains(&c);
        let (s, mut e) = w[1];
        while e > s && b[e - 1].is_ascii_whitespace() {
            e -= 1;
        }
        match code {
            Some(c) if real(c) || (1010..1060).contains(&c) => out.push((s, e, false)),
            Some(c) if int(c) => out.push((s, e, true)),
            _ => {}
        }
    }
    out
}

/// The byte ranges of the numbers in `b` (an optional sign, digits and a point, an
/// exponent).
fn numbers(b: &[u8]) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        if b[i].is_ascii_digit() {
            let mut s = i;
            if s > 0 && (b[s - 1] == b'-' || b[s - 1] == b'+') {
                s -= 1;
            }
            let mut e = i;
            while e < b.len() && (b[e].is_ascii_digit() || b[e] == b'.') {
                e += 1;
            }
            if e < b.len() && (b[e] == b'e' || b[e] == b'E') {
                let mut x = e + 1;
                if x < b.len() && (b[x] == b'-' || b[x] == b'+') {
                    x += 1;
                }
                if x < b.len() && b[x].is_ascii_digit() {
                    e = x;
                    while e < b.len() && b[e].is_ascii_digit() {
                        e += 1;
                    }
                }
            }
            out.push((s, e));
            i = e;
        } else {
            i += 1;
        }
    }
    out
}

/// The byte ranges of the lines of `b`, each with its line break.
fn lines(b: &[u8]) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut s = 0;
    for (i, &c) in b.iter().enumerate() {
        if c == b'\n' {
            out.push((s, i + 1));
            s = i + 1;
        }
    }
    if s < b.len() {
        out.push((s, b.len()));
    }
    out
}

/// One or two mutations of one of `sources` (splicing takes from another). Most keep the
/// file readable, so that the geometry behind the reader gets the awkward values: numbers
/// replaced (half of them), runs of lines duplicated, dropped or swapped (a quarter); the
/// rest break it (bit flips, truncation, splicing, a byte that matters to the syntax).
fn mutate(rng: &mut StdRng, sources: &[Vec<u8>], dxf: bool) -> Vec<u8> {
    let mut b = sources[rng.random_range(0..sources.len())].clone();
    for _ in 0..rng.random_range(1..=2) {
        if b.is_empty() {
            break;
        }
        match rng.random_range(0..12) {
            // Numbers replaced by awkward ones (several at once: a whole point).
            0..=5 => {
                let places = number_places(&b, dxf);
                if places.is_empty() {
                    continue;
                }
                let mut picked: Vec<(usize, usize, bool)> = (0..rng.random_range(1..=3))
                    .map(|_| places[rng.random_range(0..places.len())])
                    .collect();
                picked.sort_by_key(|p| p.0);
                picked.dedup();
                // Back to front, so the earlier ranges stay valid.
                for (s, e, int) in picked.into_iter().rev() {
                    let text = if int {
                        AWKWARD_COUNTS[rng.random_range(0..AWKWARD_COUNTS.len())].to_string()
                    } else if rng.random_ratio(1, 4) {
                        // The same digits with a huge or tiny exponent.
                        let digits = String::from_utf8_lossy(&b[s..e]).trim().to_string();
                        format!("{digits}e{}", rng.random_range(-400..400))
                    } else {
                        AWKWARD[rng.random_range(0..AWKWARD.len())].to_string()
                    };
                    b.splice(s..e, text.into_bytes());
                }
            }
            // A run of lines again, right after itself (sometimes fifty times). For DXF an
            // even number of lines at an even line keeps the pairs.
            6 => {
                let ls = lines(&b);
                let (i, n) = pick_lines(rng, ls.len(), dxf, 16);
                let run = b[ls[i].0..ls[i + n - 1].1].to_vec();
                let at = ls[i + n - 1].1;
                for _ in 0..if rng.random_ratio(1, 8) { 50 } else { 1 } {
                    b.splice(at..at, run.iter().copied());
                }
            }
            // A run of lines gone.
            7 => {
                let ls = lines(&b);
                let (i, n) = pick_lines(rng, ls.len(), dxf, 8);
                b.drain(ls[i].0..ls[i + n - 1].1);
            }
            // Two runs of lines swapped (for DXF, two pairs).
            8 => {
                let ls = lines(&b);
                let ((i, n), (j, m)) = {
                    let (p, q) = (
                        pick_lines(rng, ls.len(), dxf, 1),
                        pick_lines(rng, ls.len(), dxf, 1),
                    );
                    (p.min(q), p.max(q))
                };
                if i + n <= j {
                    let first = b[ls[i].0..ls[i + n - 1].1].to_vec();
                    let second = b[ls[j].0..ls[j + m - 1].1].to_vec();
                    b.splice(ls[j].0..ls[j + m - 1].1, first);
                    b.splice(ls[i].0..ls[i + n - 1].1, second);
                }
            }
            // Bit flips.
            9 => {
                for _ in 0..rng.random_range(1..=8) {
                    let i = rng.random_range(0..b.len());
                    b[i] ^= 1 << rng.random_range(0..8);
                }
            }
            // This file's start and another's end (or only the start: truncation).
            10 => {
                b.truncate(rng.random_range(0..=b.len()));
                if rng.random_bool(0.5) {
                    let other = &sources[rng.random_range(0..sources.len())];
                    b.extend_from_slice(&other[rng.random_range(0..=other.len())..]);
                }
            }
            // A byte that matters to the syntax.
            _ => {
                let i = rng.random_range(0..b.len());
                b[i] = *[
                    b'\n', b'\r', b'0', b'-', b'<', b'>', b'"', b'/', b' ', 0, 0xff,
                ]
                .get(rng.random_range(0..11))
                .unwrap();
            }
        }
    }
    b
}

/// A run of lines to work on: its first line and length (at least one; up to `most` lines,
/// or pairs for DXF, where it starts at an even line, a group code).
fn pick_lines(rng: &mut StdRng, n_lines: usize, dxf: bool, most: usize) -> (usize, usize) {
    let unit = if dxf && n_lines >= 2 { 2 } else { 1 };
    let i = rng.random_range(0..n_lines / unit) * unit;
    let n = (rng.random_range(1..=most) * unit).min(n_lines - i);
    (i, n.max(1))
}

#[test]
fn mutated_dxf_drawings_never_panic() {
    let sources = drawings("dxf");
    run(
        "dxf_reader",
        0xD0F_5EED,
        1000,
        &|rng| mutate(rng, &sources, true),
        &|b| targets::dxf_reader(b),
    );
}

#[test]
fn mutated_svg_drawings_never_panic() {
    let sources = drawings("svg");
    run(
        "svg_reader",
        0x5C6_5EED,
        400,
        &|rng| mutate(rng, &sources, false),
        &|b| targets::svg_reader(b),
    );
}

// ---------------------------------------------------------------------------------------
// Segment soups

/// Random bytes for the soup decoder (`targets::soup`): a few to a few hundred, so that
/// soups range from empty to its segment cap.
fn soup_bytes(rng: &mut StdRng) -> Vec<u8> {
    let n = rng.random_range(0..400);
    (0..n).map(|_| rng.random()).collect()
}

#[test]
fn random_segment_soups_never_panic() {
    run("pipeline", 0x500B_5EED, 2000, &soup_bytes, &|b| {
        targets::pipeline(b)
    });
}

#[test]
fn soups_hold_what_the_fuzzer_needs() {
    // The decoder must make the awkward cases it is there for; a change that stopped it
    // drawing them would leave the fuzzer and the test above looking at easy drawings.
    let (mut non_finite, mut arcs, mut curves, mut closed, mut tiers) = (0, 0, 0, 0, 0);
    for i in 0..400 {
        let (d, s) = targets::soup(&soup_bytes(&mut rng_for(7, i)));
        let segs = || d.pieces.iter().flat_map(|p| &p.segments);
        non_finite += segs().filter(|s| !s.is_finite()).count();
        arcs += segs()
            .filter(|s| matches!(s, sectio::geom::Segment::Arc(_)))
            .count();
        curves += segs()
            .filter(|s| matches!(s, sectio::geom::Segment::Curve(_)))
            .count();
        closed += d.pieces.iter().filter(|p| p.closed).count();
        tiers += usize::from(s.plastic || s.extrusion || s.torsion.is_some());
    }
    for (what, n) in [
        ("non-finite segments", non_finite),
        ("arcs", arcs),
        ("curve pieces", curves),
        ("closed pieces", closed),
        ("soups with a tier", tiers),
    ] {
        assert!(n > 20, "{n} {what} in 400 soups");
    }
}
