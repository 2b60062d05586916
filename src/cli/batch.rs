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
/// Reads until end of file without asking the file's size first (`read_to_end` would add a
/// `statx` and an `lseek` per file): two `read` calls for a file that fits the buffer. A file
/// of more than `limit` bytes is read no further (`ErrorKind::FileTooLarge`). A buffer grown
/// past [`KEEP_BUFFER`] for a large file is let go afterwards, so that memory stays flat.
fn with_file_bytes<R>(path: &Path, limit: u64, f: impl FnOnce(&[u8]) -> R) -> std::io::Result<R> {
    use std::io::Read;
    let mut buf = READ_BUFFER.with(|c| std::mem::take(&mut *c.borrow_mut()));
    let cap = usize::try_from(limit)
        .unwrap_or(usize::MAX)
        .saturating_add(1);
    let started = crate::timings::enabled().then(std::time::Instant::now);
    let read = std::fs::File::open(path).and_then(|mut file| {
        let mut filled = 0;
        loop {
            if filled == buf.len() {
                if filled >= cap {
                    return Err(std::io::Error::from(std::io::ErrorKind::FileTooLarge));
                }
                buf.resize((2 * buf.len()).clamp(256 * 1024, cap), 0);
            }
            match file.read(&mut buf[filled..]) {
                Ok(0) => return Ok(filled),
                Ok(n) => filled += n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => return Err(e),
            }
        }
    });
    if let Some(t) = started {
        crate::timings::add(crate::timings::Step::ReadFile, t.elapsed());
    }
    let out = read.map(|filled| f(&buf[..filled]));
    if let Some(t) = started {
        crate::timings::file_took(path, t.elapsed());
    }
    if buf.len() <= KEEP_BUFFER {
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
