//! Where a run's time goes, step by step (`measure --timings`): for users with slow folders,
//! to see whether reading, chaining, nesting, integrating, a tier or the output dominates.
//!
//! Each step's time is added to a process-wide counter (summed over the worker threads, so
//! the steps add up to about the run's CPU time, not its wall-clock time). Off unless
//! [`enable`] was called: then each timed step costs two clock readings; otherwise one
//! relaxed atomic load.

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// The steps timed, in pipeline order.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Step {
    /// Reading the file's bytes from disk.
    ReadFile,
    /// Parsing DXF or SVG into segments (blocks and curves included).
    Parse,
    /// Chaining loose segments into loops.
    Chain,
    /// Finding crossing loops and nesting loops into profiles.
    Nest,
    /// The core (elastic) properties by exact integration.
    Integrate,
    Plastic,
    Extrusion,
    Torsion,
    /// Formatting and writing the output (and the report).
    Output,
}

impl Step {
    pub const ALL: [Step; 9] = [
        Step::ReadFile,
        Step::Parse,
        Step::Chain,
        Step::Nest,
        Step::Integrate,
        Step::Plastic,
        Step::Extrusion,
        Step::Torsion,
        Step::Output,
    ];

    pub fn name(self) -> &'static str {
        match self {
            Step::ReadFile => "read files",
            Step::Parse => "parse",
            Step::Chain => "chain",
            Step::Nest => "crossings and nesting",
            Step::Integrate => "integrate (core properties)",
            Step::Plastic => "plastic tier",
            Step::Extrusion => "extrusion tier",
            Step::Torsion => "torsion tier",
            Step::Output => "format and write output",
        }
    }
}

static ENABLED: AtomicBool = AtomicBool::new(false);
static NANOS: [AtomicU64; 9] = [const { AtomicU64::new(0) }; 9];
/// The slowest files: (seconds, path), at most [`SLOWEST`].
static SLOW: Mutex<Vec<(Duration, PathBuf)>> = Mutex::new(Vec::new());

/// How many of the slowest files are kept.
pub const SLOWEST: usize = 5;

/// Start timing (for the rest of the process).
pub fn enable() {
    ENABLED.store(true, Ordering::Relaxed);
}

pub fn enabled() -> bool {
    ENABLED.load(Ordering::Relaxed)
}

/// Run `work`, adding its time to `step` when timing is on.
#[inline]
pub fn time<R>(step: Step, work: impl FnOnce() -> R) -> R {
    if !enabled() {
        return work();
    }
    let start = Instant::now();
    let r = work();
    add(step, start.elapsed());
    r
}

/// Add `d` to `step`.
pub fn add(step: Step, d: Duration) {
    let i = Step::ALL.iter().position(|s| *s == step).unwrap_or(0);
    NANOS[i].fetch_add(
        u64::try_from(d.as_nanos()).unwrap_or(u64::MAX),
        Ordering::Relaxed,
    );
}

/// Note that `path` took `d` in all (kept when among the slowest).
pub fn file_took(path: &Path, d: Duration) {
    if !enabled() {
        return;
    }
    let mut slow = SLOW.lock().unwrap_or_else(|p| p.into_inner());
    if slow.len() < SLOWEST || slow.last().is_some_and(|(t, _)| d > *t) {
        slow.push((d, path.to_path_buf()));
        // Slowest first; equal times by path, so the list does not depend on thread timing.
        slow.sort_by(|a, b| b.0.cmp(&a.0).then_with(|| a.1.cmp(&b.1)));
        slow.truncate(SLOWEST);
    }
}

/// The time of each step so far, in [`Step::ALL`] order.
pub fn totals() -> [(Step, Duration); 9] {
    let mut out = [(Step::ReadFile, Duration::ZERO); 9];
    for (k, step) in Step::ALL.iter().enumerate() {
        out[k] = (
            *step,
            Duration::from_nanos(NANOS[k].load(Ordering::Relaxed)),
        );
    }
    out
}

/// The slowest files so far, slowest first.
pub fn slowest() -> Vec<(Duration, PathBuf)> {
    SLOW.lock().map(|s| s.clone()).unwrap_or_default()
}

/// The table `measure --timings` prints: each step's time summed over the threads and its
/// share, then the slowest files. `wall` is the run's wall-clock time, `threads` the
/// number of worker threads.
pub fn render(wall: Duration, threads: usize, files: usize) -> String {
    use std::fmt::Write as _;
    let totals = totals();
    let sum: Duration = totals.iter().map(|(_, d)| *d).sum();
    let mut s = String::new();
    let _ = writeln!(
        s,
        "time by step, summed over {threads} worker thread{} ({files} files, {:.3} s wall clock):",
        if threads == 1 { "" } else { "s" },
        wall.as_secs_f64()
    );
    for (step, d) in totals {
        if d.is_zero() {
            continue;
        }
        let share = if sum.is_zero() {
            0.0
        } else {
            100.0 * d.as_secs_f64() / sum.as_secs_f64()
        };
        let _ = writeln!(
            s,
            "  {:<28} {:>10.6} s {:>5.1} %",
            step.name(),
            d.as_secs_f64(),
            share
        );
    }
    let _ = writeln!(s, "  {:<28} {:>10.6} s", "all steps", sum.as_secs_f64());
    let slow = slowest();
    if !slow.is_empty() {
        let _ = writeln!(s, "slowest files:");
        for (d, p) in slow {
            let _ = writeln!(s, "  {:>10.3} s  {}", d.as_secs_f64(), p.display());
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    // One test touches the process-wide counters, so that tests running in parallel do not
    // see each other's times.
    #[test]
    fn steps_add_up_and_the_slowest_files_are_kept_in_order() {
        assert_eq!(time(Step::Chain, || 5), 5); // off: nothing counted
        assert!(totals().iter().all(|(_, d)| d.is_zero()));
        enable();
        time(Step::Chain, || std::thread::sleep(Duration::from_millis(5)));
        add(Step::Torsion, Duration::from_millis(20));
        let t = totals();
        assert!(t[2].1 >= Duration::from_millis(5), "{t:?}");
        assert_eq!(t[7].1, Duration::from_millis(20));
        for k in 0..8u64 {
            file_took(Path::new(&format!("f{k}.dxf")), Duration::from_millis(k));
        }
        let slow = slowest();
        assert_eq!(slow.len(), SLOWEST);
        assert_eq!(slow[0], (Duration::from_millis(7), PathBuf::from("f7.dxf")));
        assert_eq!(slow[4].1, PathBuf::from("f3.dxf"));
        let table = render(Duration::from_secs(1), 2, 8);
        assert!(table.contains("chain"), "{table}");
        assert!(table.contains("torsion tier"), "{table}");
        assert!(
            !table.contains("plastic tier"),
            "steps never run are left out: {table}"
        );
        assert!(table.contains("f7.dxf"), "{table}");
    }
}
