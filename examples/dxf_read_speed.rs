//! Throughput of the DXF reader next to the parse floor (split lines, parse every code,
//! parse the value of codes 10–59 as f64; no entity logic), single-threaded, best of five.
//!
//!     cargo run --release --example dxf_read_speed [-- MEGABYTES | DIR]
//!
//! With a number (default 50), a synthetic ASCII drawing of that size (invented data): closed
//! LWPOLYLINEs of 5 vertices with bulges, ARCs and LINEs with handles, subclass markers and a
//! layer, as a Release 2000 writer puts them. Half the numbers are written shortest
//! round-trip (up to 17 significant digits), half with six decimals.
//!
//! With a folder, every `.dxf` file under it that the floor can split (ASCII files), each
//! read once per run.

use std::fmt::Write as _;
use std::hint::black_box;
use std::path::PathBuf;
use std::time::Instant;

use sectio::import::dxf::read;
use sectio::import::ReadOptions;

fn main() {
    let arg = std::env::args().nth(1);
    let inputs: Vec<Vec<u8>> = match arg.as_deref().map(|a| (a, a.parse::<usize>())) {
        Some((dir, Err(_))) => sectio::cli::batch::collect_files(&[PathBuf::from(dir)])
            .expect("folder readable")
            .iter()
            .filter_map(|f| std::fs::read(f).ok())
            .filter(|b| parse_floor(b).is_some())
            .collect(),
        Some((_, Ok(mb))) => vec![synthetic(mb << 20).into_bytes()],
        None => vec![synthetic(50 << 20).into_bytes()],
    };
    let mb = inputs.iter().map(Vec::len).sum::<usize>() as f64 / 1e6;
    let opts = ReadOptions::default();

    let floor = best_of(5, || {
        for b in &inputs {
            black_box(parse_floor(b));
        }
    });
    let mut pieces = 0;
    let reader = best_of(5, || {
        pieces = 0;
        for b in &inputs {
            // Errors count too: a rejected file has been read up to its fault.
            if let Ok(d) = black_box(read(b, &opts)) {
                pieces += d.pieces.len();
            }
        }
    });
    println!(
        "files={} size={mb:.1} MB pieces={pieces} floor={:.0} MB/s read={:.0} MB/s ratio={:.2}",
        inputs.len(),
        mb / floor,
        mb / reader,
        reader / floor
    );
}

fn best_of(n: usize, mut f: impl FnMut()) -> f64 {
    (0..n)
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min)
}

/// The parse floor of `examples/parse_floor.rs`, on one buffer: `None` where it cannot split
/// the file into pairs.
fn parse_floor(bytes: &[u8]) -> Option<(u64, f64)> {
    let bytes = bytes.strip_suffix(b"\n").unwrap_or(bytes);
    let mut lines = bytes.split(|&b| b == b'\n');
    let (mut pairs, mut sum) = (0u64, 0.0f64);
    while let Some(code_line) = lines.next() {
        let value_line = lines.next()?;
        let code: i32 = std::str::from_utf8(code_line.trim_ascii())
            .ok()?
            .parse()
            .ok()?;
        if (10..=59).contains(&code) {
            sum += std::str::from_utf8(value_line.trim_ascii())
                .ok()?
                .parse::<f64>()
                .ok()?;
        }
        pairs += 1;
    }
    Some((pairs, sum))
}

/// A drawing of about `target` bytes.
fn synthetic(target: usize) -> String {
    let mut s = String::with_capacity(target + 4096);
    s.push_str("  0\nSECTION\n  2\nHEADER\n  9\n$ACADVER\n  1\nAC1015\n  9\n$INSUNITS\n 70\n4\n  0\nENDSEC\n");
    s.push_str("  0\nSECTION\n  2\nTABLES\n  0\nTABLE\n  2\nLAYER\n 70\n1\n");
    s.push_str("  0\nLAYER\n  5\n10\n100\nAcDbSymbolTableRecord\n100\nAcDbLayerTableRecord\n  2\nPROFILES\n 70\n0\n 62\n7\n  6\nCONTINUOUS\n");
    s.push_str("  0\nENDTAB\n  0\nENDSEC\n  0\nSECTION\n  2\nENTITIES\n");
    // xorshift64 (Marsaglia 2003) with a fixed seed: the same drawing on every run.
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    let mut rnd = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut handle = 0x100u32;
    let mut k = 0u64;
    while s.len() < target {
        k += 1;
        handle += 1;
        let short = k.is_multiple_of(2);
        let num = |s: &mut String, code: u32, v: f64| {
            if short {
                let _ = write!(s, "{code:>3}\n{v:.6}\n");
            } else {
                let _ = write!(s, "{code:>3}\n{v}\n");
            }
        };
        let (x, y) = (rnd() * 2000.0 - 1000.0, rnd() * 2000.0 - 1000.0);
        match k % 4 {
            0 | 1 => {
                let _ = write!(
                    s,
                    "  0\nLWPOLYLINE\n  5\n{handle:X}\n330\n1F\n100\nAcDbEntity\n  8\nPROFILES\n100\nAcDbPolyline\n 90\n5\n 70\n1\n 43\n0.0\n"
                );
                for i in 0..5 {
                    let a = i as f64 * 1.2566 + rnd() * 0.3;
                    num(&mut s, 10, x + 20.0 * a.cos());
                    num(&mut s, 20, y + 20.0 * a.sin());
                    if i % 2 == 0 {
                        num(&mut s, 42, rnd() * 0.8 - 0.4);
                    }
                }
            }
            2 => {
                let _ = write!(
                    s,
                    "  0\nARC\n  5\n{handle:X}\n330\n1F\n100\nAcDbEntity\n  8\nPROFILES\n100\nAcDbCircle\n"
                );
                num(&mut s, 10, x);
                num(&mut s, 20, y);
                num(&mut s, 30, 0.0);
                num(&mut s, 40, 1.0 + rnd() * 50.0);
                s.push_str("100\nAcDbArc\n");
                num(&mut s, 50, rnd() * 360.0);
                num(&mut s, 51, rnd() * 360.0);
            }
            _ => {
                let _ = write!(
                    s,
                    "  0\nLINE\n  5\n{handle:X}\n330\n1F\n100\nAcDbEntity\n  8\nPROFILES\n100\nAcDbLine\n"
                );
                num(&mut s, 10, x);
                num(&mut s, 20, y);
                num(&mut s, 30, 0.0);
                num(&mut s, 11, x + rnd() * 100.0);
                num(&mut s, 21, y + rnd() * 100.0);
                num(&mut s, 31, 0.0);
            }
        }
    }
    s.push_str("  0\nENDSEC\n  0\nEOF\n");
    s
}
