//! The batch: find files, measure them in parallel, keep the rows in a stable order.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};

use anyhow::Context;
use indicatif::{ProgressBar, ProgressStyle};
use rayon::prelude::*;

use crate::analyze::{
    analyze_drawing, analyze_drawing_with_geometry, MeasuredDrawing, Outcome, Settings,
};
use crate::report::Row;

/// Files named by `paths`: files as given, folders searched recursively for `*.dxf` and
/// `*.svg` (any case). Sorted by path and without repeats, so the output order never depends on the
/// file system. A path that does not exist is kept, to become an error row.
pub fn collect_files(paths: &[PathBuf]) -> anyhow::Result<Vec<PathBuf>> {
    let mut files = Vec::new();
    for p in paths {
        if p.is_dir() {
            walk(p, &mut files).with_context(|| format!("cannot read folder {}", p.display()))?;
        } else {
            files.push(p.clone());
        }
    }
    files.sort();
    files.dedup();
    Ok(files)
}

fn walk(dir: &Path, out: &mut Vec<PathBuf>) -> std::io::Result<()> {
    for entry in std::fs::read_dir(dir)? {
        let entry = entry?;
        let path = entry.path();
        let kind = entry.file_type()?;
        if kind.is_dir() {
            walk(&path, out)?;
        } else if path
            .extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("dxf") || e.eq_ignore_ascii_case("svg"))
        {
            out.push(path);
        }
    }
    Ok(())
}

/// Every file measured: its rows, ordered by file (as given) then profile, and the same rows
/// rendered by `render` (on the worker threads, so that the output is only joined at the end).
pub struct BatchOutput<T> {
    pub rows: Vec<Row>,
    pub rendered: Vec<T>,
}

/// Measure every file, rendering each file's rows with `render` as they come.
pub fn run_batch<T: Send>(
    files: &[PathBuf],
    settings: &Settings,
    jobs: Option<usize>,
    render: impl Fn(&[Row]) -> T + Sync,
) -> anyhow::Result<BatchOutput<T>> {
    run_batch_with(files, jobs, |path| {
        let rows = measure_file(path, settings);
        let rendered = render(&rows);
        (rows, rendered)
    })
}

/// Run `per_file` on every file in parallel (it returns the file's rows and what it
/// rendered of them), with the progress bar and panic capture of the batch.
pub fn run_batch_with<T: Send>(
    files: &[PathBuf],
    jobs: Option<usize>,
    per_file: impl Fn(&Path) -> (Vec<Row>, T) + Sync,
) -> anyhow::Result<BatchOutput<T>> {
    // Stacks of 16 MiB (the default is 2 MiB): the readers' recursion is bounded (blocks
    // 64 deep, SVG elements 256 deep), and this leaves room for any drawing within those
    // bounds in a debug build too. Only the pages touched take memory.
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(jobs.unwrap_or(0))
        .stack_size(16 << 20)
        .build()
        .context("cannot start worker threads")?;
    let bar = ProgressBar::new(files.len() as u64);
    bar.set_style(
        ProgressStyle::with_template("{bar:40} {pos}/{len} files {elapsed_precise}")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    // Panics inside one file become an error row; keep the default hook from printing them.
    let previous_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let per_file: Vec<(Vec<Row>, T)> = pool.install(|| {
        files
            .par_iter()
            .map(|path| {
                let out = per_file(path);
                bar.inc(1);
                out
            })
            .collect()
    });
    std::panic::set_hook(previous_hook);
    bar.finish_and_clear();
    let mut out = BatchOutput {
        rows: Vec::with_capacity(per_file.iter().map(|(r, _)| r.len()).sum()),
        rendered: Vec::with_capacity(per_file.len()),
    };
    for (rows, rendered) in per_file {
        out.rows.extend(rows);
        out.rendered.push(rendered);
    }
    Ok(out)
}

/// Files in flight or finished but not yet handed on, per worker thread, in
/// [`stream_batch`]: enough to keep every thread busy past a slow file, few enough that
/// memory does not grow with the number of files.
pub const WINDOW_PER_THREAD: usize = 64;

/// Finished files the calling thread of [`stream_batch`] waits for before it is woken to hand
/// them on (fewer at the end of the run). Waking a thread is a system call and a context
/// switch (some 10-20 µs here); one per file was a fifth of the run's time on small drawings.
const HAND_ON_BATCH: usize = 16;

/// Run `per_file` on every file on `jobs` threads (default: one per core) and hand each
/// result to `sink` on the calling thread, in file order, as soon as it and every file
/// before it are done (in runs of up to [`HAND_ON_BATCH`]). At most [`WINDOW_PER_THREAD`] ×
/// threads files are in flight or waiting at any time, so memory does not grow with the
/// number of files. An error from `sink` stops the run (the threads finish the file they are
/// on) and is returned.
///
/// When all the files fit in the window, the threads take them up largest first (see
/// [`largest_first`]); they are still handed on in file order.
///
/// Threads are woken only when something they wait for has happened: the calling thread
/// when the files it waits for are all done (or a worker stopped), the workers when the
/// window moves while one of them waits for it.
pub fn stream_batch<T: Send>(
    files: &[PathBuf],
    jobs: Option<usize>,
    per_file: impl Fn(&Path) -> T + Sync,
    mut sink: impl FnMut(T) -> std::io::Result<()>,
) -> anyhow::Result<()> {
    use std::collections::BTreeMap;
    use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
    use std::sync::{Condvar, Mutex};

    /// What the threads share, under one lock.
    struct Shared<T> {
        /// The next file to hand on.
        next: usize,
        /// Finished files not yet handed on.
        ready: BTreeMap<usize, T>,
        /// The calling thread waits until files `next..=last` are all ready.
        main_waits_for: Option<usize>,
        /// Workers waiting for the window to move.
        workers_waiting: usize,
    }

    let threads = jobs
        .filter(|&j| j > 0)
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .min(files.len().max(1));
    let window = WINDOW_PER_THREAD * threads;
    let claim_order = largest_first(files, window);
    let bar = ProgressBar::new(files.len() as u64);
    bar.set_style(
        ProgressStyle::with_template("{bar:40} {pos}/{len} files {elapsed_precise}")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    // The next file to claim; a copy of `next` that workers read without the lock.
    let claim = AtomicUsize::new(0);
    let handed = AtomicUsize::new(0);
    let stop = AtomicBool::new(false);
    let state = Mutex::new(Shared {
        next: 0,
        ready: BTreeMap::new(),
        main_waits_for: None,
        workers_waiting: 0,
    });
    let (main_wakes, workers_wake) = (Condvar::new(), Condvar::new());
    let lock = || state.lock().unwrap_or_else(|p| p.into_inner());
    let previous_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let result = std::thread::scope(|scope| -> anyhow::Result<()> {
        for _ in 0..threads {
            let (claim, handed, stop, per_file, bar) = (&claim, &handed, &stop, &per_file, &bar);
            let claim_order = &claim_order;
            let (lock, main_wakes, workers_wake) = (&lock, &main_wakes, &workers_wake);
            std::thread::Builder::new()
                .name("sectio-worker".into())
                .stack_size(16 << 20) // see run_batch_with
                .spawn_scoped(scope, move || loop {
                    let c = claim.fetch_add(1, Ordering::Relaxed);
                    if c >= files.len() || stop.load(Ordering::Relaxed) {
                        return;
                    }
                    let i = claim_order.as_ref().map_or(c, |o| o[c]);
                    // Wait until the file is within the window of the next one handed on.
                    if i >= handed.load(Ordering::Acquire) + window {
                        let mut st = lock();
                        st.workers_waiting += 1;
                        while i >= st.next + window && !stop.load(Ordering::Relaxed) {
                            st = workers_wake.wait(st).unwrap_or_else(|p| p.into_inner());
                        }
                        st.workers_waiting -= 1;
                    }
                    if stop.load(Ordering::Relaxed) {
                        return;
                    }
                    // `per_file` catches a file's panics itself; one escaping it (a bug in
                    // rendering) stops the run instead of leaving the sink waiting.
                    match catch_unwind(AssertUnwindSafe(|| per_file(&files[i]))) {
                        Ok(out) => {
                            bar.inc(1);
                            let mut st = lock();
                            st.ready.insert(i, out);
                            if let Some(last) = st.main_waits_for {
                                let from = st.next;
                                if (from..=last).contains(&i)
                                    && st.ready.range(from..=last).count() == last + 1 - from
                                {
                                    st.main_waits_for = None;
                                    drop(st);
                                    main_wakes.notify_one();
                                }
                            }
                        }
                        Err(_) => {
                            // Under the lock, so that no waiting thread misses it.
                            let held = lock();
                            stop.store(true, Ordering::Relaxed);
                            drop(held);
                            main_wakes.notify_one();
                            workers_wake.notify_all();
                        }
                    }
                })
                .context("cannot start worker threads")?;
        }
        // Hand results on in order, on this thread.
        let mut st = lock();
        while st.next < files.len() {
            let next = st.next;
            match st.ready.remove(&next) {
                Some(out) => {
                    st.next += 1;
                    handed.store(st.next, Ordering::Release);
                    let wake = st.workers_waiting > 0;
                    drop(st);
                    if wake {
                        workers_wake.notify_all();
                    }
                    if let Err(e) = sink(out) {
                        let held = lock();
                        stop.store(true, Ordering::Relaxed);
                        drop(held);
                        workers_wake.notify_all();
                        return Err(e.into());
                    }
                    st = lock();
                }
                None if stop.load(Ordering::Relaxed) => {
                    anyhow::bail!("internal error: a worker thread stopped (this is a bug in sectio: please report it)")
                }
                None => {
                    // Wait for a run of files (all within the window, so the workers reach
                    // them), unless a worker stops.
                    st.main_waits_for = Some((next + HAND_ON_BATCH - 1).min(files.len() - 1));
                    while st.main_waits_for.is_some() && !stop.load(Ordering::Relaxed) {
                        st = main_wakes.wait(st).unwrap_or_else(|p| p.into_inner());
                    }
                    st.main_waits_for = None;
                }
            }
        }
        Ok(())
    });
    std::panic::set_hook(previous_hook);
    bar.finish_and_clear();
    result
}

/// The order in which the threads of [`stream_batch`] take up `files` when all of them fit in
/// its `window`: largest first, so that a folder of a few drawings, some much larger than the
/// rest, does not end with one thread on a large drawing while the others have nothing left
/// (longest-processing-time-first, a common practice of scheduling; the file's size stands
/// for its time). `None` (the order given) for more files: the threads then take the next file
/// in the order given, so that files in flight stay within the window, and a tail of one file
/// is a small part of the run. Files whose size cannot be read count as empty.
fn largest_first(files: &[PathBuf], window: usize) -> Option<Vec<usize>> {
    if files.len() < 2 || files.len() > window {
        return None;
    }
    let sizes: Vec<u64> = files
        .iter()
        .map(|f| std::fs::metadata(f).map_or(0, |m| m.len()))
        .collect();
    let mut order: Vec<usize> = (0..files.len()).collect();
    // Stable: files of equal size keep their order.
    order.sort_by_key(|&i| std::cmp::Reverse(sizes[i]));
    Some(order)
}

/// All rows of one file; never panics.
pub fn measure_file(path: &Path, settings: &Settings) -> Vec<Row> {
    let analyzed = with_file_bytes(path, settings.max_file_bytes, |bytes| {
        catch_unwind(AssertUnwindSafe(|| analyze_drawing(bytes, settings)))
    });
    let outcomes = match analyzed {
        Ok(Ok(o)) => o,
        Ok(Err(payload)) => vec![panic_row(payload)],
        Err(e) => vec![read_error(&e, settings)],
    };
    rows_of(path, outcomes)
}

/// [`measure_file`], keeping the rows' geometry (profiles, curve table, problem boxes; its
/// `outcomes` are moved into the rows); `None` when the file could not be read or measuring
/// it panicked.
pub fn measure_file_with_geometry(
    path: &Path,
    settings: &Settings,
) -> (Vec<Row>, Option<MeasuredDrawing>) {
    let analyzed = with_file_bytes(path, settings.max_file_bytes, |bytes| {
        catch_unwind(AssertUnwindSafe(|| {
            analyze_drawing_with_geometry(bytes, settings)
        }))
    });
    match analyzed {
        Ok(Ok(mut m)) => {
            let outcomes = std::mem::take(&mut m.outcomes);
            (rows_of(path, outcomes), Some(m))
        }
        Ok(Err(payload)) => (rows_of(path, vec![panic_row(payload)]), None),
        Err(e) => (rows_of(path, vec![read_error(&e, settings)]), None),
    }
}

fn rows_of(path: &Path, outcomes: Vec<Outcome>) -> Vec<Row> {
    let file = path.display().to_string();
    outcomes
        .into_iter()
        .map(|outcome| Row {
            file: file.clone(),
            outcome,
        })
        .collect()
}

/// The row of a file whose measuring panicked.
fn panic_row(payload: Box<dyn std::any::Any + Send>) -> Outcome {
    let what = payload
        .downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "unknown panic".to_string());
    file_error(format!(
        "internal error ({what}); this is a bug in sectio: please report it with the drawing"
    ))
}

thread_local! {
    /// Each worker thread reads its files into one buffer that only grows, instead of
    /// allocating (and touching fresh pages for) a new one per file. All of it stays
    /// initialised, so reads go straight into it.
    static READ_BUFFER: std::cell::RefCell<Vec<u8>> = const { std::cell::RefCell::new(Vec::new()) };
}

/// Run `f` on the bytes of the file at `path`, read into this thread's reusable buffer.
///
/// Reads into the thread's buffer without asking the file's size first (`read_to_end` would
/// add a `statx` and an `lseek` per file): two `read` calls for a file that fits it. A file
/// that does not fit is then read to its end into room reserved for its size (one copy, no
/// zero fill and no regrowing: a 76 MB drawing in 0.021 s instead of 0.059 s by doubling). A file
/// of more than `limit` bytes is read no further (`ErrorKind::FileTooLarge`). A buffer grown
/// past [`KEEP_BUFFER`] for a large file is let go afterwards, so that memory stays flat.
fn with_file_bytes<R>(path: &Path, limit: u64, f: impl FnOnce(&[u8]) -> R) -> std::io::Result<R> {
    use std::io::Read;
    /// The smallest buffer a thread reads into: most drawings fit.
    const FIRST_BUFFER: usize = 256 * 1024;
    let mut buf = READ_BUFFER.with(|c| std::mem::take(&mut *c.borrow_mut()));
    let cap = usize::try_from(limit)
        .unwrap_or(usize::MAX)
        .saturating_add(1);
    let started = crate::timings::enabled().then(std::time::Instant::now);
    let read = std::fs::File::open(path).and_then(|mut file| {
        if buf.len() < FIRST_BUFFER {
            buf.resize(FIRST_BUFFER.min(cap), 0);
        }
        // The buffer may be longer than `cap` (kept from a run with a larger limit).
        let room = buf.len().min(cap);
        let mut filled = 0;
        while filled < room {
            match file.read(&mut buf[filled..room]) {
                Ok(0) => return Ok(filled),
                Ok(n) => filled += n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => return Err(e),
            }
        }
        // The buffer is full: the rest, up to `cap` bytes in all (one more than the limit,
        // to tell a file of exactly `limit` bytes from a larger one).
        buf.truncate(filled);
        let size = file.metadata().map_or(0, |m| m.len());
        let want = usize::try_from(size).unwrap_or(usize::MAX).min(cap);
        buf.reserve(want.saturating_sub(filled).saturating_add(1));
        let rest = u64::try_from(cap.saturating_sub(filled)).unwrap_or(u64::MAX);
        (&mut file).take(rest).read_to_end(&mut buf)?;
        if buf.len() >= cap {
            return Err(std::io::Error::from(std::io::ErrorKind::FileTooLarge));
        }
        Ok(buf.len())
    });
    if let Some(t) = started {
        crate::timings::add(crate::timings::Step::ReadFile, t.elapsed());
    }
    let out = read.map(|filled| f(&buf[..filled]));
    if let Some(t) = started {
        crate::timings::file_took(path, t.elapsed());
    }
    if buf.capacity() <= KEEP_BUFFER {
        READ_BUFFER.with(|c| *c.borrow_mut() = buf);
    }
    out
}

/// Largest read buffer a worker thread keeps between files (64 MiB).
const KEEP_BUFFER: usize = 64 << 20;

/// The error row of a file that could not be read.
fn read_error(e: &std::io::Error, settings: &Settings) -> Outcome {
    if e.kind() == std::io::ErrorKind::FileTooLarge {
        file_error(crate::analyze::too_large(settings.max_file_bytes))
    } else {
        file_error(format!("cannot read file: {e}"))
    }
}

fn file_error(msg: String) -> Outcome {
    Outcome {
        profile: 0,
        layer: String::new(),
        drawing_units: String::new(),
        result: Err(msg),
        message: String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn files_are_read_whole_up_to_the_limit_and_no_further() {
        let dir = tempfile::tempdir().unwrap();
        // Sizes below, at and above the first buffer, and a file read after a large one (the
        // kept buffer then holds the large file's bytes beyond the small one's end).
        for size in [0usize, 10, 256 * 1024, 256 * 1024 + 1, 3 << 20, 10] {
            let bytes: Vec<u8> = (0..size).map(|k| (k * 7 % 251) as u8).collect();
            let path = dir.path().join(format!("f{size}"));
            std::fs::write(&path, &bytes).unwrap();
            let limit = size as u64;
            let got = with_file_bytes(&path, limit, <[u8]>::to_vec).unwrap();
            assert!(got == bytes, "size {size}");
            if size > 0 {
                let e = with_file_bytes(&path, limit - 1, |_| ()).unwrap_err();
                assert_eq!(e.kind(), std::io::ErrorKind::FileTooLarge, "size {size}");
            }
        }
    }

    fn names(n: usize) -> Vec<PathBuf> {
        (0..n).map(|k| PathBuf::from(format!("{k:05}"))).collect()
    }

    #[test]
    fn streamed_results_come_in_file_order_whatever_the_threads_finish_first() {
        let files = names(2000);
        for jobs in [1, 2, 7] {
            let mut seen = Vec::new();
            stream_batch(
                &files,
                Some(jobs),
                |p| {
                    let k: usize = p.to_string_lossy().parse().expect("number");
                    // Uneven work, so that threads overtake each other.
                    if k.is_multiple_of(97) {
                        std::thread::sleep(std::time::Duration::from_millis(2));
                    }
                    k
                },
                |k| {
                    seen.push(k);
                    Ok(())
                },
            )
            .expect("run");
            assert_eq!(seen, (0..2000).collect::<Vec<_>>(), "-j {jobs}");
        }
        // Runs shorter than, equal to and just past the calling thread's batch.
        for n in [1, 3, HAND_ON_BATCH, HAND_ON_BATCH + 1] {
            let mut seen = Vec::new();
            stream_batch(
                &files[..n],
                Some(2),
                |p| p.to_path_buf(),
                |p| {
                    seen.push(p);
                    Ok(())
                },
            )
            .expect("run");
            assert_eq!(seen, files[..n], "{n} files");
        }
        // No files: nothing handed on, no hang.
        stream_batch(&[], None, |_| 0, |_| panic!("nothing to hand on")).expect("empty run");
    }

    #[test]
    fn a_few_files_are_taken_up_largest_first_and_handed_on_in_file_order() {
        let dir = tempfile::tempdir().unwrap();
        let sizes = [10usize, 5000, 0, 300, 5000, 70];
        let files: Vec<PathBuf> = sizes
            .iter()
            .enumerate()
            .map(|(k, &n)| {
                let path = dir.path().join(format!("f{k}"));
                std::fs::write(&path, vec![b'x'; n]).unwrap();
                path
            })
            .collect();
        let started = std::sync::Mutex::new(Vec::new());
        let mut handed = Vec::new();
        stream_batch(
            &files,
            Some(1),
            |p| {
                started.lock().unwrap().push(p.to_path_buf());
                p.to_path_buf()
            },
            |p| {
                handed.push(p);
                Ok(())
            },
        )
        .expect("run");
        // One thread takes them up in the order it is given: by size, equal sizes as listed.
        let by_size: Vec<PathBuf> = [1, 4, 3, 5, 0, 2]
            .iter()
            .map(|&k| files[k].clone())
            .collect();
        assert_eq!(started.into_inner().unwrap(), by_size);
        assert_eq!(handed, files);
        // More files than the window: the order given.
        assert_eq!(largest_first(&files, 5), None);
    }

    #[test]
    fn files_in_flight_stay_within_the_window() {
        use std::sync::atomic::{AtomicUsize, Ordering};
        let files = names(3000);
        let started = AtomicUsize::new(0);
        let mut handed = 0usize;
        let mut widest = 0usize;
        stream_batch(
            &files,
            Some(2),
            |_| started.fetch_add(1, Ordering::SeqCst) + 1,
            |_| {
                // Files started but not yet handed on (this one included).
                widest = widest.max(started.load(Ordering::SeqCst) - handed);
                handed += 1;
                std::thread::sleep(std::time::Duration::from_micros(50));
                Ok(())
            },
        )
        .expect("run");
        assert_eq!(handed, 3000);
        assert!(widest <= 2 * WINDOW_PER_THREAD + 2, "{widest} in flight");
    }

    #[test]
    fn a_sink_error_or_an_escaped_panic_ends_the_run_without_hanging() {
        let files = names(500);
        let mut n = 0;
        let err = stream_batch(
            &files,
            Some(2),
            |_| (),
            |()| {
                n += 1;
                if n == 10 {
                    Err(std::io::Error::other("disk full"))
                } else {
                    Ok(())
                }
            },
        )
        .expect_err("the sink's error");
        assert!(err.to_string().contains("disk full"));
        assert_eq!(n, 10, "nothing handed on after the error");
        let err = stream_batch(
            &files,
            Some(2),
            |p| {
                if p.ends_with("00100") {
                    panic!("bug");
                }
            },
            |()| Ok(()),
        )
        .expect_err("a worker stopped");
        assert!(err.to_string().contains("worker thread stopped"), "{err}");
    }

    #[test]
    fn folders_are_searched_recursively_for_dxf_in_any_case_and_sorted() {
        let dir = tempfile::tempdir().expect("temp dir");
        let sub = dir.path().join("b").join("deeper");
        std::fs::create_dir_all(&sub).expect("folders");
        for name in [
            "z.dxf",
            "A.DXF",
            "b/m.Dxf",
            "b/deeper/c.dxf",
            "notes.txt",
            "b/x.dwg",
        ] {
            std::fs::write(dir.path().join(name), b"").expect("file");
        }
        let files =
            collect_files(&[dir.path().to_path_buf(), dir.path().join("z.dxf")]).expect("walk");
        let names: Vec<String> = files
            .iter()
            .map(|p| {
                p.strip_prefix(dir.path())
                    .unwrap()
                    .to_string_lossy()
                    .replace('\\', "/")
            })
            .collect();
        assert_eq!(names, ["A.DXF", "b/deeper/c.dxf", "b/m.Dxf", "z.dxf"]);
    }
}
